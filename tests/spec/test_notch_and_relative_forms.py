"""The notch kind and the relative forms (Q in percent, relative delay variation,
deviation from linear phase), nominal, Monte Carlo and worst case, against closed forms
and scipy written here."""

from __future__ import annotations

import dataclasses
import math
from pathlib import Path

import numpy as np
import pytest
import scipy.signal as sig
from scipy.optimize import brentq

from circuits import SERIES_RLC, C as C_BP, L as L_BP, R as R_BP
from netcheck import read_netlist
from netcheck.analyses.nominal import check_spec, evaluate
from netcheck.analyses.tolerance import draw, run_samples, with_values
from netcheck.exceptions import SpecError
from netcheck.mna.assemble import assemble
from netcheck.result import Status
from netcheck.spec import load_spec, parse_spec

TWO_PI = 2 * math.pi

# A series LC trap from the output to ground behind R: H = (s²LC + 1)/(s²LC + sRC + 1)
# = (s² + ω0²)/(s² + s·ω0/Q + ω0²) with ω0 = 1/√(LC), Q = ω0·L/R (voltage divider,
# any circuits text): the second-order notch of scipy.signal.iirnotch's analog form.
R_N, L_N, C_N = 100.0, 10e-3, 2.533029591e-6
W0 = 1 / math.sqrt(L_N * C_N)
F0 = W0 / TWO_PI
Q_N = W0 * L_N / R_N


def trap(rq: float = 0.0) -> str:
    """The trap, with ``rq`` in series with the LC (a lossy trap) when not 0."""
    lc = (f"L1 out m {L_N!r}\nC1 m 0 {C_N!r}\n" if rq == 0.0 else
          f"L1 out m {L_N!r}\nC1 m k {C_N!r}\nRQ k 0 {rq!r}\n")
    return f"Quillmere test: LC trap behind a series resistor\nV1 in 0 AC 1\nR1 in out {R_N!r}\n{lc}"


def write(tmp_path: Path, netlist: str, body: str, sweep=("10", "100k", 50)) -> str:
    (tmp_path / "t.cir").write_text(netlist)
    (tmp_path / "t.toml").write_text(
        f'netlist = "t.cir"\nsource = "V1"\noutput = "out"\n[sweep]\nstart = "{sweep[0]}"\n'
        f'stop = "{sweep[1]}"\npoints_per_decade = {sweep[2]}\n{body}')
    return str(tmp_path / "t.toml")


def rows(result) -> dict:
    return {r.name: r for r in result.limits}


def tolerance(result) -> dict:
    return dict(result.extra)["tolerance"]


def notch_h(f, b, a):
    """scipy.signal.freqs of b/a at frequencies f (Hz)."""
    return sig.freqs(b, a, worN=TWO_PI * np.atleast_1d(np.asarray(f, float)))[1]


def half_power_edges(b, a, f0):
    """Edges of a notch where |H|² = 1/2, by brentq on scipy.signal.freqs values."""
    g = lambda f: abs(notch_h(f, b, a)[0]) ** 2 - 0.5  # noqa: E731
    return brentq(g, f0 / 1e3, f0 * (1 - 1e-9), xtol=1e-13), brentq(g, f0 * (1 + 1e-9),
                                                                      f0 * 1e3, xtol=1e-13)


NOTCH = """
[[limits]]
kind = "notch"
center = "1k"
center_tolerance = "1%"
depth_db = { min = 60 }
width = ["1k", "2k"]
q = [0.5, 0.7]
"""


class TestSecondOrderNotch:
    def test_frequency_width_and_q_match_scipy(self, tmp_path):
        res = check_spec(write(tmp_path, trap(), NOTCH))
        r = rows(res)
        assert res.status is Status.PASS, [x.message for x in res.limits]
        # the exact zero of s² + ω0² (the trap's LC resonance)
        assert r["notch: frequency"].measured == pytest.approx(F0, rel=1e-12)
        # scipy.signal.freqs of (s² + ω0²)/(s² + s ω0/Q + ω0²): half-power edges
        b, a = [1.0, 0.0, W0 ** 2], [1.0, W0 / Q_N, W0 ** 2]
        lo, hi = half_power_edges(b, a, F0)
        assert r["notch: width"].measured == pytest.approx(hi - lo, rel=1e-9)
        # closed form: the half-power width of that notch is ω0/Q rad/s, its edges
        # geometric about ω0 (so Q = √(f_low f_high) / width = Q exactly)
        assert r["notch: width"].measured == pytest.approx(W0 / Q_N / TWO_PI, rel=1e-9)
        assert r["notch: Q"].measured == pytest.approx(Q_N, rel=1e-9)

    def test_exact_zero_passes_a_depth_of_60_db_at_the_floor(self, tmp_path):
        r = rows(check_spec(write(tmp_path, trap(), NOTCH)))["notch: depth"]
        # |H(jω0)| = 0 exactly: the computed gain is rounding noise below the floor
        assert r.status is Status.PASS and r.below_floor
        assert r.upper == -60.0 and r.floor < -200.0
        assert "exact transmission zero" in r.message

    @pytest.mark.parametrize("reference", ['"absolute"', '"peak"', '"10"', '["10", "100k"]'])
    def test_depth_of_a_lossy_trap_re_each_reference(self, tmp_path, reference):
        # the depth re 0 dB, the peak (|H| rises away from the notch to both sweep ends:
        # the larger end), one frequency and the mean of two, from scipy.signal.freqs
        rq = 1.0
        body = NOTCH.replace("depth_db = { min = 60 }", f"depth_db = 30\nreference = {reference}"
                             ).replace("width", "#").replace("q = [0.5, 0.7]", "")
        r = rows(check_spec(write(tmp_path, trap(rq), body)))["notch: depth"]
        b, a = [1.0, rq / L_N, W0 ** 2], [1.0, (R_N + rq) / L_N, W0 ** 2]
        ends = 20 * np.log10(np.abs(notch_h([10.0, 100e3], b, a)))
        ref = {'"absolute"': 0.0, '"peak"': ends.max(), '"10"': ends[0],
               '["10", "100k"]': ends.mean()}[reference]
        assert r.measured == pytest.approx(20 * math.log10(rq / (R_N + rq)) - ref, abs=1e-9)

    def test_depth_of_a_lossy_trap_re_both_sides(self, tmp_path):
        # With RQ in series with the LC: H = (s²LC + sRqC + 1)/(s²LC + s(R+Rq)C + 1).
        # |H|² = (u + a²)/(u + b²), u = (1 − x²)²/x², rises with u (b > a): the minimum is
        # at x = 1 exactly, |H(jω0)| = Rq/(R + Rq) (closed form, derived here).
        rq = 1.0
        body = NOTCH.replace("depth_db = { min = 60 }", 'depth_db = { min = 30, max = 50 }\n'
                             'reference = ["10", "100k"]').replace(
            "width", "#").replace("q = [0.5, 0.7]", "")
        r = rows(check_spec(write(tmp_path, trap(rq), body)))
        assert r["notch: frequency"].measured == pytest.approx(F0, rel=1e-9)
        b, a = [1.0, rq / L_N, W0 ** 2], [1.0, (R_N + rq) / L_N, W0 ** 2]
        ref = np.mean(20 * np.log10(np.abs(notch_h([10.0, 100e3], b, a))))
        depth = 20 * math.log10((R_N + rq) / rq) + ref
        assert r["notch: depth"].measured == pytest.approx(-depth, abs=1e-9)
        assert r["notch: depth"].status is Status.PASS and not r["notch: depth"].below_floor

    def test_depth_as_one_number_is_the_least_depth(self, tmp_path):
        # depth_db = 60 is depth_db = { min = 60 }; [30, 40] asks for a notch no deeper
        # than 40 dB, which an exact zero (no transmission at all) certainly is not
        r = rows(check_spec(write(tmp_path, trap(), NOTCH.replace("{ min = 60 }", "60"))))
        assert (r["notch: depth"].upper, r["notch: depth"].lower) == (-60.0, None)
        r = rows(check_spec(write(tmp_path, trap(), NOTCH.replace("{ min = 60 }", "[30, 40]"))))
        assert r["notch: depth"].status is Status.FAIL and r["notch: depth"].below_floor

    def test_notch_at_the_band_end_is_an_error(self, tmp_path):
        body = NOTCH.replace('center = "1k"\ncenter_tolerance = "1%"\n', "") + \
            'band = ["2k", "10k"]\n'
        r = rows(check_spec(write(tmp_path, trap(), body)))["notch: depth"]
        assert r.status is Status.ERROR and "no notch inside it" in r.message


# The balanced twin-T (R, R, R/2; C, C, 2C), unloaded: H(s) = (1 + (sRC)²)/(1 + 4sRC +
# (sRC)²) (a standard result, from memory; checked below by nodal analysis in sympy).
R_T, C_T = 31.8e3, 100e-9
TWIN_T = f"""Quillmere test: balanced twin-T, unloaded output
V1 in 0 AC 1
R1 in m {R_T!r}
R2 m out {R_T!r}
C3 m 0 {2 * C_T!r}
C1 in n {C_T!r}
C2 n out {C_T!r}
R3 n 0 {R_T / 2!r}
"""


def test_twin_t_closed_form_by_nodal_analysis():
    # the independent check of the closed form the twin-T tests use
    sp = pytest.importorskip("sympy")
    s, r, c = sp.symbols("s R C", positive=True)
    vm, vn, vo = sp.symbols("vm vn vo")
    vi = 1
    eqs = [(vi - vm) / r + (vo - vm) / r - 2 * s * c * vm,          # node m
           (vi - vn) * s * c + (vo - vn) * s * c - 2 * vn / r,      # node n
           (vm - vo) / r + (vn - vo) * s * c]                       # output, unloaded
    h = sp.simplify(sp.solve(eqs, [vm, vn, vo])[vo])
    x = s * r * c
    assert sp.simplify(h - (1 + x ** 2) / (1 + 4 * x + x ** 2)) == 0


class TestTwinT:
    BODY = """
[[limits]]
kind = "notch"
band = ["10", "1k"]
center = "50.05"
center_tolerance = "1%"
depth_db = { min = 60 }
width = ["150", "250"]
q = { nominal = 0.25, tolerance = "1%" }
"""

    def test_both_half_power_edges_and_q(self, tmp_path):
        res = check_spec(write(tmp_path, TWIN_T, self.BODY, ("1", "10k", 100)))
        r = rows(res)
        assert res.status is Status.PASS, [x.message for x in res.limits]
        f0 = 1 / (TWO_PI * R_T * C_T)
        assert r["notch: frequency"].measured == pytest.approx(f0, rel=1e-9)
        # |H|² = 1/2 where (1 − x²)² = 16x² : x = √5 ∓ 2 (the notch's Q = 1/4)
        assert r["notch: width"].measured == pytest.approx(4 * f0, rel=1e-9)
        assert r["notch: Q"].measured == pytest.approx(0.25, rel=1e-9)
        assert "nominal Q 0.25 ± 1%" in r["notch: Q"].definition
        assert r["notch: depth"].below_floor and r["notch: depth"].status is Status.PASS

    def test_the_corner_kind_cannot_find_the_lower_edge(self, tmp_path):
        # why the notch kind is needed: moving down from the peak (at the top of the
        # sweep), the corner search stops at the upper edge f0(√5 + 2) and never reaches
        # the lower one, f0(√5 − 2), which the notch finds moving out from the notch
        f0 = 1 / (TWO_PI * R_T * C_T)
        body = '[[limits]]\nkind = "corner"\nside = "low"\nrange = ["10", "13"]\n'
        (corner,) = check_spec(write(tmp_path, TWIN_T, body, ("1", "10k", 100))).limits
        assert corner.measured == pytest.approx(f0 * (math.sqrt(5) + 2), rel=1e-3)
        assert corner.status is Status.FAIL
        notch = rows(check_spec(write(tmp_path, TWIN_T, self.BODY, ("1", "10k", 100))))
        low = f0 * (math.sqrt(5) - 2)
        assert f"f_low {low:.5f}"[:12] in notch["notch: width"].definition.replace(" Hz", "")


class TestNotchTolerances:
    BODY = NOTCH.replace("q = [0.5, 0.7]", 'q = [0.5, 0.7]\n') + """
[tolerances]
parts = { L1 = "5%", C1 = "5%" }
[analysis]
mode = ["worst_case"]
"""

    def test_worst_case_corners_match_closed_forms(self, tmp_path):
        res = check_spec(write(tmp_path, trap(), self.BODY))
        wc = {e["name"]: e for e in tolerance(res)["worst_case"]["limits"]}
        t = 0.05
        # f0 = 1/(2π√(LC)) and width = R/(2πL) are monotone in L and C: corners exact
        f = wc["notch: frequency"]
        assert f["corners_max"] == pytest.approx(F0 / (1 - t), rel=1e-9)
        assert f["corners_min"] == pytest.approx(F0 / (1 + t), rel=1e-9)
        # the linear estimate: ∂ln f0/∂ln L = ∂ln f0/∂ln C = −1/2, so f0·(1 ± t)
        assert f["max"] == pytest.approx(F0 * (1 + t), rel=1e-7)
        assert f["sensitivity_method"] == "adjoint"
        w = wc["notch: width"]
        width = R_N / (TWO_PI * L_N)
        assert w["corners_max"] == pytest.approx(width / (1 - t), rel=1e-9)
        assert w["max"] == pytest.approx(width * (1 + t), rel=1e-7)  # ∂ln w/∂ln L = −1

    def test_worst_case_refuses_the_depth_of_an_exact_zero(self, tmp_path):
        res = check_spec(write(tmp_path, trap(), self.BODY))
        row = rows(res)["worst case: notch: depth"]
        assert row.status is Status.ERROR and row.margin is None
        assert "exact transmission zero" in row.message and "Monte Carlo" in row.message

    def test_worst_case_linearises_the_depth_of_a_lossy_trap(self, tmp_path):
        # |H(jω0)| = Rq/(R + Rq) whatever L and C (closed form above): with tolerances
        # on R1 and RQ only, the depth moves by ∂/∂ln of 20 log10(Rq/(R + Rq))
        rq, t = 1.0, 0.01
        body = NOTCH.replace("depth_db = { min = 60 }", "depth_db = { min = 30 }").replace(
            "width", "#").replace("q = [0.5, 0.7]", "") + \
            '[tolerances]\nparts = { R1 = "1%", RQ = "1%" }\n[analysis]\nmode = ["worst_case"]\n'
        res = check_spec(write(tmp_path, trap(rq), body))
        wc = {e["name"]: e for e in tolerance(res)["worst_case"]["limits"]}["notch: depth"]
        g = lambda r, q: 20 * math.log10(q / (r + q))  # noqa: E731
        d = 20 / math.log(10) * (R_N / (R_N + rq))  # |∂g/∂ln R| = |∂g/∂ln Rq|
        assert wc["sensitivity_method"] == "adjoint"
        assert wc["max"] == pytest.approx(g(R_N, rq) + 2 * d * t, abs=1e-9)
        # the exact corner: R up, Rq down lowers the gain most
        assert wc["corners_min"] == pytest.approx(g(R_N * (1 + t), rq * (1 - t)), abs=1e-9)

    def test_monte_carlo_samples_follow_the_closed_forms(self, tmp_path):
        path = write(tmp_path, trap(), NOTCH + '[tolerances]\nparts = { L1 = "5%", C1 = "5%" }'
                     '\n[analysis]\nmode = ["monte_carlo"]\n')
        spec = load_spec(path)
        ckt = read_netlist(trap())
        system = assemble(ckt, "V1", "out")
        values = draw([("C1", C_N, 0.05), ("L1", L_N, 0.05)], 16, "uniform",
                      np.random.default_rng(5))
        _, measured, _, _, _ = run_samples(system, spec, values, 16, 2 ** 28)
        lv, cv = values["L1"], values["C1"]
        w0 = 1 / np.sqrt(lv * cv)
        np.testing.assert_allclose(measured["notch: frequency"], w0 / TWO_PI, rtol=1e-9)
        np.testing.assert_allclose(measured["notch: width"], R_N / (TWO_PI * lv), rtol=1e-7)
        np.testing.assert_allclose(measured["notch: Q"], w0 * lv / R_N, rtol=1e-7)
        # each sample keeps an exact zero: it reads at the floor, 300 dB below its peak
        assert np.all(measured["notch: depth"] <= -290.0)


class TestQInPercent:
    def test_resonance_q_nominal_with_tolerance(self, tmp_path):
        # series RLC across R: Q = ω0 L / R (any circuits text)
        q = math.sqrt(L_BP / C_BP) / R_BP
        body = f'[[limits]]\nkind = "resonance"\nq = {{ nominal = {q * 1.004!r}, tolerance = "5000ppm" }}\n'
        (tmp_path / "t.cir").write_text(SERIES_RLC)
        r = rows(check_spec(write(tmp_path, SERIES_RLC, body, ("10k", "200k", 100))))["resonance: Q"]
        assert r.measured == pytest.approx(q, rel=1e-9)
        assert (r.lower, r.upper) == pytest.approx((q * 1.004 * 0.995, q * 1.004 * 1.005))
        assert r.status is Status.PASS and "± 0.5%" in r.definition
        body = body.replace('"5000ppm"', "0.001")  # a plain fraction: 0.1 %
        r = rows(check_spec(write(tmp_path, SERIES_RLC, body, ("10k", "200k", 100))))["resonance: Q"]
        assert r.status is Status.FAIL


# First-order RC low-pass: φ = −atan(ωT), τ = T/(1 + (ωT)²), T = RC (any circuits text).
R_RC, C_RC = 1e3, 159.15494309189535e-9  # corner 1 kHz
RC = f"Quillmere test: RC low-pass\nV1 in 0 AC 1\nR1 in out {R_RC!r}\nC1 out 0 {C_RC!r}\n"


def rc_tau(f, t):
    return t / (1 + (TWO_PI * np.asarray(f) * t) ** 2)


def rc_ratio(t, lo=100.0, hi=500.0, ref=10.0):
    """(max − min delay over [lo, hi]) / delay at ref: τ falls with f."""
    return (rc_tau(lo, t) - rc_tau(hi, t)) / rc_tau(ref, t)


DELAY = '[[limits]]\nkind = "group_delay"\nband = ["100", "500"]\nmax_variation = "25%"\n'


class TestRelativeDelayVariation:
    def test_ratio_to_the_low_frequency_delay(self, tmp_path):
        r = rows(check_spec(write(tmp_path, RC, DELAY)))
        row = r["group delay 100.0–500.0 Hz: variation"]
        assert row.measured == pytest.approx(rc_ratio(R_RC * C_RC), rel=1e-9)
        assert row.upper == 0.25 and row.unit == ""
        assert row.status is Status.PASS
        # at reference_hz instead of the sweep start (10 Hz)
        body = DELAY + 'reference_hz = "50"\n'
        row = rows(check_spec(write(tmp_path, RC, body)))["group delay 100.0–500.0 Hz: variation"]
        assert row.measured == pytest.approx(rc_ratio(R_RC * C_RC, ref=50.0), rel=1e-9)

    def test_bessel_delay_flatness_against_scipy(self, tmp_path):
        # 4th-order Bessel, delay-normalised (scipy.signal.bessel norm='delay': τ(0) = 1/w),
        # as an E LAPLACE source; its delay τ(ω) = Re(a′(jx)/a(jx))/w, x = ω/w, from the
        # polynomial a scipy gives (derived here: τ = d arg a(jω/w)/dω)
        b, a = sig.bessel(4, 1.0, analog=True, norm="delay")
        w = TWO_PI * 1e3
        den = " + ".join(f"{float(c)!r}*(s/{w!r})^{len(a) - 1 - k}" for k, c in enumerate(a))
        net = f"Quillmere test: Bessel low-pass\nV1 in 0 AC 1\nR1 in 0 1k\n" \
              f"E1 out 0 in 0 LAPLACE = {float(b[0])!r}/({den})\nR2 out 0 1k\n"
        body = '[[limits]]\nkind = "group_delay"\nband = ["1", "300"]\nmax_variation = "2%"\n'
        (row,) = check_spec(write(tmp_path, net, body, ("1", "10k", 100))).limits
        da = np.polyder(a)
        f = np.linspace(1.0, 300.0, 300001)
        x = 1j * TWO_PI * f / w
        tau = (np.polyval(da, x) / np.polyval(a, x)).real / w
        assert tau[0] == pytest.approx(1 / w, rel=1e-4)  # the delay normalisation
        assert row.measured == pytest.approx((tau.max() - tau.min()) / tau[0], rel=1e-6)

    def test_monte_carlo_and_worst_case(self, tmp_path):
        body = DELAY + '[tolerances]\nparts = { R1 = "2%", C1 = "2%" }\n' \
            '[analysis]\nmode = ["worst_case"]\n'
        path = write(tmp_path, RC, body)
        res = check_spec(path)
        name = "group delay 100.0–500.0 Hz: variation"
        wc = {e["name"]: e for e in tolerance(res)["worst_case"]["limits"]}[name]
        t, T = 0.02, R_RC * C_RC
        # ∂ratio/∂ln R = ∂ratio/∂ln C = ∂ratio/∂ln T, by central differences here
        d = (rc_ratio(T * (1 + 1e-6)) - rc_ratio(T * (1 - 1e-6))) / 2e-6
        assert wc["max"] == pytest.approx(rc_ratio(T) + 2 * abs(d) * t, rel=1e-6)
        # each corner against its own reference delay: T(1 ± t)² exactly
        ends = [rc_ratio(T * (1 + t) ** 2), rc_ratio(T * (1 - t) ** 2)]
        assert wc["corners_max"] == pytest.approx(max(ends), rel=1e-9)
        # Monte Carlo: each sample's ratio from its own R·C
        spec = load_spec(path)
        system = assemble(read_netlist(RC), "V1", "out")
        values = draw([("C1", C_RC, t), ("R1", R_RC, t)], 8, "uniform",
                      np.random.default_rng(2))
        _, measured, _, _, _ = run_samples(system, spec, values, 8, 2 ** 28)
        np.testing.assert_allclose(measured[name], rc_ratio(values["R1"] * values["C1"]),
                                   rtol=1e-7)


def rc_linear_deviation(t, lo=10.0, hi=1e3, n=400001):
    """Largest |φ − (a + b f)|, degrees, the line fitted by least squares over [lo, hi]:
    trapezoid weights on a dense uniform grid, numpy.polyfit (independent of netcheck)."""
    f = np.linspace(lo, hi, n)
    phi = -np.degrees(np.arctan(TWO_PI * f * t))
    wts = np.full(n, f[1] - f[0])
    wts[[0, -1]] *= 0.5
    b, a = np.polyfit(f, phi, 1, w=np.sqrt(wts))
    return np.abs(phi - a - b * f).max()


PHASE = '[[limits]]\nkind = "phase"\nband = ["10", "1k"]\nmax_linear_deviation_deg = 10\n'


class TestLinearPhase:
    NAME = "phase 10.00 Hz–1.000 kHz: deviation from linear"

    def test_deviation_matches_a_dense_least_squares_fit(self, tmp_path):
        r = rows(check_spec(write(tmp_path, RC, PHASE)))[self.NAME]
        assert r.measured == pytest.approx(rc_linear_deviation(R_RC * C_RC), abs=1e-6)
        assert r.unit == "deg" and r.status is Status.PASS

    def test_monte_carlo_and_worst_case(self, tmp_path):
        t, T = 0.05, R_RC * C_RC
        path = write(tmp_path, RC, PHASE + '[tolerances]\nparts = { R1 = "5%", C1 = "5%" }\n'
                     '[analysis]\nmode = ["worst_case"]\n')
        res = check_spec(path)
        wc = {e["name"]: e for e in tolerance(res)["worst_case"]["limits"]}[self.NAME]
        h = 1e-4
        d = (rc_linear_deviation(T * (1 + h)) - rc_linear_deviation(T * (1 - h))) / (2 * h)
        assert wc["sensitivity_method"] == "adjoint"
        assert wc["max"] == pytest.approx(rc_linear_deviation(T) + 2 * abs(d) * t, abs=1e-5)
        spec = load_spec(path)
        system = assemble(read_netlist(RC), "V1", "out")
        values = draw([("C1", C_RC, t), ("R1", R_RC, t)], 4, "uniform",
                      np.random.default_rng(9))
        _, measured, _, _, _ = run_samples(system, spec, values, 4, 2 ** 28)
        expected = [rc_linear_deviation(r * c) for r, c in zip(values["R1"], values["C1"])]
        np.testing.assert_allclose(measured[self.NAME], expected, atol=1e-6)


HEAD = 'netlist = "t.cir"\nsource = "V1"\noutput = "out"\n[sweep]\nstart = "10"\nstop = "100k"\n'


@pytest.mark.parametrize("body, where, code", [
    ('kind = "notch"\n', "limits[0]", "spec-280"),
    ('kind = "notch"\ncenter = "1k"\ncenter_tolerance = "1%"\nband = ["2k", "3k"]\n',
     "limits[0].center", "spec-280"),
    ('kind = "notch"\ndepth_db = { min = -60 }\n', "limits[0].depth_db", "spec-280"),
    ('kind = "notch"\ndepth_db = -60\n', "limits[0].depth_db", "spec-280"),
    ('kind = "notch"\ndepth_db = "60p%"\n', "limits[0].depth_db", "spec-202"),
    ('kind = "notch"\ndepth_db = { min = 60 }\nlevel_db = 6\n', "limits[0].level_db",
     "spec-280"),
    ('kind = "notch"\ndepth_db = { min = 60 }\nreference = "peek"\n', "limits[0].reference",
     "spec-281"),
    ('kind = "notch"\ndepth_db = { min = 60 }\nreference = ["10k", "100"]\n',
     "limits[0].reference", "spec-281"),
    ('kind = "notch"\ndepth_db = { min = 60 }\nreference = "1meg"\n', "limits[0].reference",
     "spec-281"),
    ('kind = "notch"\nq = { nominal = 1 }\n', "limits[0].q", "spec-282"),
    ('kind = "resonance"\nq = { nominal = 1, tolerance = "150%" }\n', "limits[0].q",
     "spec-282"),
    ('kind = "resonance"\nq = { nominal = 1, tolerance = "1%", min = 0.5 }\n', "limits[0].q",
     "spec-282"),
    ('kind = "phase"\nband = ["10", "1k"]\nmax_linear_deviation_deg = -1\n',
     "limits[0].max_linear_deviation_deg", "spec-283"),
    ('kind = "group_delay"\nband = ["10", "1k"]\nmax_variation = "1u"\nreference_hz = "10"\n',
     "limits[0].reference_hz", "spec-284"),
    ('kind = "group_delay"\nband = ["10", "1k"]\nmax_variation = "-1%"\n',
     "limits[0].max_variation", "spec-284"),
])
def test_bad_input_names_the_key(body, where, code):
    with pytest.raises(SpecError) as info:
        parse_spec(HEAD + "[[limits]]\n" + body, "t.toml")
    assert (info.value.where, info.value.code) == (where, code)
    assert str(info.value.message).startswith(where)


def test_batch_notch_rows_equal_per_sample_checks(tmp_path):
    # a lossy trap with every part toleranced (finite depths, moving edges): each sample's
    # batched notch equals a nominal check of that sample's circuit
    body = NOTCH.replace("depth_db = { min = 60 }", 'depth_db = { min = 30 }\n'
                         'reference = ["10", "100k"]')
    path = write(tmp_path, trap(2.0), body + '[tolerances]\ndefault = { R = "5%", L = "5%", '
                 'C = "5%" }\n[analysis]\nmode = ["monte_carlo"]\n')
    spec = load_spec(path)
    ckt = read_netlist(trap(2.0))
    system = assemble(ckt, "V1", "out")
    parts = [("C1", C_N, 0.05), ("L1", L_N, 0.05), ("R1", R_N, 0.05), ("RQ", 2.0, 0.05)]
    values = draw(parts, 6, "uniform", np.random.default_rng(8))
    _, measured, _, _, _ = run_samples(system, spec, values, 6, 2 ** 28)
    plain = dataclasses.replace(spec, text="")
    for k in range(6):
        one = with_values(ckt, {n: v[k] for n, v in values.items()})
        for r in evaluate(plain, one).limits:
            assert measured[r.name][k] == pytest.approx(r.measured, rel=1e-8, abs=1e-9), r.name


def test_notch_with_tolerances_in_every_output(tmp_path):
    # JSON against docs/result.schema.json (jsonschema, the outside reference
    # implementation of JSON Schema 2020-12); JUnit parsed by the standard library's XML
    # reader; SARIF and Markdown name every new row
    import json
    import xml.etree.ElementTree as ET

    import io

    import jsonschema

    from netcheck.render import RenderOptions, get_renderer
    from netcheck.render.jsonreport import to_dict
    from netcheck.result import CheckResult

    def rendered(name: str) -> str:
        out = io.StringIO()
        get_renderer(name)(run, out, RenderOptions())
        return out.getvalue()

    root = Path(__file__).resolve().parents[2]
    text = (root / "specs/hum_notch.toml").read_text().replace(
        "../sample_netlists/hum_notch.cir", "hum_notch.cir") + \
        '\n[tolerances]\ndefault = { R = "1%", C = "2%" }\n[analysis]\n' \
        'mode = ["worst_case", "monte_carlo"]\nsamples = 100\nseed = 1\n'
    (tmp_path / "hum_notch.cir").write_bytes((root / "sample_netlists/hum_notch.cir").read_bytes())
    (tmp_path / "t.toml").write_text(text)
    run = CheckResult((check_spec(str(tmp_path / "t.toml")),), "0", "")
    doc = to_dict(run)
    jsonschema.validate(doc, json.loads((root / "docs/result.schema.json").read_text()))
    names = {r["name"] for r in doc["specs"][0]["limits"]}
    new = {"hum notch: frequency", "hum notch: depth", "hum notch: width", "hum notch: Q"}
    assert new | {f"worst case: {n}" for n in new} <= names
    depth = next(r for r in doc["specs"][0]["limits"] if r["name"] == "hum notch: depth")
    assert depth["below_floor"] is True
    cases = {c.get("name") for c in ET.fromstring(rendered("junit")).iter("testcase")}
    assert new <= cases
    sarif, md = rendered("sarif"), rendered("markdown")
    assert "worst case: hum notch: depth" in sarif and "hum notch: width" in md


def test_the_gain_plot_marks_the_notch_where_the_zero_is(tmp_path):
    # the guide line of the notch stands at the twin-T's zero, 1/(2πRC) (closed form)
    import matplotlib.pyplot as plt

    from netcheck.report.plot_response import spec_figures

    res = check_spec(write(tmp_path, TWIN_T, TestTwinT.BODY, ("1", "10k", 100)))
    title, fig = spec_figures(res)[0]
    ax = fig.axes[0]
    texts = [t.get_text() for t in ax.texts]
    assert f"notch\n{1 / (TWO_PI * R_T * C_T):.5g} Hz" in texts, texts
    xs = [line.get_xdata()[0] for line in ax.get_lines() if len(set(line.get_xdata())) == 1]
    assert any(x == pytest.approx(1 / (TWO_PI * R_T * C_T), rel=1e-12) for x in xs)
    plt.close("all")
