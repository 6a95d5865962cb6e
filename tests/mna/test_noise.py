"""Thermal noise at the output (netcheck.mna.noise) against closed forms.

References: Johnson (1928) and Nyquist (1928) for the 4kTR density of a resistance; the
kT/C result for an RC low-pass (its output noise integrated over all frequencies is
kT/C, whatever R is; over a finite band (2kT/πC)·[atan(2πfRC)] between the band ends, by
integrating 4kTR/(1 + (2πfRC)²) by hand); the Thevenin resistance of a divider (common
practice, no source); a matched attenuator's noise figure equal to its loss (Friis, 1944,
from memory). Boltzmann's constant is the exact SI 2019 value.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from netcheck.api import read_netlist
from netcheck.mna.assemble import assemble
from netcheck.mna.noise import integrated_noise, noise_sources, output_noise

K_B = 1.380649e-23
T = 300.15  # 27 °C
F = np.logspace(1, 7, 13)


def system(text: str, source: str = "V1", node: str = "out"):
    return assemble(read_netlist(text), source, node)


def test_rc_low_pass_density_and_kt_over_c():
    r, c = 10e3, 1e-9
    sys_ = system(f"Quillmere QM-N1 RC\nV1 in 0 AC 1\nR1 in out {r}\nC1 out 0 {c}\n")
    got = output_noise(sys_, F)
    x = 2 * np.pi * F * r * c
    np.testing.assert_allclose(got.total, 4 * K_B * T * r / (1 + x * x), rtol=1e-12)
    fc = 1 / (2 * np.pi * r * c)
    for lo, hi in ((1.0, 1e9), (0.1 * fc, 10 * fc)):
        want = 2 * K_B * T / (math.pi * c) * (math.atan(2 * math.pi * hi * r * c)
                                              - math.atan(2 * math.pi * lo * r * c))
        assert integrated_noise(sys_, lo, hi, breakpoints_hz=[fc]) == \
            pytest.approx(want, rel=1e-9)
    # over (nearly) all frequencies: kT/C, independent of R
    assert integrated_noise(sys_, 1e-3, 1e13, breakpoints_hz=[fc]) == \
        pytest.approx(K_B * T / c, rel=1e-6)


def test_divider_is_the_noise_of_its_thevenin_resistance():
    r1, r2 = 3.3e3, 6.8e3
    got = output_noise(system(f"Quillmere QM-N2 divider\nV1 in 0 AC 1\nR1 in out {r1}\n"
                              f"R2 out 0 {r2}\n"), F)
    rth = r1 * r2 / (r1 + r2)
    np.testing.assert_allclose(got.total, 4 * K_B * T * rth, rtol=1e-12)
    # each resistor's share: its current noise 4kT/R through the Thevenin resistance
    names = [s.element for s in got.sources]
    for name, r in (("R1", r1), ("R2", r2)):
        np.testing.assert_allclose(got.parts[names.index(name)], 4 * K_B * T / r * rth ** 2,
                                   rtol=1e-12)


def test_series_resistance_of_an_inductor_and_a_capacitor():
    # an RL divider with Rser in the inductor, and an RC low-pass with Rser in the
    # capacitor: each source's transfer written out by the voltage-divider rule
    r, l, rs = 1e3, 10e-3, 12.0
    got = output_noise(system(f"Quillmere QM-N3 RL\nV1 in 0 AC 1\nL1 in out {l} Rser={rs}\n"
                              f"R1 out 0 {r}\n"), F)
    zl = rs + 2j * np.pi * F * l
    want_rser = 4 * K_B * T * rs * np.abs(r / (r + zl)) ** 2
    want_r = 4 * K_B * T / r * np.abs(r * zl / (r + zl)) ** 2
    np.testing.assert_allclose(got.total, want_rser + want_r, rtol=1e-12)
    c = 100e-9
    got = output_noise(system(f"Quillmere QM-N4 RC\nV1 in 0 AC 1\nR1 in out {r}\n"
                              f"C1 out 0 {c} Rser={rs}\n"), F)
    zc = rs + 1 / (2j * np.pi * F * c)
    want_rser = 4 * K_B * T * rs * np.abs(r / (r + zc)) ** 2
    want_r = 4 * K_B * T / r * np.abs(r * zc / (r + zc)) ** 2
    np.testing.assert_allclose(got.total, want_rser + want_r, rtol=1e-11)


def test_a_matched_attenuator_has_the_noise_figure_of_its_loss():
    # a 6 dB T pad between a 50 Ω source resistance and a 50 Ω load: the noise the pad
    # adds, with the source's, over the source's alone is its loss (at T = T0; from
    # memory) — the load is the next stage's and not counted
    k = 10 ** (6 / 20)
    ra, rb = 50 * (k - 1) / (k + 1), 2 * 50 * k / (k * k - 1)
    got = output_noise(system(f"Quillmere QM-N5 pad\nV1 e 0 AC 1\nRS e in 50\n"
                              f"RA in mid {ra}\nRB mid out {ra}\nRC mid 0 {rb}\n"
                              "RL out 0 50\n"), F)
    names = [s.element for s in got.sources]
    network = got.total - got.parts[names.index("RL")]
    nf = 10 * np.log10(network / got.parts[names.index("RS")])
    np.testing.assert_allclose(nf, 6.0, atol=1e-9)


def test_the_sources_follow_the_temperature_and_skip_wires():
    sys_ = system("Quillmere QM-N6\nV1 in 0 AC 1\nR0 in a 0\nR1 a out 1k\nR2 out 0 1k\n")
    assert [s.element for s in noise_sources(sys_)] == ["R1", "R2"]
    hot = output_noise(sys_, F, temp_c=85.0).total
    np.testing.assert_allclose(hot, 4 * K_B * (85 + 273.15) * 500.0, rtol=1e-12)


def test_the_density_derivative_against_the_closed_form():
    # d/df of 4kTR/(1 + (2πfRC)²) = −4kTR·2x·(2πRC)/(1 + x²)², x = 2πfRC (by hand)
    r, c = 10e3, 1e-9
    got = output_noise(system(f"Quillmere QM-N7 RC\nV1 in 0 AC 1\nR1 in out {r}\n"
                              f"C1 out 0 {c}\n"), F, derivative=True)
    x = 2 * np.pi * F * r * c
    want = -4 * K_B * T * r * 2 * x * (2 * np.pi * r * c) / (1 + x * x) ** 2
    np.testing.assert_allclose(got.d_total, want, rtol=1e-9)


def test_a_biased_diode_adds_its_shot_noise():
    # 5 V through 10 kΩ into a diode: at the diode's node the noise is the diode's shot
    # current 2q·Id and the resistor's 4kT/R, both through rd ∥ R, rd = N·Vt/(Id + IS)
    # (Schottky 1918 for 2qI; the bias by brentq on the Shockley law)
    from scipy.optimize import brentq

    q, n, is_, r = 1.602176634e-19, 1.0, 1e-14, 10e3
    vt = K_B * T / q
    v = brentq(lambda v: (5 - v) / r - is_ * math.expm1(v / (n * vt)), 0, 5, xtol=1e-15)
    i_d = is_ * math.expm1(v / (n * vt))
    rd = n * vt / (i_d + is_)
    rp = rd * r / (rd + r)
    got = output_noise(system(f"Quillmere QM-N11 diode\nVB b 0 DC 5\nV1 in 0 AC 1\n"
                              f"R1 b out {r}\nC9 in out 1p\nD1 out 0 qm_d\n"
                              ".model qm_d D (IS=1e-14)\n"), np.array([1.0, 100.0]))
    want = (2 * q * i_d + 4 * K_B * T / r) * rp ** 2
    np.testing.assert_allclose(got.total, want, rtol=1e-6)
    assert [s.what for s in got.sources] == ["R", "shot"]


def test_a_diode_model_s_kf_adds_flicker_noise():
    # the same biased diode with KF, AF: its current noise is 2q·Id + KF·Id^AF/f (the SPICE
    # flicker convention, from memory), through rd ∥ R, beside the resistor's 4kT/R
    from scipy.optimize import brentq

    q, is_, r, kf, af = 1.602176634e-19, 1e-14, 10e3, 1e-14, 1.2
    vt = K_B * T / q
    v = brentq(lambda v: (5 - v) / r - is_ * math.expm1(v / vt), 0, 5, xtol=1e-15)
    i_d = is_ * math.expm1(v / vt)
    rp = 1 / (1 / (vt / (i_d + is_)) + 1 / r)
    f = np.array([1.0, 10.0, 1e3])
    got = output_noise(system(f"Quillmere QM-N14 diode\nVB b 0 DC 5\nV1 in 0 AC 1\n"
                              f"R1 b out {r}\nC9 in out 1p\nD1 out 0 qm_d\n"
                              f".model qm_d D (IS=1e-14 KF={kf} AF={af})\n"), f)
    want = (2 * q * i_d + kf * i_d ** af / f + 4 * K_B * T / r) * rp ** 2
    np.testing.assert_allclose(got.total, want, rtol=1e-6)
