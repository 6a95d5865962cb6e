"""Controlled sources: voltage- and current-controlled, voltage and current out (E, G, F, H)."""

from __future__ import annotations

import itertools
import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, ClassVar

from ...exceptions import Diagnostic, ElaborationError, MeasurementError
from ..source import printable
from .base import Element

if TYPE_CHECKING:  # pragma: no cover
    from ...mna.assemble import Stamper
    from ..reader import CardReader

__all__ = ["VCVS", "IdealOpAmp", "VCCS", "CCCS", "CCVS", "PolyVCVS", "PolyVCCS", "PolyCCCS",
           "PolyCCVS", "LinearisedSource", "poly_terms", "poly_value"]


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
        if rd.peek_keyword(2) == "poly":
            return PolyVCVS.read(rd)
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
        if rd.peek_keyword(2) == "poly":
            return PolyVCCS.read(rd)
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
        if rd.peek_keyword(2) == "poly":
            return PolyCCCS.read(rd)
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
        if rd.peek_keyword(2) == "poly":
            return PolyCCVS.read(rd)
        nodes = rd.nodes(2)
        control = rd.reference("controlling voltage source")
        r = rd.value("transresistance")
        rd.finish()
        return cls(rd.name, nodes, rd.span, r, control)

    def stamp(self, st: "Stamper", value: Any) -> None:
        k = st.branch(self.name)
        st.incidence(self.nodes[0], self.nodes[1], k)
        st.add("G", k, st.branch(self.control), -value)


# ---------------------------------------------------------------- polynomial sources

def poly_terms(n: int, count: int) -> list[tuple[int, ...]]:
    """The monomials of the first ``count`` coefficients of a polynomial in ``n``
    controls, in the SPICE convention: the constant, the n linear terms, then the
    products of two controls x_i·x_j with i ≤ j in lexicographic order, then of three,
    and so on; each monomial as the indices of its factors.

    >>> poly_terms(2, 6)
    [(), (0,), (1,), (0, 0), (0, 1), (1, 1)]
    """
    out: list[tuple[int, ...]] = []
    degree = 0
    while len(out) < count:
        out.extend(itertools.combinations_with_replacement(range(n), degree))
        degree += 1
    return out[:count]


def poly_value(terms: list[tuple[int, ...]], coefficients: tuple[float, ...],
               u: Sequence[float]) -> tuple[float, list[float]]:
    """The polynomial at controls ``u`` and its gradient (exact: each monomial's
    derivative by the product rule)."""
    value = 0.0
    grad = [0.0] * len(u)
    for factors, c in zip(terms, coefficients):
        if not c:
            continue
        value += c * math.prod(u[i] for i in factors)
        for k in range(len(factors)):
            if k and factors[k] == factors[k - 1]:
                continue  # x_i^m: one term m·x_i^(m-1), counted below
            times = factors.count(factors[k])
            rest = list(factors)
            rest.remove(factors[k])
            grad[factors[k]] += c * times * math.prod(u[i] for i in rest)
    return value, grad


@dataclass(slots=True, unsafe_hash=True)
class _Poly:
    """What the four polynomial forms share: ``Xname n+ n- POLY(n) controls... p0 p1 ...``.

    The output (voltage for E and H, current for G and F) is the polynomial of the
    controls in the SPICE convention (:func:`poly_terms`); a POLY(1) card with a single
    coefficient takes it as p1, the gain, with p0 = 0 (the convention, from memory). The
    source is not linear: the circuit is solved at its DC operating point and the source
    replaced by its linearisation there (netcheck.mna.bias).
    """

    nonlinear: ClassVar[bool] = True
    #: the controls are currents through voltage sources (F, H), not voltages (E, G)
    CURRENTS: ClassVar[bool] = False

    @classmethod
    def read(cls, rd: "CardReader") -> Any:
        """The source a POLY card describes."""
        nodes, sources, coefficients = cls.read_poly(rd, cls.CURRENTS)
        return cls(rd.name, nodes, rd.span, 0.0, "", sources, coefficients)  # type: ignore[call-arg]

    @staticmethod
    def read_poly(rd: "CardReader", currents: bool) -> tuple[tuple[str, ...], tuple[str, ...],
                                                             tuple[float, ...]]:
        """(output nodes + controlling nodes, controlling sources, coefficients)."""
        outputs = rd.nodes(2)
        rd.skip()  # POLY
        n_span = rd.field_span()
        n = rd.value("the number of controls after POLY")
        if n != int(n) or not 1 <= n <= 16:
            raise ElaborationError(f"{printable(rd.name)}: POLY({n:g}) — the number of "
                                   "controls must be a whole number from 1 to 16", n_span,
                                   code="netlist-105")
        n = int(n)
        if currents:
            sources = tuple(rd.reference(f"controlling voltage source {i + 1} of {n}")
                            for i in range(n))
            nodes = outputs
        else:
            sources = ()
            nodes = outputs + rd.nodes(2 * n)
        coefficients = []
        while rd.more():
            coefficients.append(rd.value("polynomial coefficient"))
        if not coefficients:
            raise ElaborationError(f"{printable(rd.name)}: POLY({n}) needs its coefficients "
                                   "after the controls (p0 p1 ...)", rd.field_span(),
                                   code="netlist-105")
        rd.finish()
        if n == 1 and len(coefficients) == 1:
            coefficients = [0.0, coefficients[0]]
        return nodes, sources, tuple(coefficients)

    def stamp(self, st: "Stamper", value: Any) -> None:
        raise AssertionError(f"{self.name} is a polynomial source: linearise the circuit at "
                             "its operating point before stamping it (netcheck.mna.bias)")

    def stamp_linear(self, st: "Stamper") -> None:
        """The linear part of the DC equations: the output branch of E and H."""
        if self.has_branch:
            st.incidence(self.nodes[0], self.nodes[1], st.branch(self.name))

    @property
    def inputs(self) -> tuple[tuple[str, ...], ...]:
        """Each control: ``("v", node+, node-)`` or ``("i", source)``."""
        if self.sources:
            return tuple(("i", s) for s in self.sources)
        nodes = self.nodes[2:]
        return tuple(("v", nodes[2 * i], nodes[2 * i + 1]) for i in range(len(nodes) // 2))

    @property
    def sensed(self) -> tuple[tuple[str, str], ...]:
        return tuple((c[1], c[2]) for c in self.inputs if c[0] == "v")

    def controls(self) -> tuple[str, ...]:
        return self.sources

    @property
    def value(self) -> float:
        return self.coefficients[1] if len(self.coefficients) > 1 else float("nan")


@dataclass(slots=True, unsafe_hash=True)
class PolyVCVS(_Poly, VCVS):
    """``Ename n+ n- POLY(n) (c1+ c1-) ... p0 p1 ...``: v+ − v− = P(control voltages)."""

    sources: tuple[str, ...] = ()
    coefficients: tuple[float, ...] = ()


@dataclass(slots=True, unsafe_hash=True)
class PolyVCCS(_Poly, VCCS):
    """``Gname n+ n- POLY(n) (c1+ c1-) ... p0 p1 ...``: current P(control voltages)
    flows n+ → n−."""

    sources: tuple[str, ...] = ()
    coefficients: tuple[float, ...] = ()


@dataclass(slots=True, unsafe_hash=True)
class PolyCCCS(_Poly, CCCS):
    """``Fname n+ n- POLY(n) V1 ... p0 p1 ...``: current P(currents of V1...) flows n+ → n−."""

    sources: tuple[str, ...] = ()
    coefficients: tuple[float, ...] = ()

    CURRENTS: ClassVar[bool] = True


@dataclass(slots=True, unsafe_hash=True)
class PolyCCVS(_Poly, CCVS):
    """``Hname n+ n- POLY(n) V1 ... p0 p1 ...``: v+ − v− = P(currents of V1...)."""

    sources: tuple[str, ...] = ()
    coefficients: tuple[float, ...] = ()

    CURRENTS: ClassVar[bool] = True


@dataclass(slots=True, unsafe_hash=True)
class LinearisedSource(Element):
    """A polynomial source replaced by its linearisation at the operating point: the
    output (``v``: voltage with its own branch, ``i``: current n+ → n−) is
    Σ gains[k]·control[k] for the controls of :attr:`_Poly.inputs` (the constant part
    belongs to the operating point, not to the small-signal circuit)."""

    output: str = "v"
    inputs: tuple[tuple[str, ...], ...] = ()
    gains: tuple[float, ...] = ()

    letter: ClassVar[str] = "Y"
    n_nodes: ClassVar[int] = 2

    @property
    def has_branch(self) -> bool:  # type: ignore[override]
        return self.output == "v"

    @property
    def voltage_defined(self) -> bool:  # type: ignore[override]
        return self.output == "v"

    @property
    def current_defined(self) -> bool:  # type: ignore[override]
        return self.output == "i"

    def controls(self) -> tuple[str, ...]:
        return tuple(c[1] for c in self.inputs if c[0] == "i")

    def stamp(self, st: "Stamper", value: Any) -> None:
        if st.values:  # sampled part values move the operating point (see Linearised)
            raise MeasurementError(
                f"{printable(self.name)}: Monte Carlo, worst case and part stress are not "
                "available yet for a circuit with polynomial sources: each sample would "
                "need its own DC operating point, and the nominal one would give wrong "
                "answers; the nominal check is exact (it solves the operating point)",
                self.span, code="analysis-308")
        p, n = self.nodes[0], self.nodes[1]
        if self.output == "v":
            k = st.branch(self.name)
            st.incidence(p, n, k)
            rows, sign = [k], [-1.0]
        else:
            rows, sign = [st.row_of(p), st.row_of(n)], [1.0, -1.0]
        for control, g in zip(self.inputs, self.gains):
            if not g:
                continue
            cols = ([(st.row_of(control[1]), 1.0), (st.row_of(control[2]), -1.0)]
                    if control[0] == "v" else [(st.branch(control[1]), 1.0)])
            for r, s in zip(rows, sign):
                for c, t in cols:
                    st.add("G", r, c, s * t * g)
