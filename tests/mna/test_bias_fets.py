"""MOSFET and JFET stages at their DC operating point (netcheck.mna.bias) against
references written in this file.

The square laws are written out here (Shichman & Hodges 1968: MOS saturation
Id = β/2·(Vgs − VT)²·(1 + λ·Vds), VT = VTO + γ·(√(φ + Vsb) − √φ); JFET saturation
Id = BETA·(Vgs − VTO)²·(1 + λ·Vds)); with a source resistor and no channel-length
modulation the bias is the root of a quadratic, solved in closed form here. The gains
are the textbook degenerated stage −gm·RD/(1 + gm·RS) (Sedra & Smith, *Microelectronic
Circuits*, from memory) or, with λ and the body effect, a nodal solve written here in
numpy from gm, gds, gmbs at a bias solved by scipy's fsolve.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import brentq, fsolve

from netcheck.api import read_netlist
from netcheck.mna.bias import operating_point

REL = 1e-9
EPS0 = 8.8541878128e-12  # F/m (CODATA 2018)


def root(f, x0: list[float]) -> np.ndarray:
    """fsolve (MINPACK hybrd) on KCL, its residual checked to a femtoampere."""
    x, info, _, msg = fsolve(f, x0, xtol=1e-13, full_output=True)
    assert np.max(np.abs(info["fvec"])) < 1e-15, msg
    return x

# ------------------------------------------------------------------ 3. MOS common source

CS = """Quillmere qm_drv5 common-source driver stage
VDD vdd 0 DC 15
VIN x 0 DC 0 AC 1
RG1 vdd g 2.2meg
RG2 g x 1meg
RD vdd d 10k
RS s 0 2.2k
M1 d g s 0 qm_nsw L=2u W=20u
.model qm_nsw NMOS (LEVEL=1 KP=110u VTO=1.2 LAMBDA={lam} GAMMA={gamma} PHI=0.7 {caps})
"""
VDD, RG1, RG2, RD, RS = 15.0, 2.2e6, 1e6, 10e3, 2.2e3
KP, W, L, VTO, PHI = 110e-6, 20e-6, 2e-6, 1.2, 0.7
BETA = KP * W / L
VG = VDD * RG2 / (RG1 + RG2)       # the divider with VIN at 0 V (no gate current)
DIVIDE = RG1 / (RG1 + RG2)         # v(g)/v(in) through RG2, the supply at AC ground


def test_mos_square_law_bias_in_closed_form():
    op = operating_point(read_netlist(CS.format(lam=0, gamma=0, caps="")))
    # Id = β/2·u², u = VG − VT − Id·RS  ⇒  (RS·β/2)·u² + u − (VG − VT) = 0
    a = RS * BETA / 2
    u = (-1 + math.sqrt(1 + 4 * a * (VG - VTO))) / (2 * a)
    i_d = BETA / 2 * u * u
    assert op.voltage("g") == pytest.approx(VG, rel=1e-12)
    assert op.voltage("s") == pytest.approx(i_d * RS, rel=REL)
    assert op.voltage("d") == pytest.approx(VDD - i_d * RD, rel=REL)
    (m,) = op.devices
    q = {n: v for n, v, _ in m.quantities}
    assert m.kind == "nmos" and m.region == "saturation"
    assert q["Id"] == pytest.approx(i_d, rel=REL)
    assert q["gm"] == pytest.approx(BETA * u, rel=REL)   # gm = β·(Vgs − VT)
    assert q["Vth"] == pytest.approx(VTO, rel=1e-12)


def test_mos_degenerated_gain_in_closed_form():
    a = RS * BETA / 2
    u = (-1 + math.sqrt(1 + 4 * a * (VG - VTO))) / (2 * a)
    gm = BETA * u
    want = DIVIDE * (-gm * RD / (1 + gm * RS))   # source degeneration (Sedra & Smith)
    got = read_netlist(CS.format(lam=0, gamma=0, caps="")).ac("VIN", "d",
                                                              freqs=np.array([10.0, 1e5]))
    np.testing.assert_allclose(got.transfer, want, rtol=REL)


def mos_sat(vgs: float, vds: float, vsb: float, lam: float, gamma: float
            ) -> tuple[float, float, float, float]:
    """(Id, gm, gds, gmbs) in saturation, written from the square law with the body
    effect; gmbs = gm·γ/(2√(φ + Vsb)) (Sedra & Smith's χ·gm)."""
    vt = VTO + gamma * (math.sqrt(PHI + vsb) - math.sqrt(PHI))
    u = vgs - vt
    assert 0 < u <= vds
    i_d = BETA / 2 * u * u * (1 + lam * vds)
    gm = BETA * u * (1 + lam * vds)
    return i_d, gm, BETA / 2 * u * u * lam, gm * gamma / (2 * math.sqrt(PHI + vsb))


@pytest.mark.parametrize("lam, gamma", [(0.04, 0.45), (0.02, 0.0), (0.0, 0.8)])
def test_mos_with_lambda_and_body_effect_against_a_nodal_solve(lam, gamma):
    circuit = read_netlist(CS.format(lam=lam, gamma=gamma, caps=""))
    op = operating_point(circuit)

    def kcl(x):
        vs, vd = x
        i_d = mos_sat(VG - vs, vd - vs, vs, lam, gamma)[0]
        return [vs / RS - i_d, (VDD - vd) / RD - i_d]

    vs, vd = root(kcl, [2.0, 5.0])
    assert op.voltage("s") == pytest.approx(vs, rel=REL)
    assert op.voltage("d") == pytest.approx(vd, rel=REL)
    i_d, gm, gds, gmbs = mos_sat(VG - vs, vd - vs, vs, lam, gamma)
    q = {n: v for n, v, _ in op.devices[0].quantities}
    for name, want in (("gm", gm), ("gds", gds), ("gmbs", gmbs)):
        assert q[name] == pytest.approx(want, rel=REL, abs=1e-18), name
    # small signal, bulk at AC ground: id = gm·(vg − vs) + gds·(vd − vs) − gmbs·vs;
    # KCL at d: vd/RD + id = 0; at s: vs/RS − id = 0
    vg = DIVIDE
    y = np.array([[1 / RD + gds, -(gm + gds + gmbs)],
                  [-gds, 1 / RS + gm + gds + gmbs]])
    vd_ac, _ = np.linalg.solve(y, [-gm * vg, gm * vg])
    got = circuit.ac("VIN", "d", freqs=np.array([10.0])).transfer[0]
    assert got == pytest.approx(vd_ac, rel=REL)


def test_mos_gate_capacitances_against_a_nodal_solve():
    """Saturation: Cgs = ⅔·COX·W·L + CGSO·W, Cgd = CGDO·W, Cgb = CGBO·L (Meyer 1971;
    COX = 3.9·ε0/TOX, the oxide permittivity 3.9·ε0 common practice, no source)."""
    tox, cgso, cgdo, cgbo = 25e-9, 0.3e-9, 0.25e-9, 0.2e-9
    caps = f"TOX={tox} CGSO={cgso} CGDO={cgdo} CGBO={cgbo} KP={KP}"
    card = CS.replace("KP=110u ", "").format(lam=0.04, gamma=0.45, caps=caps)
    circuit = read_netlist(card)
    lam, gamma = 0.04, 0.45

    def kcl(x):
        vs, vd = x
        i_d = mos_sat(VG - vs, vd - vs, vs, lam, gamma)[0]
        return [vs / RS - i_d, (VDD - vd) / RD - i_d]

    vs, vd = root(kcl, [2.0, 5.0])
    _, gm, gds, gmbs = mos_sat(VG - vs, vd - vs, vs, lam, gamma)
    cox = 3.9 * EPS0 / tox
    cgs, cgd, cgb = 2 / 3 * cox * W * L + cgso * W, cgdo * W, cgbo * L
    f = np.array([10.0, 1e4, 1e6, 1e8])
    want = []
    for s in 2j * np.pi * f:
        # unknowns g, d, s; VIN drives g through RG2, RG1 to the (AC-grounded) supply
        y = np.array([[1 / RG1 + 1 / RG2 + s * (cgs + cgd + cgb), -s * cgd, -s * cgs],
                      [gm - s * cgd, 1 / RD + gds + s * cgd, -(gm + gds + gmbs)],
                      [-gm - s * cgs, -gds, 1 / RS + gm + gds + gmbs + s * cgs]])
        want.append(np.linalg.solve(y, [1 / RG2, 0, 0])[1])
    got = circuit.ac("VIN", "d", freqs=f).transfer
    np.testing.assert_allclose(got, want, rtol=REL)
    assert abs(got[-1]) < 0.5 * abs(got[0])  # the gate capacitances roll it off


def test_pmos_mirror_of_the_stage_has_the_same_magnitudes():
    n = read_netlist(CS.format(lam=0.04, gamma=0.45, caps=""))
    p = read_netlist(CS.format(lam=0.04, gamma=0.45, caps="")
                     .replace("DC 15", "DC -15").replace("NMOS", "PMOS")
                     .replace("VTO=1.2", "VTO=-1.2"))
    op_n, op_p = operating_point(n), operating_point(p)
    for node in "gds":
        assert op_p.voltage(node) == pytest.approx(-op_n.voltage(node), rel=1e-12)
    assert op_p.devices[0].kind == "pmos" and op_p.devices[0].region == "saturation"
    f = np.array([10.0, 1e5])
    np.testing.assert_allclose(p.ac("VIN", "d", freqs=f).transfer,
                               n.ac("VIN", "d", freqs=f).transfer, rtol=1e-10)


# ------------------------------------------------------------------ 4. JFET self-bias

JFET = """Quillmere qm_buf1 self-biased JFET input stage
VDD vdd 0 DC 15
VIN x 0 DC 0 AC 1
RG g x 1meg
RD vdd d 4.7k
RSJ s 0 680
J1 d g s qm_jin
.model qm_jin {kind} (BETA=1.3m VTO=-2.2 IS=1e-18 LAMBDA={lam})
"""
JB, JVTO, JRD, JRS = 1.3e-3, -2.2, 4.7e3, 680.0


def jfet_bias() -> tuple[float, float]:
    """(Id, gm) of the self-biased stage: Id = BETA·u², u = Vgs − VTO = −Id·RS − VTO
    ⇒ RS·BETA·u² + u + VTO = 0; gm = 2·BETA·u. The gate leakage (IS = 1e-18 A through
    1 MΩ, a picovolt) is left out."""
    a = JRS * JB
    u = (-1 + math.sqrt(1 - 4 * a * JVTO)) / (2 * a)
    return JB * u * u, 2 * JB * u


@pytest.mark.parametrize("kind, sign", [("NJF", 1), ("PJF", -1)])
def test_jfet_self_bias_in_closed_form(kind, sign):
    text = JFET.format(kind=kind, lam=0)
    if sign < 0:
        text = text.replace("DC 15", "DC -15")
    circuit = read_netlist(text)
    op = operating_point(circuit)
    i_d, gm = jfet_bias()
    assert op.voltage("s") == pytest.approx(sign * i_d * JRS, rel=REL)
    assert op.voltage("d") == pytest.approx(sign * (15 - i_d * JRD), rel=REL)
    (j,) = op.devices
    q = {n: v for n, v, _ in j.quantities}
    assert j.region == "saturation" and j.kind == kind.lower()
    assert q["Id"] == pytest.approx(sign * i_d, rel=REL)
    assert q["gm"] == pytest.approx(gm, rel=REL)
    got = circuit.ac("VIN", "d", freqs=np.array([10.0, 1e5])).transfer
    np.testing.assert_allclose(got, -gm * JRD / (1 + gm * JRS), rtol=REL)


def test_jfet_with_lambda_against_a_nodal_solve():
    lam = 0.02
    circuit = read_netlist(JFET.format(kind="NJF", lam=lam))

    def kcl(x):
        vs, vd = x
        return [vs / JRS - JB * (-vs - JVTO) ** 2 * (1 + lam * (vd - vs)),
                (15 - vd) / JRD - vs / JRS]

    vs, vd = root(kcl, [1.0, 8.0])
    op = operating_point(circuit)
    assert op.voltage("s") == pytest.approx(vs, rel=REL)
    assert op.voltage("d") == pytest.approx(vd, rel=REL)
    u = -vs - JVTO
    gm = 2 * JB * u * (1 + lam * (vd - vs))
    gds = JB * u * u * lam
    y = np.array([[1 / JRD + gds, -(gm + gds)], [-gds, 1 / JRS + gm + gds]])
    vd_ac = np.linalg.solve(y, [-gm, gm])[0]
    got = circuit.ac("VIN", "d", freqs=np.array([10.0])).transfer[0]
    assert got == pytest.approx(vd_ac, rel=REL)


def test_fet_solutions_satisfy_kcl_to_picoamperes():
    op = operating_point(read_netlist(CS.format(lam=0.04, gamma=0.45, caps="")))
    vs, vd = op.voltage("s"), op.voltage("d")
    i_d = mos_sat(VG - vs, vd - vs, vs, 0.04, 0.45)[0]
    assert abs(vs / RS - i_d) < 1e-12
    assert abs((VDD - vd) / RD - i_d) < 1e-12


def test_mos_in_triode_against_fsolve():
    """A drain resistor large enough to pull the drain below Vgs − VT: the triode law
    Id = β·Vds·(Vgs − VT − Vds/2)·(1 + λ·Vds) (Shichman & Hodges 1968), written here."""
    lam = 0.04
    text = CS.format(lam=lam, gamma=0, caps="").replace("RD vdd d 10k", "RD vdd d 100k")
    circuit = read_netlist(text)

    def triode(vgs, vds):
        u = vgs - VTO
        assert 0 < vds < u
        return (BETA * vds * (u - vds / 2) * (1 + lam * vds),
                BETA * vds * (1 + lam * vds),  # ∂/∂vgs
                BETA * (u - vds) * (1 + lam * vds) + BETA * vds * (u - vds / 2) * lam)

    def kcl(x):
        vs, vd = x
        i_d = triode(VG - vs, vd - vs)[0]
        return [vs / RS - i_d, (VDD - vd) / 100e3 - i_d]

    vs, vd = root(kcl, [0.3, 0.5])
    op = operating_point(circuit)
    assert op.devices[0].region == "triode"
    assert op.voltage("s") == pytest.approx(vs, rel=REL)
    assert op.voltage("d") == pytest.approx(vd, rel=REL)
    _, gm, gds = triode(VG - vs, vd - vs)
    y = np.array([[1 / 100e3 + gds, -(gm + gds)], [-gds, 1 / RS + gm + gds]])
    want = np.linalg.solve(y, [-gm * DIVIDE, gm * DIVIDE])[0]
    got = circuit.ac("VIN", "d", freqs=np.array([10.0])).transfer[0]
    assert got == pytest.approx(want, rel=REL)


@pytest.mark.parametrize("drive, rg", [(24.0, 100.0), (200.0, 1.0)])
def test_jfet_with_its_gate_driven_forward_against_brentq(drive, rg):
    """A gate junction forward-biased hard (a mis-wired gate, 24 V through 100 Ω): its
    steps are limited like any junction's, so plain Newton finds the point; the gate
    diodes are Shockley's (1949), the channel the square law, written here."""
    is_, vt = 1e-14, 1.380649e-23 * 300.15 / 1.602176634e-19
    text = (f"Quillmere qm_buf1 JFET with the gate mis-wired\nVG gg 0 DC {drive}\n"
            f"RG gg g {rg}\nVDD vdd 0 DC 15\nRD vdd d 1k\nJ1 d g 0 qm_jin\n"
            ".model qm_jin NJF (BETA=1m VTO=-2 IS=10f)\n")
    op = operating_point(read_netlist(text))
    assert op.method == "Newton"

    def drain(vg):  # KCL at the drain for a given gate voltage (saturation: vd ≥ vg + 2)
        return brentq(lambda vd: (15 - vd) / 1e3 - 1e-3 * (vg + 2) ** 2
                      + is_ * math.expm1((vg - vd) / vt), vg + 2, 16, xtol=1e-15, rtol=1e-15)

    def gate(vg):  # KCL at the gate: the feed current into both gate diodes
        vd = drain(vg)
        return (drive - vg) / rg - is_ * math.expm1(vg / vt) - is_ * math.expm1((vg - vd) / vt)

    vg = brentq(gate, 0.3, 1.3, xtol=1e-15, rtol=1e-15)
    vd = drain(vg)
    assert op.voltage("g") == pytest.approx(vg, rel=REL)
    assert op.voltage("d") == pytest.approx(vd, rel=REL)
