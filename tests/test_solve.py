"""Solver against closed forms and scipy.signal."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import signal

from netcheck import read_netlist
from netcheck.assemble import assemble
from netcheck.solve import DenseEngine, SparseEngine

R, L, C = 50.0, 10e-3, 1.5e-9


def series_rlc(r=R, l=L, c=C):
    return read_netlist(f"series RLC\nV1 in 0 AC 1\nL1 in a {l!r}\nC1 a out {c!r}\nR1 out 0 {r!r}\n")


class TestSeriesRLC:
    # Closed form, common textbook result (any circuits text, chapter on resonance):
    # H(jw) = R / (R + j(wL - 1/(wC)))
    def test_transfer_matches_closed_form(self):
        f = np.logspace(3, 6, 777)
        w = 2 * np.pi * f
        expected = R / (R + 1j * (w * L - 1 / (w * C)))
        resp = series_rlc().ac("V1", "out", freqs=f)
        np.testing.assert_allclose(resp.transfer, expected, rtol=1e-11)

    def test_unity_gain_and_minimum_impedance_at_w0(self):
        # at w0 = 1/sqrt(LC) the reactances cancel: |H| = 1, |Z| = R (textbook)
        f0 = 1 / (2 * np.pi * math.sqrt(L * C))
        resp = series_rlc().ac("V1", "out", freqs=[f0])
        assert abs(resp.transfer[0] - 1.0) < 1e-12
        x = resp.solution()[0]
        i_in = -x[resp.system.branch_index["V1"]]
        assert abs(1 / i_in - R) < 1e-9 * R

    def test_group_delay_closed_form(self):
        # phase of H = -atan((wL - 1/(wC))/R); tau = -dphi/dw
        #   = (L + 1/(w^2 C)) / R / (1 + ((wL - 1/(wC))/R)^2)   (derivative of atan, by hand)
        f = np.logspace(3.5, 5.5, 301)
        w = 2 * np.pi * f
        x = (w * L - 1 / (w * C)) / R
        tau = (L + 1 / (w * w * C)) / R / (1 + x * x)
        resp = series_rlc().ac("V1", "out", freqs=f)
        np.testing.assert_allclose(resp.group_delay_s, tau, rtol=1e-9)

    @pytest.mark.parametrize("engine", [DenseEngine, SparseEngine])
    def test_direct_engines_agree_with_closed_form(self, engine):
        f = np.logspace(3, 6, 50)
        w = 2 * np.pi * f
        expected = R / (R + 1j * (w * L - 1 / (w * C)))
        system = assemble(series_rlc(), "V1", "out")
        h, dh = engine(system).transfer(f)
        np.testing.assert_allclose(h, expected, rtol=1e-11)
        # dH/dw of the closed form: -R j(L + 1/(w^2 C)) / (R + jX)^2
        dh_dw = -R * 1j * (L + 1 / (w * w * C)) / (R + 1j * (w * L - 1 / (w * C))) ** 2
        np.testing.assert_allclose(dh, dh_dw * 2 * np.pi, rtol=1e-9)


def butterworth_ladder(order: int, fc: float, r: float = 50.0) -> tuple[str, str]:
    """Doubly terminated Butterworth LC ladder, shunt-C first.

    Prototype values g_k = 2 sin((2k-1) pi / (2n)) (Matthaei, Young & Jones 1964, §4.05;
    from memory), impedance-scaled to r and frequency-scaled to fc.
    """
    wc = 2 * np.pi * fc
    lines = ["butterworth ladder", "V1 in 0 AC 1", f"RS in n1 {r!r}"]
    node = 1
    for k in range(1, order + 1):
        g = 2 * math.sin((2 * k - 1) * math.pi / (2 * order))
        if k % 2:
            lines.append(f"C{k} n{node} 0 {g / (r * wc)!r}")
        else:
            lines.append(f"L{k} n{node} n{node + 1} {g * r / wc!r}")
            node += 1
    lines.append(f"RL n{node} 0 {r!r}")
    return "\n".join(lines) + "\n", f"n{node}"


class TestButterworthLadder:
    @pytest.mark.parametrize("order", [3, 5, 9])
    def test_against_scipy_butter(self, order):
        # Independent reference: scipy.signal.butter(analog=True) + freqs. The doubly
        # terminated ladder has a flat gain of 1/2 (-6.02 dB) in its pass-band.
        text, out = butterworth_ladder(order, 10e3)
        f = np.logspace(2, 6, 2000)
        resp = read_netlist(text).ac("V1", out, freqs=f)
        b, a = signal.butter(order, 2 * np.pi * 10e3, analog=True)
        _, h = signal.freqs(b, a, worN=2 * np.pi * f)
        h = 0.5 * h
        db = 20 * np.log10(np.abs(h))
        assert db.min() < -40 * order + 10  # the check reaches deep into the stop-band
        deep = db > -300
        np.testing.assert_allclose(resp.magnitude_db[deep], db[deep], atol=1e-6)
        phase_err = np.degrees(np.abs(np.angle(resp.transfer[deep] / h[deep])))
        assert phase_err.max() < 1e-6

    def test_fast_path_agrees_with_direct_solves(self):
        # Issue requirement: <= 1e-6 dB and 1e-6 degrees against direct solves
        # for responses down to -200 dB.
        text, out = butterworth_ladder(9, 10e3)
        f = np.logspace(2, 5.4, 2000)
        resp = read_netlist(text).ac("V1", out, freqs=f)
        assert resp.method == "pole-zero"
        h, _ = resp.direct().transfer(f)
        ok = 20 * np.log10(np.abs(h)) > -200
        db_err = np.abs(20 * np.log10(np.abs(resp.transfer[ok]) / np.abs(h[ok])))
        assert db_err.max() < 1e-6
        assert np.degrees(np.abs(np.angle(resp.transfer[ok] / h[ok]))).max() < 1e-6


def test_large_ladder_takes_sparse_path():
    n = 400
    lines = ["rc ladder", "V1 n0 0 AC 1"]
    for k in range(n):
        lines += [f"R{k} n{k} n{k + 1} 100", f"C{k} n{k + 1} 0 1n"]
    ckt = read_netlist("\n".join(lines) + "\n")
    resp = ckt.ac("V1", f"n{n}", freqs=np.logspace(2, 5, 5))
    assert resp.method == "sparse"
    # cross-check one point with a dense solve of the same system
    dense_h, _ = DenseEngine(resp.system).transfer(resp.frequency_hz[:2])
    np.testing.assert_allclose(resp.transfer[:2], dense_h, rtol=1e-9)


def test_response_arrays_are_read_only():
    resp = series_rlc().ac("V1", "out", freqs=[1e3, 1e4])
    with pytest.raises(ValueError):
        resp.transfer[0] = 0
    with pytest.raises(ValueError):
        resp.magnitude_db[0] = 0


def test_sparse_path_finds_a_narrow_peak_between_grid_points():
    # A 600-resistor chain (no current flows: it feeds an ideal buffer, so its gain is
    # exactly 1) makes the system large enough for the sparse path; the buffer drives a
    # series RLC with Q ~ 2000. Series RLC closed form (textbook): the peak is at
    # f0 = 1/(2 pi sqrt(LC)) with |H| = 1 (0 dB), and the poles are
    # s = -R/(2L) +- j sqrt(1/(LC) - (R/2L)^2).
    from netcheck.evaluate import ResponseCurve
    from netcheck.measure import peak
    from netcheck.solve import solve

    lq, cq, rq = 2.2e-3, 7.2e-9, 0.276
    lines = ["Quillmere test: long chain into a sharp resonator", "V1 n0 0 AC 1"]
    lines += [f"R{k} n{k} n{k + 1} 1" for k in range(600)]
    lines += ["E1 b 0 n600 0 1", f"LQ b x {lq!r}", f"CQ x out {cq!r}", f"RQ out 0 {rq!r}"]
    system = assemble(read_netlist("\n".join(lines) + "\n"), "V1", "out")
    grid = np.geomspace(1e3, 1e6, 61)
    response = solve(system, grid)
    assert response.method == "sparse"
    assert response.magnitude_db.max() < -20  # the grid alone misses the peak
    f0 = 1 / (2 * math.pi * math.sqrt(lq * cq))
    sigma, nu = -rq / (2 * lq), math.sqrt(1 / (lq * cq) - (rq / (2 * lq)) ** 2)
    poles = response.poles_hz
    nearest = poles[np.argmin(np.abs(poles - complex(sigma, nu) / (2 * math.pi)))]
    assert nearest == pytest.approx(complex(sigma, nu) / (2 * math.pi), rel=1e-9)
    top = peak(ResponseCurve.of(response))
    assert top.frequency_hz == pytest.approx(f0, rel=1e-9)
    assert top.value == pytest.approx(0.0, abs=1e-9)
