"""Device equations (netcheck.mna.devices) against references written here.

Every derivative is checked against sympy's differentiation of the published formula,
written out independently in this file (Shockley 1949; Ebers & Moll 1954 in transport
form with Early 1952; Shichman & Hodges 1968), evaluated to 30 digits. Depletion charges
are sympy's integral of the capacitance law, so the code's closed forms are checked
against an integration the test does itself. The closed-form small-signal results are
the textbook ones (Sedra & Smith, Microelectronic Circuits: gm = Ic/Vt, rπ = β/gm,
ro = VA/Ic; MOS gm = √(2·k'·W/L·Id), χ = γ/(2√(2φF + VSB)); JFET gm = 2·IDSS/|VP|·
(1 − VGS/VP)), quoted from memory.
"""

from __future__ import annotations

import math

import pytest
import sympy as sp
from scipy.optimize import brentq

from netcheck.mna.devices import (bjt, bounded_junction_voltage, critical_voltage,
                                  depletion_charge, diode, jfet, mos1, mos1_capacitances,
                                  thermal_voltage)
from netcheck.netlist.device_models import BjtModel, DiodeModel, JfetModel, MosModel

T = 27.0
#: kT/q at 27 °C written out from the exact SI 2019 constants (BIPM SI Brochure, 9th ed.)
VT = 1.380649e-23 * (27.0 + 273.15) / 1.602176634e-19
RTOL = 1e-11


def num(expr, subs) -> float:
    return float(sp.N(expr.subs(subs), 30))


def close(got, want, rtol=RTOL, atol=1e-30):
    assert got == pytest.approx(want, rel=rtol, abs=atol)


def below(x: float) -> float:
    return math.nextafter(x, -math.inf)


def above(x: float) -> float:
    return math.nextafter(x, math.inf)


# ------------------------------------------------------------------ thermal voltage

def test_thermal_voltage_from_the_exact_constants():
    # k = 1.380649e-23 J/K and q = 1.602176634e-19 C are exact (SI 2019); kT/q at
    # 300.15 K is 25.865 mV (handbook value to four figures)
    assert thermal_voltage(27.0) == pytest.approx(VT, rel=1e-15)
    assert thermal_voltage(27.0) == pytest.approx(25.865e-3, abs=0.5e-6)
    assert thermal_voltage(-273.15) == 0.0
    # proportional to the absolute temperature
    close(thermal_voltage(100.0) / thermal_voltage(0.0), 373.15 / 273.15, 1e-14)


# ------------------------------------------------------------------ diode

V, CJ0, VJ, M, FC, IS, N, TT = sp.symbols("V CJ0 VJ M FC IS N TT", real=True)
Vt_ = sp.Rational(1380649, 10**29) * sp.Rational(30015, 100) / sp.Rational(1602176634, 10**28)


def depletion_reference(cj0, vj, m, fc):
    """(Q(V), C(V)) as sympy piecewise pieces: C = CJO(1 − V/VJ)^−M below FC·VJ, its
    tangent line above (the usual SPICE continuation, from memory); Q = ∫₀^V C."""
    v = sp.Symbol("v", real=True)
    c_low = cj0 * (1 - v / vj) ** (-m)
    vf = fc * vj
    c_f = c_low.subs(v, vf)
    c_high = c_f + sp.diff(c_low, v).subs(v, vf) * (v - vf)
    q_low = sp.integrate(c_low, (v, 0, V))
    q_f = sp.integrate(c_low, (v, 0, vf))
    q_high = q_f + sp.integrate(c_high, (v, vf, V))
    return (q_low, c_low.subs(v, V)), (q_high, c_high.subs(v, V))


@pytest.mark.parametrize("m", [sp.Rational(1, 2), sp.Rational(1, 3), sp.Integer(1),
                               sp.Rational(3, 2)])
@pytest.mark.parametrize("v", [-5.0, -0.3, 0.0, 0.2, 0.39, 0.41, 0.7, 2.0])
def test_depletion_charge_is_the_integral_of_the_capacitance_law(m, v):
    cj0, vj, fc = sp.Rational(2, 10**12), sp.Rational(8, 10), sp.Rational(1, 2)
    (ql, cl), (qh, ch) = depletion_reference(cj0, vj, m, fc)
    q, c = depletion_charge(v, float(cj0), float(vj), float(m), float(fc))
    vs = sp.Float(v, 30)
    if v < 0.4:
        close(q, num(ql, {V: vs}), 1e-12, 1e-30)
        close(c, num(cl, {V: vs}), 1e-12)
    else:
        close(q, num(qh, {V: vs}), 1e-12, 1e-30)
        close(c, num(ch, {V: vs}), 1e-12)


def test_depletion_textbook_values():
    # abrupt junction (M = 1/2): C(0) = CJO, and C = CJO/2 at V = −3·VJ
    # (C ∝ (1 − V/VJ)^−1/2, Shockley 1949)
    assert depletion_charge(0.0, 1e-12, 0.7, 0.5, 0.5) == (0.0, 1e-12)
    close(depletion_charge(-3 * 0.7, 1e-12, 0.7, 0.5, 0.5)[1], 0.5e-12, 1e-14)
    assert depletion_charge(0.3, 0.0, 0.7, 0.5, 0.5) == (0.0, 0.0)


@pytest.mark.parametrize("m", [0.33, 0.5, 1.0, 2.0])
@pytest.mark.parametrize("fc", [0.0, 0.5, 0.95])
def test_depletion_charge_and_capacitance_are_continuous_at_fc_vj(m, fc):
    vj, cj0 = 0.75, 3e-12
    edge = fc * vj
    lo, hi = depletion_charge(below(edge), cj0, vj, m, fc), depletion_charge(edge, cj0, vj, m, fc)
    close(lo[0], hi[0], 1e-12, 1e-27)
    close(lo[1], hi[1], 1e-12)


def diode_reference():
    i = IS * (sp.exp(V / (N * Vt_)) - 1)
    return i, sp.diff(i, V)


@pytest.mark.parametrize("v", [-2.0, -0.1, 0.0, 0.3, 0.55, 0.72, 0.9])
@pytest.mark.parametrize("n", [1.0, 1.8])
def test_diode_current_conductance_charge_capacitance(v, n):
    model = DiodeModel(IS=2.5e-14, N=n, CJO=4e-12, VJ=0.8, M=0.4, FC=0.5, TT=5e-9)
    i_ref, g_ref = diode_reference()
    subs = {IS: sp.Float("2.5e-14", 30), N: sp.Float(n, 30), V: sp.Float(v, 30)}
    (ql, cl), (qh, ch) = depletion_reference(sp.Rational(4, 10**12), sp.Rational(8, 10),
                                             sp.Rational(2, 5), sp.Rational(1, 2))
    qd, cd = (ql, cl) if v < 0.4 else (qh, ch)
    q_ref = qd + sp.Rational(5, 10**9) * i_ref      # diffusion charge TT·I
    got = diode(model, v, T)
    close(got.i, num(i_ref, subs))
    close(got.g, num(g_ref, subs))
    close(got.q, num(q_ref, subs), 1e-11, 1e-30)
    close(got.c, num(sp.diff(q_ref, V), subs), 1e-11)


def test_diode_at_600_mv_textbook():
    # I = IS(exp(V/Vt) − 1) at 0.6 V, IS = 1e-14 A, N = 1, 27 °C (Shockley 1949):
    # about 0.118 mA; the small-signal resistance is Vt/(I + IS) (≈ 220 Ω)
    want = 1e-14 * math.expm1(0.6 / VT)
    got = diode(DiodeModel(IS=1e-14), 0.6, 27.0)
    close(got.i, want, 1e-13)
    assert 1.1e-4 < got.i < 1.25e-4
    close(1 / got.g, VT / (want + 1e-14), 1e-13)


# ------------------------------------------------------------------ bipolar

VBE, VBC = sp.symbols("VBE VBC", real=True)


def bjt_reference(mod: BjtModel):
    """Ebers–Moll transport form, Early factor (1 − Vbc/VAF) as written in the test."""
    r = lambda x: sp.Float(x, 30)  # noqa: E731
    IF = r(mod.IS) * (sp.exp(VBE / (r(mod.NF) * Vt_)) - 1)
    IR = r(mod.IS) * (sp.exp(VBC / (r(mod.NR) * Vt_)) - 1)
    early = 1 - VBC / r(mod.VAF) if math.isfinite(mod.VAF) else 1
    ic = (IF - IR) * early - IR / r(mod.BR)
    ib = IF / r(mod.BF) + IR / r(mod.BR)
    fc = sp.Rational(str(mod.FC))
    (qel, _), (qeh, _) = depletion_reference(sp.Rational(str(mod.CJE)), sp.Rational(str(mod.VJE)),
                                              sp.Rational(str(mod.MJE)), fc)
    (qcl, _), (qch, _) = depletion_reference(sp.Rational(str(mod.CJC)), sp.Rational(str(mod.VJC)),
                                              sp.Rational(str(mod.MJC)), fc)
    return ic, ib, IF * early * r(mod.TF), IR * r(mod.TR), (qel, qeh), (qcl, qch)


BJT = BjtModel(IS=3e-16, BF=150, BR=2.5, NF=1.02, NR=1.1, VAF=60.0, CJE=1.2e-12, VJE=0.8,
               MJE=0.35, CJC=0.6e-12, VJC=0.7, MJC=0.45, FC=0.5, TF=0.4e-9, TR=20e-9)


@pytest.mark.parametrize("vbe,vbc,region", [
    (0.68, -4.0, "forward-active"), (0.75, 0.55, "saturated"), (-0.2, 0.6, "reverse-active"),
    (-1.0, -8.0, "off"), (0.3, 0.34, "saturated"), (0.1, -0.05, "forward-active"),
    # a collector junction 0.2 V forward carries IR ≈ 3e-9·IF (Vce = 0.5 V): it still
    # amplifies (common practice puts Vce(sat) at 0.2–0.3 V, no source)
    (0.7, 0.2, "forward-active")])
@pytest.mark.parametrize("polarity", [1, -1])
def test_bjt_derivatives_against_sympy(vbe, vbc, region, polarity):
    from dataclasses import replace
    mod = replace(BJT, polarity=polarity)
    ic, ib, qtf, qtr, (qel, qeh), (qcl, qch) = bjt_reference(mod)
    qbe = (qel if vbe < 0.4 else qeh).subs(V, VBE) + qtf
    qbc = (qcl if vbc < 0.35 else qch).subs(V, VBC) + qtr
    # PNP: I_p(V) = −I_n(−V), Q_p(V) = −Q_n(−V) (the sign convention documented)
    subs = {VBE: sp.Float(vbe, 30), VBC: sp.Float(vbc, 30)}
    got = bjt(mod, polarity * vbe, polarity * vbc, T)
    assert got.region == region
    p = polarity
    for value, expr in [(got.ic, p * ic), (got.ib, p * ib), (got.qbe, p * qbe),
                        (got.qbc, p * qbc)]:
        close(value, num(expr, subs), 1e-11, 1e-28)
    # derivatives w.r.t. the terminal voltages: d/dV[p·f(p·V)] = f'(p·V)
    for value, expr, var in [(got.dic_dvbe, ic, VBE), (got.dic_dvbc, ic, VBC),
                             (got.dib_dvbe, ib, VBE), (got.dib_dvbc, ib, VBC),
                             (got.cbe, qbe, VBE), (got.cbe_bc, qbe, VBC),
                             (got.cbc, qbc, VBC)]:
        close(value, num(sp.diff(expr, var), subs), 1e-11, 1e-28)


def test_bjt_textbook_small_signal_values():
    # forward active, no Early effect: gm = Ic/Vt and rπ = β/gm (Sedra & Smith);
    # exact up to the IS-sized terms of the reverse junction
    mod = BjtModel(IS=1e-15, BF=120)
    got = bjt(mod, 0.65, -5.0, T)
    close(got.dic_dvbe, got.ic / VT, 1e-9)
    close(1 / got.dib_dvbe, 120 / got.dic_dvbe, 1e-12)
    # with VAF: output conductance ∂Ic/∂Vce (Vbe held, so Vbc = Vbe − Vce falls) is
    # 1/ro with ro = VA/I'c, I'c the current with the Early factor taken out
    early = bjt(BjtModel(IS=1e-15, BF=120, VAF=50.0), 0.65, -5.0, T)
    gce = -early.dic_dvbc
    close(gce, got.ic / 50.0, 1e-9)


def test_bjt_capacitances_textbook():
    # forward transit: the diffusion capacitance is TF·gm (Sedra & Smith Cde = τF·gm)
    mod = BjtModel(IS=1e-15, TF=0.3e-9)
    got = bjt(mod, 0.7, -3.0, T)
    close(got.cbe, 0.3e-9 * got.dic_dvbe, 1e-9)
    assert got.cbe_bc == 0.0          # no Early effect, no trans-capacitance


def test_bjt_continuous_across_the_depletion_boundaries():
    vf_e, vf_c = BJT.FC * BJT.VJE, BJT.FC * BJT.VJC
    a, b = bjt(BJT, below(vf_e), -1.0, T), bjt(BJT, vf_e, -1.0, T)
    c, d = bjt(BJT, 0.5, below(vf_c), T), bjt(BJT, 0.5, vf_c, T)
    for x, y in ((a, b), (c, d)):
        for name in ("ic", "ib", "dic_dvbe", "dic_dvbc", "qbe", "qbc", "cbe", "cbe_bc", "cbc"):
            close(getattr(x, name), getattr(y, name), 1e-9, 1e-28)


# ------------------------------------------------------------------ MOS level 1

VGS, VDS, VBS = sp.symbols("VGS VDS VBS", real=True)


def mos_reference(kp, w, l, vto, lam, gamma, phi, region):
    """Shichman–Hodges drain current of one region (n-type, forward), with the body
    effect VT = VTO + γ(√(φ − VBS) − √φ)."""
    beta = kp * w / l
    vt = vto + gamma * (sp.sqrt(phi - VBS) - sp.sqrt(phi))
    if region == "saturation":
        return beta / 2 * (VGS - vt) ** 2 * (1 + lam * VDS)
    if region == "triode":
        return beta * VDS * (VGS - vt - VDS / 2) * (1 + lam * VDS)
    return sp.Integer(0) * VGS


MOS = MosModel(KP=110e-6, VTO=0.7, LAMBDA=0.04, GAMMA=0.45, PHI=0.7, W=20e-6, L=2e-6)
MOS_ARGS = (sp.Float("110e-6", 30), sp.Float("20e-6", 30), sp.Float("2e-6", 30),
            sp.Float("0.7", 30), sp.Float("0.04", 30), sp.Float("0.45", 30), sp.Float("0.7", 30))


@pytest.mark.parametrize("vgs,vds,vbs,region", [
    (1.5, 2.0, 0.0, "saturation"), (2.2, 0.3, -1.0, "triode"), (1.2, 1.0, -0.5, "saturation"),
    (0.5, 1.0, 0.0, "cutoff"), (1.6, 0.05, -2.0, "triode"), (1.0, 0.5, -2.0, "cutoff"), (3.0, 5.0, -0.3, "saturation")])
@pytest.mark.parametrize("polarity", [1, -1])
def test_mos_forward_derivatives_against_sympy(vgs, vds, vbs, region, polarity):
    from dataclasses import replace
    mod = replace(MOS, polarity=polarity, VTO=polarity * MOS.VTO)  # PMOS writes VTO < 0
    idn = mos_reference(*MOS_ARGS, region)
    subs = {VGS: sp.Float(vgs, 30), VDS: sp.Float(vds, 30), VBS: sp.Float(vbs, 30)}
    p = polarity
    got = mos1(mod, p * vgs, p * vds, p * vbs)
    assert (got.region, got.reversed) == (region, False)
    close(got.id, p * num(idn, subs), 1e-11, 1e-25)
    close(got.gm, num(sp.diff(idn, VGS), subs), 1e-11, 1e-25)
    close(got.gds, num(sp.diff(idn, VDS), subs), 1e-11, 1e-25)
    close(got.gmbs, num(sp.diff(idn, VBS), subs), 1e-11, 1e-25)


@pytest.mark.parametrize("vgs,vds,vbs,region", [
    (1.5, -0.2, -0.5, "triode"), (0.4, -2.0, -2.5, "saturation"), (0.0, -3.0, -3.5, "saturation"),
    (-0.5, -0.1, -0.2, "cutoff")])
def test_mos_reversed_derivatives_against_sympy(vgs, vds, vbs, region):
    # drain and source swap roles: id = −f(VGS − VDS, −VDS, VBS − VDS) (documented); the
    # points keep the body reverse-biased to the drain (VBS − VDS < 0), where the reference
    # root √(φ − VBD) holds
    f = mos_reference(*MOS_ARGS, region)
    idr = -f.subs({VGS: VGS - VDS, VDS: -VDS, VBS: VBS - VDS}, simultaneous=True)
    subs = {VGS: sp.Float(vgs, 30), VDS: sp.Float(vds, 30), VBS: sp.Float(vbs, 30)}
    got = mos1(MOS, vgs, vds, vbs)
    assert (got.region, got.reversed) == (region, True)
    for value, expr in [(got.id, idr), (got.gm, sp.diff(idr, VGS)),
                        (got.gds, sp.diff(idr, VDS)), (got.gmbs, sp.diff(idr, VBS))]:
        close(value, num(expr, subs), 1e-11, 1e-25)


def test_mos_forward_bias_of_the_body_continues_the_root_smoothly():
    # above VBS = 0 the root √(φ − VBS) is continued by its tangent √φ − VBS/(2√φ)
    # (the usual SPICE continuation, from memory), floored at 0
    idn = mos_reference(*MOS_ARGS, "saturation")
    tangent = idn.subs(sp.sqrt(MOS_ARGS[6] - VBS), sp.sqrt(MOS_ARGS[6]) - VBS / (2 * sp.sqrt(MOS_ARGS[6])))
    subs = {VGS: sp.Float(1.5, 30), VDS: sp.Float(2.0, 30), VBS: sp.Float(0.3, 30)}
    got = mos1(MOS, 1.5, 2.0, 0.3)
    close(got.id, num(tangent, subs))
    close(got.gmbs, num(sp.diff(tangent, VBS), subs))
    # at VBS = 0 threshold and its slope agree from both sides
    lo, hi = mos1(MOS, 1.5, 2.0, 0.0), mos1(MOS, 1.5, 2.0, above(0.0))
    close(lo.gmbs, hi.gmbs, 1e-9)
    # far forward: the root is 0, VT = VTO − γ√φ and the body has no more effect
    far = mos1(MOS, 1.5, 2.0, 2.0)
    close(far.vth, 0.7 - 0.45 * math.sqrt(0.7), 1e-14)
    assert far.gmbs == 0.0


def test_mos_textbook_small_signal_values():
    # saturation, λ = 0: gm = √(2·k'·W/L·Id) (Sedra & Smith), here k' = KP
    mod = MosModel(KP=200e-6, VTO=0.5, W=10e-6, L=1e-6)
    got = mos1(mod, 1.1, 2.0, 0.0)
    close(got.gm, math.sqrt(2 * 200e-6 * 10 * got.id), 1e-12)
    close(got.id, 0.5 * 200e-6 * 10 * 0.6 ** 2, 1e-12)        # ½k'(W/L)VOV²
    # channel-length modulation: ro = 1/(λ·I'd), I'd the current without it
    lam = mos1(MosModel(KP=200e-6, VTO=0.5, W=10e-6, L=1e-6, LAMBDA=0.05), 1.1, 2.0, 0.0)
    close(1 / lam.gds, 1 / (0.05 * got.id), 1e-12)
    # triode at VDS → 0: rDS = 1/(k'(W/L)VOV) (Sedra & Smith)
    close(mos1(mod, 1.1, 0.0, 0.0).gds, 200e-6 * 10 * 0.6, 1e-12)
    # body effect: gmb = χ·gm, χ = γ/(2√(2φF + VSB)); SPICE's PHI stands for 2φF
    body = mos1(MOS, 1.8, 3.0, -1.2)
    close(body.gmbs / body.gm, 0.45 / (2 * math.sqrt(0.7 + 1.2)), 1e-12)


EDGE = 1e-12  # volts either side of a boundary


def assert_continuous(x, y, names):
    # 1 pV apart, a continuous quantity moves by ~1e-12·(its slope); a jump would be of
    # the size of the quantities themselves (mA, mS here)
    for name in names:
        close(getattr(x, name), getattr(y, name), 1e-9, 1e-12)


@pytest.mark.parametrize("vbs", [0.0, -1.0, 0.2])
@pytest.mark.parametrize("polarity", [1, -1])
def test_mos_continuous_at_every_region_boundary(vbs, polarity):
    # current and every conductance agree on the two sides of: the saturation edge
    # vds = vgs − VT, the cutoff edge vgs = VT, and vds = 0 (the drain/source swap)
    from dataclasses import replace
    mod = replace(MOS, polarity=polarity, VTO=polarity * MOS.VTO)
    p = polarity
    sphi = math.sqrt(MOS.PHI)   # VT written here: √(φ − vbs), tangent above vbs = 0
    root = math.sqrt(MOS.PHI - vbs) if vbs <= 0 else sphi - vbs / (2 * sphi)
    vth = MOS.VTO + MOS.GAMMA * (root - sphi)
    close(mos1(mod, p * 3.0, p * 1.0, p * vbs).vth, p * vth, 1e-14)
    names = ("id", "gm", "gds", "gmbs")
    vgs = vth + 0.8
    tri, sat = (mos1(mod, p * vgs, p * (0.8 - EDGE), p * vbs),
                mos1(mod, p * vgs, p * (0.8 + EDGE), p * vbs))
    assert (tri.region, sat.region) == ("triode", "saturation")
    assert_continuous(tri, sat, names)
    off, on = mos1(mod, p * (vth - EDGE), p * 1.0, p * vbs), mos1(mod, p * (vth + EDGE), p * 1.0, p * vbs)
    assert (off.region, on.region) == ("cutoff", "saturation")
    assert_continuous(off, on, names)
    fwd, rev = mos1(mod, p * vgs, p * EDGE, p * vbs), mos1(mod, p * vgs, -p * EDGE, p * vbs)
    assert (fwd.reversed, rev.reversed) == (False, True)
    assert_continuous(fwd, rev, names)


def test_mos_instance_geometry_overrides_the_model():
    a = mos1(MOS, 1.5, 2.0, 0.0, w=40e-6, l=2e-6)
    close(a.id, 2 * mos1(MOS, 1.5, 2.0, 0.0).id, 1e-14)   # Id ∝ W/L


# Meyer (1971) gate capacitances, written here from the published form (textbook
# statement, from memory): C = Cox·W·L, Cox = ε_ox/tox with ε_ox = 3.9·ε0 (CODATA 2018 ε0)
CAPS = MosModel(KP=110e-6, VTO=0.7, GAMMA=0.45, PHI=0.7, W=20e-6, L=2e-6, TOX=25e-9,
                CGSO=0.2e-9, CGDO=0.25e-9, CGBO=0.1e-9)
C_OX = 3.9 * 8.8541878128e-12 / 25e-9 * 20e-6 * 2e-6
OVERLAP = (0.2e-9 * 20e-6, 0.25e-9 * 20e-6, 0.1e-9 * 2e-6)


def meyer(vgst, vds):
    if vgst <= 0:
        return 0.0, 0.0, C_OX
    if vds >= vgst:
        return 2 / 3 * C_OX, 0.0, 0.0
    return (2 / 3 * C_OX * (1 - ((vgst - vds) / (2 * vgst - vds)) ** 2),
            2 / 3 * C_OX * (1 - (vgst / (2 * vgst - vds)) ** 2), 0.0)


@pytest.mark.parametrize("vgs,vds,vbs", [(1.5, 2.0, 0.0), (2.0, 0.3, -1.0), (0.3, 1.0, 0.0),
                                         (1.6, 0.05, -2.0), (3.0, 1.0, -0.5)])
@pytest.mark.parametrize("polarity", [1, -1])
def test_meyer_capacitances_against_the_published_form(vgs, vds, vbs, polarity):
    from dataclasses import replace
    mod = replace(CAPS, polarity=polarity, VTO=polarity * CAPS.VTO)
    vth = 0.7 + 0.45 * (math.sqrt(0.7 - vbs) - math.sqrt(0.7))
    want = [a + b for a, b in zip(meyer(vgs - vth, vds), OVERLAP)]
    got = mos1_capacitances(mod, polarity * vgs, polarity * vds, polarity * vbs)
    close(list(got), want, 1e-12, 1e-30)


def test_meyer_known_values_and_continuity():
    # at vds = 0 the channel splits evenly: cgs = cgd = ½·Cox·W·L; in saturation ⅔ and 0
    # (Meyer 1971; textbook values, from memory)
    bare = MosModel(VTO=0.7, W=20e-6, L=2e-6, TOX=25e-9)
    at0 = mos1_capacitances(bare, 1.5, 0.0, 0.0)
    close(at0.cgs, C_OX / 2, 1e-13)
    close(at0.cgd, C_OX / 2, 1e-13)
    sat = mos1_capacitances(bare, 1.5, 3.0, 0.0)
    assert sat == pytest.approx((2 / 3 * C_OX, 0.0, 0.0), rel=1e-13, abs=1e-30)
    # continuous at the saturation edge (vds = vgst = 0.8 V)
    lo, hi = mos1_capacitances(bare, 1.5, 0.8 - EDGE, 0.0), mos1_capacitances(bare, 1.5, 0.8 + EDGE, 0.0)
    assert lo == pytest.approx(hi, rel=1e-9, abs=1e-24)
    # the ends swap roles when vds < 0: cgs and cgd exchange (body at the lower end)
    fwd, rev = mos1_capacitances(bare, 1.5, 0.3, 0.0), mos1_capacitances(bare, 1.2, -0.3, -0.3)
    close(rev.cgs, fwd.cgd, 1e-13)
    close(rev.cgd, fwd.cgs, 1e-13)
    # Meyer's piecewise model jumps at vgs = VT: the whole gate goes from the body
    # (cutoff) to the channel; stated in docs/devices.md
    off, on = mos1_capacitances(bare, 0.7 - EDGE, 1.0, 0.0), mos1_capacitances(bare, 0.7 + EDGE, 1.0, 0.0)
    assert (off.cgs, off.cgb) == (0.0, pytest.approx(C_OX, rel=1e-13))
    assert (on.cgs, on.cgb) == (pytest.approx(2 / 3 * C_OX, rel=1e-13), 0.0)
    # no TOX, no intrinsic part: the overlaps alone
    assert mos1_capacitances(replace_tox(CAPS), 1.5, 2.0, 0.0) == pytest.approx(OVERLAP, rel=1e-14)


def replace_tox(model):
    from dataclasses import replace
    return replace(model, TOX=math.inf)


# ------------------------------------------------------------------ JFET

def jfet_reference(beta, vto, lam, region):
    vgst = VGS - vto
    if region == "saturation":
        return beta * vgst ** 2 * (1 + lam * VDS)
    if region == "triode":
        return beta * VDS * (2 * vgst - VDS) * (1 + lam * VDS)
    return sp.Integer(0) * VGS


JF = JfetModel(BETA=1.3e-3, VTO=-2.2, LAMBDA=0.02, IS=5e-15, N=1.1, CGS=3e-12, CGD=1.5e-12,
               PB=0.9, M=0.45, FC=0.5)
JF_ARGS = (sp.Float("1.3e-3", 30), sp.Float("-2.2", 30), sp.Float("0.02", 30))


@pytest.mark.parametrize("vgs,vds,region", [
    (-1.0, 5.0, "saturation"), (-0.5, 0.4, "triode"), (-3.0, 2.0, "cutoff"), (0.2, 1.0, "triode"),
    (-1.0, -0.3, "triode"), (-3.5, -4.0, "saturation")])
@pytest.mark.parametrize("polarity", [1, -1])
def test_jfet_derivatives_against_sympy(vgs, vds, region, polarity):
    from dataclasses import replace
    mod = replace(JF, polarity=polarity)     # VTO is written in the device's own frame
    f = jfet_reference(*JF_ARGS, region)
    idn = f if vds >= 0 else -f.subs({VGS: VGS - VDS, VDS: -VDS}, simultaneous=True)
    subs = {VGS: sp.Float(vgs, 30), VDS: sp.Float(vds, 30)}
    p = polarity
    got = jfet(mod, p * vgs, p * vds, T)
    assert (got.region, got.reversed) == (region, vds < 0)
    close(got.id, p * num(idn, subs), 1e-11, 1e-25)
    close(got.gm, num(sp.diff(idn, VGS), subs), 1e-11, 1e-25)
    close(got.gds, num(sp.diff(idn, VDS), subs), 1e-11, 1e-25)
    # gate junctions: Shockley diodes, gate–source at VGS and gate–drain at VGS − VDS
    i_gs = sp.Float("5e-15", 30) * (sp.exp(VGS / (sp.Float("1.1", 30) * Vt_)) - 1)
    close(got.gate_source.i, p * num(i_gs, subs), 1e-11, 1e-30)
    close(got.gate_source.g, num(sp.diff(i_gs, VGS), subs), 1e-11, 1e-30)
    i_gd = i_gs.subs(VGS, VGS - VDS)
    close(got.gate_drain.i, p * num(i_gd, subs), 1e-11, 1e-30)
    (ql, cl), (qh, ch) = depletion_reference(sp.Rational(3, 10**12), sp.Rational(9, 10),
                                             sp.Rational(45, 100), sp.Rational(1, 2))
    q, c = (ql, cl) if vgs < 0.45 else (qh, ch)
    close(got.gate_source.q, p * num(q.subs(V, VGS), subs), 1e-11, 1e-30)
    close(got.gate_source.c, num(c.subs(V, VGS), subs), 1e-11, 1e-30)


def test_jfet_textbook_gm():
    # saturation, λ = 0: gm = 2·IDSS/|VP|·(1 − VGS/VP), IDSS = BETA·VP² (Sedra & Smith)
    mod = JfetModel(BETA=1e-3, VTO=-3.0)
    got = jfet(mod, -1.2, 6.0, T)
    idss = 1e-3 * 9.0
    close(got.id, idss * (1 - (-1.2) / (-3.0)) ** 2, 1e-12)
    close(got.gm, 2 * idss / 3.0 * (1 - (-1.2) / (-3.0)), 1e-12)


@pytest.mark.parametrize("polarity", [1, -1])
def test_jfet_continuous_at_every_region_boundary(polarity):
    from dataclasses import replace
    mod = replace(JF, polarity=polarity)
    p, vgs, names = polarity, -1.0, ("id", "gm", "gds")
    edge = vgs - JF.VTO               # vds at the saturation edge (1.2 V)
    tri, sat = jfet(mod, p * vgs, p * (edge - EDGE), T), jfet(mod, p * vgs, p * (edge + EDGE), T)
    assert (tri.region, sat.region) == ("triode", "saturation")
    assert_continuous(tri, sat, names)
    off, on = jfet(mod, p * (JF.VTO - EDGE), p * 1.0, T), jfet(mod, p * (JF.VTO + EDGE), p * 1.0, T)
    assert (off.region, on.region) == ("cutoff", "saturation")
    assert_continuous(off, on, names)
    fwd, rev = jfet(mod, p * vgs, p * EDGE, T), jfet(mod, p * vgs, -p * EDGE, T)
    assert (fwd.reversed, rev.reversed) == (False, True)
    assert_continuous(fwd, rev, names)


# ------------------------------------------------------------------ limiting

def test_critical_voltage_formula():
    # Vcrit = N·Vt·ln(N·Vt/(√2·IS)), the voltage of greatest curvature of the exponential
    for is_, n in ((1e-14, 1.0), (1e-9, 2.0)):
        nvt = n * VT
        close(critical_voltage(is_, n, T), nvt * math.log(nvt / (math.sqrt(2) * is_)), 1e-14)
    assert 0.7 < critical_voltage(1e-14, 1.0, T) < 0.8


def test_a_huge_step_is_cut_to_a_finite_bounded_one():
    n_vt, vcrit = VT, critical_voltage(1e-14, 1.0, T)
    got = bounded_junction_voltage(80.0, 0.65, n_vt, vcrit)
    assert math.isfinite(got) and vcrit < got < 1.2
    # the current there equals the Newton (straight-line) prediction from max(old, Vcrit):
    # IS·exp(v/nVt) = IS·exp(b/nVt)·(1 + (v_new − b)/nVt), b = Vcrit here
    close(math.exp((got - vcrit) / n_vt), 1 + (80.0 - vcrit) / n_vt, 1e-12)
    assert math.isfinite(diode(DiodeModel(IS=1e-14), got, T).i)
    with pytest.raises(OverflowError):           # what the limiting saves us from
        diode(DiodeModel(IS=1e-14), 80.0, T)
    # from an old point above Vcrit the base is the old point
    got = bounded_junction_voltage(3.0, 0.8, n_vt, vcrit)
    close(math.exp((got - 0.8) / n_vt), 1 + 2.2 / n_vt, 1e-12)


@pytest.mark.parametrize("new,old", [(0.62, 0.6), (0.5, -3.0), (0.2, 0.9), (-40.0, 0.7),
                                     (0.8, 0.8 - 1.9 * VT)])
def test_small_falling_and_low_steps_pass_unchanged(new, old):
    assert bounded_junction_voltage(new, old, VT, critical_voltage(1e-14, 1.0, T)) == new


def test_newton_with_limiting_solves_a_diode_and_resistor():
    # 5 V through 1 kΩ into a diode: (5 − v)/1k = IS(exp(v/Vt) − 1). Reference: brentq
    # on that equation; Newton from v = 0 with the limiting converges to it
    mod = DiodeModel(IS=1e-14)
    f = lambda v: (5.0 - v) / 1e3 - 1e-14 * math.expm1(v / VT)  # noqa: E731
    want = brentq(f, 0.0, 1.0, xtol=1e-15)
    vcrit, v = critical_voltage(1e-14, 1.0, T), 0.0
    for _ in range(100):
        d = diode(mod, v, T)
        proposed = v + ((5.0 - v) / 1e3 - d.i) / (1e-3 + d.g)
        new = bounded_junction_voltage(proposed, v, VT, vcrit)
        if abs(new - v) < 1e-13:
            break
        v = new
    close(v, want, 1e-10)
