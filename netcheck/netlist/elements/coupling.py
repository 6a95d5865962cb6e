"""Magnetic coupling between two inductors: mutual inductance (K)."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, ClassVar

from .base import Element

if TYPE_CHECKING:  # pragma: no cover
    from ...mna.assemble import Stamper
    from ..reader import CardReader

__all__ = ["Coupling"]


@dataclass(frozen=True, slots=True)
class Coupling(Element):
    """``Kname L1 L2 k``: mutual inductance M = k·√(L1·L2), |k| ≤ 1."""

    inductors: tuple[str, str] = ("", "")
    k: float = 0.0

    letter: ClassVar[str] = "K"
    n_nodes: ClassVar[int] = 0
    range_why: ClassVar[str] = "its mutual inductance"

    @property
    def value(self) -> float:
        return self.k

    @property
    def terminals(self) -> tuple[str, str]:  # couples branches, not nodes
        return ("", "")

    def controls(self) -> tuple[str, ...]:
        return self.inductors

    @classmethod
    def from_card(cls, rd: "CardReader") -> "Element":
        a = rd.reference("first inductor")
        b = rd.reference("second inductor")
        k = rd.value("coupling coefficient")
        rd.finish()
        return cls(rd.name, (), rd.span, (a, b), k)

    def stamp(self, st: "Stamper", value: Any) -> None:
        a, b = self.inductors
        m = value * (st.value_of(a) * st.value_of(b)) ** 0.5
        ka, kb = st.branch(a), st.branch(b)
        st.add("C", ka, kb, -m)
        st.add("C", kb, ka, -m)
