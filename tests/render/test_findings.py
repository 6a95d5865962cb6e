"""The words every output uses for what a result found (netcheck.render.findings).

The worst limit is defined by netcheck itself (docs/ci.md, "The headline"): a margin
relative to the allowed span of a two-sided limit or to the magnitude of a one-sided
bound. The expected rankings below are worked out by hand in each test from that rule.
"""

from __future__ import annotations

import os

import pytest

from netcheck.netlist.source import display_path
from netcheck.render.findings import (caution_line, run_headline, shortfall, spec_headline,
                                      worst_limit)
from netcheck.result import Caution, CheckResult, LimitResult, SpecResult, Status


def lim(name, status, margin, lower=None, upper=None, unit="dB", index=0):
    measured = None if margin is None else 0.0
    return LimitResult(name, "gain", status, measured, lower, upper, margin, unit, 1e3,
                       index=index)


#: the superseded receiver of the samples: bandwidth 3.000-4.000 kHz missed by 6.924 kHz,
#: Q 10-13 missed by 6.339, stop-band <= -20 dB missed by 5.011 dB, centre met
BW = lim("resonance: bandwidth", Status.FAIL, -6924.0, 3000.0, 4000.0, "Hz", 0)
Q = lim("resonance: Q", Status.FAIL, -6.339, 10.0, 13.0, "", 1)
STOP = lim("low stop-band", Status.FAIL, -5.011, None, -20.0, "dB", 2)
CENTRE = lim("resonance: centre", Status.PASS, 389.2, 39600.0, 40400.0, "Hz", 3)


def spec(*limits, title="Quillmere receiver", path="specs/rx.toml", error=None, variant=None):
    status = Status.ERROR if error else max((x.status for x in limits),
                                            key=lambda s: s.rank, default=Status.PASS)
    return SpecResult(path, "rx.cir", title, status, tuple(limits), error=error,
                      variant=variant)


class TestWorst:
    def test_margins_of_different_units_ranked_relative_to_their_bounds(self):
        # by hand: bandwidth -6924 / (4000 - 3000) = -6.92; Q -6.339 / 3 = -2.11;
        # stop-band -5.011 / |-20| = -0.25. In raw numbers the bandwidth would win too,
        # so also check a case where raw numbers and relative ones disagree.
        assert shortfall(BW) == pytest.approx(-6.924)
        assert shortfall(Q) == pytest.approx(-6.339 / 3)
        assert shortfall(STOP) == pytest.approx(-5.011 / 20)
        assert worst_limit((CENTRE, STOP, Q, BW)) is BW
        # -300 Hz on a 100 kHz span (-0.003) is less bad than -2 dB on a -10 dB bound (-0.2),
        # although -300 is the more negative number
        wide = lim("corner", Status.FAIL, -300.0, 0.0, 100e3, "Hz", 0)
        db = lim("stop", Status.FAIL, -2.0, None, -10.0, "dB", 1)
        assert worst_limit((wide, db)) is db

    def test_unmeasured_is_worse_than_any_margin(self):
        lost = lim("group delay", Status.ERROR, None, None, 200e-6, "s", 5)
        assert worst_limit((BW, lost, Q)) is lost

    def test_zero_bound_uses_the_margin_itself(self):
        # phase <= 0 deg missed by 3 deg: scale 1, so shortfall -3, less bad than BW (-6.92)
        phase = lim("phase", Status.FAIL, -3.0, None, 0.0, "deg", 0)
        assert shortfall(phase) == -3.0
        assert worst_limit((phase, BW)) is BW

    def test_first_of_equals_and_none_when_all_met(self):
        a = lim("a", Status.FAIL, -1.0, None, -10.0, "dB", 0)
        b = lim("b", Status.FAIL, -1.0, None, 10.0, "dB", 1)
        assert worst_limit((a, b)) is a
        assert worst_limit((CENTRE,)) is None
        assert worst_limit(()) is None


class TestSpecHeadline:
    def test_missed_with_worst(self):
        assert spec_headline(spec(BW, Q, STOP, CENTRE)) == \
            "3 of 4 limits missed; worst: resonance: bandwidth -6.924 kHz"

    def test_one_missed_names_it(self):
        assert spec_headline(spec(STOP, CENTRE)) == "1 of 2 limits missed (low stop-band -5.011 dB)"

    def test_all_met(self):
        assert spec_headline(spec(CENTRE, CENTRE, CENTRE)) == "all 3 limits met"
        assert spec_headline(spec(CENTRE, CENTRE)) == "both limits met"
        assert spec_headline(spec(CENTRE)) == "1 limit met"

    def test_could_not_be_measured_and_not_applicable(self):
        lost = lim("group delay", Status.ERROR, None, None, 200e-6, "s", 5)
        skip = lim("q", Status.SKIPPED, None, 2.0, 8.0, "", 6)
        assert spec_headline(spec(STOP, lost, CENTRE, skip)) == (
            "1 of 3 limits missed, 1 could not be measured; worst: group delay could not be "
            "measured; 1 not applicable")
        assert spec_headline(spec(lost, CENTRE)) == \
            "1 of 2 limits could not be measured (group delay could not be measured)"

    def test_not_checked(self):
        assert spec_headline(spec(error="x.cir:1:1: error netlist-100: bad")) == "not checked"


class TestRunHeadline:
    def test_worst_over_all_specs_with_its_path(self):
        run = CheckResult((spec(CENTRE, path="specs/ok.toml"),
                           spec(STOP, CENTRE, path="specs/a.toml"),
                           spec(BW, Q, CENTRE, path="specs/failing/../failing/b.toml",
                                variant="rx38k")), "0")
        assert run_headline(run) == ("3 specs: 3 of 6 limits missed (worst: resonance: "
                                     "bandwidth -6.924 kHz in specs/failing/b.toml [rx38k])")

    def test_all_met_and_not_checked(self):
        run = CheckResult((spec(CENTRE, CENTRE), spec(error="bad"), spec(error="bad")), "0")
        assert run_headline(run) == "3 specs: both limits met; 2 specs not checked"

    def test_one_spec_one_miss(self):
        run = CheckResult((spec(STOP, CENTRE, path="specs/a.toml"),), "0")
        assert run_headline(run) == \
            "1 spec: 1 of 2 limits missed (low stop-band -5.011 dB in specs/a.toml)"


class TestLocation:
    def test_folded_path_and_severity_code(self):
        c = Caution("netlist-154", "C1 = 7.19611 nF is not an E48 value",
                    path="specs/../sample_netlists/rx40k.cir", line=9, column=1)
        assert caution_line(c) == ("sample_netlists/rx40k.cir:9:1: warning netlist-154: "
                                   "C1 = 7.19611 nF is not an E48 value")

    def test_without_position(self):
        c = Caution("analysis-voltage", "L1 sees 12× the input", severity="caution")
        assert caution_line(c) == "caution analysis-voltage: L1 sees 12× the input"
        assert caution_line(Caution("netlist-150", "m", path="a.cir", line=4)) == \
            "a.cir:4: warning netlist-150: m"

    def test_absolute_path_folded_not_moved(self):
        # folded (a/../b), as the PDF report and SARIF show it; kept absolute as given
        inside = os.path.join(os.getcwd(), "specs", "..", "sample_netlists", "x.cir")
        assert display_path(inside) == os.path.join(os.getcwd(), "sample_netlists", "x.cir")

    def test_errors_fold_their_paths_the_same_way(self):
        from netcheck.exceptions import NetcheckError
        from netcheck.netlist.source import SourceFile

        span = SourceFile("specs/../sample_netlists/rx40k.cir", "R1 a b 1k\nR9 a b xyz\n").span(2, 8)
        err = NetcheckError("undefined parameter 'xyz'", span, code="netlist-102")
        assert err.format().splitlines()[0] == \
            "sample_netlists/rx40k.cir:2:8: error netlist-102: undefined parameter 'xyz'"
        c = Caution("netlist-154", "m", path="specs/../sample_netlists/rx40k.cir", line=2, column=8)
        assert caution_line(c).split(": warning")[0] == err.location()
