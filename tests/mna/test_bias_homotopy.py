"""When plain Newton fails: conductance and source stepping (netcheck.mna.bias), and a
circuit with no DC solution at all.

The reference solution of each circuit is checked here against the Shockley law
(Shockley 1949) written out in this file, not only against netcheck's default run.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import brentq

import netcheck.mna.bias as bias
from netcheck.api import read_netlist
from netcheck.exceptions import OperatingPointError

VT = 1.380649e-23 * 300.15 / 1.602176634e-19   # kT/q, exact SI 2019 constants
IS, STRING, SUPPLY, RFEED = 1e-14, 4, 100.0, 1e6


def diode_string() -> str:
    """A Quillmere qm_ref9 reference chain: four diodes fed from 100 V through 1 MΩ,
    1 Ω to ground at the bottom: plain Newton from zero needs 18 iterations."""
    lines = ["Quillmere qm_ref9 diode reference chain", f"VHV top 0 DC {SUPPLY}",
             f"RFEED top n0 {RFEED}"]
    lines += [f"D{i} n{i} n{i + 1} qm_dref" for i in range(STRING)]
    lines += [f"RBOT n{STRING} 0 1", f".model qm_dref D (IS={IS})"]
    return "\n".join(lines) + "\n"


def string_reference() -> tuple[float, float]:
    """(current, voltage per diode): KCL, (SUPPLY − STRING·Vd − I·1 Ω)/RFEED = I with
    I = IS·(exp(Vd/Vt) − 1) in each diode, by brentq on Vd."""
    def kcl(vd):
        i = IS * math.expm1(vd / VT)
        return (SUPPLY - STRING * vd - i) / RFEED - i

    vd = brentq(kcl, 0.0, 1.0, xtol=1e-16, rtol=1e-15)
    return IS * math.expm1(vd / VT), vd


def test_default_run_is_newton_and_matches_brentq():
    op = bias.operating_point(read_netlist(diode_string()))
    i, vd = string_reference()
    assert op.method == "Newton"
    for k in range(STRING):
        drop = op.voltage(f"n{k}") - op.voltage(f"n{k + 1}")
        assert drop == pytest.approx(vd, rel=1e-9)
        # KCL through each diode: the Shockley current equals the feed current
        assert abs(IS * math.expm1(drop / VT) - (SUPPLY - op.voltage("n0")) / RFEED) < 1e-12
    assert op.voltage(f"n{STRING}") == pytest.approx(i * 1.0, rel=1e-9)


@pytest.mark.parametrize("most, method", [(17, "conductance stepping"),
                                          (10, "source stepping"),
                                          (4, "source stepping")])
def test_homotopies_reach_the_same_point_when_newton_is_cut_short(monkeypatch, most, method):
    circuit = read_netlist(diode_string())
    default = bias.operating_point(circuit)
    assert default.iterations > most  # plain Newton cannot finish in `most`
    monkeypatch.setattr(bias, "MAX_ITERATIONS", most)
    got = bias.operating_point(circuit)
    assert got.method == method
    assert got.iterations > most  # the failed Newton run is counted in
    for node, v in default.voltages:
        assert got.voltage(node) == pytest.approx(v, rel=1e-9, abs=1e-12), node
    # and the small-signal circuit built at it is the same
    f = np.array([10.0])
    monkeypatch.setattr(bias, "MAX_ITERATIONS", 200)
    want = circuit.ac("VHV", "n2", freqs=f).transfer
    monkeypatch.setattr(bias, "MAX_ITERATIONS", most)
    np.testing.assert_allclose(circuit.ac("VHV", "n2", freqs=f).transfer, want, rtol=1e-8)


POWER = """Quillmere qm_psu3 clamp and pass transistor at high current
VRAW top 0 DC 24
RFEED top n0 150
D0 n0 n1 qm_dpwr
D1 n1 n2 qm_dpwr
D2 n2 n3 qm_dpwr
D3 n3 0 qm_dpwr
RB top b 2k
RC top c 100
Q1 c b 0 qm_qpass
.model qm_dpwr D (IS=10f)
.model qm_qpass NPN (IS=0.1f BF=50)
"""


def test_a_solve_continued_from_a_solution_starts_its_junctions_there():
    # 140 mA in the diodes and 240 mA in the transistor put the junctions above
    # Vcrit = n·Vt·ln(n·Vt/(√2·IS)) (docs/devices.md; there the Shockley current is
    # n·Vt/√2 taken in amperes, about 18 mA), where steps are limited.
    # A solve started at the solution must stay there at once: the limiting of its
    # first step starts from the junction voltages it is given, not from 0 V
    circuit = read_netlist(POWER)
    system = bias._DcSystem(circuit, 27.0)
    x, first = system.newton(np.zeros(system.n))
    again, n = system.newton(x)
    assert n == 1
    np.testing.assert_allclose(again, x, rtol=1e-12)
    # conductance stepping: once the junctions are on (from 1e-4 S down), each step
    # converges in a few iterations
    x, counts = np.zeros(system.n), []
    for gmin in 10.0 ** -np.arange(2, 13):
        x, n = system.newton(x, gmin=gmin)
        counts.append(n)
    assert max(counts[4:]) <= 3, counts
    # the clamp current against the Shockley law, written here: four equal drops
    i = (24 - x[system.st.nodes["n0"]]) / 150
    drop = x[system.st.nodes["n3"]]
    assert i == pytest.approx(10e-15 * math.expm1(drop / VT), rel=1e-8)


NO_SOLUTION = """Quillmere qm_clamp2 clamp fed backwards
I1 a 0 DC 1m
D1 a 0 qm_dclamp
.model qm_dclamp D (IS=10f)
"""


def test_a_circuit_with_no_dc_solution_is_refused_naming_the_device():
    # 1 mA drawn backwards through a diode: the Shockley law carries at most IS (10 fA)
    # in reverse, so KCL at `a` has no solution
    with pytest.raises(OperatingPointError) as err:
        bias.operating_point(read_netlist(NO_SOLUTION))
    assert err.value.code == "analysis-306"
    assert "D1" in str(err.value)
    assert err.value.span is not None and err.value.span.line == 3  # at D1's card
    # and through the convenience API, a frequency response is refused the same way
    with pytest.raises(OperatingPointError):
        read_netlist(NO_SOLUTION.replace("I1 a 0 DC 1m", "I1 a 0 DC 1m AC 1")).ac(
            "I1", "a", freqs=np.array([10.0]))


def test_the_same_clamp_fed_forwards_solves():
    # the check above is not a refusal of current sources: forwards it is Shockley's
    # V = Vt·ln(1 + I/IS)
    op = bias.operating_point(read_netlist(NO_SOLUTION.replace("I1 a 0", "I1 0 a")))
    assert op.voltage("a") == pytest.approx(VT * math.log1p(1e-3 / 10e-15), rel=1e-9)
