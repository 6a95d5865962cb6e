"""Limit kinds: the LIMITS table, margins and their sign, and each kind judged on closed forms.

The probe here is built from closed-form transfer functions (measure.FunctionCurve), so
these tests do not depend on the solver or on netcheck.analyses.nominal.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest

from netcheck.spec.limits import LIMITS, Limit, build_limit, judge_range
from netcheck.measure import (HALF_POWER_DB, Extremum, FunctionCurve, band_extremes, corner,
                              peak, resonance)
from netcheck.result import LimitResult, MaskBand, Status
from netcheck.spec import SpecReader, Sweep

TWO_PI = 2 * math.pi
SWEEP = Sweep(10.0, 1e6, 50)
GRID = SWEEP.grid()


class Probe:
    """Closed-form stand-in for netcheck.analyses.nominal.SpecProbe."""

    def __init__(self, h, dh, z=None, dz=None):
        self.curve = FunctionCurve(GRID, h, dh)
        self.sweep = SWEEP
        self._z = None if z is None else FunctionCurve(GRID, z, dz)

    def peak(self):
        return peak(self.curve)

    def resonance(self, level_db, band):
        lo, hi = band if band else (None, None)
        return resonance(self.curve, level_db, lo, hi)

    def impedance(self):
        return self._z

    def corner(self, level_db, reference_db, side):
        return corner(self.curve, level_db, reference_db, side)

    def extremes(self, quantity, lo, hi):
        if quantity == "impedance_db":
            return band_extremes(self._z, "gain_db", lo, hi)
        return band_extremes(self.curve, quantity, lo, hi)


# First-order RC low-pass, corner FC: H = 1 / (1 + j f/FC) (any circuits text).
FC = 1e3
R_RC, C_RC = 1e3, 1 / (TWO_PI * 1e3 * 1e3)
rc_h = lambda f: 1 / (1 + 1j * f / FC)  # noqa: E731
rc_dh = lambda f: -(1j / FC) / (1 + 1j * f / FC) ** 2  # noqa: E731
# Its input impedance seen by the source: Z = R + 1/(j 2 pi f C).
rc_z = lambda f: R_RC + 1 / (1j * TWO_PI * f * C_RC)  # noqa: E731
rc_dz = lambda f: -1 / (1j * TWO_PI * f * f * C_RC)  # noqa: E731
RC = Probe(rc_h, rc_dh, rc_z, rc_dz)


def rc_gain_db(f):
    """20 log10 |H| = -10 log10(1 + (f/FC)^2)."""
    return -10 * math.log10(1 + (f / FC) ** 2)


def rc_delay_s(f):
    """Group delay -d(phase)/d(omega) of the RC: (1/(2 pi FC)) / (1 + (f/FC)^2)."""
    return 1 / (TWO_PI * FC) / (1 + (f / FC) ** 2)


# Series RLC band-pass across R: H = R / (R + j(wL - 1/(wC))) (any circuits text).
R, L, C = 20.0, 10e-3, 2.5e-9
W0 = 1 / math.sqrt(L * C)
F0 = W0 / TWO_PI


def rlc_h(f):
    w = TWO_PI * f
    return R / (R + 1j * (w * L - 1 / (w * C)))


def rlc_dh(f):
    w = TWO_PI * f
    return -R * 1j * (L + 1 / (w * w * C)) * TWO_PI / (R + 1j * (w * L - 1 / (w * C))) ** 2


RLC = Probe(rlc_h, rlc_dh)


def build(table: dict, index: int = 0) -> Limit:
    return build_limit(table, index, "q.toml", SWEEP, 7)


def only(results: tuple[LimitResult, ...]) -> LimitResult:
    assert len(results) == 1
    return results[0]


#: one table per kind using every key the kind accepts (kept in step with KEYS below)
FULL_TABLES = {
    "gain": {"kind": "gain", "name": "g", "band": ["100", "1k"], "min_db": -4, "max_db": 1,
             "reference": "peak"},
    "ripple": {"kind": "ripple", "name": "r", "band": ["100", "1k"], "max_db": 3.5},
    "resonance": {"kind": "resonance", "name": "res", "center": "31.83k",
                  "center_tolerance": "1%", "bandwidth": ["100", "1k"], "q": [50, 200],
                  "level_db": 3, "band": ["10k", "100k"]},
    "corner": {"kind": "corner", "name": "c", "range": ["990", "1010"], "level_db": 3,
               "side": "high", "reference_db": 0},
    "group_delay": {"kind": "group_delay", "name": "gd", "band": ["100", "1k"],
                    "max": "200u", "min": "50u", "max_variation": "5%", "reference_hz": "10"},
    "phase": {"kind": "phase", "name": "p", "band": ["100", "1k"], "range_deg": [-50, 0],
              "max_linear_deviation_deg": 2},
    "impedance": {"kind": "impedance", "name": "z", "band": ["100", "1k"],
                  "range": ["1k", "2k"]},
    "bandwidth": {"kind": "bandwidth", "name": "bw", "range": ["100", "10k"], "level_db": 6,
                  "reference": "mean", "reference_band": ["100", "200"]},
    "shape_factor": {"kind": "shape_factor", "name": "sf", "range": [1, 3],
                     "levels_db": [6, 60], "reference": "at", "reference_at": "100"},
    "notch": {"kind": "notch", "name": "n", "band": ["100", "10k"], "center": "1k",
              "center_tolerance": "500ppm", "depth_db": {"min": 40}, "reference": ["10", "100k"],
              "level_db": 3, "width": ["100", "2k"], "q": {"nominal": 1, "tolerance": "10%"}},
    "port": {"kind": "port", "name": "p", "quantity": "return_loss", "port": "input",
             "band": ["100", "1k"], "min": 10, "max": 40},
    "noise": {"kind": "noise", "name": "nz", "quantity": "noise_figure", "band": ["100", "1k"],
              "min": 0, "max": 3, "temperature_c": 25, "source_resistor": "R1",
              "load_resistor": "R2"},
    "step": {"kind": "step", "name": "st", "quantity": "rise_time", "min": 0, "max": "1m",
             "levels": [20, 80], "duration": "5m"},
    "crossover": {"kind": "crossover", "name": "x", "outputs": ["low", "high"],
                  "band": ["100", "10k"], "range": ["900", "1.1k"], "level_db": [-3.2, -2.8]},
}
#: keys that exclude those of the full table (another form of the same kind): one more
#: table each, so that every key is used by some table of its kind
MORE_TABLES = {
    "step": [{"kind": "step", "name": "st", "quantity": "mask", "duration": "1m",
              "min_points": [[0, 0], ["1m", 0.5]], "max_points": [[0, 0.5], ["1m", 1.1]]},
             {"kind": "step", "name": "st", "quantity": "settling_time", "max": "1m",
              "settle_band": "0.1%"},
             {"kind": "step", "name": "st", "quantity": "settling_time", "max": "1m",
              "settle_bits": 12}],
    "noise": [{"kind": "noise", "name": "nz", "quantity": "snr", "band": ["100", "1k"],
               "min": 60, "signal_rms": 1, "signal_hz": "500"}],
    "gain": [{"kind": "gain", "name": "g", "at": "1k", "max_db": 1, "reference": "mean",
              "reference_band": ["100", "200"]},
             {"kind": "gain", "name": "g", "at_multiple": 2, "anchor": "corner",
              "anchor_level_db": 3, "anchor_side": "high", "max_db": -3,
              "reference_at": "100"},
             {"kind": "gain", "name": "g", "band_multiple": [2, 10], "anchor": "centre",
              "anchor_level_db": 20, "max_db": -20},
             {"kind": "gain", "name": "g", "band": ["100", "1k"], "max_db": 0,
              "slope_db_per_decade": -6, "min_db": -20},
             {"kind": "gain", "name": "g", "min_points": [["100", -30], ["1k", -20]],
              "max_points": [["100", 1], ["1k", 0]]}],
    "corner": [{"kind": "corner", "name": "c", "range": ["990", "1010"], "reference": "max",
                "reference_band": ["100", "200"]},
               {"kind": "corner", "name": "c", "range": ["990", "1010"],
                "reference_at": "100"}],
    "bandwidth": [{"kind": "bandwidth", "name": "bw", "range": ["100", "10k"],
                   "reference_at": "100"}],
    "shape_factor": [{"kind": "shape_factor", "name": "sf", "range": [1, 3],
                      "levels_db": [6, 60], "reference": "min",
                      "reference_band": ["100", "200"]}],
}


class TestTable:
    def test_every_kind_is_registered_under_its_key(self):
        assert set(LIMITS) == set(FULL_TABLES)
        for kind, cls in LIMITS.items():
            assert cls.kind == kind and issubclass(cls, Limit)
            assert cls.SUMMARY and cls.KEYS
            assert dataclasses.is_dataclass(cls)

    @pytest.mark.parametrize("kind", sorted(FULL_TABLES))
    def test_full_table_uses_every_key(self, kind):
        # If a kind gains a key, this table (and docs/spec-format.md) must show it.
        tables = [FULL_TABLES[kind], *MORE_TABLES.get(kind, [])]
        assert set().union(*tables) - {"kind", "name"} == set(LIMITS[kind].KEYS)
        for table in tables:
            lim = build(table)
            assert type(lim) is LIMITS[kind] and lim.name == table["name"]
            with pytest.raises(dataclasses.FrozenInstanceError):
                lim.name = "other"

    def test_reader_rejects_keys_of_another_kind(self):
        with pytest.raises(ValueError) as info:
            build({"kind": "ripple", "band": ["100", "1k"], "max_db": 1, "min_db": 0})
        assert info.value.where == "limits[0].min_db" and info.value.code == "spec-201"

    def test_limit_results_carry_index_and_line(self):
        lim = build(FULL_TABLES["ripple"], index=4)
        res = only(lim.judge(RC))
        assert (res.index, res.line, res.kind) == (4, 7, "ripple")


class TestMargins:
    """Margin = distance inside the limit, in the limit's unit: positive passes."""

    def test_upper_bound(self):
        r = judge_range("n", "gain", None, -20.0, Extremum(1.0, -30.0), Extremum(2e3, -25.0),
                        "dB", "", "", 0, None)
        assert (r.status, r.measured, r.margin, r.at_hz) == (Status.PASS, -25.0, 5.0, 2e3)
        assert (r.lower, r.upper) == (None, -20.0)

    def test_lower_bound_violated(self):
        r = judge_range("n", "gain", -1.0, None, Extremum(3e3, -1.5), Extremum(1e3, 0.2),
                        "dB", "", "", 0, None)
        assert (r.status, r.measured, r.margin, r.at_hz) == (Status.FAIL, -1.5, -0.5, 3e3)

    def test_the_side_closest_to_failing_decides(self):
        # min is 0.4 inside its bound, max only 0.1 inside: the max decides.
        r = judge_range("n", "gain", -1.0, 0.5, Extremum(1.0, -0.6), Extremum(2.0, 0.4),
                        "dB", "", "", 0, None)
        assert (r.measured, r.at_hz) == (0.4, 2.0)
        assert math.isclose(r.margin, 0.1, abs_tol=1e-12)

    def test_touching_the_bound_passes(self):
        r = judge_range("n", "q", 10.0, 12.0, Extremum(1.0, 10.0), Extremum(1.0, 10.0),
                        "", "", "", 0, None)
        assert (r.status, r.margin) == (Status.PASS, 0.0)

    def test_nan_fails(self):
        e = Extremum(1.0, math.nan)
        r = judge_range("n", "q", 10.0, None, e, e, "", "", "", 0, None)
        assert r.status is Status.FAIL and r.margin == -math.inf

    def test_bound_text(self):
        r = judge_range("n", "gain", -1.0, 0.5, Extremum(1.0, 0.0), Extremum(1.0, 0.0),
                        "dB", "", "", 0, None)
        assert r.bound_text == "-1.000 dB … 0.500 dB"


class TestGain:
    # Closed form: the RC gain falls monotonically, so over [100, 1k] Hz the maximum is
    # at 100 Hz and the minimum at the corner, -10 log10 2 dB.
    def test_min_and_max(self):
        lim = build({"kind": "gain", "band": ["100", "1k"], "min_db": -3.1, "max_db": 0})
        r = only(lim.judge(RC))
        assert r.status is Status.PASS and r.unit == "dB"
        assert math.isclose(r.measured, rc_gain_db(100.0), abs_tol=1e-12)
        assert math.isclose(r.margin, -rc_gain_db(100.0), rel_tol=1e-9)
        assert r.at_hz == 100.0

    def test_min_violated_at_the_corner(self):
        lim = build({"kind": "gain", "band": ["100", "1k"], "min_db": -3})
        r = only(lim.judge(RC))
        assert r.status is Status.FAIL and r.at_hz == 1e3
        assert math.isclose(r.measured, -HALF_POWER_DB, rel_tol=1e-12)
        assert math.isclose(r.margin, 3 - HALF_POWER_DB, rel_tol=1e-9)  # measured - min

    def test_reference_peak(self):
        # the band maximum of the RLC is its peak: 0 dB re the peak, whatever R is
        lim = build({"kind": "gain", "band": ["10k", "100k"], "max_db": -1,
                     "reference": "peak"})
        r = only(lim.judge(RLC))
        assert r.status is Status.FAIL
        assert abs(r.measured) < 1e-9
        assert math.isclose(r.at_hz, F0, rel_tol=1e-9)

    @pytest.mark.parametrize("table, name", [
        ({"band": ["100", "1k"], "min_db": -3}, "pass-band gain 100.0 Hz–1.000 kHz"),
        ({"band": ["10k", "100k"], "max_db": -40}, "stop-band gain 10.00–100.0 kHz"),
        ({"band": ["10k", "100k"], "min_db": -80, "max_db": -40}, "gain 10.00–100.0 kHz"),
    ])
    def test_default_names(self, table, name):
        assert build({"kind": "gain", **table}).name == name

    def test_mask(self):
        lim = build({"kind": "gain", "band": ["100", "1k"], "min_db": -3})
        assert lim.mask() == (MaskBand(lim.name, 100.0, 1e3, -3.0, None, "gain_db"),)


class TestRipple:
    def test_max_minus_min(self):
        lim = build({"kind": "ripple", "band": ["100", "1k"], "max_db": 3})
        r = only(lim.judge(RC))
        expected = rc_gain_db(100.0) - rc_gain_db(1e3)
        assert math.isclose(r.measured, expected, rel_tol=1e-12)
        assert math.isclose(r.margin, 3 - expected, rel_tol=1e-12)
        assert r.status is Status.PASS and r.upper == 3.0 and r.lower is None


class TestCorner:
    def test_half_power_corner(self):
        # re 0 dB (the DC gain) the half-power point is FC exactly
        r = only(build({"kind": "corner", "range": ["990", "1010"], "reference_db": 0})
                 .judge(RC))
        assert math.isclose(r.measured, FC, rel_tol=1e-12)
        assert math.isclose(r.margin, 10.0, rel_tol=1e-9)

    def test_default_reference_is_the_peak_of_the_sweep(self):
        # the sweep starts at 10 Hz, where |H|^2 = 1/(1 + 1e-4): the corner is where
        # 1 + (f/FC)^2 = 2 (1 + 1e-4)
        r = only(build({"kind": "corner", "range": ["990", "1010"]}).judge(RC))
        assert math.isclose(r.measured, FC * math.sqrt(1 + 2e-4), rel_tol=1e-12)

    def test_level_and_reference(self):
        # |H|^2 = 10^(-6/10) where (f/FC)^2 = 10^0.6 - 1, re 0 dB
        lim = build({"kind": "corner", "range": ["1k", "2k"], "level_db": 6,
                     "reference_db": 0, "side": "high"})
        r = only(lim.judge(RC))
        assert math.isclose(r.measured, FC * math.sqrt(10 ** 0.6 - 1), rel_tol=1e-12)
        assert lim.name == "corner (-6 dB)"

    def test_wrong_side_is_an_error_result(self):
        r = only(build({"kind": "corner", "range": ["1k", "2k"], "side": "low"}).judge(RC))
        assert r.status is Status.ERROR and r.measured is None and r.margin is None
        assert "never falls" in r.message and r.unit == "Hz"


class TestGroupDelay:
    def test_max_min_and_variation(self):
        lim = build({"kind": "group_delay", "band": ["100", "1k"], "max": "160u",
                     "max_variation": "50u"})
        rng, var = lim.judge(RC)
        # the RC delay falls monotonically: max at 100 Hz, min at 1 kHz
        assert math.isclose(rng.measured, rc_delay_s(100.0), rel_tol=1e-9)
        assert rng.at_hz == pytest.approx(100.0, rel=1e-6) and rng.unit == "s"
        assert rng.status is Status.PASS
        expected = rc_delay_s(100.0) - rc_delay_s(1e3)
        assert math.isclose(var.measured, expected, rel_tol=1e-9)
        assert var.status is Status.FAIL and math.isclose(var.margin, 50e-6 - expected,
                                                          rel_tol=1e-9)
        assert var.name.endswith(": variation")


class TestPhase:
    def test_range(self):
        # phase of 1/(1 + j f/FC) is -atan(f/FC): -45 degrees at the corner
        r = only(build({"kind": "phase", "band": ["100", "1k"], "range_deg": [-40, 0]})
                 .judge(RC))
        assert r.status is Status.FAIL and r.unit == "deg"
        assert math.isclose(r.measured, -45.0, rel_tol=1e-12)
        assert math.isclose(r.margin, -5.0, rel_tol=1e-9)


class TestImpedance:
    def test_range_in_ohms(self):
        # |Z| = sqrt(R^2 + (1/(2 pi f C))^2) falls with f: largest at 100 Hz
        r = only(build({"kind": "impedance", "band": ["100", "1k"], "range": ["1k", "5k"]})
                 .judge(RC))
        zmax = math.hypot(R_RC, 1 / (TWO_PI * 100.0 * C_RC))
        assert math.isclose(r.measured, zmax, rel_tol=1e-9)
        assert r.unit == "Ω" and r.status is Status.FAIL
        assert math.isclose(r.margin, 5e3 - zmax, rel_tol=1e-9)


class TestResonance:
    def edges(self, k: float) -> tuple[float, float]:
        """Where |wL - 1/(wC)| = k R: w = -+kR/2L + sqrt((kR/2L)^2 + 1/LC), Hz."""
        a = k * R / (2 * L)
        root = math.sqrt(a * a + W0 * W0)
        return (root - a) / TWO_PI, (root + a) / TWO_PI

    def test_half_power(self):
        lim = build({"kind": "resonance", "center": "31.8k", "center_tolerance": "1%",
                     "bandwidth": ["300", "350"], "q": [90, 110]})
        centre, bw, q = lim.judge(RLC)
        lo, hi = self.edges(1.0)
        assert math.isclose(centre.measured, F0, rel_tol=1e-9)  # sqrt(f_low f_high) = f0
        assert math.isclose(centre.margin, 318.0 - abs(F0 - 31.8e3), rel_tol=1e-9)
        assert math.isclose(bw.measured, hi - lo, rel_tol=1e-9)  # = R / (2 pi L)
        assert math.isclose(bw.measured, R / L / TWO_PI, rel_tol=1e-9)
        assert math.isclose(q.measured, W0 * L / R, rel_tol=1e-9)
        assert [r.status for r in (centre, bw, q)] == [Status.PASS] * 3
        assert [r.name for r in (centre, bw, q)] == ["resonance: centre", "resonance: bandwidth",
                                                     "resonance: Q"]

    def test_level_db(self):
        # |H|^2 = 10^(-6/10) where (X/R)^2 = 10^0.6 - 1
        k = math.sqrt(10 ** 0.6 - 1)
        lim = build({"kind": "resonance", "bandwidth": [1, "10k"], "level_db": 6})
        bw = only(lim.judge(RLC))
        lo, hi = self.edges(k)
        assert math.isclose(bw.measured, hi - lo, rel_tol=1e-9)

    def test_no_peak_gives_error_results(self):
        lim = build({"kind": "resonance", "center": "1k", "center_tolerance": "1%",
                     "q": [1, 2]})
        results = lim.judge(RC)  # monotone low-pass: highest gain at the sweep start
        assert [r.status for r in results] == [Status.ERROR, Status.ERROR]
        assert [r.unit for r in results] == ["Hz", ""]
        assert all("no resonance peak" in r.message for r in results)


def test_build_limit_rejects_a_non_table():
    with pytest.raises(ValueError) as info:
        build_limit(3, 2, "q.toml", SWEEP, None)
    assert info.value.where == "limits[2]"


def test_reader_key_paths():
    rd = SpecReader({"a": 1}, "limits[1]", "q.toml", {"a": ""})
    assert rd.key_path("a") == "limits[1].a" and rd.key_path("") == "limits[1]"
    assert SpecReader({}, "", "q.toml", {}).key_path("") == "(top level)"
    np.testing.assert_equal(rd.number("a"), 1.0)
