"""Tests of netcheck.analyses.stress: spec parsing, true peak part stress over a sweep, and cautions."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import minimize_scalar

import netcheck.analyses.stress as stress_mod
from netcheck import SpecError, read_netlist
from netcheck.result import LimitResult, Status
from netcheck.analyses.stress import StressResult, judge_stress, stress_cautions
from netcheck.spec.stress import KEYS, QUANTITIES, parse_stress, stress_lines

# Closed forms below are standard circuit theory quoted from memory (not looked up);
# where marked "derived here" the derivation is written out in the comment.
TWO_PI = 2.0 * math.pi

# Series RLC used throughout: V1 → R1 → L1 → C1 → ground.
R_S, L_S, C_S = 10.0, 1e-3, 10e-9
W0 = 1.0 / math.sqrt(L_S * C_S)          # ω0 = 1/√(LC)
F0 = W0 / TWO_PI                          # ≈ 50.33 kHz
Q_S = W0 * L_S / R_S                      # Q = ω0 L / R ≈ 31.6
SERIES_RLC = f"series RLC\nV1 in 0 AC 1\nR1 in a {R_S!r}\nL1 a b {L_S!r}\nC1 b 0 {C_S!r}\n"


def log_grid(f_lo: float, f_hi: float, per_decade: int) -> np.ndarray:
    """Log-spaced sweep grid, Hz, with ``per_decade`` intervals per decade."""
    n = int(round(per_decade * math.log10(f_hi / f_lo))) + 1
    return np.logspace(math.log10(f_lo), math.log10(f_hi), n)


def series_response(grid: np.ndarray):
    return read_netlist(SERIES_RLC).ac("V1", "b", freqs=grid)


def one(table: dict, response, **kw) -> StressResult:
    """Judge a single [[stress]] table that matches exactly one part."""
    results = judge_stress(parse_stress([table], "demo.toml"), response, **kw)
    assert len(results) == 1
    return results[0]


def rel(a: float, b: float) -> float:
    return abs(a - b) / abs(b)


class TestParseStress:
    def test_amplitude_inheritance_rms_and_peak_prefixes(self):
        lims = parse_stress([
            {"source_amplitude": "10", "parts": "C*", "max_voltage": "50"},
            {"parts": "L*", "max_current": "500m"},
            {"source_amplitude": "rms:7.07", "parts": "R*", "max_power": 0.25},
            {"parts": "X1.*", "max_voltage": 400},
            {"source_amplitude": "PEAK: 2.5", "parts": "r1", "max_current": "1"},
        ], "demo.toml")
        got = [(x.index, x.parts, x.quantity, x.rating, x.rms, x.inherited) for x in lims]
        assert got == [(0, "C*", "voltage", 50.0, False, False),
                       (1, "L*", "current", 0.5, False, True),
                       (2, "R*", "power", 0.25, True, False),
                       (3, "X1.*", "voltage", 400.0, True, True),
                       (4, "r1", "current", 1.0, False, False)]
        amps = [x.amplitude for x in lims]
        assert amps[:2] == [10.0, 10.0]
        # RMS → peak of a sinusoid: ×√2
        assert amps[2] == pytest.approx(7.07 * math.sqrt(2.0), rel=1e-15)
        assert amps[3] == amps[2]           # inherits the converted (peak) value
        assert amps[4] == 2.5
        assert [x.unit for x in lims] == ["V", "A", "W", "V", "A"]

    def test_every_key_is_described(self):
        assert set(KEYS) == {"source_amplitude", "parts", "max_voltage", "max_current",
                             "max_power"}
        assert all(isinstance(v, str) and len(v) > 20 for v in KEYS.values())
        assert set(QUANTITIES) <= set(KEYS)
        assert "PEAK" in KEYS["source_amplitude"] and "rms:" in KEYS["source_amplitude"]

    def test_lines_locate_tables(self):
        text = ('title = "t"\n[[limits]]\nkind = "gain"\n\n[[stress]]\nparts = "C*"\n'
                'source_amplitude = 1\nmax_voltage = 5\n  [[ stress ]]\nparts = "L*"\n'
                'max_current = 1\n')
        assert stress_lines(text) == [5, 9]
        lims = parse_stress([{"parts": "C*", "source_amplitude": 1, "max_voltage": 5},
                             {"parts": "L*", "max_current": 1}], "s.toml", stress_lines(text))
        assert [x.line for x in lims] == [5, 9]

    @pytest.mark.parametrize("tables, where, fragment, code", [
        ([{"parts": "C*", "max_voltage": 1}],
         "stress[0].source_amplitude", "missing in the first [[stress]] table", "spec-202"),
        ([{"source_amplitude": 1, "parts": "C*", "max_voltage": 1},
          {"parts": "L*", "max_curent": 1}],
         "stress[1].max_curent", "did you mean 'max_current'?", "spec-201"),
        ([{"source_amplitude": 1, "parts": "L*", "max_voltage": 1, "max_current": 1}],
         "stress[0].max_current", "only one of", "spec-202"),
        ([{"source_amplitude": 1, "parts": "L*"}],
         "stress[0]", "needs one of max_voltage, max_current or max_power", "spec-202"),
        ([{"source_amplitude": 1, "parts": "C*", "max_voltage": 1},
          {"parts": "L*", "max_current": -1}],
         "stress[1].max_current", "must be > 0", "spec-202"),
        ([{"source_amplitude": 0, "parts": "C*", "max_voltage": 1}],
         "stress[0].source_amplitude", "must be > 0", "spec-202"),
        ([{"source_amplitude": "rms:", "parts": "C*", "max_voltage": 1}],
         "stress[0].source_amplitude", "no value after 'rms'", "spec-202"),
        ([{"source_amplitude": "pk:10", "parts": "C*", "max_voltage": 1}],
         "stress[0].source_amplitude", "unknown amplitude prefix 'pk'", "spec-202"),
        ([{"source_amplitude": "rms:-3", "parts": "C*", "max_voltage": 1}],
         "stress[0].source_amplitude", "must be > 0", "spec-202"),
        ([{"source_amplitude": "ten", "parts": "C*", "max_voltage": 1}],
         "stress[0].source_amplitude", "not a number", "spec-202"),
        ([{"source_amplitude": 1, "max_voltage": 1}],
         "stress[0].parts", "missing (required)", "spec-202"),
        ([{"source_amplitude": 1, "parts": " ", "max_voltage": 1}],
         "stress[0].parts", "non-empty string", "spec-202"),
        ([{"source_amplitude": 1, "parts": "C*", "max_power": "lots"}],
         "stress[0].max_power", "not a number", "spec-202"),
        ({"parts": "C*"}, "stress", "array of tables", "spec-202"),
        ([5], "stress[0]", "expected a table", "spec-202"),
    ])
    def test_errors_carry_key_paths(self, tables, where, fragment, code):
        with pytest.raises(SpecError) as info:
            parse_stress(tables, "demo.toml")
        err = info.value
        assert err.where == where
        assert err.message.startswith(f"{where}: ")
        assert fragment in err.message
        assert err.code == code
        assert err.path == "demo.toml"


class TestSeriesRLC:
    def test_capacitor_voltage_at_resonance_is_q_times_input(self):
        # Textbook: at ω0 the series RLC's reactances cancel, I = V/R, and
        # |V_C| = I/(ω0 C) = V/(ω0 R C) = Q·V with Q = ω0 L/R = 1/(ω0 R C).
        # |V_C| falls monotonically above its own peak (which is below ω0, see the next
        # test), so on a sweep starting at f0 the true maximum is at f0 itself.
        grid = log_grid(F0, 10 * F0, 7)
        r = one({"source_amplitude": "10", "parts": "C1", "max_voltage": 500},
                series_response(grid))
        assert rel(r.peak, 10.0 * Q_S) < 1e-9
        assert rel(r.at_hz, F0) < 1e-9
        assert r.status is Status.PASS and r.margin == 500 - r.peak

    @pytest.mark.parametrize("poles", [True, False], ids=["with-pole-seeds", "grid-only"])
    def test_capacitor_true_peak_found_between_coarse_grid_points(self, poles, monkeypatch):
        # Derived here: V_C/V_in = (1/jωC)/(R + jωL + 1/jωC) = 1/(1 − ω²LC + jωRC).
        # With x = ω/ω0, ω0²LC = 1 and ω0RC = 1/Q: |V_C/V_in|⁻² = (1 − x²)² + x²/Q².
        # Put u = x²: D(u) = (1 − u)² + u/Q², D'(u) = −2(1 − u) + 1/Q² = 0 at
        # u* = 1 − 1/(2Q²), where D(u*) = 1/(4Q⁴) + (1 − 1/(2Q²))/Q² = (1/Q²)(1 − 1/(4Q²)).
        # So max |V_C/V_in| = Q/√(1 − 1/(4Q²)) at ω = ω0·√(1 − 1/(2Q²)).
        if not poles:
            monkeypatch.setattr(stress_mod, "_pole_frequencies", lambda resp: np.zeros(0))
        amp = 10.0
        expected = amp * Q_S / math.sqrt(1.0 - 1.0 / (4.0 * Q_S ** 2))
        f_expected = F0 * math.sqrt(1.0 - 1.0 / (2.0 * Q_S ** 2))
        grid = log_grid(1e3, 1e6, 4)    # 13 points: nearest to f0 are 31.6 k and 56.2 k
        resp = series_response(grid)
        sol = np.asarray(resp.solution())
        grid_peak = amp * np.abs(sol[:, resp.system.node_index["b"]]).max()
        assert grid_peak < 0.5 * expected          # the grid alone misses the peak
        r = one({"source_amplitude": amp, "parts": "C1", "max_voltage": 500}, resp)
        assert rel(r.peak, expected) < 1e-8
        assert r.peak > amp * Q_S * (1 + 1e-5)    # above the value at ω0 (by ≈ 1/(8Q²))
        assert rel(r.at_hz, f_expected) < 1e-6
        assert rel(r.at_hz, F0) > 1e-5             # and not at ω0

    def test_inductor_current_peak_is_v_over_r(self):
        # Textbook: |Z| = √(R² + (ωL − 1/ωC)²) is smallest (= R) at ω0, so the series
        # current peaks at exactly V/R there.
        amp = 10.0
        r = one({"source_amplitude": amp, "parts": "L1", "max_current": 2},
                series_response(log_grid(1e3, 1e6, 4)))
        assert rel(r.peak, amp / R_S) < 1e-9
        assert rel(r.at_hz, F0) < 1e-6
        assert r.status is Status.PASS and r.quantity == "current" and r.element == "L"

    def test_capacitor_current_equals_inductor_current(self):
        # C1 and L1 carry the same series current; C's is computed as jωC·V, L's is its
        # MNA branch current, so agreement checks the capacitor formula independently.
        resp = series_response(log_grid(1e3, 1e6, 6))
        lims = parse_stress([{"source_amplitude": 3, "parts": "[LC]1", "max_current": 1}], "d")
        ind, cap = judge_stress(lims, resp)
        assert (ind.part, cap.part) == ("L1", "C1")
        assert rel(cap.peak, ind.peak) < 1e-9
        assert rel(cap.at_hz, ind.at_hz) < 1e-6

    def test_resistor_power_at_resonance(self):
        # Average power of a sinusoid of peak current Ip in R is Ip²R/2; at resonance
        # Ip = V/R, so P = V²/(2R) (the most the source can deliver: all of it into R).
        amp = 10.0
        r = one({"source_amplitude": amp, "parts": "R1", "max_power": "2"},
                series_response(log_grid(1e3, 1e6, 4)))
        assert rel(r.peak, amp ** 2 / (2 * R_S)) < 1e-9
        assert rel(r.at_hz, F0) < 1e-6
        assert r.status is Status.FAIL            # 5 W against a 2 W rating
        assert r.margin == pytest.approx(2 - 5.0, rel=1e-9)

    def test_rms_amplitude_is_converted_to_peak(self):
        resp = series_response(log_grid(1e3, 1e6, 5))
        lims = parse_stress([
            {"source_amplitude": 1, "parts": "C1", "max_voltage": 100},
            {"parts": "R1", "max_power": 1},
            {"source_amplitude": "rms:1", "parts": "C1", "max_voltage": 100},
            {"parts": "R1", "max_power": 1},
        ], "d")
        v_pk, p_pk, v_rms, p_rms = judge_stress(lims, resp)
        assert rel(v_rms.peak, math.sqrt(2.0) * v_pk.peak) < 1e-12   # ×√2
        assert rel(p_rms.peak, 2.0 * p_pk.peak) < 1e-12               # power ∝ amplitude²
        assert v_rms.stimulus_text == "1 V rms (1.414 V peak)"
        assert v_pk.stimulus_text == "1 V peak"

    def test_rating_decides_pass_and_fail(self):
        resp = series_response(log_grid(1e3, 1e6, 5))
        lims = parse_stress([{"source_amplitude": 1, "parts": "C1", "max_voltage": 32},
                             {"parts": "C1", "max_voltage": 31}], "d")
        ok, bad = judge_stress(lims, resp)
        assert 31 < ok.peak < 32                    # Q ≈ 31.62
        assert ok.status is Status.PASS and ok.margin == 32 - ok.peak
        assert bad.status is Status.FAIL and bad.margin == 31 - bad.peak < 0


class TestPoleSeeds:
    """A very narrow peak between grid points, away from the grid's own maximum."""

    # A 1 mA current source drives two parallel tanks in series: tank A (1 kΩ, Q ≈ 1,
    # 1 kHz) gives the largest grid value, tank B (100 kΩ, Q ≈ 1.4e6) resonates between
    # grid points, where |Z| ≈ 100 kΩ: only the pole seed can find it.
    LB = 1e-6
    FB = 10 ** 4.05

    def netlist(self) -> str:
        cb = 1.0 / ((TWO_PI * self.FB) ** 2 * self.LB)
        return ("two tanks\nI1 0 a AC 1\nRA a m 1k\nLA a m 15.9155m\nCA a m 1.59155u\n"
                f"RB m 0 100k\nLB m 0 {self.LB!r}\nCB m 0 {cb!r}\n")

    def z_closed_form(self, f: float) -> float:
        # Independent of MNA: |Z_A + Z_B| with Z = 1/(1/R + 1/(jωL) + jωC) per tank.
        s = 1j * TWO_PI * f
        cb = 1.0 / ((TWO_PI * self.FB) ** 2 * self.LB)
        za = 1.0 / (1 / 1e3 + 1 / (s * 15.9155e-3) + s * 1.59155e-6)
        zb = 1.0 / (1 / 100e3 + 1 / (s * self.LB) + s * cb)
        return abs(za + zb)

    @pytest.mark.parametrize("per_decade, method", [(5, "dense"), (10, "pole-zero")])
    def test_narrow_peak_between_grid_points(self, per_decade, method):
        resp = read_netlist(self.netlist()).ac("I1", "a", freqs=log_grid(100, 1e6, per_decade))
        assert resp.method == method   # poles from the pencil, or from the pole-zero engine
        amp = 1e-3
        grid_peak = amp * np.abs(np.asarray(resp.solution())[:, resp.system.node_index["a"]]).max()
        assert grid_peak < 2.0                      # the grid sees about 1 V
        v = np.abs(np.asarray(resp.solution())[:, resp.system.node_index["a"]])
        inner = (v[1:-1] >= v[:-2]) & (v[1:-1] >= v[2:])
        assert np.flatnonzero(inner).size == 1      # one grid local maximum: tank A's
        # Reference peak: bounded search on the closed form over f = FB·(1 + 1e-5·u),
        # |u| ≤ 3 (about ±4 half-bandwidths), so the search tolerance is far below 1 mHz.
        ref = minimize_scalar(lambda u: -self.z_closed_form(self.FB * (1 + 1e-5 * u)),
                              method="bounded", bounds=(-3.0, 3.0), options={"xatol": 1e-10})
        f_ref = self.FB * (1 + 1e-5 * ref.x)
        r = one({"source_amplitude": "1m", "parts": "I1", "max_voltage": 150}, resp)
        assert rel(r.peak, amp * -ref.fun) < 1e-8
        assert rel(r.at_hz, f_ref) < 1e-9
        assert r.stimulus_unit == "A" and r.peak > 99.0


HIER = """hierarchy
V1 in 0 AC 1
X1 in mid stage
X2 mid out stage
C9 out 0 1n
E1 buf 0 out 0 1
RB buf 0 10k
.subckt stage a b
R1 a b 1k
C3 b 0 1n
.ends
"""


class TestGlobs:
    def judge(self, tables):
        resp = read_netlist(HIER).ac("V1", "out", freqs=log_grid(1e3, 1e6, 5))
        return judge_stress(parse_stress(tables, "h.toml"), resp)

    @pytest.mark.parametrize("pattern, parts", [
        ("X1.*", ["X1.R1", "X1.C3"]),
        ("*C3", ["X1.C3", "X2.C3"]),
        ("x2.c3", ["X2.C3"]),                       # case-insensitive
        ("C*", ["C9"]),                             # anchored: not X1.C3
        ("*.R?", ["X1.R1", "X2.R1"]),
        ("*[CR]*", ["X1.R1", "X1.C3", "X2.R1", "X2.C3", "C9", "RB"]),
    ])
    def test_hierarchical_names(self, pattern, parts):
        got = self.judge([{"source_amplitude": 1, "parts": pattern, "max_voltage": 10}])
        assert [r.part for r in got] == parts
        assert all(r.status is Status.PASS for r in got)

    def test_glob_matching_nothing_is_an_error(self):
        (r,) = self.judge([{"source_amplitude": 1, "parts": "L*", "max_current": 1}])
        assert r.status is Status.ERROR and r.part == "L*"
        assert r.peak is None and r.margin is None and r.at_hz is None
        assert "matches no part" in r.message
        assert r.to_json() == {"part": "L*", "quantity": "current", "peak": None,
                               "rating": 1.0, "margin": None, "at_hz": None,
                               "status": "error"}
        lr = r.to_limit_result()
        assert lr.status is Status.ERROR and lr.measured is None and lr.message == r.message

    def test_wrong_kind_is_an_error_per_part(self):
        got = self.judge([{"source_amplitude": 1, "parts": "*", "max_power": 1}])
        by = {r.part: r for r in got}
        assert [r.part for r in got] == ["V1", "X1.R1", "X1.C3", "X2.R1", "X2.C3", "C9",
                                         "E1", "RB"]
        assert {p for p, r in by.items() if r.status is Status.PASS} == {"X1.R1", "X2.R1", "RB"}
        assert by["C9"].status is Status.ERROR and "resistors" in by["C9"].message
        assert by["V1"].status is Status.ERROR
        (e1,) = self.judge([{"source_amplitude": 1, "parts": "E1", "max_voltage": 1}])
        assert e1.status is Status.ERROR and "VCVS" in e1.message


class TestResultMapping:
    def test_json_contract_and_limit_result(self):
        resp = series_response(log_grid(1e3, 1e6, 5))
        lims = parse_stress([{"source_amplitude": "10", "parts": "C*", "max_voltage": "500"},
                             {"parts": "R1", "max_power": "0.25"}], "d")
        cap, res = judge_stress(lims, resp, index_offset=7)
        js = cap.to_json()
        assert list(js) == ["part", "quantity", "peak", "rating", "margin", "at_hz", "status"]
        assert js["part"] == "C1" and js["quantity"] == "voltage" and js["status"] == "pass"
        assert js["peak"] == cap.peak and js["margin"] == 500 - cap.peak
        lr = cap.to_limit_result()
        assert lr == LimitResult(
            name="stress: C1 voltage", kind="stress", status=Status.PASS, measured=cap.peak,
            lower=None, upper=500.0, margin=500 - cap.peak, unit="V", at_hz=cap.at_hz,
            definition="peak |V| across C1 for a 10 V peak stimulus, true maximum over the "
                       "sweep", method=lr.method, message="", index=7, line=None)
        assert "Brent" in lr.method
        pr = res.to_limit_result()
        assert (pr.name, pr.unit, pr.upper, pr.status, pr.index) == \
            ("stress: R1 power", "W", 0.25, Status.FAIL, 8)
        assert pr.margin == pytest.approx(0.25 - 5.0, rel=1e-9)
        assert res.to_limit_result(index=2, line=40).index == 2
        assert res.to_limit_result(index=2, line=40).line == 40


class TestCautions:
    def test_resonant_capacitor_voltage(self):
        resp = series_response(log_grid(1e3, 1e6, 5))
        results = judge_stress(parse_stress(
            [{"source_amplitude": 10, "parts": "*", "max_voltage": 1000}], "d"), resp)
        cautions = stress_cautions(results)
        # C1 (≈316 V, 31.6×) and L1 (same magnitude) are called out; R1 and V1 see 10 V.
        assert [c.message.split(" ")[0] for c in cautions] == ["L1", "C1"]
        c = cautions[1]
        assert c.severity == "caution" and c.code == "analysis-stress"
        assert c.message.startswith("C1 sees 316 V peak at 50.3 kHz, 31.6× the 10 V peak "
                                    "input (above 50 V).")
        assert "follow local codes and licensed practice" in c.message

    def test_ratio_alone_and_voltage_alone(self):
        resp = series_response(log_grid(1e3, 1e6, 5))
        low = judge_stress(parse_stress(
            [{"source_amplitude": "0.1", "parts": "C1", "max_voltage": 5},
             {"source_amplitude": "60", "parts": "R1", "max_voltage": 100}], "d"), resp)
        c_cap, c_res = stress_cautions(low)
        assert "3.16 V peak" in c_cap.message and "31.6×" in c_cap.message
        assert "above 50 V" not in c_cap.message
        assert c_res.message.startswith("R1 sees 60 V peak") and "above 50 V" in c_res.message
        assert "×" not in c_res.message            # a resistor is not judged by ratio

    def test_current_driven_tank_inductor(self):
        # Parallel RLC driven by a current source: at ω0 the branch currents are
        # I_L = I_C = Q·I with Q = R√(C/L) (textbook); here Q = 10k·√(25.33n/10m) ≈ 15.9.
        tank = "tank\nI1 0 out AC 1\nR1 out 0 10k\nL1 out 0 10m\nC1 out 0 25.33n\n"
        resp = read_netlist(tank).ac("I1", "out", freqs=log_grid(100, 1e6, 5))
        (r,) = judge_stress(parse_stress(
            [{"source_amplitude": "10m", "parts": "L1", "max_current": 1}], "d"), resp)
        q = 10e3 * math.sqrt(25.33e-9 / 10e-3)
        assert rel(r.peak, 10e-3 * q) < 2e-3      # peak of I_L sits just off ω0
        (c,) = stress_cautions([r])
        assert c.message.startswith("L1 carries 159 mA peak")
        assert "the 10 mA peak input" in c.message and "currents" in c.message

    def test_benign_parts_give_no_caution(self):
        resp = series_response(log_grid(1e3, 1e6, 5))
        results = judge_stress(parse_stress([
            {"source_amplitude": 1, "parts": "R1", "max_voltage": 5},    # 1 V: ratio 1
            {"parts": "L1", "max_current": 1},                            # A vs V: no ratio
            {"parts": "Q*", "max_voltage": 1},                            # error row
        ], "d"), resp)
        assert [r.status for r in results] == [Status.PASS, Status.PASS, Status.ERROR]
        assert stress_cautions(results) == []
