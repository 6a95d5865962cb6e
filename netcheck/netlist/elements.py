"""The element table: letter → class with its nodes, values and MNA stamp.

Every stamp follows the modified nodal approach of Ho, Ruehli & Brennan [1]_:
node voltages are unknowns, and elements whose current cannot be written from
node voltages (inductors, voltage-defined sources) add their branch current.
A stamp adds to ``G`` (real, frequency-independent) and ``C`` (multiplied by
``s``), so the system is ``(G + sC) x = b``.

References
----------
.. [1] C.-W. Ho, A. E. Ruehli and P. A. Brennan, "The modified nodal approach to
   network analysis", IEEE Trans. Circuits and Systems, vol. 22, no. 6,
   pp. 504-509, 1975.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, ClassVar

from .source import Span

if TYPE_CHECKING:  # pragma: no cover
    from ..mna.assemble import Stamper
    from .elaborate import CardReader

__all__ = ["Element", "Resistor", "Capacitor", "Inductor", "VoltageSource", "CurrentSource",
           "VCVS", "VCCS", "CCCS", "CCVS", "Coupling", "ELEMENTS"]


@dataclass(frozen=True, slots=True)
class Element:
    """Base of all elements: hierarchical name, node names, source position."""

    name: str
    nodes: tuple[str, ...]
    span: Span

    letter: ClassVar[str] = ""
    #: number of nodes on the card (for controlled sources: output then controlling pair)
    n_nodes: ClassVar[int] = 2
    #: the element adds a branch-current unknown
    has_branch: ClassVar[bool] = False
    #: a voltage-defined two-terminal (V, E, H): loops of these are singular
    voltage_defined: ClassVar[bool] = False
    #: a current-defined two-terminal (I, G, F): cut-sets of these are singular
    current_defined: ClassVar[bool] = False
    #: a passive part whose value must be positive (R, L, C)
    passive: ClassVar[bool] = False
    #: the unit of ``value`` for reports
    unit: ClassVar[str] = ""

    @property
    def value(self) -> float:
        """The element's main value (ohms, farads, henries, gain...)."""
        return float("nan")

    @property
    def terminals(self) -> tuple[str, str]:
        """The two nodes the element's own current flows between."""
        return self.nodes[0], self.nodes[1]

    def controls(self) -> tuple[str, ...]:
        """Names of other elements this one refers to (controlling sources, inductors)."""
        return ()

    def stamp(self, st: "Stamper", value: Any) -> None:
        """Add this element's entries to the MNA matrices (``value`` may be a sample array)."""
        raise NotImplementedError

    @classmethod
    def from_card(cls, rd: "CardReader") -> "Element":
        """Build the element from a card (``rd`` reads nodes and values)."""
        raise NotImplementedError


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

    def stamp(self, st: "Stamper", value: Any) -> None:
        st.admittance("G", self.nodes[0], self.nodes[1], 1.0 / value)


@dataclass(frozen=True, slots=True)
class Capacitor(_TwoTerminal):
    """``Cname n+ n- value``: admittance sC between the nodes."""

    letter: ClassVar[str] = "C"
    passive: ClassVar[bool] = True
    unit: ClassVar[str] = "F"

    def stamp(self, st: "Stamper", value: Any) -> None:
        st.admittance("C", self.nodes[0], self.nodes[1], value)


@dataclass(frozen=True, slots=True)
class Inductor(_TwoTerminal):
    """``Lname n+ n- value``: branch current i with v+ − v− − sL·i = 0."""

    letter: ClassVar[str] = "L"
    passive: ClassVar[bool] = True
    has_branch: ClassVar[bool] = True
    unit: ClassVar[str] = "H"

    def stamp(self, st: "Stamper", value: Any) -> None:
        k = st.branch(self.name)
        st.incidence(self.nodes[0], self.nodes[1], k)
        st.add("C", k, k, -value)


@dataclass(frozen=True, slots=True)
class _Independent(Element):
    dc: float = 0.0
    ac_magnitude: float = 0.0
    ac_phase_deg: float = 0.0
    has_ac: bool = False

    @property
    def value(self) -> float:
        return self.ac_magnitude

    @classmethod
    def from_card(cls, rd: "CardReader") -> "Element":
        nodes = rd.nodes(2)
        dc = ac = phase = 0.0
        has_ac = False
        first = True
        while rd.more():
            word = rd.peek_keyword()
            if word == "dc":
                rd.skip()
                dc = rd.value("DC value")
            elif word == "ac":
                rd.skip()
                has_ac = True
                ac = rd.value("AC magnitude") if rd.more_values() else 1.0
                if rd.more_values():
                    phase = rd.value("AC phase (degrees)")
            elif first and rd.more_values():
                dc = rd.value("DC value")
            else:
                rd.unexpected("expected DC value or 'AC magnitude [phase]'")
            first = False
        rd.finish()
        return cls(rd.name, nodes, rd.span, dc, ac, phase, has_ac)


@dataclass(frozen=True, slots=True)
class VoltageSource(_Independent):
    """``Vname n+ n- [DC v] [AC mag [phase]]``: an ideal voltage source (branch current)."""

    letter: ClassVar[str] = "V"
    has_branch: ClassVar[bool] = True
    voltage_defined: ClassVar[bool] = True
    unit: ClassVar[str] = "V"

    def stamp(self, st: "Stamper", value: Any) -> None:
        st.incidence(self.nodes[0], self.nodes[1], st.branch(self.name))

    def excite(self, st: "Stamper") -> None:
        """Unit stimulus: v+ − v− = 1."""
        st.rhs_branch(self.name, 1.0)


@dataclass(frozen=True, slots=True)
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


@dataclass(frozen=True, slots=True)
class _Controlled(Element):
    gain: float = 0.0
    control: str = ""

    @property
    def value(self) -> float:
        return self.gain

    def controls(self) -> tuple[str, ...]:
        return (self.control,) if self.control else ()


@dataclass(frozen=True, slots=True)
class VCVS(_Controlled):
    """``Ename n+ n- nc+ nc- gain``: v+ − v− = gain·(vc+ − vc−)."""

    letter: ClassVar[str] = "E"
    n_nodes: ClassVar[int] = 4
    has_branch: ClassVar[bool] = True
    voltage_defined: ClassVar[bool] = True

    @classmethod
    def from_card(cls, rd: "CardReader") -> "Element":
        nodes = rd.nodes(4)
        gain = rd.value("gain")
        rd.finish()
        return cls(rd.name, nodes, rd.span, gain)

    def stamp(self, st: "Stamper", value: Any) -> None:
        k = st.branch(self.name)
        st.incidence(self.nodes[0], self.nodes[1], k)
        st.add_node_col("G", k, self.nodes[2], -value)
        st.add_node_col("G", k, self.nodes[3], value)


@dataclass(frozen=True, slots=True)
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


@dataclass(frozen=True, slots=True)
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


@dataclass(frozen=True, slots=True)
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


@dataclass(frozen=True, slots=True)
class Coupling(Element):
    """``Kname L1 L2 k``: mutual inductance M = k·√(L1·L2), |k| ≤ 1."""

    inductors: tuple[str, str] = ("", "")
    k: float = 0.0

    letter: ClassVar[str] = "K"
    n_nodes: ClassVar[int] = 0

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


#: letter → element class. ``X`` (subcircuit instance) is expanded by elaboration.
ELEMENTS: dict[str, type[Element]] = {
    cls.letter: cls
    for cls in (Resistor, Capacitor, Inductor, VoltageSource, CurrentSource, VCVS, VCCS,
                CCCS, CCVS, Coupling)
}
