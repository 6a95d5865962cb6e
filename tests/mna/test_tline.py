"""The lossless transmission line T against its chain (ABCD) matrix, written here from
Pozar, "Microwave Engineering" (the lossless line: [[cos βl, jZ0 sin βl],
[j sin βl/Z0, cos βl]]; cited from memory), and measurements of a stub filter against a
fine brute-force sweep of that independent model."""

from __future__ import annotations

import numpy as np
import pytest

from netcheck import NetcheckError, read_netlist
from netcheck.analyses.nominal import ResponseCurve
from netcheck.measure import band_extremes
from netcheck.mna.assemble import assemble
from netcheck.mna.sparse import SparseEngine

Z0, TD = 50.0, 1e-9
F0 = 1 / (4 * TD)       # the line is a quarter wave long here


def abcd_line(f, z0, td):
    bl = 2 * np.pi * f * td
    return np.array([[np.cos(bl), 1j * z0 * np.sin(bl)], [1j * np.sin(bl) / z0, np.cos(bl)]])


def zin(f, z0, td, zl):
    (a, b), (c, d) = abcd_line(f, z0, td)
    return (a * zl + b) / (c * zl + d)


def solve_at(text, node, f):
    return np.asarray(read_netlist("Quillmere Instruments line\n" + text)
                      .ac("V1", node, freqs=f).transfer)


def test_quarter_wave_line_transforms_the_load():
    # Zin = Z0²/ZL at f = 1/(4·TD) (the quarter-wave transformer, from the ABCD matrix);
    # driven by a 1 A source the input voltage is Zin
    for zl in (12.5, 100.0, 1e4):
        net = f"V1 x 0 AC 0\nI1 0 a AC 1\nT1 a 0 b 0 Z0={Z0} TD={TD}\nRL b 0 {zl}\n"
        ckt = read_netlist("t\n" + net)
        got = ckt.ac("I1", "a", freqs=[F0]).transfer[0]
        assert got == pytest.approx(Z0 ** 2 / zl, rel=1e-12)
    f = np.linspace(0.1, 3.9, 39) * F0
    ckt = read_netlist("t\nI1 0 a AC 1\nT1 a 0 b 0 Z0=50 TD=1n\nRL b 0 100\nRS a 0 1e9\n")
    got = ckt.ac("I1", "a", freqs=f).transfer
    ref = [1 / (1 / zin(fi, Z0, TD, 100.0) + 1e-9) for fi in f]
    np.testing.assert_allclose(got, ref, rtol=1e-10)


def test_matched_line_is_a_pure_delay():
    # source and load matched: H = ½·exp(−jωTD), |H| flat and phase −ωTD (closed form)
    f = np.logspace(6, 10, 81)
    got = solve_at(f"V1 in 0 AC 1\nRS in a {Z0}\nT1 a 0 b 0 Z0={Z0} TD={TD}\nRL b 0 {Z0}\n",
                   "b", f)
    np.testing.assert_allclose(got, 0.5 * np.exp(-2j * np.pi * f * TD), rtol=1e-11)


@pytest.mark.parametrize("n", [1, 2, 3])
def test_whole_half_waves_need_no_special_case(n):
    # βl = nπ: the admittance form divides by sin βl = 0; the chain matrix is ±identity,
    # so the load is seen unchanged: H = ZL/(RS + ZL)·(−1)^n at the output
    f = n / (2 * TD)
    got = solve_at("V1 in 0 AC 1\nRS in a 50\nT1 a 0 b 0 Z0=75 TD=1n\nRL b 0 20\n", "b", [f])
    assert got[0] == pytest.approx((-1) ** n * 20 / 70, rel=1e-12, abs=1e-14)


def test_frequency_and_length_form_equals_the_delay_form():
    f = np.linspace(0.2e9, 2e9, 10)
    a = solve_at("V1 in 0 AC 1\nRS in a 50\nT1 a 0 b 0 Z0=75 F=500meg NL=0.5\nRL b 0 20\n", "b", f)
    b = solve_at("V1 in 0 AC 1\nRS in a 50\nT1 a 0 b 0 Z0=75 TD=1n\nRL b 0 20\n", "b", f)
    c = solve_at("V1 in 0 AC 1\nRS in a 50\nT1 a 0 b 0 Z0=75 F=250meg\nRL b 0 20\n", "b", f)
    np.testing.assert_allclose(a, b, rtol=1e-12)
    np.testing.assert_allclose(c, b, rtol=1e-12)   # NL defaults to a quarter wave


def _stub_filter():
    # a band-pass of commensurate lines (Richards' transformation): three shunt
    # short-circuited quarter-wave stubs joined by quarter-wave lines, 50 Ω terminations
    text = ("V1 in 0 AC 1\nRS in a 50\n"
            "TS1 a 0 s1 0 Z0=40 TD=1n\nRS1 s1 0 0\n"
            "TL1 a 0 b 0 Z0=50 TD=1n\n"
            "TS2 b 0 s2 0 Z0=30 TD=1n\nRS2 s2 0 0\n"
            "TL2 b 0 c 0 Z0=50 TD=1n\n"
            "TS3 c 0 s3 0 Z0=40 TD=1n\nRS3 s3 0 0\nRL c 0 50\n")

    def reference(f):
        out = []
        for fi in np.atleast_1d(f):
            y = {z: 1 / (1j * z * np.tan(2 * np.pi * fi * TD)) for z in (40.0, 30.0)}
            def shunt(z):
                return np.array([[1, 0], [y[z], 1]])
            m = (shunt(40.0) @ abcd_line(fi, 50.0, TD) @ shunt(30.0) @ abcd_line(fi, 50.0, TD)
                 @ shunt(40.0))
            (a, b), (c, d) = m
            out.append(50.0 / (a * 50.0 + b + 50.0 * (c * 50.0 + d)))   # V(load)/V(source)
        return np.array(out)
    return text, reference


def test_stub_filter_matches_its_chain_matrix_and_is_solved_directly():
    text, reference = _stub_filter()
    f = np.linspace(0.05, 1.95, 77) * F0          # avoid 2·F0, where the stubs short
    resp = read_netlist("t\n" + text).ac("V1", "c", freqs=f)
    assert resp.method == "dense"                 # never the pole-zero form
    np.testing.assert_allclose(resp.transfer, reference(f), rtol=1e-9)
    # the exact derivative against a central difference
    h_lo, _ = resp.at(f * (1 - 1e-7), derivative=False)
    h_hi, _ = resp.at(f * (1 + 1e-7), derivative=False)
    np.testing.assert_allclose(resp.dtransfer, (h_hi - h_lo) / (2e-7 * f), rtol=1e-5)


def test_sparse_engine_agrees():
    text, reference = _stub_filter()
    system = assemble(read_netlist("t\n" + text), "V1", "c")
    f = np.array([0.3, 0.8, 1.0, 1.4]) * F0
    h, dh = SparseEngine(system).transfer(f)
    np.testing.assert_allclose(h, reference(f), rtol=1e-9)


def test_measurements_find_the_extremes_between_grid_points():
    # a coarse grid (5 points over the band): the pass-band maximum and the stop-band
    # notch at 2·F0 (the shorted stubs are half waves there: H = 0) must still be found;
    # reference: a brute-force sweep of the chain-matrix model at 200,001 points
    text, reference = _stub_filter()
    grid = np.linspace(0.1, 2.6, 5) * F0
    resp = read_netlist("t\n" + text).ac("V1", "c", freqs=grid)
    curve = ResponseCurve.of(resp)
    lo, hi = band_extremes(curve, "gain_db", 0.5 * F0, 1.5 * F0)
    fine = np.linspace(0.5, 1.5, 200_001) * F0
    g = 20 * np.log10(np.abs(reference(fine)))
    assert hi.value == pytest.approx(g.max(), abs=1e-6)
    assert lo.value == pytest.approx(g.min(), abs=1e-6)
    lo2, _ = band_extremes(curve, "gain_db", 1.8 * F0, 2.2 * F0)
    assert lo2.value < -200 and lo2.frequency_hz == pytest.approx(2 * F0, rel=1e-9)


def test_sampled_analyses_are_refused_clearly():
    from netcheck.mna.sampling import SampleSet
    text, _ = _stub_filter()
    system = assemble(read_netlist("t\n" + text), "V1", "c")
    with pytest.raises(NetcheckError, match="transmission line .TS1.") as info:
        SampleSet(system, {"TL1": np.array([50.0, 51.0])}, 2, np.array([1e8, 1e9]))
    assert info.value.code == "analysis-305"


@pytest.mark.parametrize("card,message", [
    ("T1 a 0 b 0 TD=1n", "needs its characteristic impedance Z0="),
    ("T1 a 0 b 0 Z0=50", "needs its length"),
    ("T1 a 0 b 0 Z0=-50 TD=1n", "Z0=-50 must be a positive number"),
    ("T1 a 0 b 0 Z0=50 TD=0", "TD=0 must be a positive number"),
    ("T1 a 0 b 0 Z0=50 TD=1n F=1g", "either as TD= or as F="),
    ("T1 a 0 b 0 Z0=50 LEN=1", "LEN= is not a parameter of a lossless line"),
])
def test_bad_lines_name_the_line(card, message):
    with pytest.raises(NetcheckError, match=message) as info:
        read_netlist(f"t\nV1 in 0 AC 1\nRS in a 50\n{card}\nRL b 0 50\n")
    assert info.value.code == "netlist-131" and info.value.span.line == 4


def test_a_sweep_ending_on_a_lossless_line_resonance_is_solved():
    # at 2·F0 every shorted stub is a half wave: a short across each junction, so the
    # line between two of them is a shorted half-wave line, a lossless resonance that
    # makes the circuit matrix singular at that one frequency. A sweep ending there is
    # still checked (the probes of regularity sit beside it) and the output is a short
    # (the chain-matrix model gives H → 0 there)
    text, reference = _stub_filter()
    f = np.array([0.5, 1.0, 1.5, 2.0]) * F0
    resp = read_netlist("t\n" + text).ac("V1", "c", freqs=f)
    np.testing.assert_allclose(resp.transfer[:3], reference(f[:3]), rtol=1e-9)
    assert abs(resp.transfer[3]) < 1e-12


def test_port_currents_of_a_part_model_holding_a_line():
    # a matched line inside a one-part model (part_models): 1 V through 50 Ω into a
    # 50 Ω line ending in 50 Ω draws 1/100 A at each port, at every frequency (closed
    # form: the line's input impedance is Z0)
    from netcheck.analyses.stress import judge_stress
    from netcheck.mna.assemble import assemble
    from netcheck.mna.solve import solve
    from netcheck.netlist.elaborate import elaborate
    from netcheck.netlist.parse import load_netlist
    from netcheck.spec.stress import parse_stress
    text = ("t\n.subckt qm_cable a b\nT1 a 0 b 0 Z0=50 TD=3n\n.ends\n"
            "V1 in 0 AC 1\nRS in p 50\nX1 p q qm_cable\nRL q 0 50\n")
    ckt = elaborate(load_netlist(text), part_models=["qm_cable"])
    resp = solve(assemble(ckt, "V1", "q"), np.logspace(6, 9, 31))
    rows = judge_stress(parse_stress([{"source_amplitude": "1", "parts": "X1",
                                       "max_current": 1}], "s.toml"), resp)
    assert [r.ports for r in rows] == [("a",), ("b",)]
    for r in rows:
        assert r.peak == pytest.approx(0.01, rel=1e-9)


def test_seeds_sit_where_lines_are_whole_quarter_waves():
    # f = n/(4τ) for each delay (the quarter-wave frequencies, from βl = nπ/2)
    from netcheck.mna.assemble import DELAY_SEEDS_MAX, delay_seeds
    ckt = read_netlist("t\nV1 in 0 AC 1\nRS in a 50\nT1 a 0 b 0 Z0=50 TD=1n\n"
                       "T2 b 0 c 0 Z0=50 TD=0.4n\nRL c 0 50\n")
    system = assemble(ckt, "V1", "c")
    np.testing.assert_allclose(delay_seeds(system, 100e6, 1.1e9),
                               [250e6, 500e6, 625e6, 750e6, 1e9], rtol=1e-15)
    assert delay_seeds(system, 1.0, 1e15).size == DELAY_SEEDS_MAX
    rc = assemble(read_netlist("t\nV1 in 0 AC 1\nR1 in out 1k\nC1 out 0 1n\n"), "V1", "out")
    assert delay_seeds(rc, 1.0, 1e9).size == 0


def test_stubs_written_with_far_nodes_of_their_own():
    # a series short-circuited stub (far port's two nodes one node: 'T1 a b s s') and a
    # shunt open stub whose far port has two nodes of its own ('T2 b 0 o1 o2'). Their
    # far ports float; tied to the near port's reference they are the textbook stubs:
    # series Z = jZ0·tan βl, shunt Y = j·tan βl/Z0 (from the ABCD matrix, Pozar, from
    # memory). One netlist-161 note each.
    text = ("V1 in 0 AC 1\nRS in a 50\nT1 a b s s Z0=80 TD=0.5n\n"
            "T2 b 0 o1 o2 Z0=30 TD=0.7n\nRL b 0 50\n")
    ckt = read_netlist("t\n" + text)
    assert [d.code for d in ckt.diagnostics if d.code == "netlist-161"] == ["netlist-161"] * 2
    f = np.linspace(0.05e9, 0.95e9, 19)
    got = ckt.ac("V1", "b", freqs=f).transfer
    zs = 1j * 80 * np.tan(2 * np.pi * f * 0.5e-9)
    yl = 1 / 50 + 1j * np.tan(2 * np.pi * f * 0.7e-9) / 30
    zl = 1 / yl
    np.testing.assert_allclose(got, zl / (50 + zs + zl), rtol=1e-9)
