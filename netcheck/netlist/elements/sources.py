"""Independent sources: voltage and current (V, I), with DC and AC values."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, ClassVar

from ...exceptions import ElaborationError
from .base import Element

if TYPE_CHECKING:  # pragma: no cover
    from ...mna.assemble import Stamper
    from ..reader import CardReader

__all__ = ["VoltageSource", "CurrentSource"]


@dataclass(slots=True, unsafe_hash=True)
class _Independent(Element):
    dc: float = 0.0
    ac_magnitude: float = 0.0
    ac_phase_deg: float = 0.0
    has_ac: bool = False
    #: series resistance, Ω (V only; 0: none), a real resistor inside the source
    rser: float = 0.0

    @property
    def value(self) -> float:
        return self.ac_magnitude

    @classmethod
    def from_card(cls, rd: "CardReader") -> "Element":
        nodes = rd.nodes(2)
        rser = _series_resistance(rd) if cls.letter == "V" else 0.0
        dc = ac = phase = 0.0
        has_ac = seen_dc = False
        while rd.more():
            word, key = rd.peek_keyword(), rd.peek_assign()
            if word == "dc" or key == "dc":
                dc = rd.assigned("DC value") if key else (rd.skip(), rd.value("DC value"))[1]
                seen_dc = True
            elif word == "ac" or key == "ac":
                has_ac = True
                if key:
                    ac = rd.assigned("AC magnitude")
                else:
                    rd.skip()
                    ac = rd.value("AC magnitude") if rd.more_values() else 1.0
                if rd.more_values():
                    phase = rd.value("AC phase (degrees)")
            elif key:  # an instance option (Rser=...): the options' reader takes it
                break
            elif not seen_dc and rd.more_values():
                dc = rd.value("DC value")
                seen_dc = True
            elif rd.more_values():
                rd.unexpected("a second value after the DC value; write 'AC mag [phase]' "
                              "for the AC part (e.g. DC 1 AC 1 0)")
            else:
                rd.unexpected("expected DC value or 'AC magnitude [phase]'")
        rd.finish()
        return cls(rd.name, nodes, rd.span, dc, ac, phase, has_ac, rser)


def _series_resistance(rd: "CardReader") -> float:
    """``Rser=`` taken off a V card (netlist-110 if negative)."""
    value, span = rd.take_options(("rser",)).get("rser", (0.0, None))
    if not value >= 0:
        raise ElaborationError(f"{rd.name}: Rser={value:g} — a series resistance must be "
                               "zero or positive", span, code="netlist-110")
    return value


@dataclass(slots=True, unsafe_hash=True)
class VoltageSource(_Independent):
    """``Vname n+ n- [DC v] [AC mag [phase]] [Rser=r]``: a voltage source (branch current),
    ideal or with a series resistance: v+ − v− − Rser·i = value.

    The fields come in any order (``AC 1 0 DC 5``), ``dc=`` and ``ac=`` are accepted, and
    the transient functions (SIN, PULSE, ...) were taken off before (netcheck.netlist.dialect).
    """

    letter: ClassVar[str] = "V"
    has_branch: ClassVar[bool] = True
    voltage_defined: ClassVar[bool] = True
    unit: ClassVar[str] = "V"

    @property
    def voltage_defined(self) -> bool:  # type: ignore[override]
        return not self.rser   # with a series resistance it may sit in a loop of sources

    def stamp(self, st: "Stamper", value: Any) -> None:
        k = st.branch(self.name)
        st.incidence(self.nodes[0], self.nodes[1], k)
        if self.rser:
            st.add("G", k, k, -self.rser)

    def excite(self, st: "Stamper") -> None:
        """Unit stimulus: v+ − v− = 1."""
        st.rhs_branch(self.name, 1.0)


@dataclass(slots=True, unsafe_hash=True)
class CurrentSource(_Independent):
    """``Iname n+ n- [DC i] [AC mag [phase]]``: current flows n+ → source → n−."""

    letter: ClassVar[str] = "I"
    current_defined: ClassVar[bool] = True
    unit: ClassVar[str] = "A"

    def stamp(self, st: "Stamper", value: Any) -> None:
        return None  # an inactive current source is an open circuit

    def excite(self, st: "Stamper") -> None:
        """Unit stimulus: 1 A drawn from n+ and delivered into n−."""
        st.rhs_node(self.nodes[0], -1.0)
        st.rhs_node(self.nodes[1], 1.0)
