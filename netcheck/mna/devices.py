"""Device equations: currents, charges and their exact partial derivatives at a bias point.

Each function takes a model of :mod:`netcheck.netlist.device_models` and terminal voltages
(plain floats) and returns the large-signal values and their analytic partial
derivatives (never finite differences): what a Newton solve of the DC operating point
needs, and the small-signal conductances and capacitances the frequency response is
linearised with. Nothing here stamps a matrix. The equations, and what is honoured or
not, are in docs/devices.md.

Conventions
-----------
* A current is positive flowing *into* the device at the terminal named (``ic`` into the
  collector, ``id`` into the drain, a junction's current from its anode to its cathode).
* The p-type devices (PNP, PMOS, PJF) are their n-type twins with every voltage and
  current negated: I_p(V) = −I_n(−V), Q_p(V) = −Q_n(−V), so each conductance and
  capacitance has the *same* value as the n-type one at the negated voltages. The
  model's ``polarity`` (+1, −1) selects this.
* Series resistances (``RS``, ``RB``, ``RE``, ``RC``, ``RD``) are not in these equations:
  the caller adds each as a resistor between the terminal and an internal node, and
  passes the internal voltages here.
* Each function takes the model as read from its card and the temperature ``temp_c``
  (27 °C when not given): the parameters are taken there by
  :func:`~netcheck.netlist.device_models.at_temperature` (unchanged at the card's
  ``TNOM``), and the thermal voltage is kT/q there.
* The exponential of a junction overflows past about 700·N·Vt (≈ 18 V at N = 1): a
  Newton iteration keeps its junction voltages in range with
  :func:`bounded_junction_voltage`; an unlimited one gets ``OverflowError``.
"""

from __future__ import annotations

import math
from typing import NamedTuple

from ..netlist.device_models import (BOLTZMANN, ELEMENTARY_CHARGE, ZERO_CELSIUS, BjtModel,
                                     DiodeModel, JfetModel, MosModel, at_temperature,
                                     thermal_voltage)

__all__ = ["BOLTZMANN", "ELEMENTARY_CHARGE", "ZERO_CELSIUS", "thermal_voltage",
           "at_temperature", "Junction", "depletion_charge", "junction", "diode", "BjtPoint",
           "bjt", "bjt_region", "SATURATION_RATIO", "MosPoint", "mos1", "MosCaps",
           "mos1_capacitances", "JfetPoint", "jfet", "critical_voltage",
           "bounded_junction_voltage"]

#: the temperature of a check when none is given, °C (common practice, no source)
NOMINAL_TEMP_C = 27.0


# --------------------------------------------------------------------------- junctions

class Junction(NamedTuple):
    """A pn junction at voltage v: current ``i``, conductance ``g`` = di/dv, stored
    charge ``q`` (depletion plus diffusion) and capacitance ``c`` = dq/dv."""

    i: float
    g: float
    q: float
    c: float


def depletion_charge(v: float, cj0: float, vj: float, m: float, fc: float
                     ) -> tuple[float, float]:
    """(charge, capacitance) of a junction's depletion layer at voltage ``v``.

    Below fc·vj the capacitance is cj0·(1 − v/vj)^−m and the charge its integral from
    0; from fc·vj on, the capacitance is continued by its first-order Taylor expansion
    at fc·vj (a straight line), so charge and capacitance are continuous there and the
    charge stays finite for any forward voltage. m = 1 integrates to a logarithm.
    """
    if cj0 == 0:
        return 0.0, 0.0
    vf = fc * vj
    if v < vf:
        x = 1.0 - v / vj
        c = cj0 * x ** -m
        q = -cj0 * vj * math.log(x) if m == 1 else cj0 * vj * (1.0 - x ** (1.0 - m)) / (1.0 - m)
        return q, c
    xf = 1.0 - fc
    qf = -cj0 * vj * math.log(xf) if m == 1 else cj0 * vj * (1.0 - xf ** (1.0 - m)) / (1.0 - m)
    cf = cj0 * xf ** -m                     # capacitance at fc·vj
    slope = cj0 * m / vj * xf ** (-m - 1.0)  # its derivative there
    dv = v - vf
    return qf + cf * dv + 0.5 * slope * dv * dv, cf + slope * dv


def junction(v: float, is_: float, n: float, cj0: float, vj: float, m: float, fc: float,
             tt: float, vt: float) -> Junction:
    """A Shockley junction: i = is·(exp(v/(n·vt)) − 1), the depletion charge of
    :func:`depletion_charge` and the diffusion charge tt·i."""
    nvt = n * vt
    e = math.exp(v / nvt)
    i = is_ * (e - 1.0)
    g = is_ * e / nvt
    qd, cd = depletion_charge(v, cj0, vj, m, fc)
    return Junction(i, g, qd + tt * i, cd + tt * g)


def diode(model: DiodeModel, v: float, temp_c: float = NOMINAL_TEMP_C) -> Junction:
    """The diode of ``model`` at anode-to-cathode voltage ``v`` (across the junction:
    the caller puts ``RS`` in series as a resistor to an internal node) at ``temp_c``
    °C. Breakdown (``BV``, ``IBV``) is not modelled."""
    m = at_temperature(model, temp_c)
    return junction(v, m.IS, m.N, m.CJO, m.VJ, m.M, m.FC, m.TT, thermal_voltage(temp_c))


# --------------------------------------------------------------------------- bipolar

class BjtPoint(NamedTuple):
    """A bipolar transistor at (vbe, vbc): terminal currents ``ic``, ``ib`` (into the
    collector and base; the emitter carries −(ic + ib)), their partial derivatives, the
    base–emitter charge ``qbe`` (depletion + forward transit) with ``cbe`` = ∂qbe/∂vbe
    and the trans-capacitance ``cbe_bc`` = ∂qbe/∂vbc (the Early factor in the transit
    charge), the base–collector charge ``qbc`` (depletion + reverse transit) with
    ``cbc`` = ∂qbc/∂vbc, and the region."""

    ic: float
    ib: float
    dic_dvbe: float
    dic_dvbc: float
    dib_dvbe: float
    dib_dvbc: float
    qbe: float
    qbc: float
    cbe: float
    cbe_bc: float
    cbc: float
    region: str


def bjt(model: BjtModel, vbe: float, vbc: float, temp_c: float = NOMINAL_TEMP_C) -> BjtPoint:
    """Ebers–Moll transport form with the forward Early effect.

    IF = IS(exp(vbe/(NF·Vt)) − 1), IR = IS(exp(vbc/(NR·Vt)) − 1),
    ic = (IF − IR)(1 − vbc/VAF) − IR/BR, ib = IF/BF + IR/BR; charges
    qbe = Qdep(vbe; CJE, VJE, MJE) + TF·IF·(1 − vbc/VAF), qbc = Qdep(vbc; CJC, VJC, MJC) + TR·IR.
    VAF = ∞ leaves the factor 1. ``vbe``, ``vbc`` are across the internal junctions;
    the parameters are taken at ``temp_c`` °C.
    """
    model = at_temperature(model, temp_c)
    p = model.polarity
    vbe, vbc = p * vbe, p * vbc
    vt = thermal_voltage(temp_c)
    jf = junction(vbe, model.IS, model.NF, model.CJE, model.VJE, model.MJE, model.FC, 0.0, vt)
    jr = junction(vbc, model.IS, model.NR, model.CJC, model.VJC, model.MJC, model.FC, 0.0, vt)
    early = 1.0 - vbc / model.VAF          # 1 when VAF is infinite
    d_early = -1.0 / model.VAF             # d(early)/dvbc
    ic = (jf.i - jr.i) * early - jr.i / model.BR
    ib = jf.i / model.BF + jr.i / model.BR
    dic_dvbe = jf.g * early
    dic_dvbc = -jr.g * early + (jf.i - jr.i) * d_early - jr.g / model.BR
    qbe = jf.q + model.TF * jf.i * early
    qbc = jr.q + model.TR * jr.i
    cbe = jf.c + model.TF * jf.g * early
    cbe_bc = model.TF * jf.i * d_early
    cbc = jr.c + model.TR * jr.g
    return BjtPoint(p * ic, p * ib, dic_dvbe, dic_dvbc, jf.g / model.BF, jr.g / model.BR,
                    p * qbe, p * qbc, cbe, cbe_bc, cbc, bjt_region(vbe, vbc, jf.i, jr.i))


#: the collector junction's transport current, relative to the emitter junction's, above
#: which a transistor with both junctions forward-biased reads 'saturated'
SATURATION_RATIO = 1e-4


def bjt_region(vbe: float, vbc: float, i_f: float | None = None, i_r: float | None = None
               ) -> str:
    """The region of an n-type transistor by the bias of its junctions (a junction is
    forward-biased when its voltage is positive): 'forward-active', 'reverse-active',
    'saturated' or 'off'.

    With both junctions forward-biased, the transistor reads 'saturated' only when the
    collector junction's transport current IR is above :data:`SATURATION_RATIO` of the
    emitter junction's IF (given ``i_f`` and ``i_r``): a collector junction a little
    forward-biased carries next to nothing and the transistor still amplifies. For equal
    IS and NF = NR = 1, IR/IF = exp(−Vce/Vt), so the edge is at Vce = ln(10⁴)·Vt ≈ 0.24 V
    at 27 °C, about where common practice puts Vce(sat), 0.2–0.3 V (no source).
    """
    if vbe > 0:
        if vbc <= 0:
            return "forward-active"
        if i_f is not None and i_r is not None and i_r <= SATURATION_RATIO * i_f:
            return "forward-active"
        return "saturated"
    return "reverse-active" if vbc > 0 else "off"


# --------------------------------------------------------------------------- MOSFET

class MosPoint(NamedTuple):
    """A MOSFET at (vgs, vds, vbs): drain current ``id`` (into the drain) and its exact
    partial derivatives ``gm`` = ∂id/∂vgs, ``gds`` = ∂id/∂vds, ``gmbs`` = ∂id/∂vbs in the
    terminal frame (as written, whichever end acts as source); ``vth`` the threshold in
    the device's own sign, ``region``, and ``reversed`` when vds < 0 made the drain
    terminal act as the source."""

    id: float
    gm: float
    gds: float
    gmbs: float
    vth: float
    region: str
    reversed: bool


def mos1(model: MosModel, vgs: float, vds: float, vbs: float, w: float | None = None,
         l: float | None = None, temp_c: float = NOMINAL_TEMP_C) -> MosPoint:
    """Level 1 (Shichman–Hodges) drain current, β = KP·W/L (``w``, ``l`` default to the
    model's; ``KP``, ``VTO``, ``PHI`` taken at ``temp_c`` °C):

    * threshold VT = VTO + GAMMA(√(PHI − vbs) − √PHI) for vbs ≤ 0; for vbs > 0 the root
      is continued by its first-order Taylor expansion at 0, √PHI − vbs/(2√PHI), floored
      at 0 (continuous with a continuous slope at vbs = 0);
    * cutoff vgs ≤ VT: id = 0; saturation vds ≥ vgs − VT: id = β/2·(vgs − VT)²(1 + λ·vds);
      triode: id = β·vds(vgs − VT − vds/2)(1 + λ·vds). Channel-length modulation
      multiplies both, as the common convention does, which keeps id and its
      derivatives continuous at vds = vgs − VT.

    For vds < 0 the device is symmetric: the drain terminal acts as the source, id is
    minus the forward current at (vgd, −vds, vbd), and the derivatives are carried back
    to the terminal voltages by the chain rule.
    """
    model = at_temperature(model, temp_c)
    p = model.polarity
    beta = model.KP * (model.W if w is None else w) / (model.L if l is None else l)
    vgs, vds, vbs = p * vgs, p * vds, p * vbs
    if vds >= 0:
        i, fg, fd, fb, vth, region = _mos_forward(model, beta, vgs, vds, vbs)
        return MosPoint(p * i, fg, fd, fb, p * vth, region, False)
    i, fg, fd, fb, vth, region = _mos_forward(model, beta, vgs - vds, -vds, vbs - vds)
    # id = −f(vgs − vds, −vds, vbs − vds)
    return MosPoint(-p * i, -fg, fg + fd + fb, -fb, p * vth, region, True)


def _threshold(model: MosModel, vbs: float) -> tuple[float, float]:
    """(VT, ∂VT/∂vbs) in the n-type frame."""
    sphi = math.sqrt(model.PHI)
    if vbs <= 0:
        root = math.sqrt(model.PHI - vbs)
        d_root = -0.5 / root
    else:
        root = sphi - vbs / (2.0 * sphi)
        d_root = -0.5 / sphi
        if root <= 0:
            root, d_root = 0.0, 0.0
    return model.VTO * model.polarity + model.GAMMA * (root - sphi), model.GAMMA * d_root


def _mos_forward(model: MosModel, beta: float, vgs: float, vds: float, vbs: float
                 ) -> tuple[float, float, float, float, float, str]:
    """(id, ∂id/∂vgs, ∂id/∂vds, ∂id/∂vbs, VT, region) of an n-type device, vds ≥ 0."""
    vth, dvth = _threshold(model, vbs)
    vgst = vgs - vth
    if vgst <= 0:
        return 0.0, 0.0, 0.0, 0.0, vth, "cutoff"
    clm = 1.0 + model.LAMBDA * vds
    if vds >= vgst:
        i = 0.5 * beta * vgst * vgst * clm
        fg = beta * vgst * clm
        fd = 0.5 * beta * vgst * vgst * model.LAMBDA
        region = "saturation"
    else:
        core = vds * (vgst - 0.5 * vds)
        i = beta * core * clm
        fg = beta * vds * clm
        fd = beta * (vgst - vds) * clm + beta * core * model.LAMBDA
        region = "triode"
    return i, fg, fd, -fg * dvth, vth, region


class MosCaps(NamedTuple):
    """The gate capacitances of a MOSFET at a bias point, F: gate–source, gate–drain,
    gate–body (terminal frame: ``cgs`` is to the source terminal as written)."""

    cgs: float
    cgd: float
    cgb: float


def mos1_capacitances(model: MosModel, vgs: float, vds: float, vbs: float,
                      w: float | None = None, l: float | None = None,
                      temp_c: float = NOMINAL_TEMP_C) -> MosCaps:
    """Meyer's (1971) gate capacitances plus the overlap capacitances.

    With C = COX·W·L and vgst = vgs − VT (VT with the body effect, as in :func:`mos1`):
    saturation cgs = ⅔C, cgd = 0; triode cgs = ⅔C[1 − ((vgst − vds)/(2vgst − vds))²],
    cgd = ⅔C[1 − (vgst/(2vgst − vds))²] (both ½C at vds = 0, continuous at the
    saturation edge); cutoff cgs = cgd = 0, cgb = C — the simple form of the textbooks:
    the depletion region's series capacitance below threshold is not modelled, and the
    capacitances jump at vgs = VT as Meyer's piecewise model does. Overlaps add CGSO·W
    to cgs, CGDO·W to cgd, CGBO·L to cgb. A card without TOX has no intrinsic part
    (COX = 0). For vds < 0 the roles of the two ends swap, as in :func:`mos1`. These are
    small-signal capacitances, not derivatives of a charge (Meyer's model conserves no
    charge), which is all a frequency-domain check uses. The threshold is taken at
    ``temp_c`` °C.
    """
    model = at_temperature(model, temp_c)
    w = model.W if w is None else w
    l = model.L if l is None else l
    p = model.polarity
    vgs, vds, vbs = p * vgs, p * vds, p * vbs
    swap = vds < 0
    if swap:
        vgs, vds, vbs = vgs - vds, -vds, vbs - vds
    vgst = vgs - _threshold(model, vbs)[0]
    c = model.COX * w * l
    if vgst <= 0:
        cs, cd, cb = 0.0, 0.0, c
    elif vds >= vgst:
        cs, cd, cb = 2.0 * c / 3.0, 0.0, 0.0
    else:
        den = 2.0 * vgst - vds
        cs = 2.0 * c / 3.0 * (1.0 - ((vgst - vds) / den) ** 2)
        cd = 2.0 * c / 3.0 * (1.0 - (vgst / den) ** 2)
        cb = 0.0
    if swap:
        cs, cd = cd, cs
    return MosCaps(cs + model.CGSO * w, cd + model.CGDO * w, cb + model.CGBO * l)


# --------------------------------------------------------------------------- JFET

class JfetPoint(NamedTuple):
    """A JFET at (vgs, vds): drain current ``id`` (into the drain), ``gm`` = ∂id/∂vgs,
    ``gds`` = ∂id/∂vds (terminal frame), ``region``, ``reversed`` (vds < 0), and the two
    gate junctions (gate to source, gate to drain) as :class:`Junction` s in the
    terminal frame (current from the gate)."""

    id: float
    gm: float
    gds: float
    region: str
    reversed: bool
    gate_source: Junction
    gate_drain: Junction


def jfet(model: JfetModel, vgs: float, vds: float, temp_c: float = NOMINAL_TEMP_C
         ) -> JfetPoint:
    """Square law after Shichman–Hodges: cutoff vgs ≤ VTO: id = 0; saturation
    vds ≥ vgs − VTO: id = BETA(vgs − VTO)²(1 + λ·vds); linear:
    id = BETA·vds(2(vgs − VTO) − vds)(1 + λ·vds). vds < 0 swaps drain and source as in
    :func:`mos1`. The gate junctions are diodes with IS, N, and depletion capacitances
    CGS, CGD (potential PB, grading M, FC), no transit charge. The parameters are
    taken at ``temp_c`` °C."""
    model = at_temperature(model, temp_c)
    p = model.polarity
    vgs, vds = p * vgs, p * vds
    if vds >= 0:
        i, fg, fd, region = _jfet_forward(model, vgs, vds)
        id_, gm, gds, rev = i, fg, fd, False
    else:
        i, fg, fd, region = _jfet_forward(model, vgs - vds, -vds)
        id_, gm, gds, rev = -i, -fg, fg + fd, True
    vt = thermal_voltage(temp_c)
    gs = junction(vgs, model.IS, model.N, model.CGS, model.PB, model.M, model.FC, 0.0, vt)
    gd = junction(vgs - vds, model.IS, model.N, model.CGD, model.PB, model.M, model.FC, 0.0, vt)
    flip = (lambda j: Junction(p * j.i, j.g, p * j.q, j.c))
    return JfetPoint(p * id_, gm, gds, region, rev, flip(gs), flip(gd))


def _jfet_forward(model: JfetModel, vgs: float, vds: float) -> tuple[float, float, float, str]:
    vgst = vgs - model.VTO
    if vgst <= 0:
        return 0.0, 0.0, 0.0, "cutoff"
    b, lam = model.BETA, model.LAMBDA
    clm = 1.0 + lam * vds
    if vds >= vgst:
        return b * vgst * vgst * clm, 2.0 * b * vgst * clm, b * vgst * vgst * lam, "saturation"
    core = vds * (2.0 * vgst - vds)
    return (b * core * clm, 2.0 * b * vds * clm,
            2.0 * b * (vgst - vds) * clm + b * core * lam, "triode")


# --------------------------------------------------------------------------- limiting

def critical_voltage(is_: float, n: float, temp_c: float = NOMINAL_TEMP_C) -> float:
    """Vcrit = n·Vt·ln(n·Vt/(√2·is)): the junction voltage where the exponential's
    curvature is greatest, above which :func:`bounded_junction_voltage` limits steps."""
    nvt = n * thermal_voltage(temp_c)
    return nvt * math.log(nvt / (math.sqrt(2.0) * is_))


def bounded_junction_voltage(v_new: float, v_old: float, n_vt: float, v_crit: float) -> float:
    """The junction voltage a Newton iteration should take instead of ``v_new``.

    A rise of more than 2·n_vt that ends above ``v_crit`` is replaced by the voltage at
    which the exponential current equals the straight-line (Newton) prediction made from
    the starting point: from b = max(v_old, v_crit), v = b + n_vt·ln(1 + (v_new − b)/n_vt).
    The current then grows at most by the factor 1 + (v_new − b)/n_vt per step, never by
    exp((v_new − b)/n_vt), so it stays finite; the result never exceeds ``v_new``.
    Falls, small steps and steps ending below ``v_crit`` pass unchanged.
    """
    if v_new <= v_crit or v_new - v_old <= 2.0 * n_vt:
        return v_new
    base = max(v_old, v_crit)
    return base + n_vt * math.log1p((v_new - base) / n_vt)
