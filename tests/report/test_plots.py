"""Report plots: zoom choice, tags, panels, and deterministic SVG holding no file text."""

from __future__ import annotations

import math
import re
import sys
from pathlib import Path

import numpy as np
import pytest

from netcheck.analyses.nominal import check_spec
from netcheck.report import plots
from netcheck.result import Curves, LimitResult, MaskBand, SpecResult, Status

ROOT = Path(__file__).resolve().parents[2]
FC = 1e3  # Hz, corner of the synthetic first-order low-pass


def lowpass(mask=(), limits=(), measurements=()) -> SpecResult:
    """A SpecResult over H = 1 / (1 + j f/FC), 10 Hz to 100 kHz (closed form)."""
    f = np.logspace(1, 5, 161)
    h = 1.0 / (1.0 + 1j * f / FC)
    tau = (1.0 / (2 * math.pi * FC)) / (1.0 + (f / FC) ** 2)  # -dφ/dω of a real pole
    curves = Curves(f, 20 * np.log10(np.abs(h)), np.degrees(np.angle(h)), tau)
    status = Status.FAIL if any(x.status is Status.FAIL for x in limits) else Status.PASS
    return SpecResult("lp.toml", "lp.cir", "Quillmere low-pass", status, tuple(limits),
                      tuple(measurements), curves=curves, mask=tuple(mask))


def limit(name, status=Status.PASS, measured=-0.5, at_hz=200.0, unit="dB", kind="gain"):
    margin = 0.5 if status is Status.PASS else -0.5
    return LimitResult(name, kind, status, measured, -1.0, None, margin, unit, at_hz)


@pytest.fixture(scope="module")
def rx40k() -> SpecResult:
    return check_spec(str(ROOT / "specs" / "rx40k.toml"))


class TestZoom:
    def test_resonance_zoom_holds_the_half_power_edges(self, rx40k):
        lo, hi = plots.zoom_window(rx40k)
        f_low, f_high = rx40k.measurement("f_low_hz"), rx40k.measurement("f_high_hz")
        bw = f_high - f_low
        assert lo == pytest.approx(f_low - 1.2 * bw) and hi == pytest.approx(f_high + 1.2 * bw)

    def test_pass_band_zoom_widens_the_pass_bands(self):
        spec = lowpass(mask=[MaskBand("pass", 10.0, 500.0, -1.0, 0.5),
                             MaskBand("stop", 20e3, 1e5, None, -20.0)])
        lo, hi = plots.zoom_window(spec)
        pad = 0.08 * math.log10(500.0 / 10.0) + 0.01
        assert lo == 10.0  # clipped at the sweep start
        assert hi == pytest.approx(500.0 * 10 ** pad)

    def test_no_zoom_without_pass_band_or_resonance(self):
        assert plots.zoom_window(lowpass()) is None
        assert plots.zoom_window(lowpass(mask=[MaskBand("stop", 2e4, 1e5, None, -20)])) is None


class TestTags:
    def test_masks_and_failures_are_numbered(self):
        spec = lowpass(mask=[MaskBand("pass", 10.0, 500.0, -1.0, None),
                             MaskBand("odd", 10.0, 20.0, 0.0, 1.0, quantity="unknown")],
                       limits=[limit("pass"), limit("Q", Status.FAIL, 0.4, 1e3, ""),
                               limit("no where", Status.FAIL, at_hz=None)])
        masks, fails = plots.tags_for(spec)
        # tagged by position in the spec's limits, counted from 1: "pass" is limit 1, "Q" 2
        assert [(t.tag, t.number) for t in masks.values()] == [("#1", 1)]
        assert masks[0].name == "pass" and masks[0].status is Status.PASS
        assert [(i, t.tag, t.name) for i, t in fails.items()] == [(1, "#2", "Q")]
        assert "worst value 0.4000 at 1.0000 kHz" in fails[1].text


#: a netlist part name: element letter and digits (the first letter of a SPICE-style
#: element line names its kind: R resistor, M MOSFET, F current-controlled source, …)
PART_NAME = re.compile(r"^[RLCVIEFGHKMQDJXBSTW]\d+\b")


def svg_texts(svg: str) -> list[str]:
    """The text elements of an SVG figure (text is kept as text: svg.fonttype none)."""
    return re.findall(r"<text[^>]*>([^<]*)</text>", svg)


class TestTagsAreNotPartNames:
    def test_no_tag_or_plot_word_reads_as_a_part_name(self, rx40k):
        failing = check_spec(str(ROOT / "specs" / "failing" / "rx40k_revA.toml"))
        loose = lowpass(mask=[MaskBand("phase", 100.0, 2e3, -80.0, 0.0, "phase_deg")],
                        limits=[limit("delay", Status.FAIL, 1.5e-4, 30.0, "s", "group_delay")])
        figs = [p for s in (rx40k, failing, loose) for p in plots.spec_plots(s)]
        figs += plots.family_plots([rx40k, failing])
        tags = [k.tag for p in figs for k in p.keys]
        assert "#4" in tags and "var 2" in tags and "band 1" in tags  # every kind checked
        for tag in tags:
            assert not PART_NAME.search(tag), tag
        for p in figs:
            for text in svg_texts(p.svg):
                for word in text.split():
                    assert not PART_NAME.search(word), (p.title, text)

    def test_failing_limit_carries_its_number(self):
        spec = check_spec(str(ROOT / "specs" / "failing" / "rx40k_revA.toml"))
        labels = [t for p in plots.spec_plots(spec) for t in svg_texts(p.svg) if "FAIL" in t]
        failed = [(k, lim) for k, lim in enumerate(spec.limits) if lim.status is Status.FAIL]
        assert failed
        for k, lim in failed:
            # the k-th limit (0-based) of the spec is row #k+1 of the report's limit table
            assert plots.limit_tag(k) == f"#{k + 1}"
            assert any(f"#{k + 1}" in label.split() for label in labels), (lim.name, labels)
        # a band and the worst point of one limit share a tag, and one row of the key
        overview = plots.spec_plots(spec)[0]
        stop = [key for key in overview.keys if key.name == "low stop-band"]
        assert len(stop) == 1 and "allowed" in stop[0].text and "worst value" in stop[0].text


class TestFigures:
    def test_rx40k_has_overview_zoom_and_delay(self, rx40k):
        figs = plots.spec_plots(rx40k)
        assert [p.title for p in figs] == ["Gain over the whole sweep",
                                           "Pass-band and resonance in detail", "Group delay"]
        assert all(p.svg.startswith("<svg") and p.svg.rstrip().endswith("</svg>") for p in figs)
        assert "matplotlib.pyplot" not in sys.modules

    def test_svg_is_deterministic_and_has_no_date(self, rx40k):
        one, two = plots.spec_plots(rx40k), plots.spec_plots(rx40k)
        assert [p.svg for p in one] == [p.svg for p in two]
        assert not any(re.search(r"<dc:date>|Date", p.svg) for p in one)

    def test_no_text_from_files_in_the_svg(self):
        name = '<img src="file:///etc/passwd"> pass'
        spec = lowpass(mask=[MaskBand(name, 10.0, 500.0, -1.0, -0.1)],
                       limits=[limit(name, Status.FAIL, -1.2, 900.0)])
        figs = plots.spec_plots(spec)
        for p in figs:
            assert "passwd" not in p.svg and "&lt;img" not in p.svg
        keys = {k.tag: k for p in figs for k in p.keys}
        assert keys["#1"].name == name and keys["#1"].status is Status.FAIL

    def test_phase_and_delay_panels_follow_the_limits(self):
        assert len(plots.spec_plots(lowpass())) == 1
        spec = lowpass(limits=[limit("phase", kind="phase", unit="deg", measured=-30.0),
                               limit("delay", Status.FAIL, 1.5e-4, 30.0, "s", "group_delay")])
        figs = plots.spec_plots(spec)
        assert figs[-1].title == "Phase and group delay"
        assert [k.tag for k in figs[-1].keys] == ["#2"]  # the delay failure, on its panel
        assert all("#2" not in [k.tag for k in p.keys] for p in figs[:-1])

    def test_masks_on_delay_and_phase_are_drawn(self):
        spec = lowpass(mask=[MaskBand("delay", 100.0, 2e3, None, 1e-4, "group_delay_s"),
                             MaskBand("phase", 100.0, 2e3, -80.0, 0.0, "phase_deg")],
                       limits=[limit("delay", unit="s", kind="group_delay")])
        last = plots.spec_plots(spec)[-1]
        # "delay" is limit 1; the phase band has no limit of its name
        assert [k.tag for k in last.keys] == ["#1", "band 1"]

    def test_frequency_limits_are_marked_where_found(self, rx40k):
        lim = next(x for x in rx40k.limits if x.unit == "Hz")
        failed = type(rx40k)(**{**{f: getattr(rx40k, f) for f in rx40k.__dataclass_fields__},
                               "limits": (LimitResult(lim.name, lim.kind, Status.FAIL,
                                                      lim.measured, 1.0, 2.0, -1.0, "Hz",
                                                      lim.at_hz),),
                               "status": Status.FAIL})
        figs = plots.spec_plots(failed)
        overview, zoom = figs[0], figs[1]
        assert "#1" not in [k.tag for k in overview.keys]  # inside the zoom: tagged there
        assert "#1" in [k.tag for k in zoom.keys]
