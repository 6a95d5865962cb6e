"""Passive two-terminal elements: resistor, capacitor, inductor (R, C, L), with the
instance options of the convention (common practice, no source):

* ``m=`` — the card stands for m identical parts in parallel: R/m, C·m, L/m (each with
  its own Rser, Rpar and Cpar, so those become Rser/m, Rpar/m, Cpar·m);
* ``Rser=`` (L, C) — a series resistance inside the part (the inductor's winding
  resistance, the capacitor's ESR);
* ``Rpar=``, ``Cpar=`` (L, C) — a resistance and a capacitance across the part's
  terminals (across the whole part, Rser included);
* ``TC1=``, ``TC2=`` — temperature coefficients, value(T) = value·(1 + TC1·ΔT + TC2·ΔT²)
  with ΔT = T − 27 °C (or the model's TNOM); kept on the element (:meth:`value_at`),
  the solve is at the nominal temperature where the value is unchanged;
* ``IC=`` (L, C) — an initial condition, meaningless in the frequency domain: ignored,
  with one netlist-160 note;
* ``R=``, ``C=``, ``L=`` — the value written as key=value;
* a ``.model`` name (:mod:`netcheck.netlist.models`) before or after the value.

``value`` is the value of one part (the written value times the model's multiplier):
tolerances, preferred values and stress apply to it; ``m`` and the series and parallel
parts are stamped around it. A resistor of 0 Ω is a wire: a 0 V branch (its current is
an unknown), which keeps the node and works on every engine.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, ClassVar

from ...exceptions import Diagnostic, ElaborationError
from ..models import NOMINAL_C, passive_model
from ..source import Span, printable
from .base import Element

if TYPE_CHECKING:  # pragma: no cover
    from ...mna.assemble import Stamper
    from ..reader import CardReader

__all__ = ["Resistor", "Capacitor", "Inductor"]

#: how messages write each option
_LABELS = {"m": "m", "rser": "Rser", "rpar": "Rpar", "cpar": "Cpar", "tc1": "TC1",
           "tc2": "TC2", "r": "R", "c": "C", "l": "L"}


@dataclass(slots=True, unsafe_hash=True)
class _TwoTerminal(Element):
    magnitude: float = 0.0
    #: parallel copies
    m: float = 1.0
    #: series resistance of one part, Ω (0: none)
    rser: float = 0.0
    #: parallel resistance of one part, Ω (0: none)
    rpar: float = 0.0
    #: parallel capacitance of one part, F (0: none)
    cpar: float = 0.0
    tc1: float = 0.0
    tc2: float = 0.0
    tnom: float = NOMINAL_C
    #: the ``.model`` the card names ('' for none)
    model: str = ""
    #: notes the card gave rise to (an ignored ``IC=``)
    notes: tuple[Diagnostic, ...] = ()

    #: the instance options the card reads (lower case)
    OPTIONS: ClassVar[tuple[str, ...]] = ("m", "tc1", "tc2")

    @property
    def value(self) -> float:
        return self.magnitude

    def value_at(self, temp_c: float) -> float:
        """The part's value at ``temp_c`` °C: value·(1 + TC1·ΔT + TC2·ΔT²), ΔT = T − TNOM."""
        dt = temp_c - self.tnom
        return self.magnitude * (1.0 + self.tc1 * dt + self.tc2 * dt * dt)

    @classmethod
    def from_card(cls, rd: "CardReader") -> "Element":
        plain = rd.plain()
        if plain is not None:
            return cls(rd.name, plain[0], rd.span, plain[1])
        nodes = rd.nodes(2)
        letter = cls.letter
        key = letter.lower()
        opts = rd.take_options(cls.OPTIONS + (key, "ic"))
        for item in rd.items[rd.pos:]:
            if hasattr(item, "key"):
                reads = ", ".join(_LABELS[o] + "=" for o in (key,) + cls.OPTIONS)
                raise ElaborationError(
                    f"{printable(rd.name)}: {printable(item.key.text)}= is not an option "
                    f"netcheck reads on {letter} cards (it reads {reads}); it may change the "
                    "circuit, so it is not skipped", item.span, code="netlist-105")
        model = rd.model()
        if key in opts:
            value, _ = opts.pop(key)
        else:
            value = rd.value(f"{cls.__name__.lower()} value")
        if model is None:
            model = rd.model()
        rd.finish()
        extra: dict[str, Any] = {}
        if model is not None:
            scale, tc1, tc2, tnom = passive_model(model, letter, rd.env.value_of, rd.span)
            value *= scale
            extra.update(model=model.name, tc1=tc1, tc2=tc2, tnom=tnom)
        notes = ()
        if "ic" in opts:
            notes = (Diagnostic("netlist-160", f"{printable(rd.name)}: IC= (an initial "
                                "condition) has no meaning in a frequency-domain check; "
                                "ignored", opts.pop("ic")[1], "note"),)
        for name, (v, span) in opts.items():
            _check_option(rd.name, name, v, span)
            extra[name] = v
        return cls(rd.name, nodes, rd.span, value, notes=notes, **extra)


def _check_option(part: str, name: str, v: float, span: Span) -> None:
    """netlist-110 for an option value that no part can have."""
    if name in ("tc1", "tc2"):
        return  # any sign
    label = _LABELS[name]
    bad = (v <= 0) if name in ("m", "rpar") else (v < 0)
    if bad or v != v:
        need = "positive" if name in ("m", "rpar") else "zero or positive"
        what = {"m": "the number of parallel copies", "rser": "a series resistance",
                "rpar": "a parallel resistance", "cpar": "a parallel capacitance"}[name]
        raise ElaborationError(f"{printable(part)}: {label}={v:g} — {what} must be {need}",
                               span, code="netlist-110")


@dataclass(slots=True, unsafe_hash=True)
class _WithParasitics(_TwoTerminal):
    OPTIONS: ClassVar[tuple[str, ...]] = ("m", "rser", "rpar", "cpar", "tc1", "tc2")

    def _stamp_parallel(self, st: "Stamper") -> None:
        a, b = self.nodes[0], self.nodes[1]
        if self.rpar:
            st.admittance("G", a, b, self.m / self.rpar)
        if self.cpar:
            st.admittance("C", a, b, self.cpar * self.m)


@dataclass(slots=True, unsafe_hash=True)
class Resistor(_TwoTerminal):
    """``Rname n+ n- value [model] [m=] [TC1=] [TC2=]``: conductance m/R between the
    nodes; R = 0 is a wire (a 0 V branch)."""

    letter: ClassVar[str] = "R"
    passive: ClassVar[bool] = True
    unit: ClassVar[str] = "Ω"
    range_why: ClassVar[str] = "its conductance 1/R"

    @property
    def has_branch(self) -> bool:  # type: ignore[override]
        return self.magnitude == 0

    @property
    def voltage_defined(self) -> bool:  # type: ignore[override]
        return self.magnitude == 0

    def stamp(self, st: "Stamper", value: Any) -> None:
        if self.magnitude == 0:
            st.incidence(self.nodes[0], self.nodes[1], st.branch(self.name))
            return
        st.admittance("G", self.nodes[0], self.nodes[1], self.m / value)


@dataclass(slots=True, unsafe_hash=True)
class Capacitor(_WithParasitics):
    """``Cname n+ n- value [model] [m=] [Rser=] [Rpar=] [Cpar=] [TC1=] [TC2=] [IC=]``:
    admittance sC·m between the nodes; with Rser a branch whose current i obeys
    sC·(v+ − v−) − sC·Rser·i − i = 0 (C and Rser in series, written without 1/s)."""

    letter: ClassVar[str] = "C"
    passive: ClassVar[bool] = True
    unit: ClassVar[str] = "F"
    range_why: ClassVar[str] = "its susceptance ωC"

    @property
    def has_branch(self) -> bool:  # type: ignore[override]
        return self.rser > 0

    def stamp(self, st: "Stamper", value: Any) -> None:
        a, b = self.nodes[0], self.nodes[1]
        self._stamp_parallel(st)
        if not self.rser:
            st.admittance("C", a, b, value * self.m)
            return
        k = st.branch(self.name)
        c = value * self.m
        st.add_node_row("G", a, k, 1.0)
        st.add_node_row("G", b, k, -1.0)
        st.add_node_col("C", k, a, c)
        st.add_node_col("C", k, b, -c)
        st.add("C", k, k, -value * self.rser)   # C·m × Rser/m
        st.add("G", k, k, -1.0)


@dataclass(slots=True, unsafe_hash=True)
class Inductor(_WithParasitics):
    """``Lname n+ n- value [model] [m=] [Rser=] [Rpar=] [Cpar=] [TC1=] [TC2=] [IC=]``:
    branch current i with v+ − v− − (sL/m + Rser/m)·i = 0."""

    letter: ClassVar[str] = "L"
    passive: ClassVar[bool] = True
    has_branch: ClassVar[bool] = True
    unit: ClassVar[str] = "H"
    range_why: ClassVar[str] = "its reactance ωL"

    def effective(self, value: Any) -> Any:
        """The inductance the card stamps for a part value ``value``: value/m."""
        return value / self.m

    def stamp(self, st: "Stamper", value: Any) -> None:
        self._stamp_parallel(st)
        k = st.branch(self.name)
        st.incidence(self.nodes[0], self.nodes[1], k)
        st.add("C", k, k, -value / self.m)
        if self.rser:
            st.add("G", k, k, -self.rser / self.m)
