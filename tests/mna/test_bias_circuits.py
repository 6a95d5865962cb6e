"""Whole circuits with devices at their operating point (netcheck.mna.bias) against
references written in this file: the small-signal gain against the slope of the DC
transfer curve, and discrete stages against their textbook closed forms and against
nodal solves written here.

References, all independent of netcheck's linearisation:

* **Central differences.** The low-frequency gain netcheck computes from its linearised
  circuit must equal dVout/dVin taken numerically here from DC operating points solved at
  Vin ± h. The DC solutions are netcheck's own, but the derivative is not: a wrong
  small-signal stamp (a missing Early term, a sign, a chain-rule slip) shows up as a
  disagreement whatever the device equations are.
* **Device laws written out here**: Shockley (1949), Ebers & Moll (1954) in transport
  form with the forward Early factor (Early 1952), the Shichman & Hodges (1968) square
  laws, Meyer's (1971) gate capacitances. Biases are solved here with scipy (``brentq``,
  ``fsolve``) on KCL written by hand.
* **Closed forms** of the textbook small-signal analyses (Sedra & Smith, *Microelectronic
  Circuits*, quoted from memory where marked) and the hybrid-π nodal solves written here
  in numpy (:class:`Nodal`).

Vt = k·T/q with the exact SI 2019 constants (BIPM SI Brochure, 9th ed.), T = 300.15 K.
The Sallen–Key op-amp macro-model, the differential pair and the latch are in
test_bias_circuits_ext.py.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.linalg import eigvals
from scipy.optimize import brentq, fsolve

from netcheck.api import read_netlist
from netcheck.mna.bias import operating_point

K_B, Q_E, T_K = 1.380649e-23, 1.602176634e-19, 300.15
VT = K_B * T_K / Q_E
EPS0 = 8.8541878128e-12  # F/m (CODATA 2018)


# ------------------------------------------------------------------ shared references

def polish(f, x0) -> np.ndarray:
    """fsolve (scipy's MINPACK hybrd) on KCL, its residual checked to 10 fA."""
    x, info, _, msg = fsolve(f, np.asarray(x0, float), xtol=1e-13, full_output=True)
    assert np.max(np.abs(info["fvec"])) < 1e-14, msg
    return x


def junction(v: float, is_: float, n: float = 1.0) -> tuple[float, float]:
    """(I, dI/dV) of the Shockley (1949) junction law."""
    e = math.exp(v / (n * VT))
    return is_ * (e - 1.0), is_ * e / (n * VT)


def ebers_moll(vbe: float, vbc: float, is_: float, bf: float, br: float,
               vaf: float = math.inf) -> dict[str, float]:
    """NPN terminal currents of the transport-form Ebers–Moll model (1954) with the
    forward Early factor (1 − Vbc/VAF) (Early 1952), and their partial derivatives."""
    i_f, g_f = junction(vbe, is_)
    i_r, g_r = junction(vbc, is_)
    early = 1.0 - vbc / vaf
    return dict(ic=(i_f - i_r) * early - i_r / br, ib=i_f / bf + i_r / br, i_f=i_f,
                g_f=g_f, early=early,
                dic_dvbe=g_f * early,
                dic_dvbc=-g_r * early - (i_f - i_r) / vaf - g_r / br,
                dib_dvbe=g_f / bf, dib_dvbc=g_r / br)


class Nodal:
    """Small-signal nodal analysis written here: Y(s)·v = 0 over the free nodes, with
    named nodes held at given voltages (ground at 0, the stimulus at 1). Elements are
    admittances g + s·c between two nodes and controlled currents (g + s·c)·(v(cp) −
    v(cn)) that leave node p and enter node n."""

    def __init__(self) -> None:
        self.items: list[tuple[str, str, str, str, float, float]] = []

    def y(self, a: str, b: str, g: float = 0.0, c: float = 0.0) -> None:
        self.vccs(a, b, a, b, g, c)

    def vccs(self, p: str, n: str, cp: str, cn: str, g: float = 0.0, c: float = 0.0) -> None:
        self.items.append((p, n, cp, cn, g, c))

    def bjt(self, c: str, b: str, e: str, t: dict[str, float], cpi: float = 0.0,
            cmu: float = 0.0, ctr: float = 0.0) -> None:
        """The hybrid-π transistor from the Ebers–Moll partial derivatives ``t``: Ic
        flows c → e and Ib flows b → e inside the device, each a function of vbe and vbc;
        the charge Qbe (b → e) of vbe (Cπ) and of vbc (the transit trans-capacitance),
        Qbc (b → c) of vbc (Cμ)."""
        self.vccs(c, e, b, e, t["dic_dvbe"])
        self.vccs(c, e, b, c, t["dic_dvbc"])
        self.vccs(b, e, b, e, t["dib_dvbe"], cpi)
        self.vccs(b, e, b, c, t["dib_dvbc"], ctr)
        self.vccs(b, c, b, c, 0.0, cmu)

    def _pencil(self, held) -> tuple[list[str], np.ndarray, np.ndarray, np.ndarray,
                                     np.ndarray]:
        """(free nodes, G, C over them, and the columns of G and C of the held nodes)."""
        free = sorted({n for it in self.items for n in it[:4]} - set(held))
        cols = free + list(held)
        idx = {n: i for i, n in enumerate(cols)}
        g = np.zeros((len(free), len(cols)))
        c = np.zeros_like(g)
        for p, n, cp, cn, gv, cv in self.items:
            for row, sr in ((p, 1.0), (n, -1.0)):
                for col, sc in ((cp, 1.0), (cn, -1.0)):
                    if idx[row] < len(free):
                        g[idx[row], idx[col]] += sr * sc * gv
                        c[idx[row], idx[col]] += sr * sc * cv
        k = len(free)
        return free, g[:, :k], c[:, :k], g[:, k:], c[:, k:]

    def solve(self, f: np.ndarray, held: dict[str, float]) -> dict[str, np.ndarray]:
        """The free nodes' voltages at each frequency (Hz)."""
        free, g, c, g_held, c_held = self._pencil(held)
        v_held = np.array(list(held.values()), float)
        out = np.array([np.linalg.solve(g + s * c, -(g_held + s * c_held) @ v_held)
                        for s in 2j * math.pi * np.asarray(f, float)])
        return {n: out[:, i] for i, n in enumerate(free)}

    def poles(self, held: set[str]) -> np.ndarray:
        """The roots of det Y(s) = 0 (as s/2π, Hz) with the held nodes grounded: the finite
        generalised eigenvalues of the pencil (−G, C) built here, by scipy's QZ (LAPACK
        ggev)."""
        _, g, c, _, _ = self._pencil({n: 0.0 for n in held})
        lam = eigvals(-g, c)
        return lam[np.isfinite(lam)] / (2 * math.pi)


def quantities(op, name: str) -> dict[str, float]:
    (d,) = [d for d in op.devices if d.name == name]
    return {q: v for q, v, _ in d.quantities}


# ------------------------------------------------------------------ 1. gain = DC slope

# Each circuit has no capacitance, so its small-signal gain is real and the same at every
# frequency; netcheck's at 1 Hz is compared with the slope of the DC transfer curve
# Vout(Vin) taken here by central differences of operating points.
#
# Step and tolerance. The central difference D(h) = (V(+h) − V(−h))/(2h) has the
# truncation error V'''·h²/6; the Richardson combination (4·D(h) − D(2h))/3 cancels it
# and leaves O(h⁴). Each derivative of a junction law brings a factor 1/(N·Vt) ≈ 1/26 mV,
# so with h = 1 mV the h² term is at most of order (h/Vt)² ≈ 1.5e-3 of the slope and the
# remainder after Richardson another (h/Vt)² smaller, ≈ 2e-6 in the worst case (the
# resistors around each device make it much less: the h² term, |D(h) − D(2h)|/3, is
# below 4e-5 in every case here, which puts the remainder below 1e-7). Round-off: Newton
# converges quadratically, so the last iterate is far inside the 1e-10 relative step
# test (docs/devices.md); an error of 1 pV in each solution over 2h is 5e-10. Seen: at
# most 4e-10. A tolerance of 1e-6 is ten times the bound and a thousand times tighter
# than the smallest wrong term the check is there to catch (the Early and reverse-
# junction terms of the transistors are 1e-3 to 1e-2 of the gain, a FET's gds 1e-2).
H_STEP = 1e-3
SLOPE_REL = 1e-6

DIODE_SHAPER = """Quillmere qm_shp2 diode soft-limiter
VIN in 0 DC {vin} AC 1
R1 in out 2.2k
D1 out m qm_dsoft
D2 m 0 qm_dsoft
RM m 0 100k
RSH out 0 47k
D3 0 out qm_dsoft
.model qm_dsoft D (IS=12f N=1.7 RS=35)
"""

BJT_CASCADE = """Quillmere qm_lvl6 direct-coupled NPN-PNP level stage
VCC vcc 0 DC 12
VIN in 0 DC {vin} AC 1
RB in b1 10k
Q1 c1 b1 e1 qm_qn
RE1 e1 0 1k
RC1 vcc c1 2.2k
Q2 c2 c1 e2 qm_qp
RE2 vcc e2 1k
RC2 c2 0 4.7k
.model qm_qn NPN (IS=6f BF=160 BR=4 VAF=80)
.model qm_qp PNP (IS=9f BF=110 BR=2 VAF=45)
"""

NMOS_STAGE = """Quillmere qm_drv7 NMOS level shifter
VDD vdd 0 DC 10
VIN g 0 DC {vin} AC 1
RD vdd out 6.8k
M1 out g s 0 qm_nlv L=3u W=30u
RS s 0 1.5k
.model qm_nlv NMOS (LEVEL=1 KP=90u VTO=0.9 LAMBDA=0.03 GAMMA=0.5 PHI=0.65)
"""

JFET_STAGE = """Quillmere qm_jin3 JFET input stage
VDD vdd 0 DC 15
VIN g 0 DC {vin} AC 1
RD vdd out 3.3k
J1 out g s qm_jn
RS s 0 680
.model qm_jn NJF (BETA=1.4m VTO=-2.1 LAMBDA=0.02)
"""

BEHAVIOURAL = """Quillmere qm_cmp4 behavioural soft compressor
VIN in 0 DC {vin} AC 1
RIN in x 1k
RX x 0 3.3k
B1 0 y I={{2m*tanh(v(x)/0.4)*(1 + 0.05*v(y))}}
G1 y 0 POLY(2) x 0 y 0 0 0.1m 0 0.2m 0.05m 0.03m
RY y 0 2.2k
E1 out 0 VALUE={{v(y) - 0.1*v(y)*v(y)*v(y) + 0.2*v(x)*v(y)}}
RL out 0 10k
"""


@pytest.mark.parametrize("netlist, out, vins", [
    (DIODE_SHAPER, "out", [0.9, 1.6, -1.2]),         # D1–D2 on, D3 on, neither dominant
    (BJT_CASCADE, "c2", [1.35, 1.5]),                  # both transistors forward-active
    (NMOS_STAGE, "out", [2.0, 3.5, 5.0]),              # saturation, saturation, triode
    (JFET_STAGE, "out", [-1.0, 0.0, 0.3]),             # saturation … nearly triode
    (BEHAVIOURAL, "out", [0.2, 0.7, -0.9]),            # B, POLY(2) and VALUE cards
], ids=["diode", "npn-pnp", "nmos", "jfet", "behavioural"])
def test_low_frequency_gain_is_the_slope_of_the_dc_transfer_curve(netlist, out, vins):
    for vin in vins:
        def vout(dv: float) -> float:
            return operating_point(read_netlist(netlist.format(vin=vin + dv))).voltage(out)

        d1 = (vout(H_STEP) - vout(-H_STEP)) / (2 * H_STEP)
        d2 = (vout(2 * H_STEP) - vout(-2 * H_STEP)) / (4 * H_STEP)
        slope = (4 * d1 - d2) / 3  # Richardson: the h² term cancels
        got = read_netlist(netlist.format(vin=vin)).ac("VIN", out, freqs=np.array([1.0]))
        gain = got.transfer[0]
        assert abs(gain.imag) < 1e-15
        assert gain.real == pytest.approx(slope, rel=SLOPE_REL), vin
        # and the slope is not trivially small: the check compares something
        assert abs(slope) > 0.05, vin


# ------------------------------------------------------------------ 2. CE band-pass

def depletion_c(v: float, cjo: float, vj: float, m: float, fc: float) -> float:
    """CJO·(1 − V/VJ)^−M (the graded junction, Sze, *Physics of Semiconductor Devices*)
    below FC·VJ, its tangent line above (the usual continuation, from memory)."""
    if v < fc * vj:
        return cjo * (1.0 - v / vj) ** (-m)
    return cjo * (1.0 - fc) ** (-m) * (1.0 + m * (v - fc * vj) / (vj * (1.0 - fc)))


CE_BP = """Quillmere qm_mic3 microphone preamp, band-pass common-emitter stage
VCC vcc 0 DC 12
VIN in 0 DC 0 AC 1
RSIG in x 1k
CIN x b 4.7u
RB1 vcc b 68k
RB2 b 0 15k
RC vcc c 5.6k
RE1 e f 220
RE2 f 0 1.5k
CE f 0 100u
COUT c o 2.2u
RL o 0 22k
Q1 c b e qm_qmic
.model qm_qmic NPN (IS=5f BF=150 BR=3 VAF={vaf} {caps})
"""
CE_P = dict(RSIG=1e3, CIN=4.7e-6, RB1=68e3, RB2=15e3, RC=5.6e3, RE1=220.0, RE2=1.5e3,
            CE=100e-6, COUT=2.2e-6, RL=22e3, IS=5e-15, BF=150.0, BR=3.0, VCC=12.0)
CE_CAPS = dict(CJE=1.5e-12, VJE=0.8, MJE=0.35, CJC=0.8e-12, VJC=0.7, MJC=0.4, TF=0.4e-9,
               FC=0.5)
CE_CAPS_CARD = "CJE=1.5p VJE=0.8 MJE=0.35 CJC=0.8p VJC=0.7 MJC=0.4 TF=0.4n FC=0.5"


def ce_bias(vaf: float) -> tuple[np.ndarray, dict[str, float]]:
    """(Vb, Vc, Ve) by fsolve on KCL at base, collector, emitter (capacitors open: the
    emitter current runs through RE1 + RE2), and the Ebers–Moll point there."""
    p = CE_P

    def kcl(x):
        vb, vc, ve = x
        t = ebers_moll(vb - ve, vb - vc, p["IS"], p["BF"], p["BR"], vaf)
        return [(p["VCC"] - vb) / p["RB1"] - vb / p["RB2"] - t["ib"],
                (p["VCC"] - vc) / p["RC"] - t["ic"],
                t["ic"] + t["ib"] - ve / (p["RE1"] + p["RE2"])]

    x = polish(kcl, [2.1, 6.0, 1.4])
    return x, ebers_moll(x[0] - x[2], x[0] - x[1], p["IS"], p["BF"], p["BR"], vaf)


def ce_nodal(f: np.ndarray, vaf: float, caps: bool) -> np.ndarray:
    """V(o)/V(in) of the small-signal circuit: the passive parts, and the hybrid-π
    transistor (Sedra & Smith) from the Ebers–Moll derivatives at the fsolve bias; with
    the junction and transit capacitances Cπ = Cje(Vbe) + TF·∂IF/∂Vbe·(1 − Vbc/VAF),
    Cμ = Cjc(Vbc) and the trans-capacitance ∂(TF·IF·(1 − Vbc/VAF))/∂Vbc."""
    p = CE_P
    x, t = ce_bias(vaf)
    vbe, vbc = x[0] - x[2], x[0] - x[1]
    cpi = cmu = ctr = 0.0
    if caps:
        k = CE_CAPS
        cpi = (depletion_c(vbe, k["CJE"], k["VJE"], k["MJE"], k["FC"])
               + k["TF"] * t["g_f"] * t["early"])
        cmu = depletion_c(vbc, k["CJC"], k["VJC"], k["MJC"], k["FC"])
        ctr = -k["TF"] * t["i_f"] / vaf
    n = Nodal()
    n.y("in", "x", 1 / p["RSIG"])
    n.y("x", "b", c=p["CIN"])
    n.y("b", "0", 1 / p["RB1"] + 1 / p["RB2"])  # the supply is AC ground
    n.y("c", "0", 1 / p["RC"])
    n.y("e", "f", 1 / p["RE1"])
    n.y("f", "0", 1 / p["RE2"], p["CE"])
    n.y("c", "o", c=p["COUT"])
    n.y("o", "0", 1 / p["RL"])
    n.bjt("c", "b", "e", t, cpi, cmu, ctr)
    return n.solve(f, {"in": 1.0, "0": 0.0})["o"]


def test_ce_band_pass_against_a_hybrid_pi_nodal_solve():
    f = np.logspace(0, 9, 19)
    got = read_netlist(CE_BP.format(vaf=90, caps=CE_CAPS_CARD)).ac("VIN", "o", freqs=f)
    want = ce_nodal(f, 90.0, caps=True)
    # the same circuit, so equal to rounding: the conditioning of the two solves (a 100 µF
    # bypass beside sub-picofarad junctions) leaves 1.2e-9 at 1 GHz, 1e-12 at midband
    np.testing.assert_allclose(got.transfer, want, rtol=1e-8)
    # and it is a band-pass: the coupling and bypass capacitors cut the lows, Cπ and Cμ
    # the highs (|H| at 1 Hz and 1 GHz far below its value at 10 kHz, index 8)
    mid = abs(want[8])
    assert abs(want[0]) < 0.05 * mid and abs(want[-1]) < 0.05 * mid and mid > 5


def test_ce_midband_gain_against_the_textbook_expression():
    # Textbook CE stage with an unbypassed emitter resistor (Sedra & Smith, from memory):
    # Av = −rin/(rin + RSIG) · α·(RC ‖ RL)/(re + RE1), rin = RB1 ‖ RB2 ‖ (β + 1)(re + RE1),
    # re = α/gm, gm = Ic/Vt, α = β/(β + 1). Without the Early effect and the device
    # capacitances this is the exact midband gain once CIN, CE and COUT are shorts; at
    # 10 kHz their reactances (3.4 Ω against RSIG + rin ≈ 9 kΩ, 0.16 Ω against
    # re + RE1 ≈ 240 Ω, 7.2 Ω against RC + RL ≈ 28 kΩ) change the gain by under 1e-3:
    # tolerance 2e-3
    p = CE_P
    x, t = ce_bias(math.inf)
    beta = p["BF"]
    gm = t["ic"] / VT
    alpha = beta / (beta + 1)
    re = alpha / gm
    rin = 1 / (1 / p["RB1"] + 1 / p["RB2"] + 1 / ((beta + 1) * (re + p["RE1"])))
    rl = p["RC"] * p["RL"] / (p["RC"] + p["RL"])
    textbook = -rin / (rin + p["RSIG"]) * alpha * rl / (re + p["RE1"])
    got = read_netlist(CE_BP.format(vaf=0, caps="")).ac("VIN", "o", freqs=np.array([10e3]))
    assert got.transfer[0] == pytest.approx(textbook, rel=2e-3)
    assert abs(got.transfer[0] / textbook - 1) > 1e-6  # the capacitors do show, a little
    # the same stage without the Early effect against the nodal solve, exactly
    assert got.transfer[0] == pytest.approx(ce_nodal(np.array([10e3]), math.inf, False)[0],
                                            rel=1e-9)


# ------------------------------------------------------------------ 3. MOS Miller pole

CS_MILLER = """Quillmere qm_drv9 common-source line driver
VDD vdd 0 DC 12
VIN in 0 DC 2.2 AC 1
RSIG in g 47k
RD vdd d 2.2k
CL d 0 2p
M1 d g 0 0 qm_nmil L=2u W=100u
.model qm_nmil NMOS (LEVEL=1 KP=100u VTO=1.0 LAMBDA=0.02 TOX=20n CGSO=0.3n CGDO=1n)
"""
MIL = dict(VDD=12.0, VG=2.2, RSIG=47e3, RD=2.2e3, CL=2e-12, KP=100e-6, VTO=1.0, LAM=0.02,
           TOX=20e-9, CGSO=0.3e-9, CGDO=1e-9, W=100e-6, L=2e-6)


def miller_reference() -> dict[str, float]:
    """The stage's bias and small-signal elements, written here. Square law in
    saturation (Shichman & Hodges 1968), Id = β/2·u²·(1 + λ·Vds), u = Vgs − VTO, with
    Vds = VDD − Id·RD, by brentq on Vds; gm = β·u·(1 + λ·Vds), gds = β/2·u²·λ. Meyer's
    (1971) saturation capacitances Cgs = ⅔·COX·W·L, Cgd = 0, COX = 3.9·ε0/TOX, plus the
    overlaps CGSO·W and CGDO·W."""
    p = MIL
    beta = p["KP"] * p["W"] / p["L"]
    u = p["VG"] - p["VTO"]
    vds = brentq(lambda v: p["VDD"] - v - p["RD"] * beta / 2 * u * u * (1 + p["LAM"] * v),
                 0.0, p["VDD"], xtol=1e-15, rtol=1e-15)
    assert vds > u  # saturation
    cox = 3.9 * EPS0 / p["TOX"]
    return dict(vds=vds, gm=beta * u * (1 + p["LAM"] * vds), gds=beta / 2 * u * u * p["LAM"],
                cgs=2 / 3 * cox * p["W"] * p["L"] + p["CGSO"] * p["W"],
                cgd=p["CGDO"] * p["W"])


def miller_nodal() -> Nodal:
    p, r = MIL, miller_reference()
    n = Nodal()
    n.y("in", "g", 1 / p["RSIG"])
    n.y("g", "0", c=r["cgs"])
    n.y("g", "d", c=r["cgd"])
    n.y("d", "0", 1 / p["RD"] + r["gds"], p["CL"])
    n.vccs("d", "0", "g", "0", r["gm"])  # the drain current, d → source (ground)
    return n


def test_mos_miller_pole_against_a_nodal_solve_with_meyer_capacitances():
    circuit = read_netlist(CS_MILLER)
    op = operating_point(circuit)
    r = miller_reference()
    assert op.voltage("d") == pytest.approx(r["vds"], rel=1e-9)
    q = quantities(op, "M1")
    assert q["Cgs"] == pytest.approx(r["cgs"], rel=1e-9)   # Meyer (1971) + overlap
    assert q["Cgd"] == pytest.approx(r["cgd"], rel=1e-9)
    f = np.logspace(3, 10, 15)
    resp = circuit.ac("VIN", "d", freqs=f)
    np.testing.assert_allclose(resp.transfer, miller_nodal().solve(f, {"in": 1.0, "0": 0.0})["d"],
                               rtol=1e-9)
    poles, _, complete = resp.roots_hz()
    want = np.sort(miller_nodal().poles({"in", "0"}).real)
    assert complete and np.all(np.abs(poles.imag) < 1e-6 * np.abs(poles.real))
    np.testing.assert_allclose(np.sort(poles.real), want, rtol=1e-8)  # two real poles


def test_mos_miller_pole_against_the_miller_approximation():
    # Miller (Sedra & Smith, from memory): the input pole 1/(2π·RSIG·(Cgs + Cgd·(1 + gm·RL'))),
    # RL' = RD ‖ ro. It neglects the output node's time constant RL'·(Cgd + CL) and the
    # second pole. The exact denominator is 1 + b1·s + b2·s² with
    # b1 = RSIG·(Cgs + Cgd·(1 + gm·RL')) + RL'·(Cgd + CL) (open-circuit time constants)
    # and b2 = RSIG·RL'·(Cgs·Cgd + Cgs·CL + Cgd·CL); the dominant pole is 1/b1 within
    # about b2/b1². So the Miller estimate deserves a relative error of about
    # RL'·(Cgd + CL)/(Miller time constant) + b2/b1² (here ≈ 7 %), and errs high.
    p, r = MIL, miller_reference()
    rl = 1 / (1 / p["RD"] + r["gds"])
    tau_m = p["RSIG"] * (r["cgs"] + r["cgd"] * (1 + r["gm"] * rl))
    tau_out = rl * (r["cgd"] + p["CL"])
    b1 = tau_m + tau_out
    b2 = p["RSIG"] * rl * (r["cgs"] * r["cgd"] + r["cgs"] * p["CL"] + r["cgd"] * p["CL"])
    allowed = tau_out / tau_m + b2 / b1 ** 2
    poles, _, _ = read_netlist(CS_MILLER).ac("VIN", "d", freqs=np.logspace(3, 10, 8)).roots_hz()
    dominant = -max(poles.real)  # the pole nearest the origin, Hz
    miller = 1 / (2 * math.pi * tau_m)
    error = miller / dominant - 1
    assert 0 < error < allowed, (error, allowed)
    assert error > 0.3 * allowed  # and the estimate of the error is of the right size
    # the gain-bandwidth picture holds at once: 1/b1 is within b2/b1² of the pole
    assert 1 / (2 * math.pi * b1) == pytest.approx(dominant, rel=1.5 * b2 / b1 ** 2)


# ------------------------------------------------------------------ 4. JFET follower

JFET_FOLLOWER = """Quillmere qm_buf4 JFET source-follower buffer
VDD vdd 0 DC 15
VIN in 0 DC 0 AC 1
RG in g 1meg
J1 vdd g s qm_jbuf
RS s 0 2.2k
.model qm_jbuf NJF (BETA=1.3m VTO=-2.2 LAMBDA={lam} IS=10f)
"""
JF = dict(VDD=15.0, RG=1e6, RS=2.2e3, BETA=1.3e-3, VTO=-2.2, IS=10e-15)


@pytest.mark.parametrize("lam", [0.0, 0.015])
def test_jfet_follower_gain_from_the_square_law_at_an_independent_bias(lam):
    p = JF

    # KCL at the gate (RG carries the two reverse gate-junction currents, Shockley) and
    # at the source (the square-law drain current, Shichman & Hodges, into RS), by fsolve
    def kcl(x):
        vg, vs = x
        u = vg - vs - p["VTO"]
        i_d = p["BETA"] * u * u * (1 + lam * (p["VDD"] - vs))
        i_g = junction(vg - vs, p["IS"])[0] + junction(vg - p["VDD"], p["IS"])[0]
        return [(0 - vg) / p["RG"] - i_g, i_d + junction(vg - vs, p["IS"])[0] - vs / p["RS"]]

    vg, vs = polish(kcl, [0.0, 1.5])
    u = vg - vs - p["VTO"]
    vds = p["VDD"] - vs
    assert 0 < u < vds  # saturation
    circuit = read_netlist(JFET_FOLLOWER.format(lam=lam))
    op = operating_point(circuit)
    assert op.voltage("s") == pytest.approx(vs, rel=1e-9)
    # gm = 2·BETA·u·(1 + λ·Vds), gds = BETA·u²·λ (the square law differentiated);
    # follower gain gm·RS'/(1 + gm·RS') with RS' = RS ‖ ro (Sedra & Smith, from memory),
    # exact for this circuit: the drain is at AC ground and the gate junctions, reverse
    # biased by 1.5 V and 13 V, conduct under 1e-35 S against RG's 1 µS
    gm = 2 * p["BETA"] * u * (1 + lam * vds)
    gds = p["BETA"] * u * u * lam
    rs = 1 / (1 / p["RS"] + gds)
    want = gm * rs / (1 + gm * rs)
    got = circuit.ac("VIN", "s", freqs=np.array([1e3])).transfer[0]
    assert got == pytest.approx(want, rel=1e-9)
    assert quantities(op, "J1")["gm"] == pytest.approx(gm, rel=1e-9)
