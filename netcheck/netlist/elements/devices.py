"""Semiconductor devices: diode (D), bipolar transistor (Q), MOSFET (M), JFET (J).

A device card names its nodes, then a ``.model`` card of the matching type, then its
instance values:

* ``Dname anode cathode MODEL [area] [OFF] [area=a] [m=k] [IC=v]``
* ``Qname collector base emitter [substrate] MODEL [area] [OFF] [area=a] [m=k]``
* ``Mname drain gate source bulk MODEL [L=l] [W=w] [m=k] [OFF]`` (``AD AS PD PS NRD NRS``
  are read and ignored with a note: the bulk junctions are not modelled)
* ``Jname drain gate source MODEL [area] [OFF] [area=a] [m=k]``

``area`` and ``m`` (parallel copies) scale a device's currents and capacitances and
divide its series resistances; for a MOSFET ``m`` scales the width and the overlap
``CGBO`` (per metre of length) and divides ``RD`` and ``RS``. A device is not
linear: it has no stamp of its own. The operating point (:mod:`netcheck.mna.bias`)
solves the circuit's DC equations with the device equations of
:mod:`netcheck.mna.devices`, and each device is then replaced by its small-signal
equivalent there (:class:`Linearised`). Series resistances (``RS``, ``RB``, ``RE``,
``RC``, ``RD``) are resistors to internal nodes, made by :func:`with_series_resistors`;
an internal node is named after the device and its terminal, ``q1'b``: the apostrophe
cannot be written in a netlist's node name, so no node of the netlist can be it.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, ClassVar

from ...exceptions import Diagnostic, ElaborationError
from ..device_models import (BjtModel, DeviceModel, JfetModel, MosModel,
                             check_geometry, device_model)
from ..source import printable
from .base import Element
from .passives import Resistor

if TYPE_CHECKING:  # pragma: no cover
    from ...mna.assemble import Stamper
    from ..reader import CardReader

__all__ = ["Device", "Diode", "Bjt", "Mosfet", "Jfet", "Linearised", "with_series_resistors",
           "DEVICE_NOTE_CODE"]

#: the note naming what a device card or model gives that netcheck does not model
DEVICE_NOTE_CODE = "netlist-133"


@dataclass(slots=True, unsafe_hash=True)
class Device(Element):
    """A semiconductor device: its nodes, its model (scaled by area and copies) and the
    model card's name. Not linear: linearised at the operating point before solving."""

    model_name: str = ""
    model: DeviceModel | None = None
    #: the device starts off (``OFF``): the operating point starts it there (a hint)
    off: bool = False
    #: notes the card gave rise to (ignored parameters)
    notes: tuple[Diagnostic, ...] = dataclasses.field(default=(), compare=False)

    nonlinear: ClassVar[bool] = True
    #: the model types (``.model NAME TYPE``) the device reads
    MODEL_LETTER: ClassVar[str] = ""
    #: each node's role, for messages and reports
    ROLES: ClassVar[tuple[str, ...]] = ()
    #: instance keys read (lower case) and those read and ignored with a note
    KEYS: ClassVar[tuple[str, ...]] = ("area", "m", "ic")
    IGNORED_KEYS: ClassVar[tuple[str, ...]] = ()

    def stamp(self, st: "Stamper", value: Any) -> None:
        raise AssertionError(f"{self.name} is a device: linearise the circuit at its "
                             "operating point before stamping it (netcheck.mna.bias)")

    @property
    def series(self) -> tuple[tuple[int, float], ...]:
        """(node position, series resistance in Ω) for each terminal with one."""
        return ()

    @classmethod
    def read_device(cls, rd: "CardReader", count: int, optional: int = 0
                    ) -> tuple[tuple[str, ...], Any, dict[str, tuple[float, Any]], float,
                               bool, list[Diagnostic]]:
        """Read ``count`` nodes (and up to ``optional`` more before the model name), the
        model, an area value, ``OFF`` and the instance options: (nodes, model card,
        options, area, off, notes)."""
        nodes = rd.nodes(count)
        card = rd.model()
        extra = 0
        while card is None and extra < optional and rd.more() and not rd.peek_assign():
            rd.nodes(1)  # a substrate node: the substrate junction is not modelled
            extra += 1
            card = rd.model()
        if card is None:
            if extra and not rd.more():
                rd.pos -= 1  # the word read as a substrate node was the model's name
            what = rd.peek_keyword()
            found = (f"found {printable(what)}, which names no .model card" if what
                     else "found nothing")
            raise ElaborationError(
                f"{printable(rd.name)}: expected the name of a .model card of type "
                f"{cls.MODEL_LETTER.replace(',', ' or ')} after the nodes, {found} "
                "(define it with .model NAME TYPE (...))", rd.field_span(), code="netlist-130")
        if card.letter != cls.letter:
            raise ElaborationError(
                f"{printable(rd.name)}: model {printable(card.name)} is of type "
                f"{printable(card.type)}, not a model for a {cls.__name__.lower()} "
                f"({cls.MODEL_LETTER})", card.span, code="netlist-130")
        opts = rd.take_options(cls.KEYS + cls.IGNORED_KEYS)
        area, off = 1.0, False
        while rd.more():
            if rd.peek_keyword() == "off":
                rd.skip()
                off = True
            elif rd.more_values() and area == 1.0 and "area" not in opts:
                area = rd.value("area")
            else:
                item = rd.items[rd.pos]
                if hasattr(item, "key"):
                    keys = ", ".join(k.upper() + "=" for k in cls.KEYS + cls.IGNORED_KEYS)
                    raise ElaborationError(
                        f"{printable(rd.name)}: {printable(item.key.text)}= is not an "
                        f"option netcheck reads on {cls.letter} cards (it reads {keys})",
                        item.span, code="netlist-105")
                rd.unexpected("expected an area value, OFF or key=value options")
        notes: list[Diagnostic] = []
        if extra:
            notes.append(Diagnostic(DEVICE_NOTE_CODE, f"{printable(rd.name)}: the substrate "
                                    "node is read, its junction is not modelled", rd.span,
                                    "note"))
        ignored = [k.upper() for k in cls.IGNORED_KEYS + ("ic",) if k in opts]
        if ignored:
            notes.append(Diagnostic(DEVICE_NOTE_CODE, f"{printable(rd.name)}: "
                                    f"{', '.join(ignored)} read and ignored (not modelled "
                                    "in a small-signal check)", rd.span, "note"))
        if "area" in opts:
            area = opts["area"][0]
        for key in ("area", "m"):
            if key in opts and not (math.isfinite(opts[key][0]) and opts[key][0] > 0):
                raise ElaborationError(f"{printable(rd.name)}: {key}={opts[key][0]:g} — it "
                                       "must be positive", opts[key][1], code="netlist-132")
        if not (math.isfinite(area) and area > 0):
            raise ElaborationError(f"{printable(rd.name)}: area {area:g} — it must be "
                                   "positive", rd.span, code="netlist-132")
        rd.finish()
        return nodes, card, opts, area, off, notes

    #: the model fields ``area`` and ``m`` multiply, and those they divide
    SCALED: ClassVar[tuple[tuple[str, ...], tuple[str, ...]]] = ((), ())
    #: nodes on the card, and optional nodes before the model name
    NODES: ClassVar[tuple[int, int]] = (2, 0)

    @classmethod
    def from_card(cls, rd: "CardReader") -> "Element":
        nodes, card, opts, area, off, notes = cls.read_device(rd, *cls.NODES)
        model, more = cls.model_of(rd, card)
        model = _scaled(model, area * opts.get("m", (1.0, None))[0], *cls.SCALED)
        return cls(rd.name, nodes, rd.span, card.name, model, off, tuple(notes + more))

    @staticmethod
    def model_of(rd: "CardReader", card: Any) -> tuple[DeviceModel, list[Diagnostic]]:
        """The device model of ``card`` and the note naming what it ignores."""
        model, ignored = device_model(card, rd.env.value_of)
        notes = []
        if ignored:
            notes.append(Diagnostic(DEVICE_NOTE_CODE, f"model {printable(card.name)}: "
                                    f"{', '.join(printable(n) for n in ignored)} not modelled; "
                                    "ignored", card.span, "note"))
        return model, notes


def _scaled(model: DeviceModel, factor: float, currents: tuple[str, ...],
            resistances: tuple[str, ...]) -> DeviceModel:
    if factor == 1.0:
        return model
    values = {k: getattr(model, k) * factor for k in currents}
    values.update({k: getattr(model, k) / factor for k in resistances})
    return dataclasses.replace(model, **values)


@dataclass(slots=True, unsafe_hash=True)
class Diode(Device):
    """``Dname anode cathode MODEL [area]``: a junction diode (Shockley)."""

    letter: ClassVar[str] = "D"
    MODEL_LETTER: ClassVar[str] = "D"
    ROLES: ClassVar[tuple[str, ...]] = ("anode", "cathode")

    SCALED: ClassVar[tuple[tuple[str, ...], tuple[str, ...]]] = (("IS", "CJO"), ("RS",))

    @property
    def series(self) -> tuple[tuple[int, float], ...]:
        return ((0, self.model.RS),) if self.model.RS else ()  # type: ignore[union-attr]


@dataclass(slots=True, unsafe_hash=True)
class Bjt(Device):
    """``Qname collector base emitter [substrate] MODEL [area]``: a bipolar transistor
    (Ebers–Moll transport form with the forward Early effect)."""

    letter: ClassVar[str] = "Q"
    n_nodes: ClassVar[int] = 3
    MODEL_LETTER: ClassVar[str] = "NPN,PNP"
    ROLES: ClassVar[tuple[str, ...]] = ("collector", "base", "emitter")

    @property
    def links(self) -> tuple[tuple[str, str], ...]:
        c, b, e = self.nodes
        return ((b, e), (b, c))

    SCALED: ClassVar[tuple[tuple[str, ...], tuple[str, ...]]] = (("IS", "CJE", "CJC"),
                                                                 ("RB", "RE", "RC"))
    NODES: ClassVar[tuple[int, int]] = (3, 1)  # a substrate node may follow

    @property
    def series(self) -> tuple[tuple[int, float], ...]:
        m: BjtModel = self.model  # type: ignore[assignment]
        return tuple((i, r) for i, r in ((0, m.RC), (1, m.RB), (2, m.RE)) if r)


@dataclass(slots=True, unsafe_hash=True)
class Mosfet(Device):
    """``Mname drain gate source bulk MODEL [L=] [W=]``: a MOSFET, level 1."""

    #: channel width and length, m
    w: float = 0.0
    l: float = 0.0  # noqa: E741 - the convention's name

    letter: ClassVar[str] = "M"
    n_nodes: ClassVar[int] = 4
    MODEL_LETTER: ClassVar[str] = "NMOS,PMOS"
    ROLES: ClassVar[tuple[str, ...]] = ("drain", "gate", "source", "bulk")
    KEYS: ClassVar[tuple[str, ...]] = ("l", "w", "m")
    IGNORED_KEYS: ClassVar[tuple[str, ...]] = ("ad", "as", "pd", "ps", "nrd", "nrs")

    @property
    def links(self) -> tuple[tuple[str, str], ...]:
        d, g, s, b = self.nodes
        return ((d, s),)  # the gate and the bulk draw no current at DC

    @property
    def sensed(self) -> tuple[tuple[str, str], ...]:
        d, g, s, b = self.nodes
        return ((g, s), (b, s))

    @property
    def series(self) -> tuple[tuple[int, float], ...]:
        m: MosModel = self.model  # type: ignore[assignment]
        return tuple((i, r) for i, r in ((0, m.RD), (2, m.RS)) if r)

    @classmethod
    def from_card(cls, rd: "CardReader") -> "Element":
        nodes, card, opts, area, off, notes = cls.read_device(rd, 4)
        if area != 1.0:
            raise ElaborationError(f"{printable(rd.name)}: a MOSFET has no area value; give "
                                   "W= and L= (and m= for parallel copies)", rd.span,
                                   code="netlist-105")
        model, more = cls.model_of(rd, card)
        assert isinstance(model, MosModel)
        w = opts["w"][0] if "w" in opts else model.W
        l = opts["l"][0] if "l" in opts else model.L  # noqa: E741
        check_geometry(w, l, rd.span)
        copies = opts.get("m", (1.0, None))[0]
        # m copies in parallel: m times the width (currents, W-scaled capacitances), the
        # length-scaled overlap CGBO·L m times, RD and RS each 1/m
        w *= copies
        model = _scaled(model, copies, ("CGBO",), ("RD", "RS"))
        return cls(rd.name, nodes, rd.span, card.name, model, off, tuple(notes + more), w, l)


@dataclass(slots=True, unsafe_hash=True)
class Jfet(Device):
    """``Jname drain gate source MODEL [area]``: a junction FET (square law)."""

    letter: ClassVar[str] = "J"
    n_nodes: ClassVar[int] = 3
    MODEL_LETTER: ClassVar[str] = "NJF,PJF"
    ROLES: ClassVar[tuple[str, ...]] = ("drain", "gate", "source")

    @property
    def links(self) -> tuple[tuple[str, str], ...]:
        d, g, s = self.nodes
        return ((d, s), (g, s))

    SCALED: ClassVar[tuple[tuple[str, ...], tuple[str, ...]]] = (("BETA", "IS", "CGS", "CGD"),
                                                                 ("RD", "RS"))
    NODES: ClassVar[tuple[int, int]] = (3, 0)

    @property
    def series(self) -> tuple[tuple[int, float], ...]:
        m: JfetModel = self.model  # type: ignore[assignment]
        return tuple((i, r) for i, r in ((0, m.RD), (2, m.RS)) if r)


def with_series_resistors(device: Device) -> list[Element]:
    """``device`` with each of its series resistances made a resistor from its terminal
    to an internal node (``<device>'<role letter>``), the device moved onto the internal
    nodes; just ``[device]`` when it has none. The resistors are called
    ``<device>.R<role letter>`` (``Q1.RB``), a name a card cannot give at that level."""
    series = device.series
    if not series:
        return [device]
    nodes = list(device.nodes)
    out: list[Element] = []
    for pos, ohms in series:
        role = device.ROLES[pos][0]
        inner = f"{device.name.lower()}'{role}"
        out.append(Resistor(f"{device.name}.R{role.upper()}", (nodes[pos], inner), device.span,
                            ohms))
        nodes[pos] = inner
    out.append(dataclasses.replace(device, nodes=tuple(nodes)))
    return out


@dataclass(slots=True, unsafe_hash=True)
class Linearised(Element):
    """A device replaced by its small-signal equivalent at the operating point: the
    currents into its terminals are i = (G + sC)·v over its terminal voltages (each row
    sums to zero: shifting every terminal voltage alike changes nothing).

    ``region`` and ``quantities`` (name → value: currents, voltages, gm, capacitances)
    describe the operating point for reports."""

    g: tuple[tuple[float, ...], ...] = ()
    c: tuple[tuple[float, ...], ...] = ()
    kind: str = ""
    region: str = ""
    quantities: tuple[tuple[str, float], ...] = ()

    letter: ClassVar[str] = "Y"
    n_nodes: ClassVar[int] = 0

    @property
    def links(self) -> tuple[tuple[str, str], ...]:
        first = self.nodes[0]
        return tuple((first, n) for n in self.nodes[1:])

    def stamp(self, st: "Stamper", value: Any) -> None:
        # per-sample tables (each sample of part values at its own operating point:
        # {"G": (S, k, k), "C": (S, k, k)}), or the nominal ones
        sampled = st.sampled(self.name)
        rows = [st.row_of(n) for n in self.nodes]
        for mat, table in (("G", self.g), ("C", self.c)):
            for i, (r, line) in enumerate(zip(rows, table)):
                for j, (k, v) in enumerate(zip(rows, line)):
                    if sampled is not None:
                        column = sampled[mat][:, i, j]
                        if column.any():
                            st.add(mat, r, k, column)
                    elif v:
                        st.add(mat, r, k, v)
