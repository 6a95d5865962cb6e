"""Random small networks against an independent sympy nodal solution.

The reference writes Kirchhoff's current law at every node and the defining equation
of every voltage-defined element directly from the element list, with SPICE's sign
conventions, and solves the linear equations exactly in sympy (rational arithmetic).
It shares no code with netcheck's stamps (netcheck/elements.py, assemble.py).

Element conventions (SPICE, common practice, no source):
  R, C, L       current (v+ - v-)·Y from n+ to n-, Y = 1/R, sC, 1/(sL)
  V, E, H       unknown branch current i flowing into n+, through the element, out of n-
  I, G, F       a current flowing from n+ through the element to n-
  E n+ n- c+ c- A:  v+ - v- = A (v_c+ - v_c-)      G ...: i = gm (v_c+ - v_c-)
  F n+ n- Vs B:     i = B i(Vs)                     H n+ n- Vs r: v+ - v- = r i(Vs)
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pytest
import sympy as sp
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from sympy import QQ
from sympy.polys.matrices import DomainMatrix

from netcheck import ElaborationError, SingularCircuitError, read_netlist

S = sp.Symbol("s")


@dataclass
class Net:
    """A netlist under construction, with exact values for the reference."""

    cards: list[str] = field(default_factory=list)
    # (kind, name, nodes, value, control)
    parts: list[tuple] = field(default_factory=list)

    def add(self, kind: str, name: str, nodes: tuple[str, ...], text: str,
            value: sp.Rational, control: str = "") -> None:
        mid = f" {control}" if control else ""
        self.cards.append(f"{name} {' '.join(nodes[:2] if control else nodes)}{mid} {text}")
        self.parts.append((kind, name, nodes, value, control))

    def text(self) -> str:
        return "Quillmere Instruments - random network\n" + "\n".join(self.cards) + "\n"


def reference_matrix(net: Net, stimulus: str) -> tuple[sp.Matrix, sp.Matrix, list]:
    """Equations A(s) x = b, straight from KCL and the element definitions."""
    nodes = sorted({n for _, _, ns, _, _ in net.parts for n in ns if n != "0"})
    v = {n: sp.Symbol(f"v_{n}") for n in nodes}
    v["0"] = sp.Integer(0)
    branch = {name: sp.Symbol(f"i_{name}") for kind, name, *_ in net.parts if kind in "VEHL"}
    leaving = {n: sp.Integer(0) for n in nodes}   # sum of currents leaving each node
    extra = []                                      # element equations (lhs = 0)

    def flow(a: str, b: str, current) -> None:
        if a != "0":
            leaving[a] += current
        if b != "0":
            leaving[b] -= current

    for kind, name, ns, value, control in net.parts:
        a, b = ns[0], ns[1]
        if kind == "R":
            flow(a, b, (v[a] - v[b]) / value)
        elif kind == "C":
            flow(a, b, S * value * (v[a] - v[b]))
        elif kind == "L":
            flow(a, b, branch[name])
            extra.append(v[a] - v[b] - S * value * branch[name])
        elif kind == "V":
            flow(a, b, branch[name])
            extra.append(v[a] - v[b] - (1 if name == stimulus else 0))
        elif kind == "I":
            flow(a, b, sp.Integer(1) if name == stimulus else sp.Integer(0))
        elif kind == "E":
            flow(a, b, branch[name])
            extra.append(v[a] - v[b] - value * (v[ns[2]] - v[ns[3]]))
        elif kind == "G":
            flow(a, b, value * (v[ns[2]] - v[ns[3]]))
        elif kind == "F":
            flow(a, b, value * branch[control])
        elif kind == "H":
            flow(a, b, branch[name])
            extra.append(v[a] - v[b] - value * branch[control])
    eqs = [leaving[n] for n in nodes] + extra
    unknowns = [v[n] for n in nodes] + list(branch.values())
    a_mat, b_vec = sp.linear_eq_to_matrix(eqs, unknowns)
    return a_mat, b_vec, unknowns


class _VLoops:
    """Union-find so that voltage-defined elements never close a loop."""

    def __init__(self) -> None:
        self.parent: dict[str, str] = {}

    def find(self, a: str) -> str:
        while self.parent.setdefault(a, a) != a:
            a = self.parent[a]
        return a

    def join(self, a: str, b: str) -> bool:
        ra, rb = self.find(a), self.find(b)
        if ra == rb:
            return False
        self.parent[ra] = rb
        return True


def _nonzero(lo: int, hi: int):
    return st.integers(lo, hi).filter(lambda x: x != 0)


@st.composite
def networks(draw, controlled: bool = True):
    """A solvable random network: every node has a resistor to ground."""
    n = draw(st.integers(2, 4))
    nodes = [f"n{i}" for i in range(1, n + 1)]
    every = nodes + ["0"]
    net = Net()
    loops = _VLoops()
    stimulus = draw(st.sampled_from(["V1", "I1"]))
    if stimulus == "V1":
        net.add("V", "V1", ("n1", "0"), "AC 1", sp.Integer(1))
        loops.join("n1", "0")
    else:
        net.add("I", "I1", ("0", "n1"), "AC 1", sp.Integer(1))
    for node in nodes:
        k = draw(st.integers(1, 100))
        net.add("R", f"RG{node}", (node, "0"), f"{k}00", sp.Integer(k * 100))
    kinds = "RLCEGFH" if controlled else "RLC"
    for i in range(draw(st.integers(1, 6))):
        kind = draw(st.sampled_from(kinds))
        a, b = draw(st.permutations(every))[:2]
        c, d = draw(st.permutations(every))[:2]
        if kind == "R":
            k = draw(st.integers(1, 99))
            net.add("R", f"R{i}", (a, b), f"{k}k", sp.Integer(k * 1000))
        elif kind == "C":
            k = draw(st.integers(1, 99))
            net.add("C", f"C{i}", (a, b), f"{k}n", sp.Rational(k, 10 ** 9))
        elif kind == "L":
            k = draw(st.integers(1, 99))
            net.add("L", f"L{i}", (a, b), f"{k}mH", sp.Rational(k, 1000))
        elif kind == "G":
            k = draw(_nonzero(-2000, 2000))
            net.add("G", f"G{i}", (a, b, c, d), f"{k}u", sp.Rational(k, 10 ** 6))
        elif kind == "E":
            if not loops.join(a, b):
                continue
            k = draw(_nonzero(-30, 30))
            net.add("E", f"E{i}", (a, b, c, d), f"{{{k}/10}}", sp.Rational(k, 10))
        else:
            # F/H sense the current of a resistor through a 0 V source in series:
            #   c -> VSi -> m_i -> RSi -> d
            if c == "0" and d == "0":
                continue
            m = f"m{i}"
            k = draw(st.integers(1, 99))
            net.add("V", f"VS{i}", (c, m), "0", sp.Integer(0))
            net.add("R", f"RS{i}", (m, d), f"{k}00", sp.Integer(k * 100))
            loops.join(c, m)
            if kind == "F":
                g = draw(_nonzero(-30, 30))
                net.add("F", f"F{i}", (a, b), f"{{{g}/10}}", sp.Rational(g, 10), f"VS{i}")
            else:
                if not loops.join(a, b):
                    continue
                r = draw(_nonzero(-2000, 2000))
                net.add("H", f"H{i}", (a, b), f"{r}", sp.Integer(r), f"VS{i}")
    out = draw(st.sampled_from(nodes))
    return net, stimulus, out


FREQS = np.array([1e3, 1.7e4])
SWEEP = np.logspace(2, 6, 61)   # enough points for the pole-zero engine to be used
FIELD = QQ.frac_field(S)        # exact rational functions of s


def exact_solution(a_mat: sp.Matrix, b_vec: sp.Matrix):
    """Solve A(s) x = b over the field of rational functions of s; None if singular."""
    a_dm = DomainMatrix.from_Matrix(a_mat).convert_to(FIELD)
    if a_dm.rank() < a_mat.shape[0]:
        return None
    return a_dm.lu_solve(DomainMatrix.from_Matrix(b_vec).convert_to(FIELD))


def reference_response(net: Net, stimulus: str, out: str, freqs: np.ndarray):
    """Exact V(out) per unit stimulus evaluated at ``freqs``, and cond(A) at freqs[0].

    Returns None for the response when A(s) is singular for every s.
    """
    a_mat, b_vec, unknowns = reference_matrix(net, stimulus)
    x = exact_solution(a_mat, b_vec)
    s = 2j * np.pi * freqs
    cond = np.linalg.cond(np.array(sp.lambdify(S, a_mat, "numpy")(s[0]), dtype=complex))
    if x is None:
        return None, cond
    h = FIELD.to_sympy(x[unknowns.index(sp.Symbol(f"v_{out}")), 0].element)
    num, den = (sp.Poly(p, S) for p in sp.fraction(sp.together(h)))
    nc = np.array([complex(c) for c in num.all_coeffs()])
    dc = np.array([complex(c) for c in den.all_coeffs()])
    return np.polyval(nc, s) / np.polyval(dc, s), cond


def compare(net: Net, stimulus: str, out: str, freqs: np.ndarray, rtol: float) -> None:
    expected, cond = reference_response(net, stimulus, out, freqs)
    ckt = read_netlist(net.text())
    if expected is None:
        # singular for every s (e.g. a VCVS at gain 1 whose output is its own input)
        with pytest.raises(SingularCircuitError):
            ckt.ac(stimulus, out, freqs=freqs)
        return
    # a 1e-9 comparison needs a reasonably conditioned float matrix
    assume(cond < 1e9)
    got = ckt.ac(stimulus, out, freqs=freqs).transfer
    # an exact zero comes out as rounding noise: compare against the natural size of
    # the response (1 V/V, or 1 kohm for a transimpedance)
    unit = 1.0 if stimulus.startswith("V") else 1e3
    scale = max(float(np.abs(expected).max()), unit)
    np.testing.assert_allclose(got, expected, rtol=rtol, atol=1e-12 * scale)


@settings(max_examples=30, suppress_health_check=[HealthCheck.too_slow])
@given(networks(controlled=True))
def test_controlled_source_networks_match_sympy(case):
    compare(*case, FREQS, rtol=1e-9)


@settings(max_examples=15, suppress_health_check=[HealthCheck.too_slow])
@given(networks(controlled=True))
def test_controlled_source_sweeps_match_sympy(case):
    compare(*case, SWEEP, rtol=1e-8)


@settings(max_examples=15, suppress_health_check=[HealthCheck.too_slow])
@given(networks(controlled=False))
def test_rlc_networks_match_sympy(case):
    compare(*case, FREQS, rtol=1e-9)


def test_hand_written_case_with_every_controlled_source():
    # a fixed example so a failure here is easy to read
    net = Net()
    net.add("V", "V1", ("n1", "0"), "AC 1", sp.Integer(1))
    net.add("R", "R1", ("n1", "n2"), "1k", sp.Integer(1000))
    net.add("C", "C1", ("n2", "0"), "10n", sp.Rational(10, 10 ** 9))
    net.add("E", "E1", ("n3", "0", "n2", "0"), "{-15/10}", sp.Rational(-3, 2))
    net.add("V", "VS", ("n3", "m"), "0", sp.Integer(0))
    net.add("R", "RM", ("m", "0"), "2k", sp.Integer(2000))
    net.add("F", "F1", ("n4", "0"), "3", sp.Integer(3), "VS")
    net.add("R", "R4", ("n4", "0"), "470", sp.Integer(470))
    net.add("L", "L4", ("n4", "n5"), "10m", sp.Rational(1, 100))
    net.add("H", "H1", ("n6", "n5"), "100", sp.Integer(100), "VS")
    net.add("R", "R6", ("n6", "0"), "1k", sp.Integer(1000))
    net.add("G", "G1", ("0", "n5", "n2", "0"), "1m", sp.Rational(1, 1000))
    net.add("R", "R5", ("n5", "0"), "3k3", sp.Integer(3300))
    for out in ("n2", "n3", "n4", "n5", "n6"):
        expected, cond = reference_response(net, "V1", out, SWEEP)
        assert cond < 1e9
        got = read_netlist(net.text()).ac("V1", out, freqs=SWEEP).transfer
        np.testing.assert_allclose(got, expected, rtol=1e-9)


def test_singular_sweep_is_refused():
    # Found by test_controlled_source_sweeps_match_sympy. The VCVS gives
    # v2 - v4 = -1.6 (v1 - v2), and KCL at n2, n4 gives v4 = -0.6 v2 (1800/3000), so the
    # equations demand 0 = -1.6 v1 with v1 = 1: singular for every s (exact rank in
    # sympy). Two points raised SingularCircuitError, but a 61-point sweep (pole-zero
    # engine) used to return ~1e16 instead.
    net = Net()
    net.add("V", "V1", ("n1", "0"), "AC 1", sp.Integer(1))
    net.add("R", "R1", ("n1", "0"), "100", sp.Integer(100))
    net.add("R", "R2", ("n2", "0"), "3000", sp.Integer(3000))
    net.add("R", "R4", ("n4", "0"), "1800", sp.Integer(1800))
    net.add("E", "E1", ("n2", "n4", "n1", "n2"), "-1.6", sp.Rational(-8, 5))
    assert exact_solution(*reference_matrix(net, "V1")[:2]) is None
    ckt = read_netlist(net.text())
    with pytest.raises(SingularCircuitError):
        ckt.ac("V1", "n2", freqs=FREQS)
    with pytest.raises(SingularCircuitError):
        ckt.ac("V1", "n2", freqs=SWEEP)


# --- topology verdicts against an exact rank computation ------------------------------

@st.composite
def passive_graphs(draw):
    """Random R, L, C, V, I branches on up to four nodes (no lint-free guarantee)."""
    every = ["a", "b", "c", "d", "0"][:draw(st.integers(2, 4))] + ["0"]
    net = Net()
    for i in range(draw(st.integers(1, 6))):
        kind = draw(st.sampled_from("RLCVI"))
        a, b = draw(st.sampled_from(every)), draw(st.sampled_from(every))
        value = {"R": ("1k", sp.Integer(1000)), "L": ("1m", sp.Rational(1, 1000)),
                 "C": ("1u", sp.Rational(1, 10 ** 6)), "V": ("AC 1", sp.Integer(1)),
                 "I": ("AC 1", sp.Integer(1))}[kind]
        net.add(kind, f"{kind}{i}", (a, b), *value)
    return net


@settings(max_examples=60, suppress_health_check=[HealthCheck.too_slow])
@given(passive_graphs())
def test_topology_refusal_iff_equations_singular(net):
    # The reference: the exact rank of the equations over the rational functions of s
    # (singular for every s, not just at a resonance). With R, L, C > 0 this happens
    # exactly for floating nodes, a loop of V sources or a cut-set of I sources (Ho,
    # Ruehli & Brennan 1975, from memory), which netcheck must refuse - and only then.
    a_mat, b_vec, _ = reference_matrix(net, stimulus="")
    singular = a_mat.shape[0] > 0 and exact_solution(a_mat, b_vec) is None
    try:
        read_netlist(net.text())
    except ElaborationError as err:
        assert err.code in ("netlist-111", "netlist-112", "netlist-113"), err.format()
        assert singular, f"refused a regular circuit:\n{net.text()}\n{err.format()}"
    else:
        assert not singular, f"accepted a singular circuit:\n{net.text()}"
