"""The PDF report's tolerance, part-stress and family pages: the numbers in the text are the
ones in the JSON result, the cautions stay, nothing is fetched, and output is reproducible."""

from __future__ import annotations

import dataclasses
import io
from pathlib import Path

import pytest

from pypdf import PdfReader

from netcheck.analyses.nominal import check_spec
from netcheck.render.jsonreport import to_dict
from netcheck.report import pdf
from netcheck.report import plots
from netcheck.result import CheckResult, Status
from netcheck.netlist.units import format_eng, format_si

ROOT = Path(__file__).resolve().parents[2]
CREATED = "2026-01-01T00:00:00Z"
SAMPLES = 200  # as in analysis_cases.py
SYMBOL = {Status.PASS: "✓", Status.FAIL: "✗", Status.ERROR: "!", Status.SKIPPED: "–"}


def words(text: str) -> str:
    return " ".join(text.split())


def signed(value: float, unit: str) -> str:
    return ("+" if value + 0.0 >= 0 else "") + format_eng(value + 0.0, unit)


def pct(x: float) -> str:
    """A fraction as a percentage with two decimals (written out here, not by the report code)."""
    return f"{100 * x:.2f} %"


@dataclasses.dataclass
class Rendered:
    result: CheckResult
    data: bytes
    requests: list[str]
    pages: list[str] = dataclasses.field(default_factory=list)

    def __post_init__(self) -> None:
        self.pages = [words(p.extract_text() or "") for p in PdfReader(io.BytesIO(self.data)).pages]

    @property
    def text(self) -> str:
        return " ".join(self.pages)


def render(result: CheckResult) -> Rendered:
    fetcher = pdf.locked_fetcher()
    data = pdf.render_bytes(result, fetcher)
    return Rendered(result, data, list(fetcher.requests))


@pytest.fixture(scope="module")
def tolerance(analysis_cases, analysis_folder) -> Rendered:
    """The tolerance spec with the Q limit tightened (some samples fail), plus stress tables."""
    assert analysis_cases.SAMPLES == SAMPLES
    result = analysis_cases.tolerance_case(analysis_folder)
    spec = result.specs[0]
    assert spec.error is None, spec.error
    assert spec.status is Status.FAIL  # the yield and the worst-case Q
    assert spec.extra_value("tolerance")["monte_carlo"]["samples"] == SAMPLES
    assert len(spec.extra_value("stress")) == 3
    return render(result)


@pytest.fixture(scope="module")
def family(analysis_cases) -> Rendered:
    result = analysis_cases.family_case()
    assert len({s.variant for s in result.specs}) >= 2
    return render(result)


def tolerance_section(r: Rendered) -> str:
    """Text from the tolerance section heading to the limit-by-limit section."""
    text = r.text
    start = text.index("Part tolerances Analyses run")
    return text[start:text.index("Limit by limit", start)]


class TestTolerance:
    def test_yield_and_interval_as_in_the_json(self, tolerance):
        doc = to_dict(tolerance.result)["specs"][0]["tolerance"]["monte_carlo"]
        text = tolerance_section(tolerance)
        passed = round(doc["yield"] * doc["samples"])
        assert f"yield {pct(doc['yield'])}" in text.lower()  # the label is set in capitals
        assert f"{passed} of {doc['samples']} samples met every limit" in text
        lo, hi = doc["yield_ci"]
        assert f"95 % interval for the yield: {pct(lo)} – {pct(hi)} ({doc['ci_method']})" in text
        assert "Wilson score" in doc["ci_method"]
        assert f"seed {doc['seed']}" in text

    def test_per_limit_yields_percentiles_and_worst_samples(self, tolerance):
        spec = tolerance.result.specs[0]
        units = {lim.name: lim.unit for lim in spec.limits}
        mc = to_dict(tolerance.result)["specs"][0]["tolerance"]["monte_carlo"]
        text = tolerance_section(tolerance)
        for e in mc["limits"]:
            unit = units[e["name"]]
            lo, hi = e["yield_ci"]
            row = (f"{e['name']} {pct(e['yield'])} {pct(lo)} – {pct(hi)} "
                   f"{signed(e['margin_p01'], unit)} {signed(e['margin_p50'], unit)} "
                   f"{signed(e['margin_p99'], unit)} #{e['worst_sample']} "
                   f"{format_eng(e['worst_measured'], unit)}")
            assert row in text, row
            assert f"Sample #{e['worst_sample']}" in text
            for part, value in e["worst_values"].items():
                assert part in text
        nominal = {p["part"]: p["nominal"] for p in mc["parts"]}
        first = mc["limits"][0]
        for part, value in first["worst_values"].items():
            unit = {"R": "Ω", "C": "F", "L": "H"}[part[0]]
            dev = f"{100 * (value / nominal[part] - 1):+.2f} %"
            assert f"{format_eng(value, unit)} {dev}" in text, part

    def test_histogram_of_the_deciding_measurement(self, tolerance):
        spec = tolerance.result.specs[0]
        hist = spec.extra_value("tolerance")["monte_carlo"]["histogram"]
        figure = plots.histogram_plot(spec)
        assert figure is not None and figure.svg.startswith("<svg")
        assert f"Spread of {hist['name']} over the samples" in tolerance.text
        lim = next(x for x in spec.limits if x.name == hist["name"] and x.kind == "resonance")
        # the limit's bounds are marked on the histogram (drawn as text in the SVG)
        for side, value in (("lower", lim.lower), ("upper", lim.upper)):
            assert f"{side} limit {format_eng(value, lim.unit)}" in figure.svg
        assert f"Allowed: {lim.bound_text}." in tolerance.text
        assert f"{int(sum(hist['counts']))} in {len(hist['counts'])} bins" in figure.svg
        assert hist["name"] not in figure.svg  # names from the spec only in the escaped HTML

    def test_envelope_drawn_and_named(self, tolerance):
        spec = tolerance.result.specs[0]
        assert spec.curves.envelope_lo_db is not None
        figs = plots.spec_plots(spec)
        overview, zoom = figs[0], figs[1]
        for fig in (overview, zoom):
            assert f"Monte Carlo envelope, {SAMPLES} samples" in fig.svg  # the legend
            assert "Monte Carlo envelope" in fig.caption
        assert "nominal gain" in overview.svg
        assert f"over the {SAMPLES} tolerance samples" in tolerance.text

    def test_worst_case_table(self, tolerance):
        spec = tolerance.result.specs[0]
        wc = to_dict(tolerance.result)["specs"][0]["tolerance"]["worst_case"]
        units = {lim.name: lim.unit for lim in spec.limits}
        text = tolerance_section(tolerance)
        assert f"all {wc['corners']} corners" in text
        for e in wc["limits"]:
            unit = units[e["name"]]
            final = next(x for x in spec.limits if x.name == f"worst case: {e['name']}")
            for lo, hi in ((e["min"], e["max"]), (e["rss_min"], e["rss_max"]),
                           (e["corners_min"], e["corners_max"])):
                assert pdf.format_range(lo, hi, unit) in text, e["name"]
            assert f"margin {signed(e['margin'], unit)}" in text
            assert f"margin {signed(e['corners_margin'], unit)}" in text
            assert f"{final.status.word} {signed(final.margin, unit)}" in text
            # EVA against the corners, in words
            assert f"{e['name']}. EVA gives {pdf.format_range(e['min'], e['max'], unit)}" in text
        decide = [e for e in wc["limits"] if e["eva_differs"]]
        assert decide and all(("The corners come" in text) or ("EVA comes" in text) for _ in decide)

    def test_format_range_shares_the_unit(self):
        assert pdf.format_range(39e3, 41.03e3, "Hz") == "39.00 … 41.03 kHz"
        assert pdf.format_range(999.0, 1.2e3, "Hz") == "999.0 Hz … 1.200 kHz"

    def test_sensitivity_table(self, tolerance):
        wc = to_dict(tolerance.result)["specs"][0]["tolerance"]["worst_case"]
        text = tolerance_section(tolerance)
        tol = {p["part"]: p["tolerance"] for p in
               to_dict(tolerance.result)["specs"][0]["tolerance"]["monte_carlo"]["parts"]}
        for block in wc["sensitivities"]:
            unit = block["unit"]
            assert block["name"] in text
            for item in block["top"]:
                d, c = item["per_unit_log"], item["contribution"]
                direction = "value rises" if d > 0 else "value falls" if d < 0 else "no effect"
                cells = [item["part"], direction]
                if unit not in ("dB", "deg"):
                    s = item["sensitivity"]
                    cells.append("0" if s == 0 else f"{s:+.3f}" if abs(s) >= 1e-3 else f"{s:+.1e}")
                else:
                    cells.append("—")
                cells += [signed(d / 100, unit), f"±{100 * tol[item['part']]:.4g} %",
                          signed(c, unit)]
                assert " ".join(cells) in text, cells
        # L1 moves the centre frequency down, as f0 = 1/(2π√(LC)) says: S = -1/2
        centre = next(b for b in wc["sensitivities"] if b["name"] == "resonance: centre")
        l1 = next(i for i in centre["top"] if i["part"] == "L1")
        assert l1["sensitivity"] == pytest.approx(-0.5, abs=1e-6)
        assert "L1 value falls -0.500" in text

    def test_failing_yield_in_words(self, tolerance):
        spec = tolerance.result.specs[0]
        mc = spec.extra_value("tolerance")["monte_carlo"]
        row = next(x for x in spec.limits if x.kind == "yield")
        assert row.status is Status.FAIL and mc["yield"] < 0.9
        text = tolerance_section(tolerance)
        failed = mc["samples"] - round(mc["yield"] * mc["samples"])
        assert f"{failed} failed at least one" in text
        assert f"FAIL required ≥ {pct(row.lower)}, margin {signed(row.margin, '')}" in text
        if mc["yield_ci"][0] < row.lower:
            assert "the yield is not shown with 95 % confidence" in text
        assert "bins outside the limit" in plots.histogram_plot(spec).svg

    def test_full_yield_and_its_interval(self, tmp_path, analysis_cases):
        """Every sample passing: the interval closes at 100 %, and the words say PASS."""
        spec = check_spec(str(analysis_cases.tolerance_spec(tmp_path)))
        mc = spec.extra_value("tolerance")["monte_carlo"]
        assert mc["yield"] == 1.0 and mc["yield_ci"][1] == 1.0
        view = pdf.build_context(CheckResult((spec,), "0.1.0", CREATED),
                                 with_plots=False)["specs"][0]["tolerance"]["mc"]
        assert view["yield"] == "100.00 %" and view["failed"] == 0
        assert view["ci"] == f"{pct(mc['yield_ci'][0])} – 100.00 %"
        assert view["required"]["word"] == "PASS" and not view["below"]

    def test_computation_block_and_method_lines(self, tolerance):
        # the spec's own facts in a short block; the methods themselves are cited, not
        # repeated (they are in docs/methods.md#monte-carlo and #worst-case)
        text, spec = tolerance.text, tolerance.result.specs[0]
        mc = spec.extra_value("tolerance")["monte_carlo"]
        # pypdf reads a value before its label, and a wrapped one around it: compared
        # without spaces, values and labels apart
        bare = text.replace(" ", "")
        assert f"{mc['samples']}samples," in bare and "MonteCarlo" in bare
        assert f"seed{mc['seed']}(therunrepeatsexactly)" in bare
        wc = pdf.build_context(tolerance.result, with_plots=False)["specs"][0]["tolerance"]["wc"]
        corner = wc["corner_text"]
        assert f"{corner[0].upper()}{corner[1:]}".replace(" ", "") in bare
        assert "Wilson, 1927" not in text and "Director & Rohrer" not in text
        assert "Method and assumptions" not in text
        for lim in spec.limits:
            if lim.kind == "yield":
                assert f"{lim.method}—methods.md#monte-carlo".replace(" ", "") in bare
            elif lim.kind == "worst_case":
                assert f"{lim.method}—methods.md#worst-case".replace(" ", "") in bare

    def test_clean_and_locked(self, tolerance):
        assert tolerance.requests and all(u.startswith(pdf.EMBED_SCHEME + ":")
                                          for u in tolerance.requests)
        assert any("tolerance-1-1.svg" in u for u in tolerance.requests)  # the histogram
        assert 6 <= len(tolerance.pages) <= 12


def headroom(peak: float, rating: float) -> str:
    """Headroom in words, computed here: rating/peak under the rating, peak/rating over
    it, two significant figures ('#' keeps a trailing zero: 2.0)."""
    over = peak > rating
    ratio = peak / rating if over else rating / peak
    return f"{ratio:#.2g}".rstrip(".") + ("× over rating" if over else "× under rating")


class TestStress:
    def test_headroom_in_words_by_hand(self):
        from netcheck.report.view_stress import headroom_text
        # 50 V rating, 23.8 V peak: 50 / 23.8 = 2.1008… → two significant figures 2.1, under
        assert headroom_text(23.8, 50.0) == "2.1× under rating"
        # 50 V rating, 65 V peak: 65 / 50 = 1.3 exactly, over
        assert headroom_text(65.0, 50.0) == "1.3× over rating"
        # 250 V rating, 125 V peak: 250 / 125 = 2 → 2.0 (the second figure kept)
        assert headroom_text(125.0, 250.0) == "2.0× under rating"
        # 1 W rating, 0.0096 W: 1 / 0.0096 = 104.17 → 100 (two figures, no exponent)
        assert headroom_text(0.0096, 1.0) == "100× under rating"
        # 10 A rating, 10.04 A: 10.04 / 10 = 1.004 → 1.0, still over
        assert headroom_text(10.04, 10.0) == "1.0× over rating"
        assert headroom_text(50.0, 50.0) == "at rating"
        assert headroom_text(None, 50.0) == headroom_text(1.0, None) == "—"

    def test_rows_as_in_the_json(self, tolerance):
        doc = to_dict(tolerance.result)["specs"][0]["stress"]
        section = next(p for p in tolerance.pages if "IN WORDS" in p)  # the table header
        assert len(doc) == 3
        for e in doc:
            unit = {"voltage": "V", "current": "A", "power": "W"}[e["quantity"]]
            words_ = {"pass": "within its rating", "fail": "over its rating"}[e["status"]]
            row = (f"{e['status'].upper()} {e['part']} {e['quantity']} "
                   f"({'average' if e['quantity'] == 'power' else 'peak'}) "
                   f"{format_eng(e['peak'], unit)} {format_eng(e['rating'], unit)} "
                   f"{signed(e['margin'], unit)} {headroom(e['peak'], e['rating'])} "
                   f"{format_si(e['at_hz'], 'Hz', 5)} {words_}")
            assert row in section, row
        worst = to_dict(tolerance.result)["specs"][0]["tolerance"]["monte_carlo"]["stress"]
        assert f"Worst over the {SAMPLES} Monte Carlo samples" in section
        for e in worst:
            unit = {"voltage": "V", "current": "A", "power": "W"}[e["quantity"]]
            assert (f"{e['part']} {e['quantity']}" in section
                    and f"{format_eng(e['peak'], unit)} {format_eng(e['rating'], unit)} "
                        f"{signed(e['margin'], unit)}" in section
                    and f"#{e['sample']}" in section), e
    def test_cautions_next_to_the_table_and_on_page_one(self, tolerance):
        spec = tolerance.result.specs[0]
        cautions = [c for c in spec.cautions if c.code == "analysis-stress"]
        assert cautions and "C1 sees" in cautions[0].message
        first = tolerance.pages[0]
        section_page = next(p for p in tolerance.pages if "IN WORDS" in p)
        for c in cautions:
            assert words(c.message) in first
            assert words(c.message) in section_page
        assert "not a measurement" in first
        assert "follow local codes and licensed practice" in section_page
        assert "Q times the input" in section_page

    def test_clean(self, tolerance):
        assert all(u.startswith(pdf.EMBED_SCHEME + ":") for u in tolerance.requests)
        assert 8 <= len(tolerance.pages) <= 14


class TestFamily:
    def test_family_table_names_every_variant(self, family):
        specs = family.result.specs
        page = next(p for p in family.pages if "Margins by variant" in p)
        names = list(dict.fromkeys(lim.name for s in specs for lim in s.limits))
        for n in names:
            assert n in page
        for s in specs:
            cells = " ".join(f"{SYMBOL[lim.status]} {lim.status.word} {signed(lim.margin, lim.unit)}"
                             for lim in sorted(s.limits, key=lambda x: names.index(x.name)))
            assert f"{s.variant} spec" in page
            assert cells in page, s.variant
        assert f"All {len(specs)} variants met every limit." in page

    def test_overlay_keys_every_variant_with_a_line_style(self, family):
        specs = family.result.specs
        figs = plots.family_plots(list(specs))
        assert [p.title for p in figs] == ["Gain of every variant over the whole sweep",
                                           "Pass-bands and resonances of every variant in detail"]
        for fig in figs:
            keys = {k.tag: k for k in fig.keys if k.tag.startswith("var ")}
            assert ([keys[f"var {i + 1}"].name for i in range(len(specs))]
                    == [s.variant for s in specs])
            assert len({k.text for k in keys.values()}) == len(specs)  # styles differ in words
            for i in range(len(specs)):
                assert f"var {i + 1}" in fig.svg  # legend entries
            for s in specs:
                assert s.variant not in fig.svg  # names only in the escaped HTML key
        styles = {plots.variant_style(k)[:2] for k in range(len(plots.VARIANT_STYLES))}
        assert len(styles) == len(plots.VARIANT_STYLES)  # dash pattern and marker differ
        text = family.text
        assert "Family 1, figure 1 " in text and "Family 1, figure 2 " in text
        assert "Figure F" not in text  # F1 would read as a part name (a controlled source)
        for k, s in enumerate(specs):
            assert f"var {k + 1} {s.variant} {plots.variant_style(k)[3]}" in text

    def test_family_in_the_combined_report_only(self, family):
        assert "Families of variants" in family.pages[0]
        for s in family.result.specs:  # per-spec mode: each variant's report on its own
            assert pdf.build_context(CheckResult((s,), "0.1.0", CREATED),
                                     with_plots=False)["families"] == []

    def test_unchecked_and_failed_variants_in_words(self, family):
        specs = list(family.result.specs)
        lim = specs[1].limits
        specs[1] = dataclasses.replace(specs[1], status=Status.FAIL, limits=(
            dataclasses.replace(lim[0], status=Status.FAIL, margin=-12.5),) + lim[1:])
        specs[2] = dataclasses.replace(specs[2], status=Status.ERROR, limits=(), curves=None,
                                       error="x.cir:3:1: error netlist-101: broken card")
        ctx = pdf.build_context(CheckResult(tuple(specs), "0.1.0", CREATED), with_plots=False)
        fam = ctx["families"][0]
        assert fam["word"] == "ERROR"
        assert fam["sentence"] == (f"2 of {len(specs)} variants did not pass: "
                                   f"{specs[1].variant} (FAIL); {specs[2].variant} (NOT CHECKED).")
        cells = fam["tables"][0]["rows"]
        assert cells[1]["cells"][0] == {"status": "fail", "word": "FAIL", "symbol": "✗",
                                        "margin": signed(-12.5, lim[0].unit)}
        assert {c["word"] for c in cells[2]["cells"]} == {"NOT CHECKED"}
        assert fam["tables"][0]["closest"][0] == f"{signed(-12.5, lim[0].unit)} ({specs[1].variant})"
        figs = plots.family_plots(specs)
        assert specs[2].variant not in [k.name for k in figs[0].keys]  # no curves, not drawn

    def test_page_count_and_fetches(self, family):
        n = len(family.result.specs)
        assert n + 2 <= len(family.pages) <= 7 * n + 4
        assert all(u.startswith(pdf.EMBED_SCHEME + ":") for u in family.requests)
        assert any("family-1-1.svg" in u for u in family.requests)


def test_byte_identical_across_processes(analysis_replay, analysis_cases, tolerance, family):
    """Another interpreter (another hash seed, SOURCE_DATE_EPOCH set) checks and renders the
    same cases: the tolerance report to the same PDF bytes, the family document to the same
    HTML and plots (the replay started with the session, see conftest.py)."""
    assert analysis_replay is not None
    proc, out = analysis_replay
    _, err = proc.communicate(timeout=300)
    assert proc.returncode == 0, err.decode(errors="replace")[-2000:]
    assert (out / "tolerance.pdf").read_bytes() == tolerance.data
    assert (out / "family.bin").read_bytes() == analysis_cases.family_html(family.result)
