"""The PDF report: content matches the JSON result, page 1 states the verdict, nothing is
fetched or attached, output is reproducible, and the heavy libraries load lazily."""

from __future__ import annotations

import dataclasses
import io
import logging
import os
import pickle
import shutil
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from pypdf import PdfReader

from netcheck.analyses.nominal import check_spec
from netcheck.render.jsonreport import to_dict
from netcheck.report import pdf
from netcheck.result import Caution, CheckResult, Status
from netcheck.netlist.units import format_eng

ROOT = Path(__file__).resolve().parents[2]
CREATED = "2026-01-01T00:00:00Z"
EPOCH = "1767225600"  # 2026-01-01T00:00:00Z
A4_PT = (595.28, 841.89)

IMG = '<img src="file:///etc/passwd">'
LINK = '<link rel="attachment" href="file:///etc/passwd">'
CSS_IMPORT = "<style>@import url(file:///etc/passwd);</style>"
IMPOSSIBLE_SPEC = """\
title = "Quillmere Instruments test receiver, impossible limits"
netlist = "rx40k.cir"
source = "VIN"
output = "out"

[sweep]
start = "1k"
stop = "1meg"
points_per_decade = 100

[[limits]]
kind = "gain"
name = "impossible flatness"
band = ["30k", "50k"]
min_db = -0.1

[[limits]]
kind = "resonance"
q = [40, 50]
"""


def words(text: str) -> str:
    """Whitespace collapsed, so wrapped table cells compare as one line."""
    return " ".join(text.split())


def pdf_text(data: bytes, pages: slice = slice(None)) -> str:
    return words(" ".join(p.extract_text() or "" for p in PdfReader(io.BytesIO(data)).pages[pages]))


def signed(value: float, unit: str) -> str:
    return ("+" if value >= 0 else "") + format_eng(value, unit)


class _Records(logging.Handler):
    def __init__(self) -> None:
        super().__init__(logging.WARNING)
        self.records: list[logging.LogRecord] = []

    def emit(self, record: logging.LogRecord) -> None:
        self.records.append(record)


def render_logged(result: CheckResult) -> tuple[bytes, list[str], list[str]]:
    """PDF bytes, weasyprint warnings (besides the subsetter notice) and fetched URLs."""
    handler = _Records()
    log = logging.getLogger("weasyprint")
    log.addHandler(handler)
    try:
        fetcher = pdf.locked_fetcher()
        data = pdf.render_bytes(result, fetcher)
    finally:
        log.removeHandler(handler)
    warnings = [r.getMessage() for r in handler.records
                if "HarfBuzz-Subset" not in r.getMessage()]
    return data, warnings, list(fetcher.requests)


@dataclasses.dataclass
class Rendered:
    result: CheckResult
    data: bytes
    warnings: list[str]
    requests: list[str]
    text: str = ""
    first: str = ""

    def __post_init__(self) -> None:
        pages = [words(p.extract_text() or "") for p in PdfReader(io.BytesIO(self.data)).pages]
        self.text, self.first = " ".join(pages), pages[0]


@pytest.fixture(scope="module")
def passing() -> Rendered:
    spec = check_spec(str(ROOT / "specs" / "rx40k.toml"))
    assert spec.status is Status.PASS, spec.error
    result = CheckResult((spec,), "0.1.0", CREATED)
    return Rendered(result, *render_logged(result))


@pytest.fixture(scope="module")
def failing(tmp_path_factory):
    samples = sorted((ROOT / "specs" / "failing").glob("*.toml"))
    if samples:
        path = samples[0]
    else:
        folder = tmp_path_factory.mktemp("failing")
        shutil.copy(ROOT / "sample_netlists" / "rx40k.cir", folder / "rx40k.cir")
        path = folder / "impossible.toml"
        path.write_text(IMPOSSIBLE_SPEC, encoding="utf-8")
    spec = check_spec(str(path))
    assert spec.status is Status.FAIL, spec.error
    result = CheckResult((spec,), "0.1.0", CREATED)
    return Rendered(result, pdf.render_bytes(result), [], [])


class TestContent:
    def test_every_limit_as_in_the_json(self, passing):
        text = passing.text
        doc = to_dict(passing.result)
        assert doc["status"] == "pass"
        limits = doc["specs"][0]["limits"]
        assert len(limits) >= 8
        for lim in limits:
            assert lim["name"] in text
            assert format_eng(lim["measured"], lim["unit"]) in text, lim["name"]
            assert signed(lim["margin"], lim["unit"]) in text, lim["name"]
            assert lim["limit_text"] in text, lim["name"]
            assert lim["definition"] in text, lim["name"]

    def test_page_one_header(self, passing):
        first = passing.first
        spec = passing.result.specs[0]
        n = spec.counts
        assert "PASS" in first
        assert f"all {n['pass']} limits met" in first
        assert f"{n['pass']} passed · {n['fail']} failed" in first
        assert "2026-01-01 00:00:00 UTC" in first and "netcheck 0.1.0" in first
        for path, digest in spec.inputs:
            assert digest in first and os.path.normpath(path) in first
        assert "commit " in first or "not in a git repository" in first
        assert "not a measurement" in first  # the safety caution, on page 1

    def test_sections_and_appendix(self, passing):
        result, text = passing.result, passing.text
        for heading in ("Limits", "Response", "Limit by limit", "How this spec was computed",
                        "Cautions", "Inputs as read"):
            assert heading in text
        assert "follow local codes and licensed practice" in words(text)
        sweep = dict(result.specs[0].sweep)
        assert f"{sweep['points']} points" in text
        assert f"{sweep['unknowns']} unknowns of modified nodal analysis" in text
        # (pypdf reads a detail's value before its label, "… analysis)Not judged")
        assert "part tolerances (the spec asks for no tolerance analysis)Not judged" in text
        # the netlist as read, line by line
        netlist = dict(result.specs[0].source_text)[result.specs[0].inputs[0][0]]
        for line in netlist.splitlines()[:5]:
            assert words(line) in text

    def test_methods_cited_not_repeated(self, passing):
        # the full methods live in docs/methods.md (tests/report/test_methods_doc.py): the
        # report cites it once, in its front matter, and repeats no section or reference
        text = passing.text
        assert "Method and assumptions" not in text
        # (a line may break after "docs/": compared without spaces)
        bare = text.replace(" ", "")
        assert bare.count("docs/methods.md") == 1 and "docs/methods.md" in \
            passing.first.replace(" ", "")
        for reference in ("Ruehli", "Moler", "Brennan", "1973)", "1975)"):
            assert reference not in text, reference
        assert text.count("This is an analysis of a circuit model") == 1  # once, page 1

    def test_every_detail_has_its_method_line(self, passing):
        # each limit's detail: "Method <one-line statement> — methods.md#<section>" (pypdf
        # reads the value before its label); the sections are the limit kinds with "_" as
        # "-", and "stress" for part stress
        text = passing.text
        section = {"group_delay": "group-delay"}
        spec = passing.result.specs[0]
        assert {lim.kind for lim in spec.limits} >= {"gain", "resonance", "stress"}
        for lim in spec.limits:
            assert lim.method, lim.name
            line = f"{lim.method} — methods.md#{section.get(lim.kind, lim.kind)}Method"
            assert words(line) in text, lim.name

    def test_clean_render(self, passing):
        assert passing.warnings == []
        assert passing.requests and all(u.startswith(pdf.EMBED_SCHEME + ":")
                                        for u in passing.requests)
        reader = PdfReader(io.BytesIO(passing.data))
        assert reader.metadata.title == "Transducer receive filter, 40 kHz, rev B"

    def test_page_one_is_a4_and_not_blank(self, passing):
        pdfium = pytest.importorskip("pypdfium2")
        doc = pdfium.PdfDocument(passing.data)
        page = doc[0]
        assert page.get_size() == pytest.approx(A4_PT, abs=0.5)
        pixels = page.render(scale=0.4).to_numpy().astype(float)
        assert pixels.std() > 20.0  # text, tables and the verdict box, not an empty page
        assert (pixels.mean(axis=2) < 100).mean() > 0.01  # a fair amount of dark ink


class TestVerdicts:
    def test_failure_in_words_on_page_one(self, failing):
        result, first = failing.result, failing.first
        failed = [lim for lim in result.specs[0].limits if lim.status is Status.FAIL]
        assert failed
        assert "FAIL" in first
        assert f"{len(failed)} of {len(result.specs[0].limits)} limits failed" in first
        for lim in failed:
            assert lim.name in first
            assert signed(lim.margin, lim.unit) in first

    def test_failure_tags_on_the_plots(self, failing):
        assert "worst value" in failing.text
        spec = failing.result.specs[0]
        for k, lim in enumerate(spec.limits):
            # the limit table shows the limit's position in the spec, from 1, before its
            # name; the figure key (and the plot tag) uses the same number
            row = f"{lim.status.word} #{k + 1} {lim.name} {lim.figures.measured}"
            assert row in failing.first, row
            if lim.status is Status.FAIL and lim.at_hz is not None:
                assert f"#{k + 1} {lim.name} " in failing.text.split(row, 1)[1]

    def test_spec_that_could_not_be_checked(self, tmp_path):
        bad = tmp_path / "broken.toml"
        bad.write_text('netlist = "missing.cir"\nsource = "VIN"\noutput = "out"\n', "utf-8")
        spec = check_spec(str(bad))
        assert spec.error
        data = pdf.render_bytes(CheckResult((spec,), "0.1.0", CREATED))
        first = pdf_text(data, slice(0, 1))
        assert "NOT CHECKED" in first and "could not be checked" in first
        assert words(spec.error.splitlines()[0]) in first


class TestLockedDown:
    def test_markup_from_files_is_shown_literally(self, passing):
        base = passing.result.specs[0]
        limits = list(base.limits)
        limits[0] = dataclasses.replace(limits[0], name=f"flat {IMG}")
        limits[1] = dataclasses.replace(limits[1], name=f"stop {LINK}",
                                        status=Status.FAIL, margin=-1.0)
        path, text = base.source_text[0]
        evil = dataclasses.replace(
            base, title=f"Quillmere {IMG} {CSS_IMPORT}", limits=tuple(limits),
            curves=None, status=Status.FAIL,
            cautions=base.cautions + (Caution("netlist-150", f"comment {LINK}", "warning", path, 3),),
            source_text=((path, f"* {IMG}\n* {LINK}\n* {CSS_IMPORT}\n" + text),)
            + base.source_text[1:])
        data, _, requests = render_logged(CheckResult((evil,), "0.1.0", CREATED))
        assert requests == []  # no plots to serve, and nothing else was asked for
        reader = PdfReader(io.BytesIO(data))
        root = reader.trailer["/Root"]
        assert "/EmbeddedFiles" not in root.get("/Names", {})
        for page in reader.pages:
            for annot in page.get("/Annots") or []:
                assert annot.get_object().get("/Subtype") != "/FileAttachment"
        text = pdf_text(data)
        for payload in (IMG, LINK, CSS_IMPORT):
            assert payload in text
        assert "root:" not in text  # /etc/passwd never made it in

    def test_fetcher_refuses_even_unescaped_markup(self):
        html = (f"<html><head>{LINK}{CSS_IMPORT}<link rel=stylesheet href='https://x.test/a.css'>"
                f"</head><body><p>x</p>{IMG}<img src='http://127.0.0.1:9/a.png'>"
                "<img src='data:image/svg+xml,%3Csvg xmlns=%22http://www.w3.org/2000/svg%22/%3E'>"
                "<a rel='attachment' href='file:///etc/passwd'>a</a></body></html>")
        fetcher = pdf.locked_fetcher()
        buf = io.BytesIO()
        logging.getLogger("weasyprint").disabled = True
        try:
            pdf.html_to_pdf(html, buf, fetcher)
        finally:
            logging.getLogger("weasyprint").disabled = False
        assert "file:///etc/passwd" in fetcher.requests  # asked for, and refused
        reader = PdfReader(io.BytesIO(buf.getvalue()))
        assert "/EmbeddedFiles" not in reader.trailer["/Root"].get("/Names", {})
        resources = reader.pages[0].get("/Resources", {})
        assert not resources.get("/XObject")  # no image made it into the page

    def test_fetcher_serves_only_its_resources(self):
        fetcher = pdf.locked_fetcher({"netcheck-embedded:a.svg": (b"<svg/>", "image/svg+xml")})
        assert fetcher.fetch("netcheck-embedded:a.svg").read() == b"<svg/>"
        for url in ("netcheck-embedded:b.svg", "file:///etc/passwd", "http://x.test/",
                    "data:text/plain,hi"):
            with pytest.raises(ValueError):
                fetcher.fetch(url)
        assert len(fetcher.requests) == 5


class TestFiles:
    def test_per_spec_files_go_through_open_output(self, tmp_path, monkeypatch):
        import netcheck.render.outputs

        bad = check_spec(str(tmp_path / "nowhere" / "rx.toml"))
        specs = (bad, dataclasses.replace(bad, spec="other/rx.toml"),
                 dataclasses.replace(bad, variant="low L/2"))
        calls = []
        real = netcheck.render.outputs.open_output

        def spy(path, binary=False):
            calls.append((Path(path).name, binary))
            return real(path, binary)

        monkeypatch.setattr(netcheck.render.outputs, "open_output", spy)
        written = pdf.render_per_spec(CheckResult(specs, "0.1.0", CREATED), tmp_path / "out")
        names = ["rx.pdf", "rx-2.pdf", "rx-low_L_2.pdf"]
        assert [p.name for p in written] == names
        assert calls == [(n, True) for n in names]
        assert sorted(p.name for p in (tmp_path / "out").iterdir()) == sorted(names)
        assert "NOT CHECKED" in pdf_text((tmp_path / "out" / "rx.pdf").read_bytes(), slice(0, 1))

    # The font subsetter weasyprint uses depends on the machine: HarfBuzz's
    # (libharfbuzz-subset0) when it is installed, fontTools' otherwise. fontTools stamps
    # the time it writes a subset into the font's head.modified field, so the report
    # pins that time (pdf.font_clock). Each case renders in two other interpreters
    # (other hash seeds) whose clocks read 400 days apart.
    @pytest.mark.parametrize("subsetter", ["fonttools", "harfbuzz"])
    def test_byte_identical_across_processes(self, passing, tmp_path, subsetter):
        """Other interpreters, other hash seeds, other clocks: the same bytes."""
        from weasyprint.pdf import fonts

        if subsetter == "harfbuzz" and fonts.harfbuzz_subset is None:
            pytest.skip("libharfbuzz-subset0 is not installed here (.ci/run installs it)")
        with open(tmp_path / "result.pickle", "wb") as f:
            pickle.dump(passing.result, f)
        code = ("import pickle, sys, time\n"
                "from weasyprint.pdf import fonts\n"
                "if sys.argv[3] == 'fonttools':\n"
                "    fonts.harfbuzz_subset = None\n"
                "real = time.time\n"
                "time.time = lambda: real() + float(sys.argv[4])\n"
                "from netcheck.report import pdf\n"
                "r = pickle.load(open(sys.argv[1], 'rb'))\n"
                "open(sys.argv[2], 'wb').write(pdf.render_bytes(r))\n")
        env = {k: v for k, v in os.environ.items() if k != "SOURCE_DATE_EPOCH"}
        env["PYTHONPATH"] = os.pathsep.join([str(ROOT), os.environ.get("PYTHONPATH", "")])
        outputs = []
        for seed, shift in (("12345", "0"), ("54321", str(400 * 86400))):
            out = tmp_path / f"again-{seed}.pdf"
            subprocess.run([sys.executable, "-c", code, str(tmp_path / "result.pickle"),
                            str(out), subsetter, shift], cwd=ROOT,
                           env={**env, "PYTHONHASHSEED": seed}, check=True,
                           capture_output=True, timeout=120)
            outputs.append(out.read_bytes())
        assert outputs[0] == outputs[1]
        if subsetter == ("harfbuzz" if fonts.harfbuzz_subset is not None else "fonttools"):
            assert outputs[0] == passing.data  # the subsetter this process used too

    def test_font_clock_restores_the_environment(self, monkeypatch):
        monkeypatch.setenv("SOURCE_DATE_EPOCH", "")
        with pdf.font_clock(CREATED):
            assert os.environ["SOURCE_DATE_EPOCH"] == EPOCH
        assert os.environ["SOURCE_DATE_EPOCH"] == ""
        monkeypatch.delenv("SOURCE_DATE_EPOCH")
        with pdf.font_clock(""):
            assert os.environ["SOURCE_DATE_EPOCH"] == "0"
        assert "SOURCE_DATE_EPOCH" not in os.environ

    def test_dates_come_from_the_result(self, passing, monkeypatch):
        from netcheck.cli.check import created_utc

        monkeypatch.setenv("SOURCE_DATE_EPOCH", EPOCH)
        assert created_utc() == CREATED == passing.result.created_utc
        meta = PdfReader(io.BytesIO(passing.data)).metadata
        assert meta.creation_date.isoformat().startswith("2026-01-01T00:00:00")
        assert meta.modification_date == meta.creation_date


class TestGit:
    def test_outside_a_repository(self, tmp_path):
        assert pdf.git_state(tmp_path).text == "not in a git repository"
        assert "no folder" in pdf.git_state(tmp_path / "missing").text

    @pytest.mark.skipif(shutil.which("git") is None, reason="git not installed")
    def test_commit_and_dirty_state(self, tmp_path):
        env = {**os.environ, "GIT_CONFIG_GLOBAL": os.devnull, "GIT_CONFIG_SYSTEM": os.devnull}

        def git(*args):
            subprocess.run(["git", "-c", "user.name=Q", "-c", "user.email=q@example.invalid",
                            *args], cwd=tmp_path, env=env, check=True, capture_output=True)

        (tmp_path / "a.cir").write_text("t\n.end\n")
        git("init", "-q")
        git("add", "a.cir")
        git("commit", "-q", "-m", "one")
        clean = pdf.git_state(tmp_path, (str(tmp_path / "a.cir"),))
        assert clean.dirty is False and len(clean.commit) == 40
        assert clean.text == f"commit {clean.commit}; working tree clean"
        (tmp_path / "a.cir").write_text("t\nR1 a 0 1\n.end\n")
        dirty = pdf.git_state(tmp_path, (str(tmp_path / "a.cir"),))
        assert dirty.dirty is True and "uncommitted changes" in dirty.text
        assert dirty.changed_inputs == (f"{os.path.normpath(tmp_path / 'a.cir')} "
                                        "(uncommitted changes)",)


def test_heavy_libraries_load_lazily():
    code = ("import sys, netcheck.cli, netcheck.report.pdf, netcheck.report.plots, "
            "netcheck.render; print(' '.join(m for m in ('matplotlib', 'weasyprint', 'jinja2') "
            "if m in sys.modules))")
    env = {**os.environ, "PYTHONPATH": os.pathsep.join([str(ROOT), os.environ.get("PYTHONPATH", "")])}
    out = subprocess.run([sys.executable, "-c", code], cwd=ROOT, env=env, capture_output=True,
                         text=True, timeout=60, check=True)
    assert out.stdout.strip() == ""


def test_plots_use_no_pyplot(passing):
    assert "matplotlib.pyplot" not in sys.modules
    assert np.all(np.isfinite(passing.result.specs[0].curves.gain_db))
