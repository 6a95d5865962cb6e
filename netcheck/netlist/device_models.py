"""Device model parameters: the ``.model`` cards of diodes, bipolar transistors, MOSFETs
(level 1) and JFETs, read into frozen dataclasses.

:func:`device_model` turns a :class:`~netcheck.netlist.models.ModelCard` of a device type
(``D``, ``NPN``/``PNP``/``LPNP``, ``NMOS``/``PMOS``, ``NJF``/``PJF``) into one of
:class:`DiodeModel`, :class:`BjtModel`, :class:`MosModel`, :class:`JfetModel`, and the
names on the card that netcheck does not model (the caller turns them into one note).
The device equations that use these parameters are in :mod:`netcheck.mna.devices`;
docs/devices.md says what each model honours.

Parameter names are matched case-insensitively. A parameter the equations use is
*honoured*. A few are *kept but not modelled* (the diode's ``BV``/``IBV``: breakdown is
outside a small-signal check of a correctly biased circuit): their values are checked
and stored, and a card that gives one lists it among the ignored names as well. Series
resistances (``RS``, ``RB``, ``RE``, ``RC``, ``RD``) are honoured by the caller, which adds
each as a resistor to an internal node; the device equations never see them. Every
other name is ignored and listed. A value no device can have (``IS`` ≤ 0, ``N`` ≤ 0,
``FC`` outside [0, 1), ``W`` or ``L`` ≤ 0, a negative capacitance...) is refused with
netlist-132 at its ``key=value``; a name given twice, an unknown MOS ``LEVEL`` or a type
netcheck has no equations for (``VDMOS``, switches) with netlist-130.

The defaults are those of the common SPICE convention, **from memory** (no source at
hand): they are the values the widely used Berkeley-derived simulators document, written
down here as remembered.

:func:`at_temperature` gives a model's parameters at a temperature: the saturation
currents, junction potentials and zero-bias capacitances, the bipolar current gains, the
MOSFET's ``KP``, ``PHI`` and ``VTO``, the JFET's ``VTO`` and ``BETA``, each scaled from
the card's nominal temperature ``TNOM`` (27 °C unless given). The formulas and their
source are in its docstring and in docs/devices.md.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from functools import lru_cache
from typing import TYPE_CHECKING, Callable

from ..exceptions import ElaborationError
from .models import NOMINAL_C, ModelCard
from .source import printable

if TYPE_CHECKING:  # pragma: no cover
    from .syntax import Field

__all__ = ["DiodeModel", "BjtModel", "MosModel", "JfetModel", "DeviceModel", "device_model",
           "DEFAULT_W", "DEFAULT_L", "EPS_OX", "check_geometry", "BOLTZMANN",
           "ELEMENTARY_CHARGE", "ZERO_CELSIUS", "thermal_voltage", "silicon_gap",
           "at_temperature", "TemperatureRangeError", "temperature_refusal",
           "check_temperature"]

INF = math.inf
#: default MOS channel width and length, m (common SPICE convention, from memory: 100 µm)
DEFAULT_W = 100e-6
DEFAULT_L = 100e-6
#: the mobility a card with TOX but neither KP nor UO gets, cm²/V·s (from memory)
DEFAULT_UO = 600.0
#: permittivity of silicon dioxide, F/m: 3.9·ε0 (ε0 = 8.8541878128e-12 F/m, CODATA 2018;
#: the relative permittivity 3.9 is common practice, no source)
EPS_OX = 3.9 * 8.8541878128e-12
#: Boltzmann constant, J/K, and elementary charge, C: exact in the SI since 2019
BOLTZMANN = 1.380649e-23
ELEMENTARY_CHARGE = 1.602176634e-19
#: 0 °C in kelvin (exact by definition)
ZERO_CELSIUS = 273.15
#: the energy gap of a junction's saturation current, eV, when a card gives no EG (silicon,
#: the convention's default, from memory), and the JFET gate junction's (no card parameter)
DEFAULT_EG = 1.11


@dataclass(frozen=True, slots=True)
class DiodeModel:
    """A junction diode (Shockley 1949): saturation current ``IS`` (A), emission
    coefficient ``N``, series resistance ``RS`` (Ω, the caller's resistor to an internal
    node), zero-bias junction capacitance ``CJO`` (F), junction potential ``VJ`` (V),
    grading coefficient ``M``, forward-bias depletion coefficient ``FC``, transit time
    ``TT`` (s). ``BV`` (V) and ``IBV`` (A), reverse breakdown, are kept, not modelled.
    Temperature: ``XTI`` (saturation-current exponent), ``EG`` (energy gap, eV) and the
    nominal temperature ``TNOM`` (°C), see :func:`at_temperature`. Defaults: common
    SPICE convention, from memory."""

    IS: float = 1e-14
    N: float = 1.0
    RS: float = 0.0
    CJO: float = 0.0
    VJ: float = 1.0
    M: float = 0.5
    FC: float = 0.5
    TT: float = 0.0
    BV: float = INF
    IBV: float = 1e-3
    XTI: float = 3.0
    EG: float = DEFAULT_EG
    TNOM: float = NOMINAL_C
    KF: float = 0.0    # flicker-noise coefficient (netcheck.mna.noise)
    AF: float = 1.0    # flicker-noise current exponent


@dataclass(frozen=True, slots=True)
class BjtModel:
    """A bipolar transistor, Ebers–Moll transport form (Ebers & Moll 1954) with the
    forward Early effect (Early 1952). ``polarity`` is +1 for NPN, −1 for PNP (and
    LPNP). ``NF``/``NR`` are honoured. ``VAF`` = ∞ stands for "no Early effect" (a card's
    0 means the same). ``RB``, ``RE``, ``RC`` (Ω) are the caller's resistors to internal
    nodes (``RB`` constant: ``IRB``/``RBM`` are not modelled). Temperature: ``XTI``,
    ``EG`` (eV), ``XTB`` (current-gain exponent) and ``TNOM`` (°C), see
    :func:`at_temperature`. Defaults: common SPICE convention, from memory."""

    polarity: int = 1
    IS: float = 1e-16
    BF: float = 100.0
    BR: float = 1.0
    NF: float = 1.0
    NR: float = 1.0
    VAF: float = INF
    CJE: float = 0.0
    VJE: float = 0.75
    MJE: float = 0.33
    CJC: float = 0.0
    VJC: float = 0.75
    MJC: float = 0.33
    FC: float = 0.5
    TF: float = 0.0
    TR: float = 0.0
    RB: float = 0.0
    RE: float = 0.0
    RC: float = 0.0
    XTI: float = 3.0
    EG: float = DEFAULT_EG
    XTB: float = 0.0
    TNOM: float = NOMINAL_C
    KF: float = 0.0    # flicker-noise coefficient (netcheck.mna.noise)
    AF: float = 1.0    # flicker-noise current exponent


@dataclass(frozen=True, slots=True)
class MosModel:
    """A MOSFET, level 1 (Shichman & Hodges 1968). ``polarity`` +1 NMOS, −1 PMOS (a PMOS
    card writes its ``VTO`` negative, as the convention does). Transconductance parameter
    ``KP`` (A/V²), ``VTO`` (V), ``LAMBDA`` (1/V), body effect ``GAMMA`` (√V) and ``PHI``
    (V); ``W``, ``L`` (m) the defaults of instances; overlap capacitances per metre of
    width ``CGSO``, ``CGDO`` and per metre of length ``CGBO`` (F/m); ``TOX`` (m, ∞ when
    not given) gives the oxide capacitance per area ``COX`` = ε_ox/TOX for the Meyer
    capacitances and, with ``UO`` (cm²/V·s), ``KP`` = UO·COX when a card gives TOX but
    not KP (the convention's rule, from memory). ``RD``, ``RS`` (Ω) are the caller's.
    Defaults: common SPICE convention, from memory."""

    polarity: int = 1
    KP: float = 2e-5
    VTO: float = 0.0
    LAMBDA: float = 0.0
    GAMMA: float = 0.0
    PHI: float = 0.6
    W: float = DEFAULT_W
    L: float = DEFAULT_L
    CGSO: float = 0.0
    CGDO: float = 0.0
    CGBO: float = 0.0
    TOX: float = INF
    UO: float = DEFAULT_UO
    RD: float = 0.0
    RS: float = 0.0
    TNOM: float = NOMINAL_C
    KF: float = 0.0    # flicker-noise coefficient (netcheck.mna.noise)
    AF: float = 1.0    # flicker-noise current exponent

    @property
    def COX(self) -> float:
        """Gate-oxide capacitance per area, F/m² (0 when TOX is not given)."""
        return EPS_OX / self.TOX


@dataclass(frozen=True, slots=True)
class JfetModel:
    """A junction FET, square law after Shichman & Hodges (1968). ``polarity`` +1 NJF,
    −1 PJF; ``VTO`` is written in the device's own frame (negative for a depletion
    device of either polarity, as the convention does: from memory). ``BETA`` (A/V²),
    ``LAMBDA`` (1/V); the gate junctions are diodes with ``IS``, ``N``, zero-bias
    capacitances ``CGS``, ``CGD``, potential ``PB``, grading ``M`` and ``FC``. ``RD``,
    ``RS`` (Ω) are the caller's. Temperature: ``VTOTC`` (V/°C), ``BETATCE`` (%/°C),
    the gate junctions' ``XTI`` and ``TNOM`` (°C), see :func:`at_temperature`.
    Defaults: common SPICE convention, from memory."""

    polarity: int = 1
    BETA: float = 1e-4
    VTO: float = -2.0
    LAMBDA: float = 0.0
    IS: float = 1e-14
    N: float = 1.0
    CGS: float = 0.0
    CGD: float = 0.0
    PB: float = 1.0
    M: float = 0.5
    FC: float = 0.5
    RD: float = 0.0
    RS: float = 0.0
    VTOTC: float = 0.0
    BETATCE: float = 0.0
    XTI: float = 3.0
    TNOM: float = NOMINAL_C
    KF: float = 0.0    # flicker-noise coefficient (netcheck.mna.noise)
    AF: float = 1.0    # flicker-noise current exponent


DeviceModel = DiodeModel | BjtModel | MosModel | JfetModel

#: what each range rule allows, and the words of its refusal
_RULES: dict[str, tuple[Callable[[float], bool], str]] = {
    "pos": (lambda v: v > 0, "must be positive"),
    "nonneg": (lambda v: v >= 0, "must not be negative"),
    "frac": (lambda v: 0 <= v < 1, "must lie in [0, 1)"),
    "any": (math.isfinite, "must be finite"),
    "kelvin": (lambda v: v > -273.15, "must be above absolute zero (-273.15 °C)"),
}

#: model type → (dataclass, polarity, {card name (lower) → (field, rule)}, kept-only fields)
_D = {"is": ("IS", "pos"), "n": ("N", "pos"), "rs": ("RS", "nonneg"),
      "cjo": ("CJO", "nonneg"), "cj0": ("CJO", "nonneg"), "vj": ("VJ", "pos"),
      "m": ("M", "nonneg"), "fc": ("FC", "frac"), "tt": ("TT", "nonneg"),
      "bv": ("BV", "pos"), "ibv": ("IBV", "pos"), "tnom": ("TNOM", "kelvin"),
      "xti": ("XTI", "any"), "eg": ("EG", "pos"),
      "kf": ("KF", "nonneg"), "af": ("AF", "pos")}
_Q = {"is": ("IS", "pos"), "bf": ("BF", "pos"), "br": ("BR", "pos"), "nf": ("NF", "pos"),
      "nr": ("NR", "pos"), "vaf": ("VAF", "nonneg"), "va": ("VAF", "nonneg"),
      "cje": ("CJE", "nonneg"), "vje": ("VJE", "pos"), "pe": ("VJE", "pos"),
      "mje": ("MJE", "nonneg"), "me": ("MJE", "nonneg"), "cjc": ("CJC", "nonneg"),
      "vjc": ("VJC", "pos"), "pc": ("VJC", "pos"), "mjc": ("MJC", "nonneg"),
      "mc": ("MJC", "nonneg"), "fc": ("FC", "frac"), "tf": ("TF", "nonneg"),
      "tr": ("TR", "nonneg"), "rb": ("RB", "nonneg"), "re": ("RE", "nonneg"),
      "rc": ("RC", "nonneg"), "tnom": ("TNOM", "kelvin"), "xti": ("XTI", "any"),
      "eg": ("EG", "pos"), "xtb": ("XTB", "any"),
      "kf": ("KF", "nonneg"), "af": ("AF", "pos")}
_M = {"kp": ("KP", "pos"), "vto": ("VTO", "any"), "vt0": ("VTO", "any"),
      "lambda": ("LAMBDA", "nonneg"), "gamma": ("GAMMA", "nonneg"), "phi": ("PHI", "pos"),
      "w": ("W", "pos"), "l": ("L", "pos"), "cgso": ("CGSO", "nonneg"),
      "cgdo": ("CGDO", "nonneg"), "cgbo": ("CGBO", "nonneg"), "tox": ("TOX", "pos"),
      "uo": ("UO", "pos"), "u0": ("UO", "pos"), "rd": ("RD", "nonneg"),
      "rs": ("RS", "nonneg"), "tnom": ("TNOM", "kelvin"),
      "kf": ("KF", "nonneg"), "af": ("AF", "pos")}
_J = {"beta": ("BETA", "pos"), "vto": ("VTO", "any"), "vt0": ("VTO", "any"),
      "lambda": ("LAMBDA", "nonneg"), "is": ("IS", "pos"), "n": ("N", "pos"),
      "cgs": ("CGS", "nonneg"), "cgd": ("CGD", "nonneg"), "pb": ("PB", "pos"),
      "m": ("M", "nonneg"), "fc": ("FC", "frac"), "rd": ("RD", "nonneg"),
      "rs": ("RS", "nonneg"), "tnom": ("TNOM", "kelvin"), "vtotc": ("VTOTC", "any"),
      "betatce": ("BETATCE", "any"), "xti": ("XTI", "any"),
      "kf": ("KF", "nonneg"), "af": ("AF", "pos")}
_TYPES: dict[str, tuple[type, int, dict[str, tuple[str, str]], frozenset[str]]] = {
    "D": (DiodeModel, 1, _D, frozenset({"BV", "IBV"})),
    "NPN": (BjtModel, 1, _Q, frozenset()), "PNP": (BjtModel, -1, _Q, frozenset()),
    "LPNP": (BjtModel, -1, _Q, frozenset()),
    "NMOS": (MosModel, 1, _M, frozenset()), "PMOS": (MosModel, -1, _M, frozenset()),
    "NJF": (JfetModel, 1, _J, frozenset()), "PJF": (JfetModel, -1, _J, frozenset()),
}


def device_model(card: ModelCard, value_of: Callable[["Field"], float]
                 ) -> tuple[DeviceModel, tuple[str, ...]]:
    """The device model a ``.model`` card describes, and the names it gives that netcheck
    does not model (as written on the card, in card order).

    ``value_of`` evaluates a value field (``Env.value_of``). Raises
    :class:`~netcheck.exceptions.ElaborationError`: netlist-132 for a value out of range
    (at its ``key=value``), netlist-130 for a type without device equations, a name given
    twice (an alias counts as its name: ``VA`` and ``VAF``) or a MOS ``LEVEL`` other than 1.
    """
    label = f"model {printable(card.name)}"
    if card.type not in _TYPES:
        raise ElaborationError(
            f"{label}: netcheck has no device equations for type {printable(card.type)} "
            f"(it models {', '.join(_TYPES)})", card.span, code="netlist-130")
    cls, polarity, table, kept_only = _TYPES[card.type]
    values: dict[str, float] = {}
    seen: dict[str, str] = {}
    ignored: list[str] = []
    for assign in card.params:
        written = assign.key.text
        key = written.lower()
        if cls is MosModel and key == "level":
            _check_level(label, value_of(assign.value), assign)
            continue
        if key not in table:
            ignored.append(written)
            continue
        name, rule = table[key]
        if name in seen:
            raise ElaborationError(f"{label}: {name} given twice ({seen[name]} and "
                                   f"{printable(written)})", assign.span, code="netlist-130")
        seen[name] = printable(written)
        value = value_of(assign.value)
        ok, why = _RULES[rule]
        if not (math.isfinite(value) and ok(value)):
            shown = printable(written.upper()) + ("" if written.upper() == name
                                                   else f" (read as {name})")
            raise ElaborationError(f"{label}: {shown}={value:g} is out of range: {name} "
                                   f"{why}", assign.span, code="netlist-132")
        if name == "VAF" and value == 0:
            value = INF  # VAF = 0 means no Early effect (common SPICE convention)
        values[name] = value
        if name in kept_only:
            ignored.append(written)
    if cls is MosModel and "TOX" in values and "KP" not in values:
        uo = values.get("UO", DEFAULT_UO)
        values["KP"] = uo * 1e-4 * EPS_OX / values["TOX"]  # cm²/V·s → m²/V·s
    if cls is not DiodeModel:
        values["polarity"] = polarity
    return cls(**values), tuple(ignored)


def _check_level(label: str, level: float, assign) -> None:
    if level != 1:
        raise ElaborationError(
            f"{label}: LEVEL={level:g} asks for a MOS model netcheck does not have: it models level 1 "
            "(Shichman–Hodges) only; write LEVEL=1 or leave LEVEL out", assign.span,
            code="netlist-130")


def check_geometry(w: float, l: float, span) -> None:
    """Refuse (netlist-132) an instance's channel width or length that is not positive."""
    for name, value in (("W", w), ("L", l)):
        if not (math.isfinite(value) and value > 0):
            raise ElaborationError(f"{name}={value:g} is out of range: the channel "
                                   f"{'width' if name == 'W' else 'length'} must be positive",
                                   span, code="netlist-132")


# --------------------------------------------------------------------------- temperature

class TemperatureRangeError(ValueError):
    """A model's parameters taken to a temperature leave the range the device equations
    need: a junction potential or surface potential at or below zero, a zero-bias
    capacitance at or below zero, a saturation current or gain that underflows to zero
    or overflows. The message says which parameter and its value there."""


def temperature_refusal(device, err: TemperatureRangeError) -> str:
    """The words of netlist-166 for ``device`` (a device element: its name and model
    name) whose model :func:`at_temperature` refused with ``err``."""
    return (f"{printable(device.name)}: model {printable(device.model_name)}: {err}; check "
            "the .temp card and the model's TNOM and temperature parameters "
            "(docs/devices.md)")


def check_temperature(device, temp_c: float) -> None:
    """Refuse (netlist-166, at the device's card) a device whose model cannot be taken to
    ``temp_c`` °C."""
    try:
        at_temperature(device.model, temp_c)
    except TemperatureRangeError as err:
        raise ElaborationError(temperature_refusal(device, err), device.span,
                               code="netlist-166") from None


def thermal_voltage(temp_c: float = NOMINAL_C) -> float:
    """kT/q in volts at ``temp_c`` °C (25.865 mV at 27 °C)."""
    return BOLTZMANN * (temp_c + ZERO_CELSIUS) / ELEMENTARY_CHARGE


def silicon_gap(kelvin: float) -> float:
    """The energy gap of silicon in eV at ``kelvin``:
    EG(T) = 1.16 − 7.02·10⁻⁴·T²/(T + 1108) (Varshni's form with the constants the
    SPICE2-style device models use; P. Antognetti & G. Massobrio, *Semiconductor Device
    Modeling with SPICE*, 2nd ed., 1993, from memory): 1.1151 eV at 300.15 K."""
    return 1.16 - 7.02e-4 * kelvin * kelvin / (kelvin + 1108.0)


def at_temperature(model: DeviceModel, temp_c: float) -> DeviceModel:
    """``model`` with its parameters at ``temp_c`` °C, scaled from its ``TNOM``.

    At ``temp_c`` = ``TNOM`` the model itself is returned, unchanged to the last bit.
    Otherwise, with T and TNOM in kelvin, Vt(T) = kT/q and EG(T) of :func:`silicon_gap`
    (P. Antognetti & G. Massobrio, *Semiconductor Device Modeling with SPICE*, 2nd ed.,
    1993, chapters 1, 2, 4; quoted from memory):

    * saturation current of a junction with emission coefficient N:
      IS(T) = IS·(T/TNOM)^(XTI/N)·exp((T/TNOM − 1)·EG/(N·Vt(T))). The diode uses its
      ``N``; the bipolar transistor N = 1 whatever its ``NF`` (the convention's form:
      the transport current's IS follows ni², not the emission coefficient); the JFET's
      gate junctions their ``N`` with EG = 1.11 eV (no card parameter);
    * junction potential VJ(T) = VJ·T/TNOM − 3·Vt(T)·ln(T/TNOM) − EG(TNOM)·T/TNOM + EG(T)
      (the silicon gap of :func:`silicon_gap`, not the card's ``EG``), for the diode's
      ``VJ``, the bipolar ``VJE``, ``VJC`` and the JFET's ``PB``;
    * zero-bias depletion capacitance
      CJO(T) = CJO·(1 + M·(4·10⁻⁴·(T − TNOM) − (VJ(T) − VJ)/VJ)) with the junction's
      grading coefficient M (``CJO``; ``CJE``, ``CJC``; ``CGS``, ``CGD``);
    * bipolar current gains BF(T) = BF·(T/TNOM)^XTB, BR(T) = BR·(T/TNOM)^XTB;
    * MOSFET level 1: KP(T) = KP·(T/TNOM)^−1.5 (the mobility's T^−1.5); the surface
      potential PHI(T) by the junction-potential law above (it is twice the Fermi
      potential); the threshold through the built-in voltage,
      VBI = VTO − p·GAMMA·√PHI + (EG(TNOM) − EG(T))/2 + p·(PHI(T) − PHI)/2,
      VTO(T) = VBI + p·GAMMA·√PHI(T), p = +1 NMOS, −1 PMOS (VTO as written on the card);
    * JFET: VTO(T) = VTO + VTOTC·(T − TNOM), BETA(T) = BETA·1.01^(BETATCE·(T − TNOM))
      (the two coefficients of the vendors' JFET cards, V/°C and %/°C; 0 leaves VTO
      and BETA unchanged).

    Series resistances, transit times, ``VAF``, ``LAMBDA``, ``GAMMA``, ``M``, ``FC``
    and the overlap capacitances do not change. Raises :class:`TemperatureRangeError`
    when a scaled parameter leaves its range (a junction potential at or below zero
    where its capacitance is not zero, a surface potential at or below zero...).
    """
    if temp_c == model.TNOM:
        return model
    return _scaled_to(model, float(temp_c))


@lru_cache(maxsize=1024)
def _scaled_to(model: DeviceModel, temp_c: float) -> DeviceModel:
    t, t0 = temp_c + ZERO_CELSIUS, model.TNOM + ZERO_CELSIUS
    scale = _Scale(t, t0, temp_c, model.TNOM)
    try:
        if isinstance(model, DiodeModel):
            vj = scale.potential("VJ", model.VJ, model.CJO)
            return replace(model, IS=scale.saturation("IS", model.IS, model.N, model.XTI,
                                                      model.EG),
                           VJ=vj, CJO=scale.capacitance("CJO", model.CJO, model.M, model.VJ, vj))
        if isinstance(model, BjtModel):
            vje = scale.potential("VJE", model.VJE, model.CJE)
            vjc = scale.potential("VJC", model.VJC, model.CJC)
            gain = scale.positive("the current gains' factor (T/TNOM)^XTB",
                                  (t / t0) ** model.XTB)
            return replace(model, IS=scale.saturation("IS", model.IS, 1.0, model.XTI, model.EG),
                           BF=model.BF * gain, BR=model.BR * gain,
                           VJE=vje, CJE=scale.capacitance("CJE", model.CJE, model.MJE,
                                                          model.VJE, vje),
                           VJC=vjc, CJC=scale.capacitance("CJC", model.CJC, model.MJC,
                                                          model.VJC, vjc))
        if isinstance(model, MosModel):
            p = model.polarity
            phi = scale.potential("PHI", model.PHI, 1.0)
            vbi = (model.VTO - p * model.GAMMA * math.sqrt(model.PHI)
                   + 0.5 * (silicon_gap(t0) - silicon_gap(t)) + p * 0.5 * (phi - model.PHI))
            return replace(model, KP=model.KP * (t / t0) ** -1.5, PHI=phi,
                           VTO=vbi + p * model.GAMMA * math.sqrt(phi))
        assert isinstance(model, JfetModel)
        dt = t - t0
        pb = scale.potential("PB", model.PB, model.CGS + model.CGD)
        return replace(model, VTO=model.VTO + model.VTOTC * dt,
                       BETA=model.BETA * scale.positive("the factor 1.01^(BETATCE·ΔT)",
                                                        1.01 ** (model.BETATCE * dt)),
                       IS=scale.saturation("IS", model.IS, model.N, model.XTI, DEFAULT_EG),
                       PB=pb, CGS=scale.capacitance("CGS", model.CGS, model.M, model.PB, pb),
                       CGD=scale.capacitance("CGD", model.CGD, model.M, model.PB, pb))
    except OverflowError:
        raise TemperatureRangeError(f"at {temp_c:g} °C a parameter scaled from TNOM "
                                    f"{model.TNOM:g} °C overflows") from None


class _Scale:
    """The temperature laws of :func:`at_temperature` from TNOM (``t0``, K) to ``t`` (K),
    each result checked."""

    def __init__(self, t: float, t0: float, temp_c: float, tnom_c: float) -> None:
        self.t, self.t0, self.ratio = t, t0, t / t0
        self.vt = BOLTZMANN * t / ELEMENTARY_CHARGE
        self.where = f"at {temp_c:g} °C (TNOM {tnom_c:g} °C)"

    def positive(self, name: str, value: float, unit: str = "") -> float:
        if not (math.isfinite(value) and value > 0):
            raise TemperatureRangeError(f"{self.where} {name} becomes {value:.4g}{unit}: "
                                        "the temperature laws leave their range there")
        return value

    def saturation(self, name: str, is_: float, n: float, xti: float, eg: float) -> float:
        """IS·(T/TNOM)^(XTI/N)·exp((T/TNOM − 1)·EG/(N·Vt(T)))"""
        r = self.ratio
        return self.positive(f"the saturation current {name}",
                             is_ * r ** (xti / n) * math.exp((r - 1.0) * eg / (n * self.vt)),
                             " A")

    def potential(self, name: str, vj: float, cap: float) -> float:
        """VJ·T/TNOM − 3·Vt(T)·ln(T/TNOM) − EG(TNOM)·T/TNOM + EG(T); refused at or below
        zero only where a capacitance (``cap``) uses it."""
        r = self.ratio
        got = vj * r - 3.0 * self.vt * math.log(r) - silicon_gap(self.t0) * r + silicon_gap(self.t)
        if cap > 0:
            self.positive(f"the potential {name} (from {vj:g} V)", got, " V")
        return got

    def capacitance(self, name: str, cj0: float, m: float, vj: float, vj_t: float) -> float:
        """CJO·(1 + M·(4·10⁻⁴·(T − TNOM) − (VJ(T) − VJ)/VJ))"""
        if cj0 == 0:
            return cj0
        return self.positive(f"the zero-bias capacitance {name} (from {cj0:g} F)",
                             cj0 * (1.0 + m * (4e-4 * (self.t - self.t0) - (vj_t - vj) / vj)),
                             " F")
