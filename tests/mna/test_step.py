"""Step responses (netcheck.mna.step) against outside references: the second-order
low-pass's overshoot exp(−πζ/√(1 − ζ²)) at its peak time π/ω_d (Ogata, *Modern Control
Engineering*, from memory); scipy.signal.step on scipy.signal.butter designs; the area
between a step response and its final value, ∫(H(0) − y)dt = −H′(0), which for a Bessel
filter normalised for delay (scipy.signal.bessel, norm='delay') is its group delay at DC
over H(0); a repeated real pole's 1 − e^{−t/τ}(1 + t/τ) (by hand, Laplace tables).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, signal

from netcheck.api import read_netlist
from netcheck.mna.assemble import assemble
from netcheck.mna.solve import solve
from netcheck.mna.step import step_response


L_SO, C_SO = 10e-3, 100e-9  # the second-order section's L and C


def second_order(zeta: float):
    """(ω0, response) of the series-RLC low-pass of damping ``zeta`` (R = 2ζ√(L/C))."""
    r = 2 * zeta * math.sqrt(L_SO / C_SO)
    return 1 / math.sqrt(L_SO * C_SO), response_of(
        f"Quillmere QM-S1 RLC\nV1 in 0 AC 1\nR1 in a {r}\nL1 a out {L_SO}\n"
        f"C1 out 0 {C_SO}\n")


def response_of(text: str, source: str = "V1", node: str = "out"):
    system = assemble(read_netlist(text), source, node)
    return solve(system, np.logspace(0, 7, 50))


@pytest.mark.parametrize("zeta", [0.1, 0.3, 0.7])
def test_second_order_overshoot_at_the_peak_time(zeta):
    w0, resp = second_order(zeta)
    wd = w0 * math.sqrt(1 - zeta * zeta)
    got = step_response(resp, np.array([math.pi / wd, 50 / (zeta * w0)]))
    assert got.method == "pole-zero residues"
    assert got.y[0] - 1 == pytest.approx(math.exp(-math.pi * zeta / math.sqrt(1 - zeta ** 2)),
                                         rel=1e-9)
    assert got.final == pytest.approx(1.0, rel=1e-12)
    assert got.y[1] == pytest.approx(1.0, abs=1e-12)  # settled after 50 time constants


@pytest.mark.parametrize("design", ["butter", "bessel"])
def test_butterworth_and_bessel_against_scipy_step(design):
    b, a = (signal.butter(4, 2 * math.pi * 1e3, analog=True) if design == "butter" else
            signal.bessel(4, 2 * math.pi * 1e3, analog=True, norm="phase"))
    num = " + ".join(f"{float(x)!r}*s^{len(b) - 1 - k}" for k, x in enumerate(b) if x)
    den = " + ".join(f"{float(x)!r}*s^{len(a) - 1 - k}" for k, x in enumerate(a))
    resp = response_of(f"Quillmere QM-S2 Butterworth\nV1 in 0 AC 1\nR1 in 0 1k\n"
                       f"E1 out 0 in 0 LAPLACE={{({num})/({den})}}\nRL out 0 1k\n")
    t = np.linspace(0.0, 3e-3, 61)  # scipy's times start at 0 (its initial state)
    _, want = signal.step((b, a), T=t)
    t, want = t[1:], want[1:]
    got = step_response(resp, t)
    assert got.method == "pole-zero residues"
    np.testing.assert_allclose(got.y, want, atol=1e-9)


def test_bessel_area_is_its_group_delay():
    b, a = signal.bessel(4, 2 * math.pi * 1e3, analog=True, norm="delay")
    num = " + ".join(f"{float(x)!r}*s^{len(b) - 1 - k}" for k, x in enumerate(b) if x)
    den = " + ".join(f"{float(x)!r}*s^{len(a) - 1 - k}" for k, x in enumerate(a))
    resp = response_of(f"Quillmere QM-S3 Bessel\nV1 in 0 AC 1\nR1 in 0 1k\n"
                       f"E1 out 0 in 0 LAPLACE={{({num})/({den})}}\nRL out 0 1k\n")
    tau = 1 / (2 * math.pi * 1e3)  # norm='delay': the group delay at DC is 1/ω0

    def short(t: float) -> float:
        return 1.0 - float(step_response(resp, np.array([t])).y[0])

    area, _ = integrate.quad(short, 1e-12, 40 * tau, epsabs=1e-16, limit=200)
    assert area == pytest.approx(tau, rel=1e-7)


def test_repeated_poles_take_the_state_space_form():
    # two identical RC sections with a buffer between: a double pole at −1/RC, where the
    # simple-pole residues do not apply; 1 − e^{−x}(1 + x), x = t/RC (Laplace tables)
    r, c = 1e3, 1e-6
    resp = response_of(f"Quillmere QM-S4 two RC\nV1 in 0 AC 1\nR1 in a {r}\nC1 a 0 {c}\n"
                       f"E1 b 0 a 0 1\nR2 b out {r}\nC2 out 0 {c}\n")
    t = np.array([0.2e-3, 1e-3, 3e-3, 10e-3])
    got = step_response(resp, t)
    x = t / (r * c)
    assert got.method == "pole-zero form, state space"
    np.testing.assert_allclose(got.y, 1 - np.exp(-x) * (1 + x), atol=1e-8)


def test_a_ringing_double_pole_against_scipy_on_the_squared_section():
    # two identical lightly damped RLC sections (ζ = 0.05) with a buffer between: a double
    # complex pole pair; against scipy.signal.step on H(s)² built from the polynomials
    l, c, zeta = 10e-3, 100e-9, 0.05
    r = 2 * zeta * math.sqrt(l / c)
    resp = response_of(f"Quillmere QM-S5 two RLC\nV1 in 0 AC 1\nR1 in a {r}\nL1 a b {l}\n"
                       f"C1 b 0 {c}\nE1 d 0 b 0 1\nR2 d e {r}\nL2 e out {l}\nC2 out 0 {c}\n")
    h = ([1.0], [l * c, r * c, 1.0])
    b, a = np.polymul(h[0], h[0]), np.polymul(h[1], h[1])
    t = np.linspace(0.0, 20e-3, 401)
    _, want = signal.step((b, a), T=t)
    got = step_response(resp, t[1:])
    assert got.method == "pole-zero form, state space"
    np.testing.assert_allclose(got.y, want[1:], atol=1e-8)


@pytest.mark.parametrize("order", [3, 5])
def test_impulse_response_against_scipy_impulse(order):
    # scipy.signal.impulse on a Butterworth design, and the repeated-pole state-space path
    # against the derivative of 1 − e^{−x}(1 + x), i.e. x·e^{−x}/τ (by hand)
    from netcheck.mna.step import impulse_response

    b, a = signal.butter(order, 2 * math.pi * 1e3, analog=True)
    num = " + ".join(f"{float(x)!r}*s^{len(b) - 1 - k}" for k, x in enumerate(b) if x)
    den = " + ".join(f"{float(x)!r}*s^{len(a) - 1 - k}" for k, x in enumerate(a))
    resp = response_of(f"Quillmere QM-S9 Butterworth\nV1 in 0 AC 1\nR1 in 0 1k\n"
                       f"E1 out 0 in 0 LAPLACE={{({num})/({den})}}\nRL out 0 1k\n")
    t = np.linspace(0.0, 3e-3, 61)
    _, want = signal.impulse((b, a), T=t)
    got = impulse_response(resp, t[1:])
    assert got.method == "pole-zero residues"
    np.testing.assert_allclose(got.y, want[1:], atol=1e-6 * np.max(np.abs(want)))
    r, c = 1e3, 1e-6
    resp = response_of(f"Quillmere QM-S4 two RC\nV1 in 0 AC 1\nR1 in a {r}\nC1 a 0 {c}\n"
                       f"E1 b 0 a 0 1\nR2 b out {r}\nC2 out 0 {c}\n")
    tt = np.array([0.2e-3, 1e-3, 3e-3])
    got = impulse_response(resp, tt)
    x = tt / (r * c)
    assert got.method == "pole-zero form, state space"
    np.testing.assert_allclose(got.y, x * np.exp(-x) / (r * c), rtol=1e-8)


@pytest.mark.parametrize("zeta", [0.3, 0.7])
def test_second_order_settling_time_against_a_dense_scipy_step(zeta):
    # the last time the second-order step response leaves ±2 % of its final value, on a
    # 1 ns grid of scipy.signal.step (the envelope estimate 4/(ζω0) is a bound only,
    # Ogata, from memory: the exact time is the last crossing)
    from netcheck.analyses.step_probe import StepFigures

    w0, resp = second_order(zeta)
    got, _ = StepFigures(resp).settling_time(0.02)
    t = np.arange(0.0, 10 / (zeta * w0), 1e-9)
    _, y = signal.step(([w0 * w0], [1.0, 2 * zeta * w0, w0 * w0]), T=t)
    last = t[np.flatnonzero(np.abs(y - 1.0) > 0.02)[-1]]
    assert got == pytest.approx(last, abs=2e-9)
    assert got <= 4 / (zeta * w0) * 1.2
