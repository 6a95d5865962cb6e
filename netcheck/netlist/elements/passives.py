"""Passive two-terminal elements: resistor, capacitor, inductor (R, C, L)."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, ClassVar

from .base import Element

if TYPE_CHECKING:  # pragma: no cover
    from ...mna.assemble import Stamper
    from ..reader import CardReader

__all__ = ["Resistor", "Capacitor", "Inductor"]


@dataclass(frozen=True, slots=True)
class _TwoTerminal(Element):
    magnitude: float = 0.0

    @property
    def value(self) -> float:
        return self.magnitude

    @classmethod
    def from_card(cls, rd: "CardReader") -> "Element":
        nodes = rd.nodes(2)
        value = rd.value(f"{cls.__name__.lower()} value")
        rd.finish()
        return cls(rd.name, nodes, rd.span, value)


@dataclass(frozen=True, slots=True)
class Resistor(_TwoTerminal):
    """``Rname n+ n- value``: conductance 1/R between the nodes."""

    letter: ClassVar[str] = "R"
    passive: ClassVar[bool] = True
    unit: ClassVar[str] = "Ω"
    range_why: ClassVar[str] = "its conductance 1/R"

    def stamp(self, st: "Stamper", value: Any) -> None:
        st.admittance("G", self.nodes[0], self.nodes[1], 1.0 / value)


@dataclass(frozen=True, slots=True)
class Capacitor(_TwoTerminal):
    """``Cname n+ n- value``: admittance sC between the nodes."""

    letter: ClassVar[str] = "C"
    passive: ClassVar[bool] = True
    unit: ClassVar[str] = "F"
    range_why: ClassVar[str] = "its susceptance ωC"

    def stamp(self, st: "Stamper", value: Any) -> None:
        st.admittance("C", self.nodes[0], self.nodes[1], value)


@dataclass(frozen=True, slots=True)
class Inductor(_TwoTerminal):
    """``Lname n+ n- value``: branch current i with v+ − v− − sL·i = 0."""

    letter: ClassVar[str] = "L"
    passive: ClassVar[bool] = True
    has_branch: ClassVar[bool] = True
    unit: ClassVar[str] = "H"
    range_why: ClassVar[str] = "its reactance ωL"

    def stamp(self, st: "Stamper", value: Any) -> None:
        k = st.branch(self.name)
        st.incidence(self.nodes[0], self.nodes[1], k)
        st.add("C", k, k, -value)
