"""Magnetic coupling between inductors: mutual inductance (K).

``K1 L1 L2 k`` couples two inductors; ``K1 L1 L2 L3 k`` couples every pair of the listed
inductors with the same k (common practice, no source: a transformer with several
windings on one core written on one card).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, ClassVar

from .base import Element

if TYPE_CHECKING:  # pragma: no cover
    from ...mna.assemble import Stamper
    from ..reader import CardReader

__all__ = ["Coupling"]


@dataclass(slots=True, unsafe_hash=True)
class Coupling(Element):
    """``Kname L1 L2 [L3 ...] k``: mutual inductance M = k·√(Li·Lj) between every pair,
    |k| ≤ 1 (Li the inductance each card stamps, m= counted)."""

    inductors: tuple[str, ...] = ("", "")
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
        names = [rd.reference("first inductor"), rd.reference("second inductor")]
        while rd.pos < len(rd.items) - 1:
            names.append(rd.reference(f"inductor {len(names) + 1}"))
        k = rd.value("coupling coefficient")
        rd.finish()
        return cls(rd.name, (), rd.span, tuple(names), k)

    def stamp(self, st: "Stamper", value: Any) -> None:
        names = self.inductors
        ind = [st.circuit.element(n).effective(st.value_of(n)) for n in names]
        for i in range(len(names)):
            for j in range(i + 1, len(names)):
                m = value * (ind[i] * ind[j]) ** 0.5
                ki, kj = st.branch(names[i]), st.branch(names[j])
                st.add("C", ki, kj, -m)
                st.add("C", kj, ki, -m)
