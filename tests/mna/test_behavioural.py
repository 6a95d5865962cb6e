"""Behavioural sources (E/G VALUE={expr}, B V={expr} / I={expr}) at their operating point
and in small signal, against references written in this file.

References: the linear controlled sources E, F, G, H of the same gain (each checked
elsewhere against nodal equations; here they are the same circuit written the linear
way) together with closed forms derived by hand beside each test (Kirchhoff's current
law at the node named, the derivative of the expression by the power rule); sympy's
symbolic derivative of the same expression for the exp/tanh source and for every
function of the expression language; scipy's brentq for an operating point that has no
closed form. The operating points and gains are independent of netcheck's own
derivative code (netcheck.netlist.gradients), which is what is under test.
"""

from __future__ import annotations

import math
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
import sympy as sp
from scipy.optimize import brentq

from netcheck.api import read_netlist
from netcheck.exceptions import NetcheckError
from netcheck.mna.bias import linearised, operating_point
from netcheck.netlist.expressions import FUNCTIONS, BinOp, Call, Num
from netcheck.netlist.gradients import DERIVATIVES, NoValue, Probe, value_and_gradient

ROOT = Path(__file__).resolve().parents[2]
F = np.logspace(1, 7, 13)

RC_STAGE = """Quillmere QM-B2 buffered RC section
V1 a 0 DC 0.7 AC 1
R1 a 0 10k
{card}
R2 b c 1k
C1 c 0 10n
"""


def rc(f: np.ndarray, r: float = 1e3, c: float = 10e-9) -> np.ndarray:
    """V(c)/V(b) of the series-R shunt-C section, 1/(1 + sRC) (voltage divider)."""
    return 1.0 / (1.0 + 2j * np.pi * f * r * c)


def test_value_vcvs_equals_the_linear_e_card_of_the_same_gain():
    """VALUE={2*v(a)} against E … a 0 2 and against 2/(1 + sRC)."""
    got = read_netlist(RC_STAGE.format(card="E1 b 0 VALUE={2*v(a)}")).ac("V1", "c", freqs=F)
    ref = read_netlist(RC_STAGE.format(card="E1 b 0 a 0 2")).ac("V1", "c", freqs=F)
    np.testing.assert_allclose(got.transfer, ref.transfer, rtol=1e-12, atol=0)
    np.testing.assert_allclose(got.transfer, 2 * rc(F), rtol=1e-12, atol=0)


SQUARER = """Quillmere QM-B3 squaring transconductor
VB a 0 DC {va} AC 1
RB a 0 10k
{card}
RL out 0 1k
CL out 0 1n
"""


@pytest.mark.parametrize("card", ["G1 0 out VALUE={1m*v(a)^2}", "B1 0 out I={1m*v(a)^2}",
                                  "G1 0 out value={1m*sq(v(a))}\n.func sq(x) {x*x}"])
@pytest.mark.parametrize("va", [0.5, 2.0, -1.5])
def test_squaring_source_bias_and_transconductance_in_closed_form(card, va):
    """I = 1m·Va² flows from ground through the source into out (the n+ → n− current of
    a source written 0 out), so V(out) = RL·1m·Va² (Ohm's law). Small signal: by the
    power rule gm = dI/dVa = 2·1m·Va, and v(out)/v(a) = gm·RL/(1 + s·RL·CL)."""
    circuit = read_netlist(SQUARER.format(va=va, card=card))
    op = operating_point(circuit)
    assert op.voltage("out") == pytest.approx(1e3 * 1e-3 * va ** 2, rel=1e-12)
    gm = 2 * 1e-3 * va
    got = circuit.ac("VB", "out", freqs=F).transfer
    want = gm * 1e3 / (1 + 2j * np.pi * F * 1e3 * 1e-9)
    np.testing.assert_allclose(got, want, rtol=1e-12, atol=0)
    small = {e.name: e for e in linearised(circuit)[0].elements}
    name = card.split()[0]
    assert small[name].gains == pytest.approx((gm,), rel=1e-15)


def test_self_controlled_source_needs_newton_and_matches_the_quadratic_root():
    """G draws 1m·V(x)² out of node x, fed from 5 V through 1 kΩ. KCL at x:
    (5 − v)/1k = 1m·v², so v² + v − 5 = 0, v = (−1 + √21)/2 (the quadratic formula).
    Small signal: (vs − v)/R = g·v with g = 2·1m·v, so v/vs = (1/R)/(1/R + g)."""
    circuit = read_netlist("""Quillmere QM-B4 square-law load
VS s 0 DC 5 AC 1
R1 s x 1k
G1 x 0 VALUE={1m*v(x)*v(x)}
""")
    v = (-1 + math.sqrt(21)) / 2
    assert operating_point(circuit).voltage("x") == pytest.approx(v, rel=1e-12)
    g = 2e-3 * v
    got = circuit.ac("VS", "x", freqs=np.array([1e3])).transfer[0]
    assert got == pytest.approx(1e-3 / (1e-3 + g), rel=1e-12)


SENSE = """Quillmere QM-B5 current-sensing stage
V1 in 0 DC 1 AC 1
R1 in m 1k
VS m n DC 0
C1 n 0 100n
{card}
R2 out 0 2k
C2 out 0 1n
"""


@pytest.mark.parametrize("card, linear", [
    ("E1 out 0 VALUE={150*i(VS)}", "H1 out 0 VS 150"),
    ("B1 out 0 V={150*i(VS)}", "H1 out 0 VS 150"),
    ("G1 0 out VALUE={0.5*i(VS)}", "F1 0 out VS 0.5"),
    ("B1 0 out I={0.5*i(VS)}", "F1 0 out VS 0.5"),
])
def test_current_control_equals_the_h_and_f_cards_of_the_same_gain(card, linear):
    """i(VS) is the current through VS from its + node to its − node, as an H or F card
    reads it: the responses agree to rounding at every frequency."""
    got = read_netlist(SENSE.format(card=card)).ac("V1", "out", freqs=F).transfer
    ref = read_netlist(SENSE.format(card=linear)).ac("V1", "out", freqs=F).transfer
    np.testing.assert_allclose(got, ref, rtol=1e-12, atol=0)
    assert np.max(np.abs(ref)) > 1e-3  # the stage passes signal: the check can fail


def test_exp_tanh_source_against_sympy_at_the_solved_operating_point():
    """Node x: fed from VIN through 10 kΩ, loaded by B2 drawing 0.2m·exp(v(x)/0.5);
    KCL (5 − v)/10k = 0.2m·e^(v/0.5), solved by brentq. B1 writes
    V(out) = tanh(2·v(x)) · exp(−v(x,r)) + 0.3·v(r) with r held by VR; its gain from VIN
    is dF/dv(x)·dv(x)/dVIN (the chain rule), dv(x)/dVIN = (1/R)/(1/R + g),
    g = d(0.2m·e^(v/0.5))/dv — every derivative taken by sympy."""
    circuit = read_netlist("""Quillmere QM-B6 soft limiter
VIN in 0 DC 5 AC 1
VR r 0 DC 0.25
R1 in x 10k
B2 x 0 I={0.2m*exp(v(x)/0.5)}
B1 out 0 V={tanh(2*v(x)) * exp(-v(x,r)) + 0.3*v(r)}
RL out 0 10k
""")
    vx_s, vr_s = sp.symbols("vx vr")
    load = sp.Rational(2, 10000) * sp.exp(vx_s / sp.Rational(1, 2))
    shape = sp.tanh(2 * vx_s) * sp.exp(-(vx_s - vr_s)) + sp.Rational(3, 10) * vr_s
    vx = brentq(lambda v: (5 - v) / 1e4 - float(load.subs(vx_s, v)), 0, 5, xtol=1e-15,
                rtol=1e-15)
    op = operating_point(circuit)
    assert op.voltage("x") == pytest.approx(vx, rel=1e-12)
    assert op.voltage("out") == pytest.approx(float(shape.subs({vx_s: vx, vr_s: 0.25})),
                                              rel=1e-12)
    g = float(sp.diff(load, vx_s).subs(vx_s, vx))
    dshape = float(sp.diff(shape, vx_s).subs({vx_s: vx, vr_s: 0.25}))
    want = dshape * (1e-4 / (1e-4 + g))
    got = circuit.ac("VIN", "out", freqs=np.array([100.0])).transfer[0]
    assert got == pytest.approx(want, rel=1e-10)
    # the gain from VR: ∂F/∂v(r), v(x) does not move (VR drives no current into x)
    dr = float(sp.diff(shape, vr_s).subs({vx_s: vx, vr_s: 0.25}))
    assert circuit.ac("VR", "out", freqs=np.array([100.0])).transfer[0] == \
        pytest.approx(dr, rel=1e-10)


# ------------------------------------------------------------------ every function


def _call(func: str, *args: float) -> tuple[float, np.ndarray]:
    """func(args...) with each argument a control, valued with its gradient."""
    span = None
    tree = Call(func, tuple(Probe(k, span) for k in range(len(args))), span)  # type: ignore[arg-type]
    return value_and_gradient(tree, list(args))


#: points inside each function's domain (two arguments for the two-argument ones)
POINTS = {"sqrt": (2.3,), "exp": (0.7,), "log": (2.3,), "log10": (2.3,), "sin": (0.7,),
          "cos": (0.7,), "tan": (0.7,), "atan": (0.7,), "abs": (-0.7,), "min": (0.7, 0.2),
          "max": (0.7, 0.2), "pow": (1.7, 2.3), "atan2": (0.7, -0.4), "asin": (0.3,),
          "acos": (0.3,), "sinh": (0.7,), "cosh": (0.7,), "tanh": (0.7,)}


def test_every_expression_function_has_a_derivative():
    assert set(DERIVATIVES) == set(FUNCTIONS) == set(POINTS)


@pytest.mark.parametrize("func", sorted(POINTS))
def test_each_function_and_its_gradient_against_sympy(func):
    """sympy's value and partial derivatives of the same function (min and max as
    sympy's Min and Max, differentiable away from a tie; abs as Abs, away from 0)."""
    args = POINTS[func]
    xs = sp.symbols(f"x0:{len(args)}", real=True)
    named = {"log10": lambda x: sp.log(x, 10), "pow": sp.Pow, "abs": sp.Abs, "min": sp.Min,
             "max": sp.Max, "atan": sp.atan, "atan2": sp.atan2}
    f = (named[func] if func in named else getattr(sp, func))(*xs)
    at = dict(zip(xs, args))
    value, grad = _call(func, *args)
    assert value == pytest.approx(float(f.subs(at)), rel=1e-14)
    want = [float(sp.diff(f, x).subs(at)) for x in xs]
    np.testing.assert_allclose(grad, want, rtol=1e-13, atol=1e-15)


def test_kinks_take_the_branch_the_value_takes():
    """abs is x for x ≥ 0: slope +1 at 0; min and max follow the argument they return
    and the first one of a tie (the rule docs/elements.md states)."""
    assert list(_call("abs", 0.0)[1]) == [1.0]
    assert list(_call("abs", -3.0)[1]) == [-1.0]
    assert list(_call("max", 1.0, 1.0)[1]) == [1.0, 0.0]
    assert list(_call("min", 2.0, -1.0)[1]) == [0.0, 1.0]


def test_no_value_and_no_derivative_are_raised_at_the_operator():
    span = None
    with pytest.raises(NoValue, match="has no value"):
        value_and_gradient(BinOp("/", Num(1.0, span), Probe(0, span), span), [0.0])
    with pytest.raises(NoValue, match="no derivative"):
        _call("sqrt", 0.0)
    with pytest.raises(NoValue, match="has no value"):
        _call("log", -1.0)


# ------------------------------------------------------------------ errors


@pytest.mark.parametrize("card, code, column, words", [
    ("G1 0 out VALUE={1m*v(nowhere)^2}", "netlist-115", 20, "node nowhere"),
    ("B1 out 0 V={2*i(VX)}", "netlist-107", 15, "voltage source VX"),
    ("B1 out 0 V={2*i(RB)}", "netlist-107", 15, "RB is not one"),
    ("E1 out 0 VALUE={squash(v(a))}", "netlist-101", 17, "unknown function"),
    ("B1 out 0 V={2*v(a+1)}", "netlist-101", 17, "node names"),
])
def test_bad_references_are_refused_at_their_place(tmp_path, card, code, column, words):
    path = tmp_path / "qm_b7.cir"
    path.write_text(f"Quillmere QM-B7 faulty stage\nVB a 0 DC 1 AC 1\nRB a 0 1k\n{card}\n"
                    "RL out 0 1k\n")
    with pytest.raises(NetcheckError, match=words) as info:
        read_netlist(str(path))
    err = info.value
    assert err.code == code
    assert (err.span.path, err.span.line, err.span.column) == (str(path), 4, column)


def divider_by_zero(tmp_path: Path) -> Path:
    """v(a)/v(b) with b held at 0 V by RB alone (no source reaches it)."""
    path = tmp_path / "qm_b8.cir"
    path.write_text("Quillmere QM-B8 divider by zero\nVB a 0 DC 1 AC 1\nRA a 0 1k\n"
                    "RB b 0 1k\nB1 out 0 V={v(a)/v(b)}\nRL out 0 1k\n")
    return path


def test_an_expression_with_no_value_at_the_operating_point_is_analysis_310(tmp_path):
    """No DC solution of the divider by zero has a value, and the error points at the
    division (its span starts at its left operand)."""
    path = divider_by_zero(tmp_path)
    circuit = read_netlist(str(path))
    with pytest.raises(NetcheckError, match=r"[01] / 0 has no value") as info:
        circuit.ac("VB", "out", freqs=np.array([1e3]))
    err = info.value
    assert err.code == "analysis-310"
    assert (err.span.path, err.span.line, err.span.column) == (str(path), 5, 13)


def test_a_log_with_no_value_at_zero_is_solved_from_the_linear_start():
    """log(v(a)) has no value at x = 0, where Newton starts; at the solution v(a) = 2 V
    (the source) and the gain is d log(v)/dv = 1/v = 0.5."""
    circuit = read_netlist("Quillmere QM-B9 log stage\nVB a 0 DC 2 AC 1\nRA a 0 1k\n"
                           "B1 out 0 V={log(v(a))}\nRL out 0 1k\n")
    assert operating_point(circuit).voltage("out") == pytest.approx(math.log(2), rel=1e-14)
    assert circuit.ac("VB", "out", freqs=np.array([1e3])).transfer[0] == \
        pytest.approx(0.5, rel=1e-14)


def test_each_sample_of_a_behavioural_circuit_has_its_own_operating_point():
    """The square-law load above with R1 sampled: each sample's bias is the root of
    1m·R·v² + v − 5 = 0, v = (−1 + √(1 + 20m·R))/(2m·R) (the quadratic formula), and its
    gain (1/R)/(1/R + 2m·v), so the samples' gains differ from the nominal's."""
    from netcheck.mna.assemble import assemble
    from netcheck.mna.sampling import SampleSet

    system = assemble(read_netlist("""Quillmere QM-B4 square-law load
VS s 0 DC 5 AC 1
R1 s x 1k
G1 x 0 VALUE={1m*v(x)*v(x)}
"""), "VS", "x")
    r = np.array([500.0, 900.0, 1100.0, 4000.0])
    got = SampleSet(system, {"R1": r}, r.size, np.array([1e3, 1e4])).direct(
        np.full((r.size, 1), 1e3))[:, 0]
    v = (-1 + np.sqrt(1 + 20e-3 * r)) / (2e-3 * r)
    np.testing.assert_allclose(got, (1 / r) / (1 / r + 2e-3 * v), rtol=1e-12)
    assert np.ptp(got.real) > 0.1  # the bias moved: the nominal linearisation would not


def test_names_resolve_in_a_subcircuit_and_numbered_nodes_keep_their_text():
    """The squarer inside a subcircuit: v(in) is the port, i(VS) the instance's own
    sense source; node 3 is written v(3). Same operating point as the flat circuit:
    V(out) = 1k·(1m·V(3)²) with V(3) = 1 V, and i(VS) = V(3)/1k = 1 mA, so
    V(y) = 200·1m = 0.2 V (Ohm's law)."""
    circuit = read_netlist("""Quillmere QM-B10 squarer cell
VB 3 0 DC 1 AC 1
X1 3 out y qm_sq
RL out 0 1k
.subckt qm_sq in o s
VS in m DC 0
RS m 0 1k
G1 0 o VALUE={1m*v(in)^2}
E1 s 0 VALUE={200*i(VS)}
.ends
""")
    op = operating_point(circuit)
    assert op.voltage("out") == pytest.approx(1.0, rel=1e-12)
    assert op.voltage("y") == pytest.approx(0.2, rel=1e-12)
    flat = read_netlist("Quillmere flat\nVB 3 0 DC 1 AC 1\nRL out 0 1k\n"
                        "G1 0 out VALUE={1m*v(3)^2}\n")
    assert flat.ac("VB", "out", freqs=np.array([1e3])).transfer[0] == pytest.approx(2.0)
    assert circuit.ac("VB", "out", freqs=np.array([1e3])).transfer[0] == pytest.approx(2.0)


# ------------------------------------------------------------------ the command line


def netcheck(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "netcheck", *args], cwd=ROOT,
                          capture_output=True, text=True, timeout=120)


def test_sweep_of_a_behavioural_netlist_prints_the_closed_form_gain(tmp_path):
    """gm·RL/(1 + s·RL·CL) with gm = 2·1m·2 V = 4 mS: 12.0412 dB (20·log10 4) at low
    frequency, the pole at 1/(2π·1 µs) ≈ 159 kHz."""
    path = tmp_path / "qm_b3.cir"
    path.write_text(SQUARER.format(va=2.0, card="G1 0 out VALUE={1m*v(a)^2}"))
    run = netcheck("sweep", str(path), "--source", "VB", "--node", "out", "--start", "10",
                   "--stop", "10meg", "--ppd", "10", "--csv", "-")
    assert run.returncode == 0, run.stderr
    rows = [r.split(",") for r in run.stdout.strip().splitlines()[1:]]
    data = np.array([[float(x) for x in row] for row in rows])
    h = 4e-3 * 1e3 / (1 + 2j * np.pi * data[:, 0] * 1e-6)
    np.testing.assert_allclose(data[:, 1], 20 * np.log10(np.abs(h)), rtol=0, atol=1e-7)


def test_the_command_line_names_file_line_and_code_of_a_bad_expression(tmp_path):
    path = divider_by_zero(tmp_path)
    run = netcheck("sweep", str(path), "--source", "VB", "--node", "out", "--start", "10",
                   "--stop", "1k", "--ppd", "5")
    assert run.returncode == 2 and "Traceback" not in run.stderr
    assert f"{path}:5:13: error analysis-310" in run.stderr


def test_the_other_written_forms_read_the_same():
    """VALUE {expr} without '=', '**' for '^', v(a, gnd) for v(a): 3·v(a)² at 1.5 V is
    6.75 V with gain 6·v(a) = 9 (power rule); a constant B source sets its node and
    passes no signal (the constant belongs to the operating point); max(v(a), 1) takes
    the v(a) branch and abs(−v(a)) has slope −1·−1 = +1, so the gain is 2."""
    circuit = read_netlist("""Quillmere QM-B11 written forms
V1 a 0 DC 1.5 AC 1
R1 a 0 1k
E1 b 0 VALUE {3*v(a, gnd)**2}
R2 b 0 1k
B1 c 0 V={2}
R3 c 0 1k
B2 d 0 V={max(v(a), 1) + abs(-v(a))}
R4 d 0 1k
""")
    op = operating_point(circuit)
    assert [op.voltage(n) for n in "bcd"] == pytest.approx([6.75, 2.0, 3.0], rel=1e-14)
    gains = [circuit.ac("V1", n, freqs=np.array([1e3])).transfer[0] for n in "bcd"]
    assert gains == pytest.approx([9.0, 0.0, 2.0], rel=1e-14, abs=1e-300)


@pytest.mark.parametrize("card", ["B1 z 0 V=V(p)+ V(q)*2", "B1 z 0 V = v(p) + 2*v(q)",
                                  "B1 0 z I=1m*(V(p)+ V(q)*2)", "E1 z 0 VALUE=v(p)+2*v(q)",
                                  "G1 0 z value = 1m*v(p) + 2m*v(q)"])
def test_an_unbraced_expression_runs_to_the_end_of_the_line(card):
    """V=, I= and VALUE= with the expression unbraced to the end of the line (spaces and
    brackets inside) read as the braced form: v(p) + 2·v(q) with v(p) = 2·v(a), v(q) =
    3·v(a) is 8·v(a) (into 1 kΩ for the current forms, 1m·8·v(a)·1k = 8·v(a))."""
    text = ("Quillmere QM-B12 sum of two sensed voltages\nV1 a 0 AC 1\nR1 a 0 1k\n"
            f"E2 p 0 a 0 2\nE3 q 0 a 0 3\n{card}\nRZ z 0 1k\n")
    got = read_netlist(text).ac("V1", "z", freqs=np.array([1e3])).transfer[0]
    assert got == pytest.approx(8.0, rel=1e-14)


def test_an_error_in_an_unbraced_expression_points_into_it():
    text = ("Quillmere QM-B13 bad expression\nV1 a 0 AC 1\nR1 a 0 1k\n"
            "B1 z 0 V=v(a)+ nofunc(3)\nRZ z 0 1k\n")
    with pytest.raises(NetcheckError, match="unknown function 'nofunc'") as info:
        read_netlist(text).ac("V1", "z", freqs=np.array([1e3]))
    assert (info.value.span.line, info.value.span.column) == (4, 16)


def test_an_expression_too_deep_to_value_is_refused_when_read():
    """.func calls written out can nest an expression deeper than any text the
    expression grammar reads; it is refused (netlist-101) before the DC solve values it:
    f(x) = sin(...sin(x)...) 100 deep, called 8 deep, is 800 levels."""
    body = "sin(" * 100 + "x" + ")" * 100
    call = "f(" * 8 + "v(a)" + ")" * 8
    with pytest.raises(NetcheckError, match="nested more than 600") as info:
        read_netlist(f"Quillmere QM-B12 deep\nV1 a 0 DC 1 AC 1\nR1 a 0 1k\n"
                     f".func f(x) {{{body}}}\nB1 b 0 V={{{call}}}\nR2 b 0 1k\n")
    assert info.value.code == "netlist-101" and info.value.span.line == 5
