"""Controlled sources: voltage- and current-controlled, voltage and current out (E, G, F, H)."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, ClassVar

from ...exceptions import Diagnostic
from ..source import printable
from .base import Element

if TYPE_CHECKING:  # pragma: no cover
    from ...mna.assemble import Stamper
    from ..reader import CardReader

__all__ = ["VCVS", "IdealOpAmp", "VCCS", "CCCS", "CCVS"]


@dataclass(slots=True, unsafe_hash=True)
class _Controlled(Element):
    gain: float = 0.0
    control: str = ""

    range_why: ClassVar[str] = "its gain"

    @property
    def value(self) -> float:
        return self.gain

    def controls(self) -> tuple[str, ...]:
        return (self.control,) if self.control else ()

    @property
    def sensed(self) -> tuple[tuple[str, str], ...]:
        return ((self.nodes[2], self.nodes[3]),) if len(self.nodes) == 4 else ()


@dataclass(slots=True, unsafe_hash=True)
class VCVS(_Controlled):
    """``Ename n+ n- nc+ nc- gain``: v+ − v− = gain·(vc+ − vc−)."""

    letter: ClassVar[str] = "E"
    n_nodes: ClassVar[int] = 4
    has_branch: ClassVar[bool] = True
    voltage_defined: ClassVar[bool] = True

    @classmethod
    def from_card(cls, rd: "CardReader") -> "Element":
        if rd.peek_keyword(2) == "opamp":
            return IdealOpAmp.read(rd)
        nodes = rd.nodes(4)
        gain = rd.value("gain")
        rd.finish()
        return cls(rd.name, nodes, rd.span, gain)

    def stamp(self, st: "Stamper", value: Any) -> None:
        k = st.branch(self.name)
        st.incidence(self.nodes[0], self.nodes[1], k)
        st.add_node_col("G", k, self.nodes[2], -value)
        st.add_node_col("G", k, self.nodes[3], value)


@dataclass(slots=True, unsafe_hash=True)
class IdealOpAmp(VCVS):
    """``Ename out+ out- OPAMP in+ in-``: an ideal op-amp, the limit of an E card of
    infinite gain (a nullor): v(in+) = v(in−), and the output branch carries whatever
    current that takes.

    Stamp: the branch current k leaves node out+ and enters out− (the columns of an E
    card), and its row is v(in+) − v(in−) = 0 — the E card's row divided by −gain as
    the gain grows without bound. Common practice for modified nodal analysis, no source.
    The circuit needs negative feedback around it, or the system is singular.
    """

    notes: tuple[Diagnostic, ...] = ()

    @classmethod
    def read(cls, rd: "CardReader") -> "IdealOpAmp":
        """An ``E out+ out- OPAMP in+ in-`` card."""
        outputs = rd.nodes(2)
        span = rd.field_span()
        rd.skip()  # the OPAMP keyword
        nodes = outputs + rd.nodes(2)
        rd.finish()
        note = Diagnostic("netlist-162", f"{printable(rd.name)}: 'OPAMP' read as an ideal "
                          "op-amp: infinite gain, v(in+) = v(in-) (docs/elements.md)",
                          span, "note")
        return cls(rd.name, nodes, rd.span, 0.0, notes=(note,))

    def stamp(self, st: "Stamper", value: Any) -> None:
        k = st.branch(self.name)
        st.add_node_row("G", self.nodes[0], k, 1.0)  # the output current, as an E card's
        st.add_node_row("G", self.nodes[1], k, -1.0)
        st.add_node_col("G", k, self.nodes[2], 1.0)  # its row: v(in+) − v(in−) = 0
        st.add_node_col("G", k, self.nodes[3], -1.0)


@dataclass(slots=True, unsafe_hash=True)
class VCCS(_Controlled):
    """``Gname n+ n- nc+ nc- gm``: current gm·(vc+ − vc−) flows n+ → n−."""

    letter: ClassVar[str] = "G"
    n_nodes: ClassVar[int] = 4
    current_defined: ClassVar[bool] = True
    unit: ClassVar[str] = "S"

    @classmethod
    def from_card(cls, rd: "CardReader") -> "Element":
        nodes = rd.nodes(4)
        gm = rd.value("transconductance")
        rd.finish()
        return cls(rd.name, nodes, rd.span, gm)

    def stamp(self, st: "Stamper", value: Any) -> None:
        p, n, cp, cn = self.nodes
        st.transadmittance(p, n, cp, cn, value)


@dataclass(slots=True, unsafe_hash=True)
class CCCS(_Controlled):
    """``Fname n+ n- Vctl gain``: current gain·i(Vctl) flows n+ → n−."""

    letter: ClassVar[str] = "F"
    current_defined: ClassVar[bool] = True

    @classmethod
    def from_card(cls, rd: "CardReader") -> "Element":
        nodes = rd.nodes(2)
        control = rd.reference("controlling voltage source")
        gain = rd.value("current gain")
        rd.finish()
        return cls(rd.name, nodes, rd.span, gain, control)

    def stamp(self, st: "Stamper", value: Any) -> None:
        k = st.branch(self.control)
        st.add_node_row("G", self.nodes[0], k, value)
        st.add_node_row("G", self.nodes[1], k, -value)


@dataclass(slots=True, unsafe_hash=True)
class CCVS(_Controlled):
    """``Hname n+ n- Vctl r``: v+ − v− = r·i(Vctl)."""

    letter: ClassVar[str] = "H"
    has_branch: ClassVar[bool] = True
    voltage_defined: ClassVar[bool] = True
    unit: ClassVar[str] = "Ω"

    @classmethod
    def from_card(cls, rd: "CardReader") -> "Element":
        nodes = rd.nodes(2)
        control = rd.reference("controlling voltage source")
        r = rd.value("transresistance")
        rd.finish()
        return cls(rd.name, nodes, rd.span, r, control)

    def stamp(self, st: "Stamper", value: Any) -> None:
        k = st.branch(self.name)
        st.incidence(self.nodes[0], self.nodes[1], k)
        st.add("G", k, st.branch(self.control), -value)
