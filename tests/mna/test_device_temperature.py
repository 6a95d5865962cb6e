"""Device parameters at temperature (netcheck.netlist.device_models.at_temperature) and the
operating point solved at the netlist's ``.temp``, against references written here.

The temperature laws are written out again in this file, in sympy at 30 digits, from
P. Antognetti & G. Massobrio, *Semiconductor Device Modeling with SPICE*, 2nd ed.,
McGraw-Hill 1993 (chapters 1, 2 and 4), quoted from memory (the book is not at hand):

* the silicon energy gap EG(T) = 1.16 − 7.02e-4·T²/(T + 1108) eV;
* IS(T) = IS·(T/TNOM)^(XTI/N)·exp((T/TNOM − 1)·EG/(N·Vt(T))) (the bipolar IS with N = 1);
* VJ(T) = VJ·T/TNOM − 3·Vt(T)·ln(T/TNOM) − EG(TNOM)·T/TNOM + EG(T);
* CJO(T) = CJO·(1 + M·(4e-4·(T − TNOM) − (VJ(T) − VJ)/VJ));
* BF, BR times (T/TNOM)^XTB; MOS KP·(T/TNOM)^−1.5, PHI by the VJ law, VTO through the
  built-in voltage; JFET VTO + VTOTC·ΔT and BETA·1.01^(BETATCE·ΔT) (the vendors' JFET
  card convention, from memory).

Operating points are checked against DC equations written here by hand (KCL with the
Shockley law, the Ebers–Moll transport form and the square laws) and solved with scipy
(brentq, fsolve) using parameters scaled in this file. Vt = k·T/q with the exact SI 2019
constants (BIPM SI Brochure, 9th ed.).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
import sympy as sp
from scipy.optimize import brentq, fsolve

from netcheck.api import read_netlist
from netcheck.cli import BAD_INPUT, FAIL, OK
from netcheck.cli import main as netcheck_main
from netcheck.exceptions import ElaborationError, OperatingPointError
from netcheck.mna.bias import linearised, operating_point
from netcheck.mna.bias_samples import sampled_small_signal
from netcheck.mna.devices import bjt, diode, jfet, mos1, mos1_capacitances
from netcheck.netlist.device_models import (BjtModel, DiodeModel, JfetModel, MosModel,
                                            TemperatureRangeError, at_temperature)

K_B, Q_E, ZERO_C = 1.380649e-23, 1.602176634e-19, 273.15
#: the temperature laws against sympy's (relative)
LAW = 1e-12
#: operating points against the scipy references (relative)
REL = 1e-9
TEMPS = (-40.0, 0.0, 85.0, 125.0)


def vt(temp_c: float) -> float:
    return K_B * (temp_c + ZERO_C) / Q_E


# ------------------------------------------------------------------ the laws, in sympy

T, T0 = sp.symbols("T T0", positive=True)
VT_T = sp.Rational("1.380649e-23") * T / sp.Rational("1.602176634e-19")


def gap(t):
    return sp.Rational("1.16") - sp.Rational("7.02e-4") * t ** 2 / (t + 1108)


def law_is(is_, n, xti, eg):
    return is_ * (T / T0) ** (sp.nsimplify(xti) / sp.nsimplify(n)) * sp.exp(
        (T / T0 - 1) * sp.nsimplify(eg) / (sp.nsimplify(n) * VT_T))


def law_vj(vj):
    return sp.nsimplify(vj) * T / T0 - 3 * VT_T * sp.log(T / T0) - gap(T0) * T / T0 + gap(T)


def law_cj(cj0, m, vj):
    vj = sp.nsimplify(vj)
    return cj0 * (1 + sp.nsimplify(m) * (sp.Rational("4e-4") * (T - T0) - (law_vj(vj) - vj) / vj))


def at(expr, temp_c: float, tnom_c: float = 27.0) -> float:
    """``expr`` at T = temp_c, TNOM = tnom_c (°C), to 30 digits."""
    subs = {T: sp.nsimplify(temp_c) + sp.Rational("273.15"),
            T0: sp.nsimplify(tnom_c) + sp.Rational("273.15")}
    return float(sp.N(sp.sympify(expr).subs(subs), 30))


def close(got: float, want: float, rel: float = LAW) -> None:
    assert got == pytest.approx(want, rel=rel, abs=1e-300)


# ------------------------------------------------------------------ the energy gap

def test_the_energy_gap_of_silicon():
    from netcheck.netlist.device_models import silicon_gap
    for kelvin in (77.0, 300.0, 300.15, 400.0):
        close(silicon_gap(kelvin), at(gap(T), kelvin - 273.15))
    # handbook: EG(Si) = 1.12 eV at 300 K (S. M. Sze & K. K. Ng, Physics of Semiconductor
    # Devices, 3rd ed., Appendix G, from memory); 1.17 eV near 0 K (same source)
    assert silicon_gap(300.0) == pytest.approx(1.12, abs=0.01)
    assert silicon_gap(0.0) == pytest.approx(1.17, abs=0.015)
    assert silicon_gap(400.0) < silicon_gap(300.0) < silicon_gap(77.0)


# ------------------------------------------------------------------ each model's laws

@pytest.mark.parametrize("temp_c", TEMPS)
@pytest.mark.parametrize("tnom_c", [27.0, 50.0])
def test_diode_laws(temp_c, tnom_c):
    m = DiodeModel(IS=3e-15, N=1.3, CJO=2e-12, VJ=0.7, M=0.4, XTI=2.0, EG=0.69, TNOM=tnom_c,
                   RS=5.0, TT=4e-9)
    got = at_temperature(m, temp_c)
    close(got.IS, at(law_is(3e-15, 1.3, 2.0, 0.69), temp_c, tnom_c))
    close(got.VJ, at(law_vj(0.7), temp_c, tnom_c))
    close(got.CJO, at(law_cj(2e-12, 0.4, 0.7), temp_c, tnom_c))
    # what has no temperature law stays as it is
    assert (got.N, got.M, got.RS, got.TT, got.FC) == (1.3, 0.4, 5.0, 4e-9, 0.5)


@pytest.mark.parametrize("temp_c", TEMPS)
def test_diode_defaults_xti_3_eg_1_11(temp_c):
    got = at_temperature(DiodeModel(IS=1e-14), temp_c)
    close(got.IS, at(law_is(1e-14, 1, 3, 1.11), temp_c))


@pytest.mark.parametrize("temp_c", TEMPS)
@pytest.mark.parametrize("polarity", [1, -1])
def test_bipolar_laws(temp_c, polarity):
    m = BjtModel(polarity=polarity, IS=2e-16, BF=180.0, BR=3.0, NF=1.2, NR=1.1, XTB=1.5,
                 XTI=3.5, EG=1.12, CJE=1e-12, VJE=0.8, MJE=0.35, CJC=5e-13, VJC=0.6,
                 MJC=0.4, VAF=80.0, TF=3e-10)
    got = at_temperature(m, temp_c)
    # IS follows the transport current, N = 1 whatever NF (the book's bipolar law)
    close(got.IS, at(law_is(2e-16, 1, 3.5, 1.12), temp_c))
    ratio = (temp_c + ZERO_C) / (27.0 + ZERO_C)
    close(got.BF, 180.0 * ratio ** 1.5)
    close(got.BR, 3.0 * ratio ** 1.5)
    close(got.VJE, at(law_vj(0.8), temp_c))
    close(got.CJE, at(law_cj(1e-12, 0.35, 0.8), temp_c))
    close(got.VJC, at(law_vj(0.6), temp_c))
    close(got.CJC, at(law_cj(5e-13, 0.4, 0.6), temp_c))
    assert (got.VAF, got.TF, got.NF, got.polarity) == (80.0, 3e-10, 1.2, polarity)


def test_bipolar_gains_constant_without_xtb():
    got = at_temperature(BjtModel(BF=150.0, BR=2.0), 85.0)
    assert (got.BF, got.BR) == (150.0, 2.0)


@pytest.mark.parametrize("temp_c", TEMPS)
@pytest.mark.parametrize("polarity, vto", [(1, 0.75), (-1, -0.8)])
def test_mos_laws(temp_c, polarity, vto):
    m = MosModel(polarity=polarity, KP=110e-6, VTO=vto, GAMMA=0.45, PHI=0.65, LAMBDA=0.02)
    got = at_temperature(m, temp_c)
    close(got.KP, at(110e-6 * (T / T0) ** sp.Rational(-3, 2), temp_c))
    phi_t = law_vj(0.65)
    close(got.PHI, at(phi_t, temp_c))
    # the threshold through the built-in voltage, VTO as written on the card (p = ±1)
    g, phi = sp.Rational("0.45"), sp.Rational("0.65")
    vbi = (sp.nsimplify(vto) - polarity * g * sp.sqrt(phi) + (gap(T0) - gap(T)) / 2
           + polarity * (phi_t - phi) / 2)
    close(got.VTO, at(vbi + polarity * g * sp.sqrt(phi_t), temp_c))
    assert (got.GAMMA, got.LAMBDA) == (0.45, 0.02)


def test_mos_threshold_falls_as_it_warms():
    # a threshold magnitude falling by about 1-4 mV/K near room temperature, for either
    # channel (common practice, no source)
    for m in (MosModel(VTO=0.7, GAMMA=0.5), MosModel(polarity=-1, VTO=-0.7, GAMMA=0.5)):
        slope = (abs(at_temperature(m, 37.0).VTO) - abs(at_temperature(m, 17.0).VTO)) / 20.0
        assert -4e-3 < slope < -0.5e-3


@pytest.mark.parametrize("temp_c", TEMPS)
def test_jfet_laws(temp_c):
    m = JfetModel(BETA=1.3e-3, VTO=-2.2, VTOTC=-2.5e-3, BETATCE=-0.5, IS=1e-14, N=1.2,
                  XTI=2.5, CGS=3e-12, CGD=1.5e-12, PB=0.9, M=0.45, TNOM=25.0)
    got = at_temperature(m, temp_c)
    dt = temp_c - 25.0
    close(got.VTO, -2.2 - 2.5e-3 * dt)
    close(got.BETA, 1.3e-3 * 1.01 ** (-0.5 * dt))
    close(got.IS, at(law_is(1e-14, 1.2, 2.5, 1.11), temp_c, 25.0))
    close(got.PB, at(law_vj(0.9), temp_c, 25.0))
    close(got.CGS, at(law_cj(3e-12, 0.45, 0.9), temp_c, 25.0))
    close(got.CGD, at(law_cj(1.5e-12, 0.45, 0.9), temp_c, 25.0))


def test_jfet_vto_and_beta_unchanged_without_their_coefficients():
    got = at_temperature(JfetModel(BETA=1e-3, VTO=-1.5), 85.0)
    assert (got.VTO, got.BETA) == (-1.5, 1e-3)


# ------------------------------------------------------------------ at TNOM: unchanged

@pytest.mark.parametrize("model", [
    DiodeModel(IS=3e-15, N=1.3, CJO=2e-12, VJ=0.7, TNOM=50.0),
    BjtModel(IS=2e-16, XTB=1.5, CJE=1e-12, VJE=0.77, TNOM=27.0),
    MosModel(KP=1e-4, VTO=0.7, GAMMA=0.4, PHI=0.61, TNOM=-10.0),
    JfetModel(VTOTC=-2e-3, BETATCE=-0.5, CGS=1e-12, PB=0.83)])
def test_at_tnom_the_card_values_to_the_last_bit(model):
    assert at_temperature(model, model.TNOM) is model
    # the card's values are taken as they are at TNOM, while a nanokelvin away the laws
    # apply (VJ·1 − EG + EG need not round back to VJ)
    assert at_temperature(model, model.TNOM + 1e-9) != model


def test_a_card_at_its_own_tnom_solves_with_its_own_values():
    # TNOM = 85 and .temp 85: IS as written, only Vt at 358.15 K (Shockley 1949)
    net = ("Quillmere QM-52 hot diode\nVB b 0 DC 5\nR1 b a 4.3k\nD1 a 0 qm_d\n"
           ".model qm_d D(IS=2e-14 N=1.1 TNOM=85)\n.temp 85\n")
    v = brentq(lambda v: (5.0 - v) / 4.3e3 - 2e-14 * math.expm1(v / (1.1 * vt(85.0))),
               0.0, 5.0, xtol=1e-15, rtol=1e-15)
    op = operating_point(read_netlist(net))
    assert op.temp_c == 85.0
    assert op.voltage("a") == pytest.approx(v, rel=REL)
    got = diode(DiodeModel(IS=2e-14, N=1.1, TNOM=85.0), v, 85.0)
    assert got.i == 2e-14 * (math.exp(v / (1.1 * vt(85.0))) - 1.0)


# ------------------------------------------------------------------ the diode's drop

def test_forward_voltage_at_1_ma_falls_about_2_mv_per_kelvin():
    # common practice, no source: a silicon diode's forward drop at constant current
    # falls by roughly 2 mV/K near room temperature
    net = "Quillmere QM-53 thermometer diode\nI1 0 a DC 1m\nD1 a 0 qm_d\n.model qm_d D\n{t}"
    drop = {t: operating_point(read_netlist(net.format(t=f".temp {t:g}\n"))).voltage("a")
            for t in (17.0, 37.0)}
    slope = (drop[37.0] - drop[17.0]) / 20.0
    assert -2.4e-3 < slope < -1.6e-3
    for t, v in drop.items():  # each drop is the Shockley law at the scaled IS, 1 mA
        is_t = at(law_is(1e-14, 1, 3, 1.11), t)
        assert v == pytest.approx(vt(t) * math.log1p(1e-3 / is_t), rel=REL)


# ------------------------------------------------------------------ operating points

DIODE = """Quillmere QM-49 bias diode
VB b 0 DC 5
R1 b a 4.3k
D1 a 0 qm_d
.model qm_d D(IS=4e-15 N=1.05 XTI=3.2)
{temp}"""


@pytest.mark.parametrize("temp_c", [85.0, -40.0])
def test_diode_bias_at_temperature_against_brentq(temp_c):
    is_t, nvt = at(law_is(4e-15, 1.05, 3.2, 1.11), temp_c), 1.05 * vt(temp_c)
    v = brentq(lambda v: (5.0 - v) / 4.3e3 - is_t * math.expm1(v / nvt), 0.0, 5.0,
               xtol=1e-15, rtol=1e-15)
    op = operating_point(read_netlist(DIODE.format(temp=f".temp {temp_c:g}\n")))
    assert op.temp_c == temp_c
    assert op.voltage("a") == pytest.approx(v, rel=REL)
    (d1,) = op.devices
    q = dict((name, value) for name, value, _ in d1.quantities)
    # small signal at the same temperature: gd = IS(T)·exp(V/(N·Vt(T)))/(N·Vt(T))
    assert q["gd"] == pytest.approx(is_t * math.exp(v / nvt) / nvt, rel=1e-7)


CE = """Quillmere QM-57 sensor preamplifier, gain stage
Q1 c b e qm_n
RE e 0 680
RC vcc c 3.3k
R1 vcc b 68k
R2 b 0 15k
C1 in b 4.7u
VIN in 0 AC 1
VCC vcc 0 DC 9
.model qm_n NPN(IS=1e-15 BF=200 BR=2 VAF=100 XTB=1.5 CJE=10p CJC=3p)
{temp}"""


def ebers_moll(vbe: float, vbc: float, is_: float, bf: float, br: float, temp_c: float
               ) -> tuple[float, float]:
    """(Ic, Ib) of the Ebers–Moll transport form with the forward Early effect (Ebers &
    Moll 1954; Early 1952), VAF = 100 V, NF = NR = 1."""
    i_f = is_ * math.expm1(vbe / vt(temp_c))
    i_r = is_ * math.expm1(vbc / vt(temp_c))
    return (i_f - i_r) * (1.0 - vbc / 100.0) - i_r / br, i_f / bf + i_r / br


@pytest.mark.parametrize("temp_c", [85.0, -40.0])
def test_common_emitter_bias_at_temperature_against_fsolve(temp_c):
    is_t = at(law_is(1e-15, 1, 3, 1.11), temp_c)
    gain = ((temp_c + ZERO_C) / 300.15) ** 1.5
    bf, br = 200.0 * gain, 2.0 * gain

    def kcl(x):
        vb, ve, vc = x
        ic, ib = ebers_moll(vb - ve, vb - vc, is_t, bf, br, temp_c)
        return [((9 - vb) / 68e3 - vb / 15e3 - ib) * 1e3, ((9 - vc) / 3.3e3 - ic) * 1e3,
                (ic + ib - ve / 680) * 1e3]

    # start: the hand estimate Ic ≈ 1.2 mA, Vbe = Vt·ln(Ic/IS(T))
    vbe = vt(temp_c) * math.log(1.2e-3 / is_t)
    start = np.array([0.82 + vbe, 0.82, 9 - 3.3e3 * 1.2e-3])
    x, info, _, msg = fsolve(kcl, start, xtol=1e-14, full_output=True)
    assert np.max(np.abs(info["fvec"])) < 1e-12, msg  # residual below a picoampere
    circuit, op = linearised(read_netlist(CE.format(temp=f".temp {temp_c:g}\n")))
    assert op.temp_c == temp_c
    for node, want in zip("bec", x):
        assert op.voltage(node) == pytest.approx(want, rel=REL)
    (q1,) = op.devices
    q = dict((name, value) for name, value, _ in q1.quantities)
    ic, _ = ebers_moll(x[0] - x[1], x[0] - x[2], is_t, bf, br, temp_c)
    assert q["Ic"] == pytest.approx(ic, rel=REL)
    # gm = ∂Ic/∂Vbe = IS(T)·exp(Vbe/Vt(T))/Vt(T)·(1 − Vbc/VAF), at the temperature
    gm = is_t * math.exp((x[0] - x[1]) / vt(temp_c)) / vt(temp_c) * (1 - (x[0] - x[2]) / 100)
    assert q["gm"] == pytest.approx(gm, rel=1e-7)


def test_common_emitter_moves_the_expected_way():
    # warmer: IS up, BF up (XTB > 0), Vbe down: more collector current, a lower collector
    ops = {t: operating_point(read_netlist(CE.format(temp=f".temp {t:g}\n")))
           for t in (-40.0, 27.0, 85.0)}
    vce = [ops[t].voltage("c") for t in (-40.0, 27.0, 85.0)]
    vbe = [ops[t].voltage("b") - ops[t].voltage("e") for t in (-40.0, 27.0, 85.0)]
    assert vce[0] > vce[1] > vce[2] and vbe[0] > vbe[1] > vbe[2]


MOS = """Quillmere QM-54 common-source stage
VDD vdd 0 DC 10
VG g 0 DC 2
RD vdd d 10k
M1 d g 0 0 qm_m W=20u L=2u
.model qm_m NMOS(LEVEL=1 KP=60u VTO=0.8 LAMBDA=0.02 GAMMA=0.4 PHI=0.65)
{temp}"""


@pytest.mark.parametrize("temp_c", [85.0, -40.0])
def test_common_source_bias_at_temperature_against_brentq(temp_c):
    kp = at(60e-6 * (T / T0) ** sp.Rational(-3, 2), temp_c)
    phi_t = law_vj(0.65)
    g, phi = sp.Rational("0.4"), sp.Rational("0.65")
    vto = at(sp.Rational("0.8") - g * sp.sqrt(phi) + (gap(T0) - gap(T)) / 2
             + (phi_t - phi) / 2 + g * sp.sqrt(phi_t), temp_c)
    beta = kp * 20 / 2

    def drain(vd):  # Shichman & Hodges (1968), vbs = 0
        vgst = 2.0 - vto
        if vd >= vgst:
            return 0.5 * beta * vgst ** 2 * (1 + 0.02 * vd)
        return beta * vd * (vgst - vd / 2) * (1 + 0.02 * vd)

    vd = brentq(lambda v: (10 - v) / 10e3 - drain(v), 0.0, 10.0, xtol=1e-15, rtol=1e-15)
    op = operating_point(read_netlist(MOS.format(temp=f".temp {temp_c:g}\n")))
    assert op.voltage("d") == pytest.approx(vd, rel=REL)
    q = dict((name, value) for name, value, _ in op.devices[0].quantities)
    assert q["Vth"] == pytest.approx(vto, rel=1e-12)


JFET = """Quillmere QM-55 self-biased JFET
VDD vdd 0 DC 15
RD vdd d 2.2k
RS s 0 470
J1 d 0 s qm_j
.model qm_j NJF(BETA=1.3m VTO=-2.2 VTOTC=-2.5m BETATCE=-0.5)
{temp}"""


@pytest.mark.parametrize("temp_c", [85.0, -40.0])
def test_jfet_bias_at_temperature_against_brentq(temp_c):
    dt = temp_c - 27.0
    vto, beta = -2.2 - 2.5e-3 * dt, 1.3e-3 * 1.01 ** (-0.5 * dt)
    # saturation (checked below): Id = BETA·(Vgs − VTO)², Vgs = −Id·RS; the gate
    # junction is reverse-biased and its leakage (IS = 1e-14 scaled) is far below the
    # reference's tolerance
    vs = brentq(lambda v: v / 470 - beta * (-v - vto) ** 2, 0.0, -vto, xtol=1e-15, rtol=1e-15)
    op = operating_point(read_netlist(JFET.format(temp=f".temp {temp_c:g}\n")))
    assert op.devices[0].region == "saturation"
    assert op.voltage("s") == pytest.approx(vs, rel=1e-7)


def test_the_device_functions_take_the_temperature():
    # the functions the solve uses scale the card's model themselves: the same result as
    # the scaled model's laws written here
    m = DiodeModel(IS=1e-14)
    is_t = at(law_is(1e-14, 1, 3, 1.11), 85.0)
    assert diode(m, 0.6, 85.0).i == pytest.approx(is_t * math.expm1(0.6 / vt(85.0)), rel=1e-13)
    q = bjt(BjtModel(IS=1e-16, XTB=2.0), 0.7, -3.0, -40.0)
    is_q = at(law_is(1e-16, 1, 3, 1.11), -40.0)
    bf = 100.0 * ((233.15) / 300.15) ** 2
    assert q.ib == pytest.approx(is_q * math.expm1(0.7 / vt(-40.0)) / bf
                                 + is_q * math.expm1(-3.0 / vt(-40.0)), rel=1e-12)
    mp = mos1(MosModel(KP=1e-4, VTO=1.0), 3.0, 5.0, 0.0, 1e-5, 1e-5, temp_c=85.0)
    kp = at(1e-4 * (T / T0) ** sp.Rational(-3, 2), 85.0)
    assert mp.id == pytest.approx(0.5 * kp * (3.0 - mp.vth) ** 2, rel=1e-13)
    # Meyer's (1971) triode gate capacitance with the threshold at 85 °C (GAMMA = 0:
    # VTO + (EG(TNOM) − EG(T))/2 + (PHI(T) − PHI)/2, PHI = 0.6 by default)
    vto = at(1 + (gap(T0) - gap(T)) / 2 + (law_vj(0.6) - sp.Rational("0.6")) / 2, 85.0)
    caps = mos1_capacitances(MosModel(KP=1e-4, VTO=1.0, TOX=20e-9), 3.0, 0.5, 0.0, 1e-5, 1e-5,
                             temp_c=85.0)
    c_ox = 3.9 * 8.8541878128e-12 / 20e-9 * 1e-10  # ε_ox/TOX·W·L (ε0: CODATA 2018)
    vgst = 3.0 - vto
    assert caps.cgs == pytest.approx(2 / 3 * c_ox * (1 - ((vgst - 0.5) / (2 * vgst - 0.5)) ** 2),
                                     rel=1e-12)
    jp = jfet(JfetModel(VTOTC=-2e-3), -1.0, 5.0, 85.0)
    assert jp.id == pytest.approx(1e-4 * (-1.0 - (-2.0 - 2e-3 * 58)) ** 2, rel=1e-13)


def test_samples_are_solved_at_the_circuit_temperature():
    # a Monte Carlo sample at the nominal part values is the nominal linearisation at
    # the netlist's .temp, not at 27 °C
    circuit = linearised(read_netlist(CE.format(temp=".temp 85\n")))[0]
    got = sampled_small_signal(circuit, {"R1": np.array([68e3])}, 1)
    np.testing.assert_allclose(got.tables["Q1"]["G"][0], np.array(circuit.element("Q1").g),
                               rtol=1e-9)
    cold = linearised(read_netlist(CE.format(temp="")))[0]
    assert not np.allclose(got.tables["Q1"]["G"][0], np.array(cold.element("Q1").g),
                           rtol=1e-3)


# ------------------------------------------------------------------ out of range

def test_a_model_taken_out_of_its_range_is_refused_at_the_device():
    # PHI(T) by the junction-potential law reaches zero near 280 °C for PHI = 0.65 V:
    # reading a netlist at .temp 400 refuses it (tests/bad_netlists has one too), and so
    # does a solve asked for 400 °C of a netlist read at 27 °C
    with pytest.raises(ElaborationError, match="M1: model qm_m") as info:
        read_netlist(MOS.format(temp=".temp 400\n"))
    assert info.value.code == "netlist-166" and info.value.span.line == 5
    assert "the potential PHI (from 0.65 V) becomes -0.2" in info.value.message
    with pytest.raises(OperatingPointError, match="M1: model qm_m") as info:
        operating_point(read_netlist(MOS.format(temp="")), 400.0)
    assert info.value.code == "netlist-166" and info.value.span.line == 5
    assert "at 400 °C (TNOM 27 °C)" in info.value.message
    # a saturation current that underflows a few kelvin above absolute zero
    with pytest.raises(TemperatureRangeError, match="saturation current IS"):
        at_temperature(DiodeModel(), -272.0)
    with pytest.raises(TemperatureRangeError, match="overflows"):
        at_temperature(BjtModel(XTB=1e5), 85.0)
    # a junction potential at or below zero matters only where a capacitance uses it
    hot = at_temperature(DiodeModel(VJ=0.3), 500.0)
    assert hot.VJ < 0 and hot.CJO == 0.0
    with pytest.raises(TemperatureRangeError, match="potential VJ"):
        at_temperature(DiodeModel(VJ=0.3, CJO=1e-12), 500.0)


# ------------------------------------------------------------------ the command line

#: a spec with one loose limit: the check runs and writes the operating point
SPEC = ('title = "QM stage at temperature"\nnetlist = "d.cir"\nsource = "{source}"\n'
        'output = "{output}"\nsweep = {{ start = "10", stop = "100k", points_per_decade = 5 }}\n'
        'limits = [{{ kind = "gain", band = ["1k", "10k"], min_db = -100 }}]\n')


def run_check(tmp_path: Path, netlist: str, source: str = "VIN", output: str = "c"
              ) -> tuple[int, dict | None]:
    """netcheck check on ``netlist``: the exit code and the JSON result (None if none)."""
    (tmp_path / "d.cir").write_text(netlist)
    (tmp_path / "d.toml").write_text(SPEC.format(source=source, output=output))
    out = tmp_path / "r.json"
    out.unlink(missing_ok=True)
    code = netcheck_main(["check", str(tmp_path / "d.toml"), "--jobs", "1", "--json", str(out)])
    return code, json.loads(out.read_text("utf-8")) if out.exists() else None


def test_the_cli_solves_the_devices_at_the_netlist_temperature(tmp_path, capsys):
    code, nominal = run_check(tmp_path, CE.format(temp=""))
    assert code in (OK, FAIL)
    code, warm = run_check(tmp_path, CE.format(temp=".temp 85\n"))
    assert code in (OK, FAIL)
    a = nominal["specs"][0]["operating_point"]
    b = warm["specs"][0]["operating_point"]
    assert (a["temperature_c"], b["temperature_c"]) == (27.0, 85.0)
    nodes = {n["node"]: n["volts"] for n in b["nodes"]}
    # the same operating point as the library's at 85 °C (itself checked against fsolve)
    op = operating_point(read_netlist(CE.format(temp=".temp 85\n")))
    assert nodes["c"] == op.voltage("c")
    assert nodes["c"] < {n["node"]: n["volts"] for n in a["nodes"]}["c"] - 0.05
    assert "semiconductor devices are solved there" in capsys.readouterr().out


def test_the_cli_refuses_a_model_out_of_range_with_file_and_line(tmp_path, capsys):
    code, _ = run_check(tmp_path, MOS.format(temp=".temp 400\n") + "VAC g2 0 AC 1\n",
                        "VAC", "d")
    out = capsys.readouterr()
    text = out.out + out.err
    assert code == BAD_INPUT
    assert "d.cir:5:1: error netlist-166" in text and "Traceback" not in text
