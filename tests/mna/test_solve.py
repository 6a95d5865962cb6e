"""Solver against closed forms and scipy.signal."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import signal

from circuits import butterworth_ladder
from netcheck import read_netlist
from netcheck.mna.assemble import System, assemble
from netcheck.mna.solve import DenseEngine, SparseEngine

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
    from netcheck.analyses.nominal import ResponseCurve
    from netcheck.measure import peak
    from netcheck.mna.solve import solve

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


# --- sparse pole search: every lightly damped pole of the sweep --------------------------


def quillmere_comb(branch_hz: np.ndarray, q: np.ndarray, sections: int = 320) -> str:
    """Quillmere Instruments QC comb filter: series L-C-R branches from ``in`` to ``out``.

    Branch k resonates near branch_hz[k] with quality factor q[k] (L = 0.8 H, C from
    f = 1/(2 pi sqrt(LC)), R = 2 pi f L / q); an RC line of ``sections`` sections hung
    on ``in`` (an input cable model) makes the system large enough for the sparse path.
    """
    lines = ["Quillmere Instruments QC comb filter", "V1 in 0 AC 1", "R1 in out 100k",
             "R2 out 0 1k", "RH in n0 1k"]
    for k, (f, qk) in enumerate(zip(branch_hz, q)):
        w = 2 * math.pi * float(f)
        lines += [f"LX{k} in m{k} 0.8", f"CX{k} m{k} x{k} {1 / (w * w * 0.8)!r}",
                  f"RX{k} x{k} out {w * 0.8 / float(qk)!r}"]
    lines += [f"RL{i} n{i} n{i + 1} 1k\nCL{i} n{i + 1} 0 1n" for i in range(sections)]
    return "\n".join(lines) + "\n"


def lightly_damped_in_sweep(system: System, lo: float, hi: float) -> np.ndarray:
    """Reference poles (Hz): scipy.linalg.eigvals of the dense pencil (G, -C), i.e. the
    roots of det(G + sC) = 0, kept as netcheck.analyses.nominal.seeds_from_roots keeps them
    (Im > 0, |Im| > |Re|, and |Im| or |s| inside [lo, hi])."""
    import scipy.linalg as sla

    p = sla.eigvals(system.G.toarray(), -system.C.toarray())
    p = p[np.isfinite(p)] / (2 * np.pi)
    p = p[(p.imag > 0) & (np.abs(p.imag) > np.abs(p.real))]
    inside = ((p.imag >= lo) & (p.imag <= hi)) | ((np.abs(p) >= lo) & (np.abs(p) <= hi))
    return p[inside]


def assert_found(found: np.ndarray, reference: np.ndarray, rel: float = 1e-6) -> None:
    """Every reference pole is within ``rel`` (relative) of a found one, and no two
    reference poles are so close that one could stand in for the other."""
    gaps = np.abs(reference[:, None] - reference[None, :]) / np.abs(reference)[:, None]
    assert gaps[~np.eye(reference.size, dtype=bool)].min() > 1000 * rel
    err = np.abs(found[None, :] - reference[:, None]).min(axis=1) / np.abs(reference)
    assert (err < rel).all(), reference[err >= rel]


def count_factorisations(monkeypatch: pytest.MonkeyPatch) -> list[int]:
    """A list that grows by one at every SuperLU factorisation netcheck.mna.solve makes."""
    import scipy.sparse.linalg as spla

    from netcheck.mna import sparse as solve_module

    calls: list[int] = []
    real_splu = spla.splu
    monkeypatch.setattr(solve_module.spla, "splu",
                        lambda *a, **k: calls.append(1) or real_splu(*a, **k))
    return calls


def test_sparse_path_finds_every_pole_of_a_crowded_comb(monkeypatch: pytest.MonkeyPatch
                                                         ) -> None:
    # 14 sharp branches over 10-100 kHz, more than six to a decade; the sharpest
    # (R = 1 ohm, Q ~ 1.7e5) near 34.1 kHz makes the peak. 366 unknowns: sparse path.
    from netcheck.mna import solve as solve_module
    from netcheck.analyses.nominal import ResponseCurve
    from netcheck.measure import peak

    branch_hz = np.geomspace(10e3, 100e3, 16)[1:-1]
    q = 2 * np.pi * branch_hz * 0.8 / 300.0
    q[7] = 2 * np.pi * branch_hz[7] * 0.8 / 1.0
    system = assemble(read_netlist(quillmere_comb(branch_hz, q)), "V1", "out")
    grid = np.geomspace(1e3, 1e6, 41)  # 41 points: the dense path below is pole-zero
    sparse = solve_module.solve(system, grid)
    assert sparse.method == "sparse"
    poles = sparse.poles_hz
    # reference: scipy.linalg.eigvals of the dense pencil (QZ is good to ~1e-9 here)
    reference = lightly_damped_in_sweep(system, grid[0], grid[-1])
    assert reference.size == 14
    assert_found(poles, reference)
    # the same poles again, bit for bit: the start vector is fixed
    assert np.array_equal(solve_module.solve(system, grid).poles_hz, poles)
    top = peak(ResponseCurve.of(sparse))

    # reference: the dense path on the same equations, its seeds from all the QZ poles
    monkeypatch.setattr(solve_module, "DENSE_MAX", 10**6)
    dense = solve_module.solve(system, grid)
    assert dense.method != "sparse"
    top_dense = peak(ResponseCurve.of(dense))
    assert abs(top_dense.frequency_hz - branch_hz[7]) < 1e-3 * branch_hz[7]
    assert top.value == pytest.approx(top_dense.value, abs=1e-9)
    assert top.frequency_hz == pytest.approx(top_dense.frequency_hz, rel=1e-9)


def test_sparse_poles_cover_the_cone_when_more_crowd_than_one_shift_may_ask_for() -> None:
    # 60 sharp branches (Q = 40) and 20 broad ones (Q = 0.75 to 1, poles near the 45
    # degree line) over 5-100 kHz: more lightly damped poles within reach of one shift
    # than the 48 it may ask for, so sectors are halved. Called on the pencil directly.
    from netcheck.mna.solve import sparse_poles

    sharp = np.geomspace(10e3, 100e3, 60)
    broad = np.geomspace(5e3, 50e3, 20)
    q = np.concatenate([np.full(60, 40.0), np.linspace(0.75, 1.0, 20)])
    system = assemble(read_netlist(quillmere_comb(np.concatenate([sharp, broad]), q, 10)),
                      "V1", "out")
    found = sparse_poles(system.G.tocsc(), system.C.tocsc(), 1e3, 1e6)
    # reference: scipy.linalg.eigvals of the dense pencil
    reference = lightly_damped_in_sweep(system, 1e3, 1e6)
    assert reference.size == 80
    assert_found(found, reference)


def test_sparse_poles_stop_at_the_shift_cap(monkeypatch: pytest.MonkeyPatch,
                                            caplog: pytest.LogCaptureFixture) -> None:
    # Checked against the contract in the sparse_poles docstring: no more factorisations
    # than SPARSE_POLES_MAX_SHIFTS, and a debug message when the search stops short.
    import logging

    from netcheck.mna import sparse_poles as search

    branch_hz = np.geomspace(10e3, 100e3, 60)
    system = assemble(read_netlist(quillmere_comb(branch_hz, np.full(60, 40.0), 10)),
                      "V1", "out")
    factorisations = count_factorisations(monkeypatch)
    monkeypatch.setattr(search, "SPARSE_POLES_MAX_SHIFTS", 3)
    with caplog.at_level(logging.DEBUG, logger="netcheck.mna.sparse_poles"):
        found = search.sparse_poles(system.G.tocsc(), system.C.tocsc(), 1e3, 1e6)
    assert len(factorisations) == 3
    assert found.size > 0
    assert any("stopped at 3 shifts" in r.getMessage() for r in caplog.records)


def test_sparse_poles_of_a_long_rc_ladder_take_one_shift_per_decade_at_most(
        monkeypatch: pytest.MonkeyPatch) -> None:
    # Uniform RC ladder, N sections of R and C, open at the end: its poles are
    # s_m = -(2 - 2 cos((2m - 1) pi / (2N + 1))) / (RC), m = 1..N, the eigenvalues of
    # its tridiagonal nodal matrix (standard result for the tridiagonal Toeplitz matrix
    # with its last diagonal entry 1). All real: none is lightly damped, and a real pole
    # never has to be inside a search disc, so there is at most one shift per decade of
    # search radii (sparse_poles docstring) however many real poles crowd there.
    from netcheck.mna.solve import sparse_poles

    n_sec, r, c = 2000, 1.0, 100e-12
    lines = ["Quillmere Instruments QL-2000 sensor lead", "V1 n0 0 AC 1"]
    for k in range(n_sec):
        lines += [f"R{k} n{k} n{k + 1} {r!r}", f"C{k} n{k + 1} 0 {c!r}"]
    system = assemble(read_netlist("\n".join(lines) + "\n"), "V1", f"n{n_sec}")
    factorisations = count_factorisations(monkeypatch)
    found = sparse_poles(system.G.tocsc(), system.C.tocsc(), 10.0, 1e6)
    m = np.arange(1, n_sec + 1)
    closed = -(2 - 2 * np.cos((2 * m - 1) * np.pi / (2 * n_sec + 1))) / (r * c) / (2 * np.pi)
    assert found.size > 0
    err = np.abs(found[:, None] - closed[None, :]).min(axis=1) / np.abs(found)
    assert err.max() < 1e-9
    assert 1 <= len(factorisations) <= math.ceil(math.log10(math.sqrt(2) * 1e6 / 10.0))


def test_sparse_poles_find_the_antisymmetric_mode_of_a_symmetric_circuit() -> None:
    # Two identical series L-C branches from `in`, each with R to ground, on a 100-section
    # RC line: the differential mode (branch currents opposite, V(in) = 0) is a series RLC
    # loop on its own, with poles s = -R/(2L) +- j sqrt(1/(LC) - (R/2L)^2) (series RLC
    # closed form, textbook). The source cannot excite it, but it is a pole of the circuit
    # (it shows once the twins differ, as in a Monte Carlo sample) and must be found.
    from netcheck.mna.solve import sparse_poles

    lq, cq, rq = 10e-3, 10e-9, 2.0
    lines = ["Quillmere Instruments twin resonator", "V1 src 0 AC 1", "RS src in 50",
             f"LA in ma {lq!r}", f"CA ma a {cq!r}", f"RA a 0 {rq!r}",
             f"LB in mb {lq!r}", f"CB mb b {cq!r}", f"RB b 0 {rq!r}", "RH in n0 1k"]
    lines += [f"RL{i} n{i} n{i + 1} 1k\nCL{i} n{i + 1} 0 1n" for i in range(100)]
    system = assemble(read_netlist("\n".join(lines) + "\n"), "V1", "a")
    found = sparse_poles(system.G.tocsc(), system.C.tocsc(), 1e3, 1e5)
    sigma, nu = -rq / (2 * lq), math.sqrt(1 / (lq * cq) - (rq / (2 * lq)) ** 2)
    expected = complex(sigma, nu) / (2 * math.pi)
    assert np.abs(found - expected).min() < 1e-9 * abs(expected)
