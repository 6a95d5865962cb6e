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
down here as remembered. Parameters are not scaled with temperature: ``TNOM`` is kept,
and the device equations take the thermal voltage of the temperature they are given.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Callable

from ..exceptions import ElaborationError
from .models import NOMINAL_C, ModelCard
from .source import printable

if TYPE_CHECKING:  # pragma: no cover
    from .syntax import Field

__all__ = ["DiodeModel", "BjtModel", "MosModel", "JfetModel", "DeviceModel", "device_model",
           "DEFAULT_W", "DEFAULT_L", "EPS_OX", "check_geometry"]

INF = math.inf
#: default MOS channel width and length, m (common SPICE convention, from memory: 100 µm)
DEFAULT_W = 100e-6
DEFAULT_L = 100e-6
#: the mobility a card with TOX but neither KP nor UO gets, cm²/V·s (from memory)
DEFAULT_UO = 600.0
#: permittivity of silicon dioxide, F/m: 3.9·ε0 (ε0 = 8.8541878128e-12 F/m, CODATA 2018;
#: the relative permittivity 3.9 is common practice, no source)
EPS_OX = 3.9 * 8.8541878128e-12


@dataclass(frozen=True, slots=True)
class DiodeModel:
    """A junction diode (Shockley 1949): saturation current ``IS`` (A), emission
    coefficient ``N``, series resistance ``RS`` (Ω, the caller's resistor to an internal
    node), zero-bias junction capacitance ``CJO`` (F), junction potential ``VJ`` (V),
    grading coefficient ``M``, forward-bias depletion coefficient ``FC``, transit time
    ``TT`` (s). ``BV`` (V) and ``IBV`` (A), reverse breakdown, are kept, not modelled.
    Defaults: common SPICE convention, from memory."""

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
    TNOM: float = NOMINAL_C


@dataclass(frozen=True, slots=True)
class BjtModel:
    """A bipolar transistor, Ebers–Moll transport form (Ebers & Moll 1954) with the
    forward Early effect (Early 1952). ``polarity`` is +1 for NPN, −1 for PNP (and
    LPNP). ``NF``/``NR`` are honoured. ``VAF`` = ∞ stands for "no Early effect" (a card's
    0 means the same). ``RB``, ``RE``, ``RC`` (Ω) are the caller's resistors to internal
    nodes (``RB`` constant: ``IRB``/``RBM`` are not modelled). Defaults: common SPICE
    convention, from memory."""

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
    TNOM: float = NOMINAL_C


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
    ``RS`` (Ω) are the caller's. Defaults: common SPICE convention, from memory."""

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
    TNOM: float = NOMINAL_C


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
      "bv": ("BV", "pos"), "ibv": ("IBV", "pos"), "tnom": ("TNOM", "kelvin")}
_Q = {"is": ("IS", "pos"), "bf": ("BF", "pos"), "br": ("BR", "pos"), "nf": ("NF", "pos"),
      "nr": ("NR", "pos"), "vaf": ("VAF", "nonneg"), "va": ("VAF", "nonneg"),
      "cje": ("CJE", "nonneg"), "vje": ("VJE", "pos"), "pe": ("VJE", "pos"),
      "mje": ("MJE", "nonneg"), "me": ("MJE", "nonneg"), "cjc": ("CJC", "nonneg"),
      "vjc": ("VJC", "pos"), "pc": ("VJC", "pos"), "mjc": ("MJC", "nonneg"),
      "mc": ("MJC", "nonneg"), "fc": ("FC", "frac"), "tf": ("TF", "nonneg"),
      "tr": ("TR", "nonneg"), "rb": ("RB", "nonneg"), "re": ("RE", "nonneg"),
      "rc": ("RC", "nonneg"), "tnom": ("TNOM", "kelvin")}
_M = {"kp": ("KP", "pos"), "vto": ("VTO", "any"), "vt0": ("VTO", "any"),
      "lambda": ("LAMBDA", "nonneg"), "gamma": ("GAMMA", "nonneg"), "phi": ("PHI", "pos"),
      "w": ("W", "pos"), "l": ("L", "pos"), "cgso": ("CGSO", "nonneg"),
      "cgdo": ("CGDO", "nonneg"), "cgbo": ("CGBO", "nonneg"), "tox": ("TOX", "pos"),
      "uo": ("UO", "pos"), "u0": ("UO", "pos"), "rd": ("RD", "nonneg"),
      "rs": ("RS", "nonneg"), "tnom": ("TNOM", "kelvin")}
_J = {"beta": ("BETA", "pos"), "vto": ("VTO", "any"), "vt0": ("VTO", "any"),
      "lambda": ("LAMBDA", "nonneg"), "is": ("IS", "pos"), "n": ("N", "pos"),
      "cgs": ("CGS", "nonneg"), "cgd": ("CGD", "nonneg"), "pb": ("PB", "pos"),
      "m": ("M", "nonneg"), "fc": ("FC", "frac"), "rd": ("RD", "nonneg"),
      "rs": ("RS", "nonneg"), "tnom": ("TNOM", "kelvin")}
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

