"""The fast Monte Carlo paths (real-arithmetic gain, Newton refinement, reduced
eigenproblem, direct-solve fallback) against closed forms, scipy.signal and sympy."""

from __future__ import annotations

import math

import numpy as np
import pytest
import sympy as sp
from scipy import signal

from circuits import C, L, R, butterworth_g, chebyshev_g, ladder_netlist
from circuits import SERIES_RLC
from netcheck import read_netlist
from netcheck.mna import sampling
from netcheck.mna.assemble import assemble
from netcheck.analyses.sample_probe import BatchProbe
from netcheck.mna.sampling import SampleSet

HALF_POWER = 10.0 * math.log10(2.0)


def _scaled_ladder(g: list[float], fc: float, r: float, u: np.ndarray, f: np.ndarray
                   ) -> SampleSet:
    """Samples of a doubly terminated ladder, sample i frequency-scaled to fc·u[i].

    Dividing every L and C by u scales the response in frequency by u, so each sample
    keeps the prototype's closed form with its own corner fc·u.
    """
    text, out = ladder_netlist(g, fc, r)
    ckt = read_netlist(text)
    system = assemble(ckt, "V1", out)
    values = {e.name: e.value / u for e in ckt.elements if e.letter in "LC"}
    return SampleSet(system, values, u.size, f)


def _rlc(lv: np.ndarray, cv: np.ndarray, f: np.ndarray) -> SampleSet:
    system = assemble(read_netlist(SERIES_RLC), "V1", "out")
    return SampleSet(system, {"L1": lv, "C1": cv}, lv.size, f)


def _butterworth_db(f: np.ndarray, fc: np.ndarray, n: int) -> np.ndarray:
    # |H|² = 1/4 · 1/(1 + (f/fc)^2n) for equal terminations (Matthaei et al. §4.03:
    # maximally flat insertion loss; the matched load takes half the source voltage)
    return -10 * np.log10(4 * (1 + (f / fc) ** (2 * n)))


class TestRealArithmeticGain:
    # one block of root factors, and two (11 poles); the sweep ends where the direct
    # solves that check each form are still accurate
    @pytest.mark.parametrize("n,top", [(7, 1e6), (11, 2e5)])
    def test_grid_and_point_gain_follow_the_butterworth_formula(self, n, top):
        fc = 20e3
        u = np.random.default_rng(3).uniform(0.8, 1.25, 12)
        f = np.logspace(3, np.log10(top), 121)
        ss = _scaled_ladder(butterworth_g(n), fc, 600.0, u, f)
        assert ss.direct_rows.size == 0
        ref = _butterworth_db(f[None, :], fc * u[:, None], n)
        assert ref.min() < -200  # deep into the stop-band, where cancellation would show
        np.testing.assert_allclose(ss.grid_gain_db(), ref, rtol=0, atol=1e-9)
        np.testing.assert_allclose(20 * np.log10(np.abs(ss.grid_transfer())), ref,
                                   rtol=0, atol=1e-9)
        fp = np.random.default_rng(4).uniform(1e3, top, (12, 5))
        np.testing.assert_allclose(ss.gain_db(fp), _butterworth_db(fp, fc * u[:, None], n),
                                   rtol=0, atol=1e-9)

    def test_complex_response_matches_scipy_freqs(self):
        rng = np.random.default_rng(5)
        lv, cv = L * rng.uniform(0.95, 1.05, 6), C * rng.uniform(0.95, 1.05, 6)
        f = np.logspace(4, np.log10(2e5), 90)
        bp = BatchProbe(_rlc(lv, cv, f))
        for i in range(6):
            # H(s) = sRC / (s²LC + sRC + 1), output across R (series RLC band-pass)
            _, h = signal.freqs([R * cv[i], 0.0], [lv[i] * cv[i], R * cv[i], 1.0],
                                worN=2 * math.pi * f)
            np.testing.assert_allclose(bp.h[i], h, rtol=1e-10)
            np.testing.assert_allclose(bp.gain[i], 20 * np.log10(np.abs(h)), rtol=0,
                                       atol=1e-10)

    def test_overflowing_products_are_redone_per_factor(self, monkeypatch):
        n, fc = 5, 1e3
        u = np.array([0.9, 1.0, 1.1])
        f = np.logspace(1, 5, 41)
        ss = _scaled_ladder(butterworth_g(n), fc, 50.0, u, f)
        real = sampling._factor_blocks
        hit = []

        def overflowing(w, im, r2, shape):
            blocks = real(w, im, r2, shape)
            if im.shape[1] == n:  # the poles: make the first row's product overflow
                blocks[0][0] *= np.inf
                hit.append(True)
            return blocks

        monkeypatch.setattr(sampling, "_factor_blocks", overflowing)
        got = ss.grid_gain_db()
        assert hit
        np.testing.assert_allclose(got, _butterworth_db(f[None, :], fc * u[:, None], n),
                                   rtol=0, atol=1e-9)


class TestPoles:
    def test_series_rlc_poles_follow_the_quadratic_formula(self):
        rng = np.random.default_rng(6)
        lv, cv = L * rng.uniform(0.95, 1.05, 8), C * rng.uniform(0.95, 1.05, 8)
        ss = _rlc(lv, cv, np.logspace(4, 5.3, 50))
        # roots of LC s² + RC s + 1: s = −R/(2L) ± j sqrt(1/(LC) − (R/2L)²)
        a = R / (2 * lv)
        b = np.sqrt(1 / (lv * cv) - a * a)
        ref = np.sort_complex(np.stack([-a + 1j * b, -a - 1j * b], axis=1))
        got = np.sort_complex(ss.poles * ss.w_scale)
        np.testing.assert_allclose(got, ref, rtol=1e-12)

    def test_ladder_poles_are_butterworth_poles(self):
        n, fc = 7, 20e3
        u = np.random.default_rng(7).uniform(0.9, 1.1, 5)
        ss = _scaled_ladder(butterworth_g(n), fc, 600.0, u, np.logspace(3, 6, 61))
        # the source node and source current carry no capacitance: the eigenproblem
        # is formed on the remaining columns only
        assert (~np.any(ss.C != 0, axis=(0, 1))).sum() == 2
        k = np.arange(1, n + 1)
        for i in range(5):
            # Butterworth poles: ωc exp(jπ(2k + n − 1)/(2n)), k = 1..n (the left half
            # of the 2n-th roots of −1), e.g. Williams & Taylor, Electronic Filter
            # Design Handbook, §2.3
            ref = 2 * math.pi * fc * u[i] * np.exp(1j * math.pi * (2 * k + n - 1) / (2 * n))
            got = ss.poles[i] * ss.w_scale
            np.testing.assert_allclose(np.sort_complex(got), np.sort_complex(ref),
                                       rtol=1e-11, atol=1e-11 * abs(ref[0]))


class TestNewtonRefinement:
    def test_gain_slopes_match_sympy(self):
        x = sp.symbols("x", real=True)
        rng = np.random.default_rng(8)
        lv, cv = L * rng.uniform(0.95, 1.05, 4), C * rng.uniform(0.95, 1.05, 4)
        ss = _rlc(lv, cv, np.logspace(4, 5.3, 50))
        f = np.array([12e3, 38e3, 41e3, 150e3])
        g, d1, d2, err = ss.gain_slopes(f, np.arange(4))
        assert ss.zeros.shape[1] == 1  # the zero at s = 0 of sRC
        for i in range(4):
            # |H(jω)|² = (ωRC)² / ((1 − ω²LC)² + (ωRC)²), ω = 2π e^x, differentiated
            # symbolically in x = ln f and evaluated to 30 digits
            w = 2 * sp.pi * sp.exp(x)
            rc, lc = sp.Float(R) * sp.Float(cv[i]), sp.Float(lv[i]) * sp.Float(cv[i])
            gx = 10 * sp.log((w * rc) ** 2 / ((1 - w ** 2 * lc) ** 2 + (w * rc) ** 2), 10)
            at = {x: sp.log(sp.Float(f[i], 30))}
            ref = [float(e.evalf(30, subs=at)) for e in (gx, sp.diff(gx, x),
                                                         sp.diff(gx, x, 2))]
            assert g[i] == pytest.approx(ref[0], rel=1e-12, abs=1e-12)
            assert d1[i] == pytest.approx(ref[1], rel=1e-10)
            assert d2[i] == pytest.approx(ref[2], rel=1e-9)
            # the rounding bound: the slope of this sample's own form (its computed
            # roots), differentiated by sympy and evaluated to 30 digits, is within err
            wn = 2 * sp.pi * sp.exp(x) / sp.Float(ss.w_scale, 30)
            q = [(wn - sp.Float(r.imag, 30)) ** 2 + sp.Float(r.real, 30) ** 2
                 for r in np.concatenate([ss.zeros[i], ss.poles[i]])]
            nz = ss.zeros.shape[1]
            form = 10 * sp.log(sp.Mul(*q[:nz]) / sp.Mul(*q[nz:]), 10)
            exact = float(sp.diff(form, x).evalf(30, subs=at))
            assert abs(d1[i] - exact) <= err[i]
            assert err[i] < 1e-12 * max(1.0, abs(exact))

    @pytest.mark.parametrize("direct", [False, True])
    def test_series_rlc_resonance_closed_form(self, direct):
        # f0 = 1/(2π sqrt(LC)) where |H| = 1; half-power edges at
        # ω = ±R/(2L) + sqrt((R/2L)² + 1/(LC)), so f_high − f_low = R/(2πL) and
        # sqrt(f_low f_high) = f0 (series RLC band-pass, e.g. Nilsson & Riedel,
        # Electric Circuits, §14.4). The grid is coarse (10 points per decade): the peak
        # lies between grid points and is found from each sample's pole frequency.
        S = 10
        rng = np.random.default_rng(9)
        lv, cv = L * rng.uniform(0.95, 1.05, S), C * rng.uniform(0.95, 1.05, S)
        ss = _rlc(lv, cv, np.logspace(4, np.log10(2e5), 14))
        half = np.arange(0, S, 2)
        if direct:  # half the samples take the direct-solve path (golden / bisection)
            ss.solve_directly(half)
        bp = BatchProbe(ss)
        res = bp.resonance(None, None)
        a = R / (2 * lv)
        wl, wh = -a + np.sqrt(a * a + 1 / (lv * cv)), a + np.sqrt(a * a + 1 / (lv * cv))
        f0 = 1 / (2 * math.pi * np.sqrt(lv * cv))
        np.testing.assert_allclose(res["peak_gain_db"], 0.0, rtol=0, atol=1e-9)
        np.testing.assert_allclose(res["f_low_hz"], wl / (2 * math.pi), rtol=1e-10)
        np.testing.assert_allclose(res["f_high_hz"], wh / (2 * math.pi), rtol=1e-10)
        np.testing.assert_allclose(res["bandwidth_hz"], R / (2 * math.pi * lv), rtol=1e-9)
        np.testing.assert_allclose(res["f_center_hz"], f0, rtol=1e-10)
        np.testing.assert_allclose(res["q"], np.sqrt(lv / cv) / R, rtol=1e-9)
        form = np.setdiff1d(np.arange(S), half) if direct else np.arange(S)
        # Newton on the exact slope puts the peak at f0 to rounding; golden-section
        # search on values (direct samples) to the flatness of the top, ~1e-7
        np.testing.assert_allclose(res["f_peak_hz"][form], f0[form], rtol=1e-11)
        np.testing.assert_allclose(res["f_peak_hz"], f0, rtol=1e-6)
        # the corner and the resonance share one edge search
        assert bp.corner(None, None, "high") is res["f_high_hz"]

    @pytest.mark.parametrize("direct", [False, True])
    def test_chebyshev_ripple_extremes(self, direct):
        # Chebyshev type I, equal terminations, odd order: |H|² = 1/4 · 1/(1 + ε²Tₙ²(f/fc))
        # (Matthaei et al. §4.03), so over the ripple band the gain spans exactly
        # −20 log10 2 − ripple .. −20 log10 2, with maxima where Tₙ = 0,
        # f/fc = cos((2k − 1)π/(2n)), and minima where Tₙ² = 1, f/fc = cos(kπ/n).
        n, ripple, fc = 5, 0.5, 10e3
        u = np.random.default_rng(10).uniform(0.98, 1.02, 8)
        ss = _scaled_ladder(chebyshev_g(n, ripple), fc, 50.0, u, np.logspace(2, 5, 301))
        if direct:
            ss.solve_directly(np.arange(0, 8, 2))
        bp = BatchProbe(ss)
        lo, hi = 2.55e3, 9.11e3  # holds maxima at 0.588 fc and minima at 0.309, 0.809 fc
        vmin, vmax = bp.band_extremes("gain_db", lo, hi)
        top = -20 * math.log10(2)
        np.testing.assert_allclose(vmax.value, top, rtol=0, atol=1e-9)
        np.testing.assert_allclose(vmin.value, top - ripple, rtol=0, atol=1e-9)
        np.testing.assert_allclose(bp.ripple(lo, hi), ripple, rtol=0, atol=1e-9)
        tol = 1e-6 if direct else 1e-9
        np.testing.assert_allclose(vmax.frequency_hz / (fc * u), math.cos(3 * math.pi / 10),
                                   rtol=tol)
        rel = vmin.frequency_hz / (fc * u)
        nearest = np.where(rel < 0.5, math.cos(2 * math.pi / 5), math.cos(math.pi / 5))
        np.testing.assert_allclose(rel, nearest, rtol=tol)
