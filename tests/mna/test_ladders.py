"""Solver references: LC ladders from published prototypes, closed-form sections."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import signal

from circuits import chebyshev_g, ladder_netlist
from netcheck import read_netlist


class TestChebyshevPrototype:
    @pytest.mark.parametrize("order,ripple,table", [
        # Matthaei, Young & Jones Table 4.05-2(a) (from memory, 4 decimals)
        (3, 0.5, [1.5963, 1.0967, 1.5963]),
        (5, 0.1, [1.1468, 1.3712, 1.9750, 1.3712, 1.1468]),
        (3, 1.0, [2.0236, 0.9941, 2.0236]),
    ])
    def test_recursion_matches_handbook_table(self, order, ripple, table):
        assert chebyshev_g(order, ripple) == pytest.approx(table, abs=6e-5)


class TestChebyshevLadder:
    @pytest.mark.parametrize("order,ripple", [(3, 0.5), (5, 0.1), (7, 1.0), (9, 0.25)])
    def test_against_scipy_cheby1(self, order, ripple):
        fc, r = 10e3, 600.0
        text, out = ladder_netlist(chebyshev_g(order, ripple), fc, r)
        f = np.logspace(2, 6, 1500)
        resp = read_netlist(text).ac("V1", out, freqs=f)
        # Independent reference: scipy.signal.cheby1(analog=True) (ripple band edge at
        # wc, odd order so |H(0)| = 1) evaluated with scipy.signal.freqs. Equal source
        # and load resistances halve the voltage: -20 log10 2 = -6.02 dB.
        b, a = signal.cheby1(order, ripple, 2 * math.pi * fc, analog=True)
        _, h = signal.freqs(b, a, worN=2 * math.pi * f)
        h = 0.5 * h
        db = 20 * np.log10(np.abs(h))
        assert db.min() < -120  # the check reaches deep into the stop-band
        ok = db > -200
        np.testing.assert_allclose(resp.magnitude_db[ok], db[ok], rtol=0, atol=1e-6)
        phase_err = np.degrees(np.abs(np.angle(resp.transfer[ok] / h[ok])))
        assert phase_err.max() < 1e-6
        # pass-band ripple: between -6.02 dB and -6.02 - ripple dB up to fc
        band = f <= fc
        assert resp.magnitude_db[band].max() <= -20 * math.log10(2) + 1e-9
        assert resp.magnitude_db[band].min() >= -20 * math.log10(2) - ripple - 1e-9

    @pytest.mark.parametrize("order,ripple", [(3, 0.5), (7, 1.0)])
    def test_group_delay_against_scipy_polynomials(self, order, ripple):
        # tau(w) = -d(arg H)/dw = -Re(d ln H / ds) at s = jw, with
        # d ln H/ds = b'(s)/b(s) - a'(s)/a(s) from scipy's cheby1 polynomials
        fc = 10e3
        text, out = ladder_netlist(chebyshev_g(order, ripple), fc, 50.0)
        f = np.logspace(3, 5, 400)
        resp = read_netlist(text).ac("V1", out, freqs=f)
        b, a = signal.cheby1(order, ripple, 2 * math.pi * fc, analog=True)
        s = 2j * math.pi * f
        dlog = (np.polyval(np.polyder(b), s) / np.polyval(b, s)
                - np.polyval(np.polyder(a), s) / np.polyval(a, s))
        tau = -np.real(dlog)
        np.testing.assert_allclose(resp.group_delay_s, tau, rtol=1e-9, atol=1e-12 * tau.max())


class TestShippedAntiAliasLadder:
    def test_aa7_sample_against_scipy_butter(self, samples):
        # sample_netlists/aa7_ladder.cir: 7th-order Butterworth, 600 ohm, 20 kHz, element
        # values rounded to 6 significant digits, so agreement is to ~1e-4 dB, not 1e-6.
        f = np.logspace(3, 5, 300)
        resp = read_netlist(str(samples / "aa7_ladder.cir")).ac("VIN", "n4", freqs=f)
        b, a = signal.butter(7, 2 * math.pi * 20e3, analog=True)
        _, h = signal.freqs(b, a, worN=2 * math.pi * f)
        np.testing.assert_allclose(resp.magnitude_db, 20 * np.log10(np.abs(h) / 2),
                                   atol=1e-4)


class TestSecondOrderGroupDelay:
    def test_parallel_rlc_band_pass(self):
        # Current-driven parallel RLC (transimpedance band-pass):
        #   Z(s) = (s/C) / (s^2 + s B + w0^2),  B = 1/(R C),  w0^2 = 1/(L C).
        # arg Z(jw) = pi/2 - theta, theta = atan2(w B, w0^2 - w^2), so
        #   tau = -d(arg Z)/dw = d theta/dw
        #       = B (w0^2 + w^2) / ((w0^2 - w^2)^2 + (w B)^2)     (quotient rule, by hand)
        # At w0 this is 2/B = 2Q/w0 (Q = w0/B).
        r, l, c = 10e3, 10e-3, 25.33e-9
        ckt = read_netlist(f"tank\nI1 0 out AC 1\nR1 out 0 {r!r}\nL1 out 0 {l!r}\n"
                           f"C1 out 0 {c!r}\n")
        w0, bw = 1 / math.sqrt(l * c), 1 / (r * c)
        f = np.concatenate([np.logspace(3, 5, 200), [w0 / (2 * math.pi)]])
        w = 2 * math.pi * f
        resp = ckt.ac("I1", "out", freqs=f)
        tau = bw * (w0 ** 2 + w ** 2) / ((w0 ** 2 - w ** 2) ** 2 + (w * bw) ** 2)
        np.testing.assert_allclose(resp.group_delay_s, tau, rtol=1e-9)
        assert resp.group_delay_s[-1] == pytest.approx(2 / bw, rel=1e-9)
        # and |Z(j w0)| = R: the tank is purely resistive at resonance
        assert abs(resp.transfer[-1]) == pytest.approx(r, rel=1e-9)

    def test_sample_tank_tia(self, samples):
        # tank_tia.cir: RT = 10k, LT = 10m, CT = 25.33n; same closed form as above
        ckt = read_netlist(str(samples / "tank_tia.cir"))
        r, l, c = 10e3, 10e-3, 25.33e-9
        f = np.logspace(3.5, 4.5, 101)
        w = 2 * math.pi * f
        z = (1j * w / c) / (-w ** 2 + 1j * w / (r * c) + 1 / (l * c))
        resp = ckt.ac("ISENSE", "out", freqs=f)
        np.testing.assert_allclose(resp.transfer, z, rtol=1e-10)


class TestCoupledInductors:
    def test_loaded_transformer_closed_form(self):
        # Primary driven by an ideal source, secondary loaded by R (dots on the first
        # node of each inductor). v1 = s L1 i1 + s M i2, v2 = s M i1 + s L2 i2, v2 = -R i2
        # give, eliminating i1 and i2 (by hand):
        #   V2/V1 = (M/L1) / (1 + s L2 (1 - k^2) / R),   M = k sqrt(L1 L2).
        l1, l2, k, r = 1e-3, 4e-3, 0.8, 50.0
        ckt = read_netlist(f"xfmr\nV1 p 0 AC 1\nL1 p 0 {l1!r}\nL2 s 0 {l2!r}\n"
                           f"K1 L1 L2 {k!r}\nRL s 0 {r!r}\n")
        f = np.logspace(2, 6, 200)
        s = 2j * math.pi * f
        m = k * math.sqrt(l1 * l2)
        expected = (m / l1) / (1 + s * l2 * (1 - k ** 2) / r)
        resp = ckt.ac("V1", "s", freqs=f)
        np.testing.assert_allclose(resp.transfer, expected, rtol=1e-10)

    def test_negative_coupling_inverts(self):
        # same closed form with k < 0 (dot reversed): M/L1 = k for L1 = L2
        ckt = read_netlist("xfmr\nV1 p 0 AC 1\nL1 p 0 1m\nL2 s 0 1m\nK1 L1 L2 -0.5\nRL s 0 50\n")
        s = 2j * math.pi * 1e3
        h = ckt.ac("V1", "s", freqs=[1e3]).transfer[0]
        assert h == pytest.approx(-0.5 / (1 + s * 1e-3 * 0.75 / 50), rel=1e-10)
