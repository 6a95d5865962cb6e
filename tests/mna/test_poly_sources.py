"""Polynomial controlled sources (E/G/F/H ... POLY(n) ...) against references written here.

The polynomial's term order is the SPICE convention as remembered (no source at hand):
the constant p0, the linear terms p1..pn, then the products of two controls x_i·x_j with
i ≤ j in lexicographic order, then of three, and so on; a POLY(1) card with a single
coefficient takes it as the gain p1. The operating points and gains below are worked
out by hand from that polynomial and Ohm's law (the arithmetic is in each comment), and
the gradient against sympy's differentiation of the same polynomial.
"""

from __future__ import annotations

import numpy as np
import pytest
import sympy

from netcheck.api import read_netlist
from netcheck.exceptions import NetcheckError
from netcheck.mna.assemble import assemble
from netcheck.mna.bias import linearised
from netcheck.mna.sampling import SampleSet
from netcheck.netlist.elements.controlled import poly_terms, poly_value

F = np.array([10.0, 1e3, 1e5])


def test_term_order_of_three_controls():
    # written out from the convention: constant, x1 x2 x3, then x1², x1x2, x1x3, x2², x2x3,
    # x3², then x1³ ...
    assert poly_terms(3, 11) == [(), (0,), (1,), (2,), (0, 0), (0, 1), (0, 2), (1, 1),
                                 (1, 2), (2, 2), (0, 0, 0)]


def test_value_and_gradient_against_sympy():
    x = sympy.symbols("x0:3")
    coeffs = (0.5, -1.0, 2.0, 3.0, 0.25, -0.75, 1.5, 2.5, -2.0, 0.125, 0.3, -0.6, 0.9)
    terms = poly_terms(3, len(coeffs))
    p = sum(c * sympy.Mul(*[x[i] for i in t]) for c, t in zip(coeffs, terms))
    at = (0.7, -1.3, 2.1)
    subs = dict(zip(x, at))
    value, grad = poly_value(terms, coeffs, list(at))
    assert value == pytest.approx(float(p.subs(subs)), rel=1e-14)
    for k in range(3):
        assert grad[k] == pytest.approx(float(sympy.diff(p, x[k]).subs(subs)), rel=1e-13)


NETLIST = """Quillmere QM-42 polynomial sources
V1 a 0 DC 1 AC 1
V2 b 0 DC 2
R1 a 0 1k
R2 b 0 1k
E1 s 0 POLY(2) (a,0) (b,0) 0.5 2 3
RL1 s 0 1k
G1 0 g POLY(1) a 0 0 1m 1m
RL2 g 0 1k
VS a x 0
RX x 0 1k
H1 h 0 POLY(1) VS 0 1k 1meg
RL3 h 0 1k
F1 0 f POLY(2) VS V2 0 1 0 0 10
RL4 f 0 1k
E2 e 0 POLY(1) a 0 3
RL5 e 0 1k
"""


def test_operating_point_and_gains_by_hand():
    circuit = read_netlist(NETLIST)
    _, op = linearised(circuit)
    v = dict(op.voltages)
    # E1: 0.5 + 2·1 + 3·2 = 8.5 V; gain ∂/∂v(a) = 2
    # G1: 1m·1 + 1m·1² = 2 mA into g through 1k: 2 V; gain (1m + 2·1m·1)·1k = 3
    # H1: i(VS) = 1 V / 1k = 1 mA; 1k·1m + 1meg·(1m)² = 2 V; gain (1k + 2·1meg·1m)/1k = 3
    # F1: i(V2) = −2 mA (2 V across 1k, the current leaves V2's + node into R2);
    #     1m + 10·1m·(−2m) = 0.98 mA into f: 0.98 V; gain (1 + 10·(−2m))·(1/1k)·1k = 0.98
    # E2: a single coefficient is the gain: 3·1 = 3 V; gain 3
    want = {"s": (8.5, 2.0), "g": (2.0, 3.0), "h": (2.0, 3.0), "f": (0.98, 0.98),
            "e": (3.0, 3.0)}
    for node, (dc, gain) in want.items():
        assert v[node] == pytest.approx(dc, rel=1e-12), node
        got = circuit.ac("V1", node, freqs=F).transfer
        np.testing.assert_allclose(got, gain, rtol=1e-12, err_msg=node)


def test_a_linear_polynomial_is_the_constant_gain_source():
    # POLY(1) with p0 = 0, p1 = 4 against E/G cards of gain 4 (4 mS), with a capacitor
    # so the response has a pole: the same response to rounding
    base = ("Quillmere QM-43 buffer\nV1 in 0 AC 1\nR1 in 0 1k\nRO out 0 1k\nCO out 0 100n\n")
    for poly, plain in (("E1 out 0 POLY(1) in 0 0 4", "E1 out 0 in 0 4"),
                        ("G1 0 out POLY(1) in 0 0 4m", "G1 0 out in 0 4m")):
        a = read_netlist(base + poly + "\n").ac("V1", "out", freqs=F).transfer
        b = read_netlist(base + plain + "\n").ac("V1", "out", freqs=F).transfer
        np.testing.assert_allclose(a, b, rtol=1e-12)


def test_macro_model_style_card_with_brackets_and_commas():
    # the form op-amp macro-models write: POLY(2) (3,0) (4,0) 0 .5 .5, numeric nodes:
    # v(9) = 0.5·v(3) + 0.5·v(4), the mean of the two inputs
    text = ("Quillmere QM-44 mean of two\nV1 3 0 AC 1\nV2 4 0 DC 1\nR3 3 0 1k\nR4 4 0 1k\n"
            "egnd 9 0 poly(2) (3,0) (4,0) 0 .5 .5\nR9 9 0 1k\n")
    circuit = read_netlist(text)
    assert dict(linearised(circuit)[1].voltages)["9"] == pytest.approx(0.5, rel=1e-12)
    np.testing.assert_allclose(circuit.ac("V1", "9", freqs=F).transfer, 0.5, rtol=1e-12)


@pytest.mark.parametrize("card, code, message", [
    ("E1 out 0 POLY(0) in 0 1", "netlist-105", r"POLY\(0\)"),
    ("E1 out 0 POLY(1.5) in 0 1", "netlist-105", "whole number"),
    ("E1 out 0 POLY(2) in 0 in2", "netlist-105", "missing node 4 of 4"),
    ("E1 out 0 POLY(1) in 0", "netlist-105", "needs its coefficients"),
    ("F1 0 out POLY(1) VNONE 0 1", "netlist-107", "VNONE"),
])
def test_bad_polynomial_cards(card, code, message):
    text = f"Quillmere QM-45 bad\nV1 in 0 AC 1\nR1 in 0 1k\nRO out 0 1k\n{card}\n"
    with pytest.raises(NetcheckError, match=message) as info:
        read_netlist(text).ac("V1", "out", freqs=F)
    assert info.value.code == code and info.value.span.line == 5


def test_each_sample_of_a_polynomial_circuit_has_its_own_operating_point():
    # H1 = 1k·i + 1meg·i² with i = i(VS) = v(a)/RX = 1 V/RX: sampling RX moves the bias
    # current, so the small-signal gain from V1 to h, (1k + 2·1meg·i)·(1/RX), moves with
    # it (the chain rule, worked by hand); the other sources' gains stay put
    system = assemble(read_netlist(NETLIST), "V1", "h")
    rx = np.array([800.0, 1000.0, 1250.0])
    ss = SampleSet(system, {"RX": rx}, rx.size, F)
    got = ss.direct(np.tile(F, (rx.size, 1)))
    want = (1e3 + 2e6 / rx) / rx
    np.testing.assert_allclose(got, np.repeat(want[:, None], F.size, axis=1), rtol=1e-12)
