"""Multi-transistor circuits at their operating point (netcheck.mna.bias): a differential
pair, an op-amp macro-model of our own in a Sallen–Key low-pass, and a latch with three
DC solutions, against references written here.

The device laws, the hybrid-π nodal solve (:class:`Nodal`) and the scipy helpers are
those of test_bias_circuits.py (Shockley 1949; Ebers & Moll 1954 transport form with
the Early factor, Early 1952). Biases are solved here by fsolve/brentq on KCL written
by hand; the closed forms are the textbook ones (Sedra & Smith, *Microelectronic
Circuits*, quoted from memory) or derived in the comment beside them.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from scipy.optimize import brentq, fsolve

from mna.test_bias_circuits import VT, Nodal, ebers_moll, junction, polish, quantities
from netcheck.api import read_netlist
from netcheck.cli import FAIL, OK
from netcheck.cli import main as netcheck_main
from netcheck.mna.bias import operating_point


def check_cli(tmp_path: Path, netlist: str, source: str, output: str, sweep: tuple[str, str],
              limits: str) -> dict:
    """Run ``netcheck check`` as a user would (in process) on the netlist and a spec with
    these limits (a TOML array of inline tables), and return the spec's JSON result."""
    (tmp_path / "c.cir").write_text(netlist)
    (tmp_path / "c.toml").write_text(
        f'title = "Quillmere bench check"\nnetlist = "c.cir"\nsource = "{source}"\n'
        f'output = "{output}"\nlimits = [{limits}]\n\n[sweep]\nstart = "{sweep[0]}"\n'
        f'stop = "{sweep[1]}"\npoints_per_decade = 20\n')
    out = tmp_path / "r.json"
    code = netcheck_main(["check", str(tmp_path / "c.toml"), "--jobs", "1", "-q",
                          "--json", str(out)])
    assert code in (OK, FAIL)
    return json.loads(out.read_text("utf-8"))["specs"][0]


# ------------------------------------------------------------------ 1. differential pair

DIFF_PAIR = """Quillmere qm_bal2 balanced line receiver, BJT differential pair
VCC vcc 0 DC 12
VEE vee 0 DC -12
VIN1 in1 0 DC 0 AC 1
VIN2 in2 0 DC 0 AC 1
RB1 in1 b1 1k
RB2 in2 b2 1k
Q1 c1 b1 e qm_qbal
Q2 c2 b2 e qm_qbal
RC1 vcc c1 10k
RC2 vcc c2 10k
RT e vee 11k
.model qm_qbal NPN (IS=8f BF=120 BR=2 VAF={vaf})
"""
DP = dict(VCC=12.0, VEE=-12.0, RB=1e3, RC=10e3, RT=11e3, IS=8e-15, BF=120.0, BR=2.0)


def pair_bias(vaf: float) -> tuple[np.ndarray, dict, dict]:
    """(Vb1, Vb2, Vc1, Vc2, Ve) by fsolve on KCL at the five nodes (Ebers–Moll written
    here), and each transistor's point."""
    p = DP

    def tr(x):
        vb1, vb2, vc1, vc2, ve = x
        return (ebers_moll(vb1 - ve, vb1 - vc1, p["IS"], p["BF"], p["BR"], vaf),
                ebers_moll(vb2 - ve, vb2 - vc2, p["IS"], p["BF"], p["BR"], vaf))

    def kcl(x):
        vb1, vb2, vc1, vc2, ve = x
        t1, t2 = tr(x)
        return [-vb1 / p["RB"] - t1["ib"], -vb2 / p["RB"] - t2["ib"],
                (p["VCC"] - vc1) / p["RC"] - t1["ic"], (p["VCC"] - vc2) / p["RC"] - t2["ic"],
                t1["ic"] + t1["ib"] + t2["ic"] + t2["ib"] - (ve - p["VEE"]) / p["RT"]]

    x = polish(kcl, [-0.005, -0.005, 7.0, 7.0, -0.7])
    return (x, *tr(x))


def pair_gains(vaf: float) -> tuple[complex, complex]:
    """(differential gain, common-mode gain) at V(c1) from netcheck, by superposition of
    its two single-source responses: with vin1 = vcm + vd/2 and vin2 = vcm − vd/2,
    V(c1) = H1·vin1 + H2·vin2, so Ad = (H1 − H2)/2 and Acm = H1 + H2."""
    circuit = read_netlist(DIFF_PAIR.format(vaf=vaf))
    f = np.array([1e3])
    h1 = circuit.ac("VIN1", "c1", freqs=f).transfer[0]
    h2 = circuit.ac("VIN2", "c1", freqs=f).transfer[0]
    return (h1 - h2) / 2, h1 + h2


def test_differential_pair_bias_against_fsolve():
    x, t1, _ = pair_bias(60.0)
    op = operating_point(read_netlist(DIFF_PAIR.format(vaf=60)))
    for node, want in zip(("b1", "b2", "c1", "c2", "e"), x):
        assert op.voltage(node) == pytest.approx(want, rel=1e-9, abs=1e-13), node
    assert quantities(op, "Q1")["Ic"] == pytest.approx(t1["ic"], rel=1e-9)
    # the tail sets the current: (0 − Vbe − VEE)/RT shared by two, within the base drop
    assert 2 * t1["ic"] == pytest.approx((-0.65 - DP["VEE"]) / DP["RT"], rel=0.02)


def test_differential_pair_gains_against_the_half_circuit_closed_forms():
    # Without the Early effect the half-circuit analysis (Sedra & Smith, from memory) is
    # exact for this symmetric pair: the differential signal leaves the emitters at AC
    # ground, the common-mode signal sees 2·RT in each half's emitter:
    #   Ad  = −½·gm·RC·rπ/(rπ + RB) = −½·β·RC/(RB + rπ)   (single-ended, per vd)
    #   Acm = −β·RC/(RB + rπ + 2(β + 1)·RT)                (single-ended, per vcm)
    # with gm = ∂Ic/∂Vbe and rπ = 1/(∂Ib/∂Vbe) at the fsolve bias, β = gm·rπ = BF; the
    # reverse junction (Vbc ≈ −7 V) adds terms of order exp(−7/Vt) ≈ 1e-117
    p = DP
    _, t1, _ = pair_bias(math.inf)
    gm, rpi = t1["dic_dvbe"], 1 / t1["dib_dvbe"]
    beta = gm * rpi
    ad, acm = pair_gains(0)
    assert ad == pytest.approx(-0.5 * gm * p["RC"] * rpi / (rpi + p["RB"]), rel=1e-9)
    assert acm == pytest.approx(-beta * p["RC"] / (p["RB"] + rpi + 2 * (beta + 1) * p["RT"]),
                                rel=1e-9)
    # CMRR = |Ad/Acm| = (RB + rπ + 2(β + 1)·RT)/(2·(RB + rπ)) (the ratio of the two), the
    # textbook's ≈ gm·RT once RB ≪ rπ and β ≫ 1: here RB/rπ ≈ 0.15 takes 1.2 dB off it
    # and (β + 1)/β with the ½ add 0.1 dB back
    cmrr = (p["RB"] + rpi + 2 * (beta + 1) * p["RT"]) / (2 * (p["RB"] + rpi))
    assert abs(ad / acm) == pytest.approx(cmrr, rel=1e-9)
    assert 20 * math.log10(cmrr) == pytest.approx(
        20 * math.log10(gm * p["RT"] * rpi / (rpi + p["RB"])), abs=0.15)


def test_differential_pair_with_early_effect_against_a_nodal_solve():
    # The Early factor (1 − Vbc/VAF) of this model puts the output conductance
    # go = −∂Ic/∂Vbc between collector and base; the common-mode half circuit then couples
    # three nodes, so the reference is the nodal solve written here
    p = DP
    x, t1, t2 = pair_bias(60.0)

    def gain(drive: str) -> complex:
        n = Nodal()
        for b, src in (("b1", "in1"), ("b2", "in2")):
            n.y(src, b, 1 / p["RB"])
        n.y("c1", "0", 1 / p["RC"])
        n.y("c2", "0", 1 / p["RC"])
        n.y("e", "0", 1 / p["RT"])
        n.bjt("c1", "b1", "e", t1)
        n.bjt("c2", "b2", "e", t2)
        held = {"in1": 0.0, "in2": 0.0, "0": 0.0, drive: 1.0}
        return n.solve(np.array([1e3]), held)["c1"][0]

    h1, h2 = gain("in1"), gain("in2")
    ad, acm = pair_gains(60)
    assert ad == pytest.approx((h1 - h2) / 2, rel=1e-9)
    assert acm == pytest.approx(h1 + h2, rel=1e-9)
    # the differential half circuit (emitters at AC ground by symmetry) still has a closed
    # form, by hand: KCL at the collector vc/RC + gm·vb + go·(vc − vb) = 0 with
    # vb = vin·rπ/(rπ + RB) (∂Ib/∂Vbc ≈ exp(−7 V/Vt) ≈ 0), so per vd, single-ended,
    # Ad = −½·(gm − go)/(1/RC + go)·rπ/(rπ + RB): the textbook −½·gm·(RC ‖ ro) with
    # ro = 1/go (Sedra & Smith, from memory), less the small feedthrough go
    gm, go, rpi = t1["dic_dvbe"], -t1["dic_dvbc"], 1 / t1["dib_dvbe"]
    assert ad == pytest.approx(-0.5 * (gm - go) / (1 / p["RC"] + go) * rpi / (rpi + p["RB"]),
                               rel=1e-9)
    assert p["RC"] * go > 0.05  # and ro matters: it takes over 5 % off the gain


# ------------------------------------------------------------------ 2. op-amp in Sallen–Key

# The op-amp macro-model of our own: a BJT differential pair with a resistive tail, a
# polynomial transconductor into a resistor–capacitor (the dominant pole), back-to-back
# clamp diodes on that node, and a polynomial unity buffer behind an output resistor.
OPAMP = """.subckt qm_oa7 inp inn out vcc vee
Q1 c1 inp e qm_qoa
Q2 c2 inn e qm_qoa
RC1 vcc c1 5k
RC2 vcc c2 5k
RT e vee 113k
G2 0 g POLY(1) c2 c1 0 1m
R2 g 0 10meg
C2 g 0 1.59n
D1 g clh qm_dclamp
VCH clh 0 DC 10
D2 cll g qm_dclamp
VCL cll 0 DC -10
E3 drive 0 POLY(1) g 0 0 1
ROUT drive out 50
.model qm_qoa NPN (IS=2f BF=2000 BR=1)
.model qm_dclamp D (IS=1f)
.ends qm_oa7
"""
OA = dict(RC=5e3, RT=113e3, GM2=1e-3, R2=10e6, C2=1.59e-9, ROUT=50.0, IS=2e-15, BF=2000.0,
          BR=1.0, ISD=1e-15, VCLAMP=10.0, VCC=12.0, VEE=-12.0)

# unity-gain Sallen–Key low-pass: R1 = R2 = 10k, C1 (output to the R1–R2 junction) and
# C2 (non-inverting input to ground) for f0 = 1 kHz, Q = 2: with equal resistors
# Q = √(C1/C2)/2, so C1 = 16·C2, and f0 = 1/(2π·R·√(C1·C2)) = 1/(2π·R·4·C2)
SK_R = 10e3
SK_C2 = 1 / (2 * math.pi * SK_R * 4 * 1e3)
SK_C1 = 16 * SK_C2
SALLEN_KEY = f"""Quillmere qm_aaf2 anti-alias low-pass, 1 kHz, Q 2, on the qm_oa7 macro-model
{OPAMP}
VCC vcc 0 DC 12
VEE vee 0 DC -12
VIN in 0 DC 0 AC 1
R1 in a {SK_R!r}
R2 a b {SK_R!r}
C1 a out {SK_C1!r}
C2 b 0 {SK_C2!r}
XU1 b out out vcc vee qm_oa7
RL out 0 10k
"""


def sk_closed_form() -> tuple[float, float]:
    """f0 = 1/(2π√(R1R2C1C2)), Q = √(R1R2C1C2)/(C2(R1 + R2)) of the unity-gain
    Sallen–Key low-pass with an ideal op-amp (nodal analysis of the two nodes, the
    standard result, quoted from memory)."""
    rrcc = SK_R * SK_R * SK_C1 * SK_C2
    return 1 / (2 * math.pi * math.sqrt(rrcc)), math.sqrt(rrcc) / (SK_C2 * 2 * SK_R)


def sk_bias() -> dict:
    """The closed loop's DC solution by fsolve on KCL written here (capacitors open):
    a, b (input side), out, the tail e, the collectors c1, c2 and the gain node g."""
    o = OA

    def parts(x):
        va, vb, vout, ve, vc1, vc2, vg = x
        t1 = ebers_moll(vb - ve, vb - vc1, o["IS"], o["BF"], o["BR"])
        t2 = ebers_moll(vout - ve, vout - vc2, o["IS"], o["BF"], o["BR"])
        return t1, t2

    def kcl(x):
        va, vb, vout, ve, vc1, vc2, vg = x
        t1, t2 = parts(x)
        clamp = (junction(vg - o["VCLAMP"], o["ISD"])[0]       # D1, g → +10 V
                 - junction(-o["VCLAMP"] - vg, o["ISD"])[0])   # D2, −10 V → g
        return [(0 - va) / SK_R - (va - vb) / SK_R,
                (va - vb) / SK_R - t1["ib"],
                (vg - vout) / o["ROUT"] - vout / 10e3 - t2["ib"],
                t1["ic"] + t1["ib"] + t2["ic"] + t2["ib"] - (ve - o["VEE"]) / o["RT"],
                (o["VCC"] - vc1) / o["RC"] - t1["ic"],
                (o["VCC"] - vc2) / o["RC"] - t2["ic"],
                o["GM2"] * (vc2 - vc1) - vg / o["R2"] - clamp]

    x = polish(kcl, [-0.04, -0.04, -0.04, -0.7, 9.5, 9.5, -0.04])
    t1, t2 = parts(x)
    return dict(x=x, t1=t1, t2=t2)


def sk_nodal() -> Nodal:
    """The small-signal closed loop written here: the hybrid-π pair at the fsolve bias,
    the transconductor, R2 ‖ C2, the clamp diodes' conductances (Shockley), the buffer
    as its Norton equivalent behind ROUT, and the filter."""
    o, b = OA, sk_bias()
    vg = b["x"][6]
    n = Nodal()
    n.y("in", "a", 1 / SK_R)
    n.y("a", "b", 1 / SK_R)
    n.y("a", "out", c=SK_C1)
    n.y("b", "0", c=SK_C2)
    n.y("out", "0", 1 / 10e3)
    n.bjt("c1", "b", "e", b["t1"])
    n.bjt("c2", "out", "e", b["t2"])
    n.y("c1", "0", 1 / o["RC"])
    n.y("c2", "0", 1 / o["RC"])
    n.y("e", "0", 1 / o["RT"])
    n.vccs("0", "g", "c2", "c1", o["GM2"])  # the G card: leaves n+ (0), enters g
    n.y("g", "0", 1 / o["R2"] + junction(vg - o["VCLAMP"], o["ISD"])[1]
        + junction(-o["VCLAMP"] - vg, o["ISD"])[1], o["C2"])
    n.y("out", "0", 1 / o["ROUT"])
    n.vccs("0", "out", "g", "0", 1 / o["ROUT"])  # E3 (gain 1) behind ROUT, as Norton
    return n


def pole_pair(poles: np.ndarray) -> tuple[float, float]:
    """(f0, Q) of the complex pole pair: f0 = |p|, Q = |p|/(2·|Re p|)."""
    (p,) = [p for p in poles if p.imag > 0]
    return abs(p), abs(p) / (2 * abs(p.real))


def test_sallen_key_poles_against_the_macro_model_nodal_solve():
    circuit = read_netlist(SALLEN_KEY)
    op = operating_point(circuit)
    b = sk_bias()
    for node, want in zip(("a", "b", "out"), b["x"][:3]):
        assert op.voltage(node) == pytest.approx(want, rel=1e-9), node
    f = np.logspace(1, 6, 11)
    resp = circuit.ac("VIN", "out", freqs=f)
    np.testing.assert_allclose(resp.transfer, sk_nodal().solve(f, {"in": 1.0, "0": 0.0})["out"],
                               rtol=1e-9)
    poles, _, complete = resp.roots_hz()
    want = sk_nodal().poles({"in", "0"})
    assert complete and len(poles) == len(want) == 3
    for p in want:  # each pole of the reference has its twin in netcheck's
        assert np.min(np.abs(poles - p)) < 1e-8 * abs(p), (p, poles)


def sk_finite_gain() -> tuple[float, float, float]:
    """(f0, Q) of the closed forms corrected for the op-amp's finite gain, and δ, the
    size of that correction. With the follower gain K = A/(1 + A), the unity-gain
    Sallen–Key denominator is 1 + s·(C2(R1 + R2) + R1C1(1 − K)) + s²·R1R2C1C2 (nodal
    analysis of its two nodes). The macro-model's A(s) = A0/(1 + s/ωp) gives
    1 − K = 1/(1 + A) ≈ 1/A0 + s/ωT (ωT = A0·ωp, for |A| ≫ 1), which adds R1C1/A0 to the
    s term and R1C1/ωT to the s² term: f0 falls and Q rises by δ = 1/(2·ωT·R2·C2) to
    first order. A0 and ωT of the macro-model, from its parts at the fsolve bias: the
    pair's differential gain gm·RC (gm = Ic/Vt) times the transconductor into R2 ‖ C2,
    A0 = gm·RC·GM2·R2, ωT = gm·RC·GM2/C2."""
    b = sk_bias()
    gm = b["t1"]["ic"] / VT
    a0 = gm * OA["RC"] * OA["GM2"] * OA["R2"]
    omega_t = gm * OA["RC"] * OA["GM2"] / OA["C2"]
    assert 2 * math.pi * 0.8e6 < omega_t < 2 * math.pi * 1.2e6  # about 1 MHz
    b1 = SK_C2 * 2 * SK_R + SK_R * SK_C1 / a0
    b2 = SK_R * SK_R * SK_C1 * SK_C2 + SK_R * SK_C1 / omega_t
    return 1 / (2 * math.pi * math.sqrt(b2)), math.sqrt(b2) / b1, 1 / (2 * omega_t * SK_R * SK_C2)


def test_sallen_key_f0_and_q_from_the_poles_against_the_closed_forms():
    f0, q = sk_closed_form()
    assert f0 == pytest.approx(1e3, rel=1e-12) and q == pytest.approx(2.0, rel=1e-12)
    poles, _, _ = read_netlist(SALLEN_KEY).ac("VIN", "out",
                                              freqs=np.logspace(1, 6, 6)).roots_hz()
    got_f0, got_q = pole_pair(poles)
    f0_c, q_c, delta = sk_finite_gain()  # δ ≈ 2.05e-3
    # against the ideal closed forms: off by the finite gain-bandwidth, within 2·δ
    # (seen: f0 −2.05e-3, Q +1.83e-3)
    assert got_f0 == pytest.approx(f0, rel=2 * delta)
    assert got_q == pytest.approx(q, rel=2 * delta)
    assert abs(got_f0 / f0 - 1) > delta / 2  # the finite gain-bandwidth does show
    # the corrected closed forms explain it; what is left is second order in δ (4e-6)
    # and the input pair's common-mode resistance 2(β + 1)·RT ≈ 450 MΩ across C2
    # (40 kΩ at f0), which lowers Q by about Q·40k/450M ≈ 2e-4: within δ/4
    # (seen: f0 7e-6, Q 1.3e-4)
    assert got_f0 == pytest.approx(f0_c, rel=delta / 4)
    assert got_q == pytest.approx(q_c, rel=delta / 4)


SK_LIMITS = ('{kind = "gain", band = ["10", "100"], min_db = -0.1, max_db = 0.1}, '
             '{kind = "corner", range = ["1.1k", "1.25k"], side = "high"}')


def test_sallen_key_measured_by_the_check_against_the_closed_forms(tmp_path):
    # the check measures the peak (frequency and gain) and the half-power corner. For
    # H = 1/(1 − x² + j·x/Q), x = f/f0 (the second-order low-pass):
    #   peak at x² = 1 − 1/(2Q²), |H|max = Q/√(1 − 1/(4Q²)),
    #   corner where |H|² = 1/2·|H|max² (from the peak, as the check measures it),
    # so the peak gives back Q from |H|max and then f0 from its frequency.
    spec = check_cli(tmp_path, SALLEN_KEY, "VIN", "out", ("10", "100k"), SK_LIMITS)
    assert spec["status"] == "pass"
    measured = spec["measurements"]
    peak = 10 ** (measured["peak_gain_db"] / 20)
    y = 2 * (1 - math.sqrt(1 - 1 / peak ** 2))  # 1/Q² from |H|max
    got_q = 1 / math.sqrt(y)
    got_f0 = measured["f_peak_hz"] / math.sqrt(1 - y / 2)
    f0, q = sk_closed_form()
    delta = sk_finite_gain()[2]
    # the closed forms, off by the finite gain-bandwidth (above) and by the loop's third
    # pole near 1 MHz, which bends |H| near f0 by about f0/1 MHz = 1e-3: within 2·δ + 1e-3
    assert got_f0 == pytest.approx(f0, rel=2 * delta + 1e-3)
    assert got_q == pytest.approx(q, rel=2 * delta + 1e-3)
    # the corner of the ideal second-order response, searched here by brentq: the
    # frequency where |H| is 1/√2 of the peak, above it
    hmax = q / math.sqrt(1 - 1 / (4 * q * q))

    def drop(x):
        return abs(1 / (1 - x * x + 1j * x / q)) - hmax / math.sqrt(2)

    corner = f0 * brentq(drop, math.sqrt(1 - 1 / (2 * q * q)), 3.0, xtol=1e-14)
    (row,) = [r for r in spec["limits"] if r["kind"] == "corner"]
    assert row["measured"] == pytest.approx(corner, rel=2 * delta + 1e-3)
    # the operating point is part of the result: both inputs forward-active, the clamp
    # diodes off, and so no region caution
    devices = {d["name"]: d["region"] for d in spec["operating_point"]["devices"]}
    assert devices["XU1.Q1"] == devices["XU1.Q2"] == "forward-active"
    assert devices["XU1.D1"] == devices["XU1.D2"] == "reverse"
    assert not [c for c in spec["cautions"] if c["code"] in ("analysis-307", "analysis-309")]


# ------------------------------------------------------------------ 3. latch

LATCH = """Quillmere qm_lat2 emitter-coupled latch of the trigger stage
VCC vcc 0 DC 5 AC 1
VEE vee 0 DC -5
RC1 vcc c1 {rc1}
RC2 vcc c2 {rc2}
Q1 c1 c2 e qm_qlat
Q2 c2 c1 e qm_qlat
RT e vee 4.3k
C1 c1 0 2p
C2 c2 0 2p
.model qm_qlat NPN (IS=3f BF=100 BR=2)
"""
LT = dict(VCC=5.0, VEE=-5.0, RT=4.3e3, C=2e-12, IS=3e-15, BF=100.0, BR=2.0)
LATCH_LIMITS = '{kind = "gain", band = ["1k", "10k"], max_db = 40}'


def latch_transistors(x, rc1, rc2):
    vc1, vc2, ve = x  # each base is the other collector
    return (ebers_moll(vc2 - ve, vc2 - vc1, LT["IS"], LT["BF"], LT["BR"]),
            ebers_moll(vc1 - ve, vc1 - vc2, LT["IS"], LT["BF"], LT["BR"]))


def latch_kcl(x, rc1: float, rc2: float, lam: float = 1.0) -> list[float]:
    """KCL at c1, c2 and e with both supplies scaled by ``lam`` (Ebers–Moll)."""
    vc1, vc2, ve = x
    t1, t2 = latch_transistors(x, rc1, rc2)
    return [(lam * LT["VCC"] - vc1) / rc1 - t1["ic"] - t2["ib"],
            (lam * LT["VCC"] - vc2) / rc2 - t2["ic"] - t1["ib"],
            t1["ic"] + t1["ib"] + t2["ic"] + t2["ib"] - (ve - lam * LT["VEE"]) / LT["RT"]]


def latch_solutions(rc1: float, rc2: float) -> list[np.ndarray]:
    """Every DC solution, by brentq on a reduced equation: for a collector difference
    d = Vc1 − Vc2, the sum of the collector KCLs and the emitter KCL fix the mean
    collector voltage and Ve (fsolve); what is left, the difference of the collector
    KCLs, is a function of d alone, scanned for sign changes over the whole possible
    swing (|d| ≤ 0.6 V < the tail current times RC) and each bracket closed by brentq."""
    def rest(d):
        def two(y):
            r = latch_kcl([y[0] + d / 2, y[0] - d / 2, y[1]], rc1, rc2)
            return [r[0] + r[1], r[2]]

        m, ve = fsolve(two, [4.8, 4.1], xtol=1e-12)
        return m, ve

    def reduced(d):
        m, ve = rest(d)
        r = latch_kcl([m + d / 2, m - d / 2, ve], rc1, rc2)
        return r[0] - r[1]

    grid = np.linspace(-0.6, 0.6, 60)  # an even count: d = 0 falls between two points
    g = [reduced(d) for d in grid]
    out = []
    for lo, hi, glo, ghi in zip(grid, grid[1:], g, g[1:]):
        if glo * ghi < 0:
            d = brentq(reduced, lo, hi, xtol=1e-14)
            m, ve = rest(d)
            out.append(polish(lambda x: latch_kcl(x, rc1, rc2), [m + d / 2, m - d / 2, ve]))
    return out


def latch_unstable(x, rc1: float, rc2: float) -> list[complex]:
    """The right-half-plane poles (Hz) of the small-signal latch at ``x``, from the
    hybrid-π nodal pencil written here (the collector capacitors the only storage)."""
    t1, t2 = latch_transistors(x, rc1, rc2)
    n = Nodal()
    n.y("c1", "0", 1 / rc1, LT["C"])
    n.y("c2", "0", 1 / rc2, LT["C"])
    n.y("e", "0", 1 / LT["RT"])
    n.bjt("c1", "c2", "e", t1)
    n.bjt("c2", "c1", "e", t2)
    return [p for p in n.poles({"0"}) if p.real > 0]


def test_symmetric_latch_three_solutions_and_the_one_netcheck_takes(tmp_path):
    sols = latch_solutions(200.0, 200.0)
    assert len(sols) == 3
    low, middle, high = sols  # by d = Vc1 − Vc2: Q1 on, balanced, Q2 on
    assert abs(middle[0] - middle[1]) < 1e-12
    # the two latched states are each other's mirror, the middle one is unstable: a
    # positive real pole (loop gain gm·RC ≈ 8 > 1 around the pair) — the outer ones
    # have none
    assert low[0] == pytest.approx(high[1], rel=1e-12) and low[2] == pytest.approx(high[2])
    (rhp,) = latch_unstable(middle, 200.0, 200.0)
    assert not latch_unstable(low, 200.0, 200.0) and not latch_unstable(high, 200.0, 200.0)
    # docs/devices.md: the first method that converges from zero decides. Newton from
    # x = 0 keeps the symmetry of the equations, so it reaches the balanced state
    op = operating_point(read_netlist(LATCH.format(rc1=200, rc2=200)))
    assert op.method == "Newton"
    for node, want in zip(("c1", "c2", "e"), middle):
        assert op.voltage(node) == pytest.approx(want, rel=1e-9), node
    # … and the check says so: analysis-309 with the pole computed here
    spec = check_cli(tmp_path, LATCH.format(rc1=200, rc2=200), "VCC", "c1", ("1k", "1meg"),
                     LATCH_LIMITS)
    (caution,) = [c for c in spec["cautions"] if c["code"] == "analysis-309"]
    assert caution["severity"] == "warning"
    assert f"s/2π = {rhp.real:.4g} + j0 Hz" in caution["message"]


def continuation(rc1: float, rc2: float, steps: int = 400) -> np.ndarray:
    """Source stepping written here: both supplies scaled by λ from 0 (where x = 0 solves
    the circuit) to 1 in equal small steps, each solved by fsolve from the last. The
    asymmetry picks the branch at once, and no step jumps between branches (each moves
    the collectors by under 20 mV)."""
    x = np.zeros(3)
    for lam in np.linspace(0.0, 1.0, steps + 1)[1:]:
        new, info, ok, msg = fsolve(latch_kcl, x, args=(rc1, rc2, lam), xtol=1e-13,
                                    full_output=True)
        assert np.max(np.abs(info["fvec"])) < 1e-12, (lam, msg)
        assert np.max(np.abs(new[:2] - x[:2])) < 0.02, lam
        x = new
    return polish(lambda y: latch_kcl(y, rc1, rc2), x)


@pytest.mark.parametrize("rc1, rc2", [(200.0, 210.0), (210.0, 200.0)])
def test_asymmetric_latch_operating_point_is_one_of_its_solutions_and_warned(
        tmp_path, rc1, rc2):
    sols = latch_solutions(rc1, rc2)
    assert len(sols) == 3
    stable = [not latch_unstable(s, rc1, rc2) for s in sols]
    assert stable == [True, False, True]
    op = operating_point(read_netlist(LATCH.format(rc1=rc1, rc2=rc2)))
    got = np.array([op.voltage(n) for n in ("c1", "c2", "e")])
    (k,) = [k for k, s in enumerate(sols) if np.allclose(got, s, rtol=1e-9, atol=0)]
    spec = check_cli(tmp_path, LATCH.format(rc1=rc1, rc2=rc2), "VCC", "c1", ("1k", "1meg"),
                     LATCH_LIMITS)
    warned = [c for c in spec["cautions"] if c["code"] == "analysis-309"]
    # never an unstable state silently (issue 15): warned exactly when it is the middle one
    assert bool(warned) == (not stable[k])


@pytest.mark.parametrize("rc1, rc2", [(200.0, 210.0), (210.0, 200.0)])
def test_asymmetric_latch_lands_where_source_stepping_from_zero_leads(rc1, rc2):
    want = continuation(rc1, rc2)
    # the larger collector resistor's side is favoured: its transistor ends up on
    on = 1 if rc2 > rc1 else 0
    assert want[on] < want[1 - on] - 0.3
    assert not latch_unstable(want, rc1, rc2)
    op = operating_point(read_netlist(LATCH.format(rc1=rc1, rc2=rc2)))
    for node, v in zip(("c1", "c2", "e"), want):
        assert op.voltage(node) == pytest.approx(v, rel=1e-9), node
    # Newton from zero found the middle state first; the result says how it got here
    assert op.method == "source stepping in small steps (the Newton solution is unstable)"


# ------------------------------------------------------------------ 4. junctions in series

REVERSE_STRING = """Quillmere qm_prt3 input protection string, reverse-biased
VIN in 0 DC {vin}
R1 in out 2.2k
D1 out m qm_dprt
D2 m 0 qm_dprt
.model qm_dprt D (IS=12f N=1.7 RS=35)
"""


@pytest.mark.parametrize("vin", [0.2, -1.0])
def test_node_between_reverse_biased_diodes_with_series_resistance(vin):
    # Shockley law: the same current (about −IS) flows through both diodes, so with the
    # ohmic drops neglected (RS·IS and R1·IS are below 3e-11 V),
    # IS·(exp((Vout − Vm)/(N·Vt)) − 1) = IS·(exp(Vm/(N·Vt)) − 1): KCL at m, by brentq,
    # and Vm = Vout/2 by symmetry
    def at_m(vm):
        vout = vin  # R1·I ≈ 2.2k·12 fA: 3e-11 V
        return junction(vout - vm, 12e-15, 1.7)[0] - junction(vm, 12e-15, 1.7)[0]

    vm = brentq(at_m, min(vin, 0.0), max(vin, 0.0), xtol=1e-15)
    assert vm == pytest.approx(vin / 2, rel=1e-6)
    op = operating_point(read_netlist(REVERSE_STRING.format(vin=vin)))
    assert op.voltage("m") == pytest.approx(vm, rel=1e-6)
    # m and the diode's internal node are tied together by RS (29 mS) and to the rest
    # only by junction conductances of 3e-13 S down to 3e-18 S, which a double cannot
    # resolve next to 29 mS: the solve needs 1 pS across each junction (the symmetric
    # string keeps Vm = Vin/2 with it) and says so
    assert op.junction_gmin == 1e-12 and "1e-12 S across each junction" in op.method
