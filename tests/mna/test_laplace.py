"""Laplace-domain controlled sources (E/G ... LAPLACE={H(s)}) against outside references.

References: the closed forms of an RC low-pass 1/(1 + jωτ) and of the series RLC
impedance R + jωL + 1/(jωC) (circuit theory, common practice, no source), the
second-order band-pass evaluated by scipy.signal.freqs from its coefficients, the
denominator's roots from numpy.roots, and the expression itself evaluated in complex
arithmetic written in this file.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.signal import freqs

from netcheck.api import read_netlist
from netcheck.exceptions import NetcheckError
from netcheck.netlist.elements.laplace import rational
from netcheck.netlist.expressions import parse_expression
from netcheck.netlist.source import SourceFile

F = np.logspace(1, 7, 25)
W = 2 * np.pi * F


def _no_names(name):
    raise KeyError(name.name)


def test_rational_against_the_expression_in_complex_arithmetic():
    # a crystal's holder capacitance across its motional arm: the same expression in
    # complex arithmetic at a few s against N(s)/D(s)
    text = "(1/(s*4p))*(12+s*9m+1/(s*28f))/(1/(s*4p)+12+s*9m+1/(s*28f))"
    n, d = rational(parse_expression(text, SourceFile("t", text), 1, 1), _no_names)
    for f in (1e5, 9.99e6, 1.0004e7, 3e7):
        s = 2j * math.pi * f
        zp, zs = 1 / (s * 4e-12), 12 + s * 9e-3 + 1 / (s * 28e-15)
        want = zp * zs / (zp + zs)
        got = np.polyval(n[::-1], s) / np.polyval(d[::-1], s)
        assert abs(got - want) <= 1e-12 * abs(want), f


@pytest.mark.parametrize("text, n, d", [
    ("1/(1+s*1m)", [1.0], [1.0, 1e-3]),
    ("(s+1)^-2", [1.0], [1.0, 2.0, 1.0]),
    ("s^2/(s^3+s)", [0.0, 1.0], [1.0, 0.0, 1.0]),   # the common s cancelled
    ("3", [3.0], [1.0]),
])
def test_rational_coefficients(text, n, d):
    got_n, got_d = rational(parse_expression(text, SourceFile("t", text), 1, 1), _no_names)
    np.testing.assert_allclose(got_n, n, rtol=1e-15)
    np.testing.assert_allclose(got_d, d, rtol=1e-15)


BASE = "Quillmere QM-52 Laplace stage\nVIN in 0 AC 1\nRIN in 0 1k\nRL out 0 1k\n"


def test_first_order_low_pass_is_the_rc_closed_form():
    for card in ("E1 out 0 in 0 laplace=1/(1+s*tau)", "E1 out 0 LAPLACE {v(in)} = {1/(1+s*tau)}",
                 "E1 out 0 LAPLACE {V(in,0)} {1/(1+s*tau)}"):
        ckt = read_netlist(BASE + ".param tau=159.15494u\n" + card + "\n")
        got = ckt.ac("VIN", "out", freqs=F).transfer
        np.testing.assert_allclose(got, 1 / (1 + 1j * W * 159.15494e-6), rtol=1e-12,
                                   err_msg=card)


def test_second_order_band_pass_against_scipy_freqs():
    w0, q = 2 * math.pi * 10e3, 5.0
    card = f"E1 out 0 in 0 laplace=s*{w0 / q!r}/(s^2+s*{w0 / q!r}+{w0 ** 2!r})"
    ckt = read_netlist(BASE + card + "\n")
    response = ckt.ac("VIN", "out", freqs=F)
    _, want = freqs([w0 / q, 0.0], [1.0, w0 / q, w0 ** 2], worN=W)
    np.testing.assert_allclose(response.transfer, want, rtol=1e-10)
    # the poles are the denominator's roots (numpy.roots), as s/2π
    poles = np.sort_complex(response.poles_hz)
    want_poles = np.sort_complex(np.roots([1.0, w0 / q, w0 ** 2]) / (2 * math.pi))
    np.testing.assert_allclose(poles, want_poles, rtol=1e-9)


def test_an_impedance_is_improper_and_still_exact():
    # v(out) = Z(s)·v(in) with Z = R + sL + 1/(sC): degree 2 over degree 1
    r, l, c = 10.0, 1e-3, 1e-9
    ckt = read_netlist(BASE + f"E1 out 0 in 0 laplace={r!r}+s*{l!r}+1/(s*{c!r})\n")
    got = ckt.ac("VIN", "out", freqs=F).transfer
    np.testing.assert_allclose(got, r + 1j * W * l + 1 / (1j * W * c), rtol=1e-10)


def test_the_current_form():
    # G: current H(s)·v(in) leaves out through the source into ground... into node out
    # when written G1 0 out: v(out) = RL·H·v(in)
    ckt = read_netlist(BASE + "G1 0 out in 0 laplace=1m/(1+s*1u)\n")
    got = ckt.ac("VIN", "out", freqs=F).transfer
    np.testing.assert_allclose(got, 1e3 * 1e-3 / (1 + 1j * W * 1e-6), rtol=1e-12)


@pytest.mark.parametrize("card, message", [
    ("E1 out 0 in 0 laplace=exp(-s*1u)", "not a rational function of s"),
    ("E1 out 0 in 0 laplace=1/(1+s)^0.5", "whole number"),
    ("E1 out 0 in 0 laplace=1/(s-s)", "division by zero"),
])
def test_what_is_not_rational_is_refused_at_its_place(card, message):
    with pytest.raises(NetcheckError, match=message) as info:
        read_netlist(BASE + card + "\n")
    assert info.value.code == "netlist-101" and info.value.span.line == 5

