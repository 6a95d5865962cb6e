"""The DC operating point and small-signal response of diode and bipolar circuits
(netcheck.mna.bias) against references written in this file.

Every reference is independent of netcheck: the device laws are written out here from
their published form (Shockley 1949 for the junction; Ebers & Moll 1954 in transport
form with the forward Early effect, Early 1952), the DC equations are solved with scipy
(``brentq``, ``fsolve``), and the small-signal response is either a textbook closed form
(Sedra & Smith, *Microelectronic Circuits*: rd = N·Vt/(Id + IS), gm, rπ, ro of the
hybrid-π model, quoted from memory) or a nodal solve written here in numpy from the
hybrid-π elements at the solved point.

Vt = k·T/q with the exact SI 2019 constants (BIPM SI Brochure, 9th ed.), T = 300.15 K.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import brentq, fsolve

from netcheck.api import read_netlist
from netcheck.mna.bias import linearised, operating_point

K_B, Q_E, T_K = 1.380649e-23, 1.602176634e-19, 300.15
VT = K_B * T_K / Q_E
#: how close the operating point must come to the scipy references (relative)
REL = 1e-9


def shockley(v: float, is_: float, n: float) -> tuple[float, float]:
    """(I, dI/dV) of the Shockley (1949) junction law."""
    e = math.exp(v / (n * VT))
    return is_ * (e - 1.0), is_ * e / (n * VT)


def depletion_c(v: float, cjo: float, vj: float, m: float, fc: float = 1.0) -> float:
    """CJO·(1 − V/VJ)^−M, the graded junction's depletion capacitance (Sze, *Physics of
    Semiconductor Devices*), below FC·VJ; above it the tangent line at FC·VJ,
    CJO·(1 − FC)^−M·(1 + M·(V − FC·VJ)/(VJ·(1 − FC))) (the usual continuation, from
    memory)."""
    if v < fc * vj:
        return cjo * (1.0 - v / vj) ** (-m)
    return cjo * (1.0 - fc) ** (-m) * (1.0 + m * (v - fc * vj) / (vj * (1.0 - fc)))


def polish(f, x0: np.ndarray) -> np.ndarray:
    """fsolve (scipy's MINPACK hybrd) on KCL, its residual checked to a femtoampere."""
    x, info, _, msg = fsolve(f, x0, xtol=1e-13, full_output=True)
    assert np.max(np.abs(info["fvec"])) < 1e-15, msg
    return x


# ------------------------------------------------------------------ 1. diode attenuator

DIODE_ATT = """Quillmere qm_att3 diode-biased attenuator
VCC vcc 0 DC 5
VIN in 0 DC 0 AC 1
R1 vcc out 4.7k
R2 in out 10k
D1 out 0 qm_dlim
.model qm_dlim D (IS=2.5f N=1.05 {caps})
"""
R1, R2, VCC = 4.7e3, 10e3, 5.0
IS_D, N_D = 2.5e-15, 1.05


def diode_reference() -> tuple[float, float, float]:
    """(V(out), Id, gd): KCL at out, (VCC − V)/R1 + (0 − V)/R2 = Id(V), by brentq."""
    v = brentq(lambda v: (VCC - v) / R1 - v / R2 - shockley(v, IS_D, N_D)[0], 0.0, VCC,
               xtol=1e-15, rtol=1e-15)
    i, g = shockley(v, IS_D, N_D)
    return v, i, g


def test_diode_attenuator_operating_point_against_brentq():
    op = operating_point(read_netlist(DIODE_ATT.format(caps="")))
    v, i, g = diode_reference()
    assert op.voltage("out") == pytest.approx(v, rel=REL)
    (d,) = op.devices
    q = dict((n, val) for n, val, _ in d.quantities)
    assert d.kind == "diode" and d.region == "forward"
    assert q["Id"] == pytest.approx(i, rel=REL)
    assert q["gd"] == pytest.approx(g, rel=REL)
    # the supply's branch current is −(its current into the circuit) (MNA convention)
    assert dict(op.currents)["VCC"] == pytest.approx(-(VCC - v) / R1, rel=REL)
    assert op.method == "Newton"


def test_diode_attenuator_low_frequency_gain_is_the_rd_divider():
    v, i, _ = diode_reference()
    # rd = N·Vt/(Id + IS): dI/dV of the Shockley law written in terms of the current
    rd = N_D * VT / (i + IS_D)
    want = (1 / R2) / (1 / R1 + 1 / R2 + 1 / rd)  # Millman at the output node
    got = read_netlist(DIODE_ATT.format(caps="")).ac("VIN", "out", freqs=np.array([10.0]))
    assert got.transfer[0] == pytest.approx(want, rel=REL)
    # no capacitance: the response is real
    assert abs(got.transfer[0].imag) < 1e-15


@pytest.mark.parametrize("caps, below", [("CJO=4p VJ=0.9 M=0.4 FC=0.9 TT=6n", True),
                                          ("CJO=4p VJ=1.6 M=0.5 TT=0", True),
                                          ("CJO=4p VJ=0.8 M=0.33 FC=0.5 TT=2n", False),
                                          ("CJO=0 TT=12n", False)])
def test_diode_capacitance_makes_the_rc_pole(caps, below):
    v, i, g = diode_reference()
    par = dict(kv.split("=") for kv in caps.split())
    num = {"p": 1e-12, "n": 1e-9}
    val = {k: float(x[:-1]) * num[x[-1]] if x[-1] in num else float(x) for k, x in par.items()}
    vj, fc = val.get("VJ", 1.0), val.get("FC", 0.5)
    assert (v < fc * vj) == below  # which side of FC·VJ the junction is on
    cj = depletion_c(v, val["CJO"], vj, val.get("M", 0.5), fc)
    c = cj + val["TT"] * g  # depletion plus diffusion capacitance TT·gd
    gsum = 1 / R1 + 1 / R2 + g  # 1/(R1 ‖ R2 ‖ rd)
    f = np.array([10.0, 1e5, gsum / (2 * math.pi * c), 3e8, 1e10])
    want = (1 / R2) / (gsum + 2j * math.pi * f * c)  # one RC pole at gsum/(2π·C)
    got = read_netlist(DIODE_ATT.format(caps=caps)).ac("VIN", "out", freqs=f)
    np.testing.assert_allclose(got.transfer, want, rtol=REL)
    # at the corner the gain is 3 dB down (|1/(1 + j)| = 1/√2)
    assert abs(got.transfer[2]) == pytest.approx(abs(want[0]) / math.sqrt(2), rel=1e-6)


# ------------------------------------------------------------------ 2. common emitter

CE = """Quillmere qm_pre2 common-emitter preamp stage
VCC vcc 0 DC {vcc}
VIN in 0 DC 0 AC 1
RSIG in x 600
CIN x b 22u
RB1 vcc b 47k
RB2 b 0 10k
RC vcc c 4.7k
RE e 0 1k
CE e 0 470u
Q1 c b e qm_q{pol}
.model qm_q{pol} {kind} (IS=4f BF=180 BR=3 VAF={vaf} {caps})
"""
CE_R = dict(RSIG=600.0, CIN=22e-6, RB1=47e3, RB2=10e3, RC=4.7e3, RE=1e3, CE=470e-6)
CE_IS, CE_BF, CE_BR = 4e-15, 180.0, 3.0
CE_CAPS = dict(CJE=1.1e-12, VJE=0.75, MJE=0.33, CJC=0.6e-12, VJC=0.75, MJC=0.33, TF=0.35e-9,
               FC=0.5)
CE_CAPS_CARD = "CJE=1.1p VJE=0.75 MJE=0.33 CJC=0.6p VJC=0.75 MJC=0.33 TF=0.35n FC=0.5"


def ce_netlist(vaf: float = 70.0, caps: bool = False, pnp: bool = False) -> str:
    return CE.format(vcc=-12 if pnp else 12, pol="p" if pnp else "n",
                     kind="PNP" if pnp else "NPN", vaf=vaf, caps=CE_CAPS_CARD if caps else "")


def ebers_moll(vbe: float, vbc: float, vaf: float) -> dict[str, float]:
    """Transport-form Ebers–Moll (1954) currents with the forward Early factor
    (1 − Vbc/VAF) (Early 1952), and their partial derivatives, written out here."""
    i_f, g_f = shockley(vbe, CE_IS, 1.0)
    i_r, g_r = shockley(vbc, CE_IS, 1.0)
    early = 1.0 - vbc / vaf
    ic = (i_f - i_r) * early - i_r / CE_BR
    ib = i_f / CE_BF + i_r / CE_BR
    return dict(ic=ic, ib=ib, i_f=i_f, g_f=g_f, early=early,
                dic_dvbe=g_f * early,
                dic_dvbc=-g_r * early - (i_f - i_r) / vaf - g_r / CE_BR,
                dib_dvbe=g_f / CE_BF, dib_dvbc=g_r / CE_BR)


def ce_reference(vaf: float, vcc: float = 12.0) -> tuple[np.ndarray, dict[str, float]]:
    """(Vb, Vc, Ve) of the stage by fsolve on KCL at base, collector and emitter."""
    r = CE_R

    def kcl(x):
        vb, vc, ve = x
        t = ebers_moll(vb - ve, vb - vc, vaf)
        return [(vcc - vb) / r["RB1"] - vb / r["RB2"] - t["ib"],
                (vcc - vc) / r["RC"] - t["ic"],
                t["ic"] + t["ib"] - ve / r["RE"]]

    x = polish(kcl, np.array([1.9, 6.0, 1.2]))
    return x, ebers_moll(x[0] - x[2], x[0] - x[1], vaf)


def hybrid_pi_gain(x: np.ndarray, t: dict[str, float], f: np.ndarray, vaf: float,
                   caps: bool) -> np.ndarray:
    """V(c)/V(in) by nodal analysis of the small-signal circuit, written here: the
    transistor as the hybrid-π model (Sedra & Smith) with every element taken from the
    Ebers–Moll derivatives above — gm, gπ = ∂Ib/∂Vbe, gμ = ∂Ib/∂Vbc, the output
    conductance −∂Ic/∂Vbc, and with CJE/CJC/TF: Cπ = Cje(Vbe) + TF·∂IF/∂Vbe·(1 − Vbc/VAF),
    Cμ = Cjc(Vbc), and the trans-capacitance ∂(TF·IF·(1 − Vbc/VAF))/∂Vbc of the transit
    charge. Unknowns: V(x), V(b), V(c), V(e)."""
    r = CE_R
    vb, vc, ve = x
    vbe, vbc = vb - ve, vb - vc
    if caps:
        p = CE_CAPS
        cpi = (depletion_c(vbe, p["CJE"], p["VJE"], p["MJE"], p["FC"])
               + p["TF"] * t["g_f"] * t["early"])
        cmu = depletion_c(vbc, p["CJC"], p["VJC"], p["MJC"], p["FC"])
        ctr = p["TF"] * t["i_f"] * (-1.0 / vaf)
    else:
        cpi = cmu = ctr = 0.0
    out = []
    for s in 2j * math.pi * f:
        y = np.zeros((4, 4), complex)
        rhs = np.zeros(4, complex)
        X, B, C, E = range(4)

        def admit(a, b, val):
            for i, j, sgn in ((a, a, 1), (b, b, 1), (a, b, -1), (b, a, -1)):
                if i is not None and j is not None:
                    y[i, j] += sgn * val

        admit(X, None, 1 / r["RSIG"])
        rhs[X] += 1 / r["RSIG"]  # the 1 V source behind RSIG (Norton)
        admit(X, B, s * r["CIN"])
        admit(B, None, 1 / r["RB1"] + 1 / r["RB2"])
        admit(C, None, 1 / r["RC"])
        admit(E, None, 1 / r["RE"] + s * r["CE"])
        # the transistor: currents into C and B as functions of vbe = vB − vE, vbc = vB − vC
        # ic = gm·vbe + dic_dvbc·vbc; ib = gπ·vbe + gμ·vbc + s·(Cπ·vbe + Ctr·vbc + Cμ·vbc)
        # (the charge qbe = Qbe(vbe, vbc) flows base → emitter, qbc base → collector)
        ic = {B: t["dic_dvbe"] + t["dic_dvbc"], E: -t["dic_dvbe"], C: -t["dic_dvbc"]}
        ibe = {B: t["dib_dvbe"] + s * (cpi + ctr), E: -(t["dib_dvbe"] + s * cpi), C: -s * ctr}
        ibc = {B: t["dib_dvbc"] + s * cmu, C: -(t["dib_dvbc"] + s * cmu), E: 0}
        for k in (B, C, E):
            y[C, k] += ic[k] - ibc[k]
            y[B, k] += ibe[k] + ibc[k]
            y[E, k] += -ic[k] - ibe[k]
        v = np.linalg.solve(y, rhs)
        out.append(v[C])
    return np.array(out)


@pytest.mark.parametrize("vaf", [70.0, math.inf])
def test_common_emitter_operating_point_against_fsolve(vaf):
    circuit = read_netlist(ce_netlist(vaf=0 if vaf == math.inf else vaf))
    op = operating_point(circuit)
    x, t = ce_reference(vaf)
    for node, want in zip("bce", x):
        assert op.voltage(node) == pytest.approx(want, rel=REL), node
    (q,) = op.devices
    got = dict((n, val) for n, val, _ in q.quantities)
    assert q.kind == "npn" and q.region == "forward-active"
    assert got["Ic"] == pytest.approx(t["ic"], rel=REL)
    assert got["Ib"] == pytest.approx(t["ib"], rel=REL)
    assert got["gm"] == pytest.approx(t["dic_dvbe"], rel=REL)


def test_common_emitter_midband_gain_textbook_and_nodal():
    vaf = 70.0
    x, t = ce_reference(vaf)
    f = np.array([20e3, 100e3])
    got = read_netlist(ce_netlist(vaf)).ac("VIN", "c", freqs=f).transfer
    # independent nodal solve of the hybrid-π circuit
    np.testing.assert_allclose(got, hybrid_pi_gain(x, t, f, vaf, caps=False), rtol=REL)
    # textbook: −gm·(RC ‖ ro) with gm = Ic/Vt, ro = (VA + Vce)/Ic (Sedra & Smith; the
    # +Vce form because the Early factor here is 1 − Vbc/VAF), times the input divider
    # rin/(rin + RSIG), rin = RB1 ‖ RB2 ‖ rπ, rπ = β/gm; the bypass and coupling
    # capacitors are short at mid-band to 1 %
    vce = x[1] - x[2]
    gm = t["ic"] / VT
    ro = (vaf + x[1] - x[0]) / t["ic"]
    rpi = CE_BF / gm
    rin = 1 / (1 / CE_R["RB1"] + 1 / CE_R["RB2"] + 1 / rpi)
    textbook = -gm / (1 / CE_R["RC"] + 1 / ro) * rin / (rin + CE_R["RSIG"])
    assert vce > 0.3  # forward-active
    np.testing.assert_allclose(got, textbook, rtol=1e-2)


def test_common_emitter_high_frequency_against_hybrid_pi_nodal_solve():
    vaf = 70.0
    x, t = ce_reference(vaf)
    f = np.array([10.0, 1e3, 1e6, 30e6, 300e6, 3e9])
    got = read_netlist(ce_netlist(vaf, caps=True)).ac("VIN", "c", freqs=f).transfer
    np.testing.assert_allclose(got, hybrid_pi_gain(x, t, f, vaf, caps=True), rtol=REL)
    # and the capacitances matter: at 300 MHz the gain is well below mid-band
    assert abs(got[4]) < 0.5 * abs(got[1])


def test_pnp_stage_with_negated_supplies_has_the_same_magnitudes():
    f = np.array([10.0, 1e3, 1e6, 300e6])
    npn = read_netlist(ce_netlist(70.0, caps=True))
    pnp = read_netlist(ce_netlist(70.0, caps=True, pnp=True))
    op_n, op_p = operating_point(npn), operating_point(pnp)
    for node in ("b", "c", "e"):
        assert op_p.voltage(node) == pytest.approx(-op_n.voltage(node), rel=1e-12)
    qp = dict((n, v) for n, v, _ in op_p.devices[0].quantities)
    qn = dict((n, v) for n, v, _ in op_n.devices[0].quantities)
    assert op_p.devices[0].kind == "pnp" and op_p.devices[0].region == "forward-active"
    assert qp["Ic"] == pytest.approx(-qn["Ic"], rel=1e-12)
    assert qp["gm"] == pytest.approx(qn["gm"], rel=1e-12)
    np.testing.assert_allclose(pnp.ac("VIN", "c", freqs=f).transfer,
                               npn.ac("VIN", "c", freqs=f).transfer, rtol=1e-10)
    # and the PNP against the independent reference with every voltage negated
    x, t = ce_reference(70.0, vcc=12.0)
    np.testing.assert_allclose(pnp.ac("VIN", "c", freqs=f).transfer,
                               hybrid_pi_gain(x, t, f, 70.0, caps=True), rtol=REL)


# ------------------------------------------------------------------ 8. KCL at the solution

def test_diode_and_transistor_solutions_satisfy_kcl_to_picoamperes():
    # diode attenuator: the current into node out from each branch, from the device law
    op = operating_point(read_netlist(DIODE_ATT.format(caps="")))
    v = op.voltage("out")
    resid = (VCC - v) / R1 + (0 - v) / R2 - shockley(v, IS_D, N_D)[0]
    assert abs(resid) < 1e-12
    # common emitter: KCL at base, collector, emitter from the Ebers–Moll law
    op = operating_point(read_netlist(ce_netlist(70.0)))
    vb, vc, ve = (op.voltage(n) for n in "bce")
    t = ebers_moll(vb - ve, vb - vc, 70.0)
    r = CE_R
    for resid in ((12 - vb) / r["RB1"] - vb / r["RB2"] - t["ib"],
                  (12 - vc) / r["RC"] - t["ic"],
                  t["ic"] + t["ib"] - ve / r["RE"]):
        assert abs(resid) < 1e-12


def test_linearised_replaces_each_device_and_keeps_the_rest():
    circuit = read_netlist(ce_netlist(70.0))
    small, op = linearised(circuit)
    kinds = {e.name: type(e).__name__ for e in small.elements}
    assert kinds["Q1"] == "Linearised" and kinds["RC"] == "Resistor"
    q1 = small.element("Q1")
    # each row of the small-signal conductance matrix sums to zero (a common shift of
    # the terminal voltages changes no current: Kirchhoff)
    np.testing.assert_allclose(np.sum(q1.g, axis=1), 0.0, atol=1e-15)
    np.testing.assert_allclose(np.sum(q1.g, axis=0), 0.0, atol=1e-15)


def test_saturated_switch_against_fsolve():
    """Both junctions forward: the same Ebers–Moll law, far from the textbook
    forward-active shortcuts."""
    text = ("Quillmere qm_sw1 relay driver, hard on\nVCC vcc 0 DC 5\nVIN in 0 DC 0 AC 1\n"
            "RB vcc b 10k\nRI in b 10k\nRC vcc c 10k\nQ1 c b 0 qm_qsw\n"
            ".model qm_qsw NPN (IS=4f BF=180 BR=3 VAF=70)\n")
    circuit = read_netlist(text)
    op = operating_point(circuit)

    def kcl(x):
        vb, vc = x
        t = ebers_moll(vb, vb - vc, 70.0)
        return [(5 - vb) / 10e3 - vb / 10e3 - t["ib"], (5 - vc) / 10e3 - t["ic"]]

    vb, vc = polish(kcl, np.array([0.7, 0.1]))
    assert op.devices[0].region == "saturated" and vb - vc > 0.4
    assert op.voltage("b") == pytest.approx(vb, rel=REL)
    assert op.voltage("c") == pytest.approx(vc, rel=REL)
    # small signal: ic = gm·vbe + (∂Ic/∂Vbc)·vbc, ib likewise, at node b (RB ‖ RI to
    # the source through RI) and node c (RC): the 2×2 nodal solve
    t = ebers_moll(vb, vb - vc, 70.0)
    y = np.array([[2 / 10e3 + t["dib_dvbe"] + t["dib_dvbc"], -t["dib_dvbc"]],
                  [t["dic_dvbe"] + t["dic_dvbc"], 1 / 10e3 - t["dic_dvbc"]]])
    want = np.linalg.solve(y, [1 / 10e3, 0])[1]
    assert circuit.ac("VIN", "c", freqs=np.array([10.0])).transfer[0] == pytest.approx(
        want, rel=REL)


def test_the_operating_point_follows_the_temperature():
    # at 75 °C Vt = k·(348.15 K)/q and the saturation current is taken from TNOM = 27 °C:
    # IS(T) = IS·(T/TNOM)^(XTI/N)·exp((T/TNOM − 1)·EG/(N·Vt(T))), XTI = 3, EG = 1.11 eV
    # (P. Antognetti & G. Massobrio, Semiconductor Device Modeling with SPICE, 2nd ed.,
    # 1993, from memory; tests/mna/test_device_temperature.py checks the laws)
    vt = K_B * 348.15 / Q_E
    ratio = 348.15 / T_K
    is_t = IS_D * ratio ** (3.0 / N_D) * math.exp((ratio - 1.0) * 1.11 / (N_D * vt))
    v = brentq(lambda v: (VCC - v) / R1 - v / R2 - is_t * math.expm1(v / (N_D * vt)), 0, VCC,
               xtol=1e-15, rtol=1e-15)
    op = operating_point(read_netlist(DIODE_ATT.format(caps="")), temp_c=75.0)
    assert op.temp_c == 75.0
    assert op.voltage("out") == pytest.approx(v, rel=REL)
    # the forward drop falls as it warms, some 2 mV/K (common practice, no source)
    assert -0.15 < v - diode_reference()[0] < -0.05
