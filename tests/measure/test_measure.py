"""Tests of netcheck.measure against closed-form results and scipy.signal as an independent reference."""

from __future__ import annotations

import math
from typing import Sequence

import numpy as np
import pytest
import scipy.signal
import sympy
from hypothesis import given, settings
from hypothesis import strategies as st

from netcheck.measure import (
    HALF_POWER_DB,
    Curve,
    Extremum,
    FunctionCurve,
    MeasurementFailure,
    Resonance,
    band_extremes,
    corner,
    crossing,
    gain_db,
    group_delay_s,
    peak,
    phase_deg,
    resonance,
    ripple,
)

# Closed-form results and handbook citations in the comments below are quoted from memory
# (not looked up); where marked "derived here" the derivation is written out in the comment.
TWO_PI = 2.0 * math.pi


def log_grid(f_lo: float, f_hi: float, per_decade: int) -> np.ndarray:
    """Log-spaced sweep grid, Hz, with ``per_decade`` intervals per decade."""
    n = int(round(per_decade * math.log10(f_hi / f_lo))) + 1
    return np.logspace(math.log10(f_lo), math.log10(f_hi), n)


def zpk_curve(
    zeros: Sequence[complex] | np.ndarray,
    poles: Sequence[complex] | np.ndarray,
    k: float,
    grid: np.ndarray,
    seeds: Sequence[float] | np.ndarray = (),
) -> FunctionCurve:
    """FunctionCurve of H(s) = k prod(s - z) / prod(s - p) at s = j 2 pi f, with exact dH/df.

    dH/ds = H (sum 1/(s - z) - sum 1/(s - p)) (logarithmic derivative of a rational
    function) and dH/df = 2 pi j dH/ds (chain rule).
    """
    z = np.asarray(zeros, dtype=complex)
    p = np.asarray(poles, dtype=complex)

    def h(f: np.ndarray) -> np.ndarray:
        s = 2j * np.pi * np.asarray(f, dtype=float)
        return k * np.prod(s[:, None] - z[None, :], axis=1) / np.prod(s[:, None] - p[None, :], axis=1)

    def dh(f: np.ndarray) -> np.ndarray:
        s = 2j * np.pi * np.asarray(f, dtype=float)
        log_d = np.sum(1.0 / (s[:, None] - z[None, :]), axis=1) - np.sum(1.0 / (s[:, None] - p[None, :]), axis=1)
        return 2j * np.pi * h(f) * log_d

    return FunctionCurve(grid_hz=grid, transfer_fn=h, dtransfer_fn=dh, seeds_hz=np.asarray(seeds, dtype=float))


def quadratic_poles(a: float, w0: float) -> np.ndarray:
    """Roots of s^2 + a s + w0^2 (underdamped), rad/s."""
    beta = math.sqrt(w0 * w0 - a * a / 4.0)
    return np.array([-a / 2.0 + 1j * beta, -a / 2.0 - 1j * beta])


def series_rlc(r: float, l: float, c: float, grid: np.ndarray, seeded: bool = False) -> FunctionCurve:
    """Series RLC, output across R: H(s) = (s R/L) / (s^2 + s R/L + 1/(LC))."""
    a, w0 = r / l, 1.0 / math.sqrt(l * c)
    poles = quadratic_poles(a, w0)
    seeds = [abs(poles[0].imag) / TWO_PI] if seeded else []
    return zpk_curve([0.0], poles, a, grid, seeds)


def edge_pair(a: float, w0: float, drop_db: float) -> tuple[float, float]:
    """Edges (rad/s) where the series-RLC band-pass is ``drop_db`` below its 0 dB peak.

    |H|^2 = 1 / (1 + ((w0^2 - w^2)/(a w))^2) = 10^(-drop/10) gives w^2 -+ K a w - w0^2 = 0
    with K = sqrt(10^(drop/10) - 1); positive roots w = -+K a/2 + sqrt((K a/2)^2 + w0^2).
    """
    half = math.sqrt(10.0 ** (drop_db / 10.0) - 1.0) * a / 2.0
    root = math.sqrt(half * half + w0 * w0)
    return root - half, root + half


def chebyshev_05db(fc: float) -> FunctionCurve:
    """5th-order 0.5 dB Chebyshev I low-pass, ripple edge fc (Hz), from scipy.signal.cheby1."""
    return zpk_curve(*scipy.signal.cheby1(5, 0.5, TWO_PI * fc, analog=True, output="zpk"), log_grid(1e2, 1e6, 50))


R, L, C = 50.0, 10e-3, 1.58e-9
A_RLC, W0_RLC = R / L, 1.0 / math.sqrt(L * C)
F0_RLC = W0_RLC / TWO_PI
GRID_50 = log_grid(1e3, 1e6, 50)


def rel(x: float, ref: float) -> float:
    return abs(x - ref) / abs(ref)


# ----------------------------------------------------------------------------- the test helper itself


class TestZpkHelper:
    def test_derivative_matches_sympy(self) -> None:
        # Independent check of the helper: sympy's symbolic derivative of the series RLC
        # rational function H(s) = s a / (s^2 + s a + w0^2), with dH/df = 2 pi j dH/ds.
        s = sympy.symbols("s")
        a, w0 = sympy.Float(A_RLC), sympy.Float(W0_RLC)
        expr = s * a / (s**2 + s * a + w0**2)
        h_fn = sympy.lambdify(s, expr, "numpy")
        dh_fn = sympy.lambdify(s, sympy.diff(expr, s), "numpy")
        curve = series_rlc(R, L, C, GRID_50)
        f = np.array([1.1e3, 3.9e4, F0_RLC, 7.7e5])
        sj = 2j * np.pi * f
        np.testing.assert_allclose(curve.transfer(f), h_fn(sj), rtol=1e-12)
        np.testing.assert_allclose(curve.dtransfer(f), 2j * np.pi * dh_fn(sj), rtol=1e-10)

    def test_function_curve_is_a_curve_and_validates(self) -> None:
        curve = series_rlc(R, L, C, GRID_50)
        assert isinstance(curve, Curve)
        with pytest.raises(ValueError, match="strictly increasing"):
            FunctionCurve(grid_hz=np.array([1.0, 3.0, 2.0]), transfer_fn=np.ones_like, dtransfer_fn=np.zeros_like)
        with pytest.raises(ValueError, match="at least 2"):
            FunctionCurve(grid_hz=np.array([1.0]), transfer_fn=np.ones_like, dtransfer_fn=np.zeros_like)


# ----------------------------------------------------------------------------- point helpers


class TestPointHelpers:
    def test_gain_and_phase_of_series_rlc(self) -> None:
        # Series RLC closed form, common textbook result: |H| = a w / sqrt((w0^2 - w^2)^2 + (a w)^2),
        # arg H = 90 deg - atan2(a w, w0^2 - w^2).
        curve = series_rlc(R, L, C, GRID_50)
        f = np.array([[2.5e3, 3.3e4], [F0_RLC, 9.1e5]])
        w = TWO_PI * f
        mag = A_RLC * w / np.sqrt((W0_RLC**2 - w**2) ** 2 + (A_RLC * w) ** 2)
        np.testing.assert_allclose(gain_db(curve, f), 20 * np.log10(mag), rtol=0, atol=1e-10)
        ph = 90.0 - np.degrees(np.arctan2(A_RLC * w, W0_RLC**2 - w**2))
        np.testing.assert_allclose(phase_deg(curve, f), ph, rtol=0, atol=1e-9)
        assert gain_db(curve, f).shape == (2, 2)

    def test_group_delay_closed_form(self) -> None:
        # Derived here from arg H = pi/2 - atan2(a w, w0^2 - w^2):
        # tau(w) = d/dw atan2(a w, w0^2 - w^2) = a (w0^2 + w^2) / ((w0^2 - w^2)^2 + a^2 w^2);
        # at w0 this is 2/a = 2L/R (series RLC, common textbook result).
        curve = series_rlc(R, L, C, GRID_50)
        f = np.array([1.7e3, 3.0e4, 3.98e4, F0_RLC, 4.1e4, 6.0e5])
        w = TWO_PI * f
        tau = A_RLC * (W0_RLC**2 + w**2) / ((W0_RLC**2 - w**2) ** 2 + A_RLC**2 * w**2)
        np.testing.assert_allclose(group_delay_s(curve, f), tau, rtol=1e-9)
        assert rel(float(group_delay_s(curve, F0_RLC)), 2 * L / R) < 1e-9

    def test_phase_unwrapped_past_minus_360_degrees(self) -> None:
        # Unwrapped phase of an all-pole response is the sum of pole angles,
        # -sum atan2(w - Im p, -Re p), each continuous in w (rational-function phase,
        # common textbook result); scipy.signal.butter supplies the poles independently.
        z, p, k = scipy.signal.butter(5, TWO_PI * 1e4, analog=True, output="zpk")
        curve = zpk_curve(z, p, k, log_grid(1e2, 1e6, 20))
        f = np.array([3.3e2, 9.7e3, 2.2e4, 8.8e4, 7.5e5])
        w = TWO_PI * f
        ref = -np.degrees(np.sum(np.arctan2(w[:, None] - p.imag[None, :], -p.real[None, :]), axis=1))
        np.testing.assert_allclose(phase_deg(curve, f), ref, rtol=0, atol=1e-9)
        assert phase_deg(curve, 7.5e5) < -400.0  # well past one wrap

    def test_phase_follows_narrow_resonances_via_seeds(self) -> None:
        # Two Q = 2000 low-pass sections at 20 kHz and 20.5 kHz, both between the same two
        # grid points (19.95 kHz, 25.12 kHz): together they turn the phase by 360 deg there,
        # which a grid-only unwrap cannot see.  Reference: sum of pole angles as above
        # (rational-function phase, common textbook result).
        poles = np.concatenate([quadratic_poles(TWO_PI * f0 / 2000, TWO_PI * f0) for f0 in (2e4, 2.05e4)])
        seeds = np.abs(poles.imag[poles.imag > 0]) / TWO_PI
        k = float(np.prod(np.abs(poles)))
        curve = zpk_curve([], poles, k, log_grid(1e3, 1e6, 10), seeds)
        f = np.array([1.5e4, 2.02e4, 3.0e4, 9.0e5])
        w = TWO_PI * f
        ref = -np.degrees(np.sum(np.arctan2(w[:, None] - poles.imag[None, :], -poles.real[None, :]), axis=1))
        np.testing.assert_allclose(phase_deg(curve, f), ref, rtol=0, atol=1e-9)
        assert float(phase_deg(curve, 3.0e4)) < -350.0

    def test_bad_frequencies(self) -> None:
        curve = series_rlc(R, L, C, GRID_50)
        for fn in (gain_db, phase_deg, group_delay_s):
            with pytest.raises(ValueError, match="f_hz"):
                fn(curve, np.array([1e3, math.nan]))
            with pytest.raises(ValueError, match="f_hz"):
                fn(curve, -5.0)


# ----------------------------------------------------------------------------- band_extremes


class TestBandExtremes:
    def test_group_delay_extremes(self) -> None:
        # Setting d tau/dw = 0 in tau(w) = a (w0^2 + w^2)/((w0^2 - w^2)^2 + a^2 w^2) (derived
        # here) gives u^2 + 2 w0^2 u - (3 w0^4 - a^2 w0^2) = 0 for u = w^2, so the maximum is at
        # w^2 = w0 (sqrt(4 w0^2 - a^2) - w0); away from it tau decreases, so the minimum over a
        # band around it is at a band end.
        curve = series_rlc(R, L, C, GRID_50)
        lo, hi = 3.0e4, 5.0e4

        def tau(f: float) -> float:
            w = TWO_PI * f
            return A_RLC * (W0_RLC**2 + w**2) / ((W0_RLC**2 - w**2) ** 2 + A_RLC**2 * w**2)

        w_max = math.sqrt(W0_RLC * (math.sqrt(4 * W0_RLC**2 - A_RLC**2) - W0_RLC))
        low, high = band_extremes(curve, "group_delay_s", lo, hi)
        assert rel(high.frequency_hz, w_max / TWO_PI) < 1e-6
        assert rel(high.value, tau(w_max / TWO_PI)) < 1e-10
        f_min = lo if tau(lo) < tau(hi) else hi
        assert low.frequency_hz == f_min
        assert rel(low.value, tau(f_min)) < 1e-10

    def test_chebyshev_group_delay_peak_against_pole_sum(self) -> None:
        # Group delay of an all-pole response is sum sigma_k / (sigma_k^2 + (w - beta_k)^2) for
        # poles -sigma_k + j beta_k (derivative of the pole angles; common textbook result).
        # Poles from scipy.signal.cheby1; reference maximum from dense sampling of that sum
        # (spacing 1e-6 relative, so the sampled maximum is within ~1e-12 relative in value).
        z, p, k = scipy.signal.cheby1(5, 0.5, TWO_PI * 1e4, analog=True, output="zpk")
        curve = zpk_curve(z, p, k, log_grid(1e2, 1e6, 50))
        low, high = band_extremes(curve, "group_delay_s", 1e2, 2e4)
        f = np.linspace(9e3, 1.2e4, 300001)
        w = TWO_PI * f
        tau = np.sum(-p.real / (p.real**2 + (w[:, None] - p.imag) ** 2), axis=1)
        i = int(np.argmax(tau))
        assert rel(high.value, float(tau[i])) < 1e-9
        assert rel(high.frequency_hz, float(f[i])) < 1e-5
        w_end = TWO_PI * 2e4
        assert low.frequency_hz == 2e4  # delay falls steadily above the pass band
        assert rel(low.value, float(np.sum(-p.real / (p.real**2 + (w_end - p.imag) ** 2)))) < 1e-10

    def test_phase_extremes_at_band_ends(self) -> None:
        # Series RLC phase 90 deg - atan2(a w, w0^2 - w^2) falls monotonically (common
        # textbook result), so over a band its maximum is at the lower end, minimum at the upper.
        curve = series_rlc(R, L, C, GRID_50)
        low, high = band_extremes(curve, "phase_deg", 3.1e4, 5.2e4)
        assert (high.frequency_hz, low.frequency_hz) == (3.1e4, 5.2e4)
        w = TWO_PI * np.array([3.1e4, 5.2e4])
        ph = 90.0 - np.degrees(np.arctan2(A_RLC * w, W0_RLC**2 - w**2))
        assert high.value == pytest.approx(ph[0], abs=1e-9)
        assert low.value == pytest.approx(ph[1], abs=1e-9)

    def test_interior_phase_maximum_of_lead_network(self) -> None:
        # Lead network H = (s + wz)/(s + wp), wz < wp: maximum phase asin((wp - wz)/(wp + wz))
        # at w = sqrt(wz wp) (common control-textbook result, from memory).
        wz, wp = TWO_PI * 1e3, TWO_PI * 1e4
        curve = zpk_curve([-wz], [-wp], 1.0, log_grid(1e1, 1e6, 20))
        _, high = band_extremes(curve, "phase_deg", 1e2, 1e5)
        assert rel(high.frequency_hz, math.sqrt(wz * wp) / TWO_PI) < 1e-9
        assert high.value == pytest.approx(math.degrees(math.asin((wp - wz) / (wp + wz))), abs=1e-10)

    def test_narrow_spike_between_grid_points(self) -> None:
        # Flat response plus a Q = 1e5 resonant term: H = (s^2 + 2 a s + w0^2)/(s^2 + a s + w0^2).
        # |H|^2 = 1 + 3/(1 + ((w0^2 - w^2)/(a w))^2) (derived here) peaks at w0 with |H| = 2,
        # i.e. 20 log10 2 dB.  The -3 dB width (~0.12 Hz) is far below the grid spacing.
        f0 = 12345.6789
        w0 = TWO_PI * f0
        a = w0 / 1e5
        poles = quadratic_poles(a, w0)
        zeros = quadratic_poles(2 * a, w0)
        grid = log_grid(1e3, 1e5, 10)
        curve = zpk_curve(zeros, poles, 1.0, grid, [abs(poles[0].imag) / TWO_PI])
        assert np.max(gain_db(curve, grid)) < 0.01  # the grid alone does not see the spike
        low, high = band_extremes(curve, "gain_db", 1e3, 1e5)
        assert rel(high.frequency_hz, f0) < 1e-10
        assert high.value == pytest.approx(20 * math.log10(2.0), abs=1e-9)
        # Far from w0 |H| -> 1 from above, so the band minimum is at an end, just above 0 dB.
        assert low.frequency_hz in (1e3, 1e5)
        assert 0.0 < low.value < 1e-6

    def test_narrow_spike_on_a_slope_needs_its_seed(self) -> None:
        # The same Q = 1e5 spike (+20 log10 2 dB at w0, derived above) on a first-order
        # low-pass slope wc/(s + wc), wc = 2 pi 1 kHz: the exact derivative is negative at
        # every grid point, so only the seed reveals the spike.  The slope moves the maximum
        # by ~1e-10 relative (estimated here from slope / curvature), so the band maximum
        # is the low-pass gain at f0 plus 20 log10 2 dB, and it beats the band end.
        f0 = 12345.6789
        w0, wc = TWO_PI * f0, TWO_PI * 1e3
        a = w0 / 1e5
        poles = np.concatenate([quadratic_poles(a, w0), [-wc]])
        zeros = quadratic_poles(2 * a, w0)
        grid = log_grid(1e3, 1e5, 10)
        seeded = zpk_curve(zeros, poles, wc, grid, [abs(poles[0].imag) / TWO_PI])
        slope_db = -10 * math.log10(1 + (f0 / 1e3) ** 2)  # |wc/(j w + wc)|^2, first-order closed form
        _, high = band_extremes(seeded, "gain_db", 1e4, 1e5)
        assert rel(high.frequency_hz, f0) < 1e-9
        assert high.value == pytest.approx(slope_db + 20 * math.log10(2.0), abs=1e-8)
        unseeded = zpk_curve(zeros, poles, wc, grid)
        assert band_extremes(unseeded, "gain_db", 1e4, 1e5)[1].frequency_hz == 1e4  # documents the need

    def test_dip_between_grid_points_without_seeds(self) -> None:
        # Finite-depth notch H = (s^2 + b s + w0^2)/(s^2 + a s + w0^2), b = a/2: minimum b/a
        # (-6.02 dB) exactly at w0 (derived here: |H|^2 - 1 is monotone in the detuning).
        f0 = math.sqrt(1e4 * 10 ** 4.1)  # geometric middle of two grid points
        w0 = TWO_PI * f0
        curve = zpk_curve(quadratic_poles(w0 / 20, w0), quadratic_poles(w0 / 10, w0), 1.0, log_grid(1e3, 1e6, 10))
        low, _ = band_extremes(curve, "gain_db", 1e3, 1e6)
        assert rel(low.frequency_hz, f0) < 1e-10
        assert low.value == pytest.approx(20 * math.log10(0.5), abs=1e-10)

    def test_bad_arguments(self) -> None:
        curve = series_rlc(R, L, C, GRID_50)
        cases = [
            (("gain", 2e3, 3e3), "quantity"),
            (("gain_db", 3e3, 2e3), "lo_hz"),
            (("gain_db", 5e2, 3e3), "lo_hz"),
            (("gain_db", 2e3, 2e6), "hi_hz"),
            (("gain_db", math.nan, 3e3), "lo_hz"),
            (("gain_db", 2e3, None), "hi_hz"),
        ]
        for args, name in cases:
            with pytest.raises(ValueError, match=name) as info:
                band_extremes(curve, *args)  # type: ignore[arg-type]
            assert not isinstance(info.value, MeasurementFailure)


# ----------------------------------------------------------------------------- peak


class TestPeak:
    def test_series_rlc_peak(self) -> None:
        # Series RLC closed form, common textbook result: f0 = 1/(2 pi sqrt(LC)), |H(f0)| = 1.
        top = peak(series_rlc(R, L, C, GRID_50))
        assert isinstance(top, Extremum)
        assert rel(top.frequency_hz, F0_RLC) < 1e-10
        assert top.value == pytest.approx(0.0, abs=1e-12)

    def test_peak_in_band_is_band_end_on_a_slope(self) -> None:
        # Below f0 the series RLC gain rises monotonically (common textbook result).
        curve = series_rlc(R, L, C, GRID_50)
        top = peak(curve, 2e3, 2e4)
        assert top.frequency_hz == 2e4
        assert top.value == pytest.approx(float(gain_db(curve, 2e4)), abs=1e-12)

    def test_batches_evaluations(self) -> None:
        # Implementation property (not a physics check): the sweep is evaluated in one batch
        # and the refinement needs only a bounded number of single-point solves.
        base = series_rlc(R, L, C, GRID_50)
        sizes: list[int] = []

        def h(f: np.ndarray) -> np.ndarray:
            sizes.append(f.size)
            return base.transfer(f)

        curve = FunctionCurve(grid_hz=GRID_50, transfer_fn=h, dtransfer_fn=base.dtransfer)
        peak(curve)
        assert max(sizes) >= GRID_50.size
        assert sum(1 for n in sizes if n > 1) == 1
        assert len(sizes) < 60


# ----------------------------------------------------------------------------- crossing


class TestCrossing:
    def test_series_rlc_20_db_edges(self) -> None:
        # Series RLC edges 20 dB down, from |H|^2 = 1/(1 + ((w0^2 - w^2)/(a w))^2) (see edge_pair).
        curve = series_rlc(R, L, C, GRID_50)
        w_lo, w_hi = edge_pair(A_RLC, W0_RLC, 20.0)
        assert rel(crossing(curve, -20.0, F0_RLC, "up", 1e6), w_hi / TWO_PI) < 1e-12
        assert rel(crossing(curve, -20.0, F0_RLC, "down", 1e3), w_lo / TWO_PI) < 1e-12

    def test_first_crossing_in_chebyshev_pass_band(self) -> None:
        # Chebyshev I: |H|^2 = 1/(1 + eps^2 T5(x)^2), x = f/fc, T5(x) = 16x^5 - 20x^3 + 5x
        # (Williams & Taylor, Electronic Filter Design Handbook; from memory).  -0.25 dB is crossed
        # several times in the pass band; the first one above 100 Hz is the smallest positive root of
        # T5(x) = sqrt((10^0.025 - 1)/eps^2) (the gain first falls there).
        fc = 1e4
        curve = chebyshev_05db(fc)
        eps2 = 10**0.05 - 1
        c = math.sqrt((10**0.025 - 1) / eps2)
        roots = np.roots([16, 0, -20, 0, 5, -c])
        x1 = min(r.real for r in roots if abs(r.imag) < 1e-12 and r.real > 0)
        assert rel(crossing(curve, -0.25, 1e2, "up", 1e6), x1 * fc) < 1e-10

    def test_hidden_dip_between_grid_points(self) -> None:
        # Finite notch of depth b/a = 1/2 (-6.02 dB) whose neighbouring grid points are above
        # -5 dB.  From |H|^2 = ((w0^2 - w^2)^2 + b^2 w^2)/((w0^2 - w^2)^2 + a^2 w^2) = G (derived
        # here): w0^2 - w^2 = c w, c = sqrt((G a^2 - b^2)/(1 - G)), lower root
        # w = -c/2 + sqrt(c^2/4 + w0^2).
        f0 = math.sqrt(1e4 * 10 ** 4.1)
        w0 = TWO_PI * f0
        a, b = w0 / 10, w0 / 20
        grid = log_grid(1e3, 1e6, 10)
        curve = zpk_curve(quadratic_poles(b, w0), quadratic_poles(a, w0), 1.0, grid)
        assert np.min(gain_db(curve, grid)) > -5.0
        big_g = 10 ** (-0.5)
        cc = math.sqrt((big_g * a * a - b * b) / (1 - big_g))
        w_low = -cc / 2 + math.sqrt(cc * cc / 4 + w0 * w0)
        assert rel(crossing(curve, -5.0, 1e3, "up", 1e6), w_low / TWO_PI) < 1e-12
        w_high = cc / 2 + math.sqrt(cc * cc / 4 + w0 * w0)
        assert rel(crossing(curve, -5.0, 1e6, "down", 1e3), w_high / TWO_PI) < 1e-12

    def test_no_crossing(self) -> None:
        # Series RLC above f0: |H| ~ a/w, about -62 dB at 1 MHz (closed form), never -80 dB.
        curve = series_rlc(R, L, C, GRID_50)
        with pytest.raises(MeasurementFailure, match=r"never crosses -80 dB above 40\.04 kHz.*stop 1 MHz"):
            crossing(curve, -80.0, F0_RLC, "up", 1e6)

    def test_bad_arguments(self) -> None:
        curve = series_rlc(R, L, C, GRID_50)
        cases = [
            ((-3.0, 4e4, "sideways", 1e5), "direction"),
            ((-3.0, 4e4, "up", 1e4), "limit_hz"),
            ((-3.0, 4e4, "down", 4e4), "limit_hz"),
            ((-3.0, 4e7, "down", 1e4), "start_hz"),
            ((math.inf, 4e4, "up", 1e5), "level_db"),
        ]
        for args, name in cases:
            with pytest.raises(ValueError, match=name) as info:
                crossing(curve, *args)  # type: ignore[arg-type]
            assert not isinstance(info.value, MeasurementFailure)


# ----------------------------------------------------------------------------- resonance


class TestResonance:
    def test_series_rlc_half_power(self) -> None:
        # Series RLC closed form, common textbook result: w0 = 1/sqrt(LC), half-power edges
        # w = -+R/(2L) + sqrt((R/2L)^2 + 1/(LC)), BW = R/(2 pi L), sqrt(f_low f_high) = f0,
        # Q = w0 L / R.
        res = resonance(series_rlc(R, L, C, GRID_50))
        assert isinstance(res, Resonance)
        half = R / (2 * L)
        w_lo = -half + math.sqrt(half**2 + 1 / (L * C))
        w_hi = half + math.sqrt(half**2 + 1 / (L * C))
        assert rel(res.f_peak_hz, F0_RLC) < 1e-9
        assert res.peak_gain_db == pytest.approx(0.0, abs=1e-12)
        assert rel(res.f_low_hz, w_lo / TWO_PI) < 1e-9
        assert rel(res.f_high_hz, w_hi / TWO_PI) < 1e-9
        assert rel(res.bandwidth_hz, R / (TWO_PI * L)) < 1e-9
        assert rel(res.f_center_hz, F0_RLC) < 1e-9
        assert rel(res.q, W0_RLC * L / R) < 1e-9
        # Half-power is exactly 10 log10(2) dB (common practice, no source).
        assert res.level_db == 10 * math.log10(2)

    def test_high_q_on_coarse_grid_with_seed(self) -> None:
        # Same closed forms with R = 0.25 ohm: Q = w0 L / R ~ 1.0e4, -3 dB width ~4 Hz at 40 kHz,
        # on a 10-points-per-decade grid; the seed is Im(pole)/(2 pi).  (An isolated peak is
        # also bracketed by the derivative sign change between grid points; the seed-only
        # case is test_narrow_spike_on_a_slope_needs_its_seed.)
        r = 0.25
        grid = log_grid(1e3, 1e6, 10)
        curve = series_rlc(r, L, C, grid, seeded=True)
        assert np.max(gain_db(curve, grid)) < -20.0  # the grid alone misses the peak
        res = resonance(curve)
        half = r / (2 * L)
        assert rel(res.f_peak_hz, F0_RLC) < 1e-10
        assert res.peak_gain_db == pytest.approx(0.0, abs=1e-9)
        assert rel(res.f_low_hz, (-half + math.sqrt(half**2 + 1 / (L * C))) / TWO_PI) < 1e-9
        assert rel(res.f_high_hz, (half + math.sqrt(half**2 + 1 / (L * C))) / TWO_PI) < 1e-9
        assert rel(res.bandwidth_hz, r / (TWO_PI * L)) < 1e-9
        assert rel(res.f_center_hz, F0_RLC) < 1e-9
        assert rel(res.q, W0_RLC * L / r) < 1e-9
        assert 9.9e3 < res.q < 1.01e4

    def test_explicit_level(self) -> None:
        # Edges 6 dB below the peak from the series-RLC closed form (see edge_pair).
        res = resonance(series_rlc(R, L, C, GRID_50), level_db=6.0)
        w_lo, w_hi = edge_pair(A_RLC, W0_RLC, 6.0)
        assert res.level_db == 6.0
        assert rel(res.f_low_hz, w_lo / TWO_PI) < 1e-10
        assert rel(res.f_high_hz, w_hi / TWO_PI) < 1e-10

    @settings(max_examples=25, deadline=None)
    @given(
        f0=st.floats(min_value=2e3, max_value=4e5),
        q=st.floats(min_value=2.0, max_value=300.0),
    )
    def test_property_matches_closed_form(self, f0: float, q: float) -> None:
        # Series RLC closed forms (common textbook result) over random f0 and Q.
        w0 = TWO_PI * f0
        a = w0 / q
        curve = zpk_curve([0.0], quadratic_poles(a, w0), a, log_grid(1e2, 1e7, 20))
        res = resonance(curve)
        w_lo, w_hi = edge_pair(a, w0, HALF_POWER_DB)
        assert rel(res.f_peak_hz, f0) < 1e-9
        assert rel(res.f_low_hz, w_lo / TWO_PI) < 1e-9
        assert rel(res.f_high_hz, w_hi / TWO_PI) < 1e-9
        assert rel(res.q, q) < 1e-8

    def test_edge_outside_sweep(self) -> None:
        # Sweep ends at 40.2 kHz, below the upper half-power edge (~40.44 kHz, closed form).
        curve = series_rlc(R, L, C, log_grid(1e3, 4.02e4, 50))
        with pytest.raises(MeasurementFailure, match=r"never falls 3\.01 dB below the peak.*above"):
            resonance(curve)

    def test_no_peak_inside(self) -> None:
        # A Butterworth low-pass (scipy.signal.butter) falls monotonically: no interior peak.
        curve = zpk_curve(*scipy.signal.butter(5, TWO_PI * 1e4, analog=True, output="zpk"), GRID_50)
        with pytest.raises(MeasurementFailure, match="no resonance peak"):
            resonance(curve)

    def test_bad_level(self) -> None:
        curve = series_rlc(R, L, C, GRID_50)
        for level in (0.0, -3.0, math.nan):
            with pytest.raises(ValueError, match="level_db") as info:
                resonance(curve, level_db=level)
            assert not isinstance(info.value, MeasurementFailure)


# ----------------------------------------------------------------------------- corner


class TestCorner:
    FC = 1e4

    def butter(self, btype: str = "lowpass") -> FunctionCurve:
        z, p, k = scipy.signal.butter(5, TWO_PI * self.FC, btype=btype, analog=True, output="zpk")
        return zpk_curve(z, p, k, log_grid(1e2, 1e6, 50))

    def test_butterworth_low_pass_half_power(self) -> None:
        # Butterworth: |H(j wc)|^2 = 1/2 (Butterworth 1930; any filter handbook; from memory).
        curve = self.butter()
        assert rel(corner(curve), self.FC) < 1e-9
        assert rel(corner(curve, side="high"), self.FC) < 1e-9

    def test_butterworth_20_db(self) -> None:
        # |H|^2 = 1/(1 + (f/fc)^10) = 1/100 at f = fc 99^(1/10) (Butterworth magnitude, any handbook).
        assert rel(corner(self.butter(), level_db=20.0), self.FC * 99 ** 0.1) < 1e-9

    def test_butterworth_high_pass(self) -> None:
        # High-pass Butterworth (scipy.signal.butter btype="highpass"): |H(j wc)|^2 = 1/2.
        curve = self.butter("highpass")
        assert rel(corner(curve), self.FC) < 1e-9
        assert rel(corner(curve, side="low"), self.FC) < 1e-9
        with pytest.raises(MeasurementFailure, match="above the pass-band"):
            corner(curve, side="high")

    def test_chebyshev_half_power(self) -> None:
        # Chebyshev I: half-power where eps T5(x) = 1, x = cosh(acosh(1/eps)/5) (Williams & Taylor,
        # Electronic Filter Design Handbook; from memory); the reference is the 0 dB ripple peak.
        curve = chebyshev_05db(self.FC)
        eps = math.sqrt(10**0.05 - 1)
        assert rel(corner(curve), self.FC * math.cosh(math.acosh(1 / eps) / 5)) < 1e-9

    def test_explicit_reference(self) -> None:
        # With reference 0 dB and drop 20 dB the corner is the -20 dB point (Butterworth, as above).
        assert rel(corner(self.butter(), level_db=20.0, reference_db=0.0), self.FC * 99 ** 0.1) < 1e-9

    def test_ambiguous_and_missing(self) -> None:
        # A band-pass has edges on both sides (series RLC closed form); a constant gain has none.
        with pytest.raises(MeasurementFailure, match="side='low'.*side='high'"):
            corner(series_rlc(R, L, C, GRID_50))
        flat = zpk_curve([], [], 2.0, GRID_50)
        with pytest.raises(MeasurementFailure, match="either side"):
            corner(flat)
        with pytest.raises(MeasurementFailure, match="below the pass-band"):
            corner(self.butter(), side="low")

    def test_bad_arguments(self) -> None:
        curve = self.butter()
        cases: list[tuple[dict[str, object], str]] = [
            ({"side": "left"}, "side"),
            ({"level_db": -1.0}, "level_db"),
            ({"reference_db": math.nan}, "reference_db"),
        ]
        for kwargs, name in cases:
            with pytest.raises(ValueError, match=name) as info:
                corner(curve, **kwargs)  # type: ignore[arg-type]
            assert not isinstance(info.value, MeasurementFailure)


# ----------------------------------------------------------------------------- ripple


class TestRipple:
    FC = 1e4

    def test_chebyshev_ripple_and_stop_band(self) -> None:
        # Chebyshev I, 5th order, 0.5 dB (scipy.signal.cheby1 as independent reference):
        # pass-band gain swings between 0 dB (T5 = 0, x = cos((2k-1) pi/10)) and -0.5 dB
        # (|T5| = 1); at 2 fc the loss is 10 log10(1 + eps^2 T5(2)^2), T5(2) = 362,
        # eps^2 = 10^0.05 - 1 (Williams & Taylor, Electronic Filter Design Handbook; from memory).
        curve = chebyshev_05db(self.FC)
        size, low, high = ripple(curve, 1e2, self.FC)
        assert size == pytest.approx(0.5, abs=1e-6)
        assert high.value == pytest.approx(0.0, abs=1e-9)
        assert low.value == pytest.approx(-0.5, abs=1e-9)
        peaks = [math.cos((2 * k - 1) * math.pi / 10) * self.FC for k in (1, 2)]
        assert min(rel(high.frequency_hz, fp) for fp in peaks) < 1e-7
        eps2 = 10**0.05 - 1
        assert float(gain_db(curve, 2 * self.FC)) == pytest.approx(-10 * math.log10(1 + eps2 * 362.0**2), abs=1e-9)

    def test_flat_response_has_no_ripple(self) -> None:
        # A constant gain of 2 (6.0206 dB) has zero ripple (trivially exact).
        size, low, high = ripple(zpk_curve([], [], 2.0, GRID_50), 1e3, 1e5)
        assert size == 0.0
        assert low.value == pytest.approx(20 * math.log10(2.0), abs=1e-12)
