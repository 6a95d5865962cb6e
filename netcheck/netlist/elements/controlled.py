"""Controlled sources: voltage- and current-controlled, voltage and current out (E, G, F, H)."""

from __future__ import annotations

import functools
import itertools
import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any, Callable, ClassVar

from ...exceptions import Diagnostic, ElaborationError
from ..gradients import read_expression, value_and_gradient
from ..source import Span, printable
from ..syntax import Field
from .base import Element

if TYPE_CHECKING:  # pragma: no cover
    from ...mna.assemble import Stamper
    from ..reader import CardReader

__all__ = ["VCVS", "IdealOpAmp", "VCCS", "CCCS", "CCVS", "PolyVCVS", "PolyVCCS", "PolyCCCS",
           "PolyCCVS", "BehaviouralVCVS", "BehaviouralVCCS", "LinearisedSource", "poly_terms",
           "poly_value", "is_value_card"]


#: the other forms of E, G, F and H cards (ideal op-amp, POLY, VALUE, LAPLACE), by letter:
#: (does the card have this form, its reader); the module of each form registers it
FORMS: dict[str, list[tuple[Callable[["CardReader"], bool], Callable[["CardReader"], Element]]]] = {
    "E": [], "G": [], "F": [], "H": []}


def _other_form(letter: str, rd: "CardReader") -> Element | None:
    """The element a card of another form (:data:`FORMS`) describes, or None."""
    for wants, read in FORMS[letter]:
        if wants(rd):
            return read(rd)
    return None


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
    """``Ename n+ n- nc+ nc- gain [en=] [in=] [noise_corner=]``: v+ − v− = gain·(vc+ − vc−).

    An amplifier's noise, as its datasheet gives it, rides on the card: ``en`` (V/√Hz)
    in series with the control input, ``in`` (A/√Hz) into each control node, both with
    the 1/f corner ``noise_corner`` (Hz): density² × (1 + corner/f) (netcheck.mna.noise).
    """

    # keyword-only: the subclasses' fields keep their positions
    en: float = field(default=0.0, kw_only=True)
    in_: float = field(default=0.0, kw_only=True)
    noise_corner: float = field(default=0.0, kw_only=True)

    letter: ClassVar[str] = "E"
    n_nodes: ClassVar[int] = 4
    has_branch: ClassVar[bool] = True
    voltage_defined: ClassVar[bool] = True

    @classmethod
    def from_card(cls, rd: "CardReader") -> "Element":
        other = _other_form("E", rd)
        if other is not None:
            return other
        nodes = rd.nodes(4)
        gain = rd.value("gain")
        noise = _noise_options(rd)
        rd.finish()
        return cls(rd.name, nodes, rd.span, gain, **noise)

    def stamp(self, st: "Stamper", value: Any) -> None:
        k = st.branch(self.name)
        st.incidence(self.nodes[0], self.nodes[1], k)
        st.add_node_col("G", k, self.nodes[2], -value)
        st.add_node_col("G", k, self.nodes[3], value)


def _noise_options(rd: "CardReader") -> dict[str, float]:
    """The ``en=``, ``in=`` and ``noise_corner=`` options of an amplifier's card."""
    out: dict[str, float] = {}
    names = {"en": "en", "in": "in_", "noise_corner": "noise_corner"}
    while rd.peek_assign() in names:
        key = rd.peek_assign()
        span = rd.field_span()
        value = rd.assigned(key)
        if not value >= 0 or value == float("inf"):
            raise ElaborationError(f"{printable(rd.name)}: {key}={value:g} — a noise "
                                   "density or corner is 0 or more, and finite", span,
                                   code="netlist-105")
        out[names[key]] = value
    return out


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
        noise = _noise_options(rd)
        rd.finish()
        note = Diagnostic("netlist-162", f"{printable(rd.name)}: 'OPAMP' read as an ideal "
                          "op-amp: infinite gain, v(in+) = v(in-) (docs/elements.md)",
                          span, "note")
        return cls(rd.name, nodes, rd.span, 0.0, notes=(note,), **noise)

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
        other = _other_form("G", rd)
        if other is not None:
            return other
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
        other = _other_form("F", rd)
        if other is not None:
            return other
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
        other = _other_form("H", rd)
        if other is not None:
            return other
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


@functools.lru_cache(maxsize=256)
def _terms(n: int, count: int) -> list[tuple[int, ...]]:
    return poly_terms(n, count)


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


class _Nonlinear:
    """What every source whose output is a nonlinear function F of its controls shares
    (the POLY forms here, the behavioural ones in :mod:`.behavioural`): the circuit is
    solved at its DC operating point and the source replaced there by its linearisation
    (netcheck.mna.bias), a :class:`LinearisedSource` of gains dF/d(control).

    A subclass gives :attr:`inputs` (each control ``("v", node+, node-)`` or
    ``("i", source)``) and :meth:`output` (F and its gradient at control values).
    """

    __slots__ = ()
    nonlinear: ClassVar[bool] = True

    def output(self, u: Sequence[float]) -> tuple[float, Sequence[float]]:
        """F at control values ``u`` and its exact gradient dF/du."""
        raise NotImplementedError

    def stamp(self, st: "Stamper", value: Any) -> None:
        raise AssertionError(f"{self.name} is a nonlinear source: linearise the circuit at "  # type: ignore[attr-defined]
                             "its operating point before stamping it (netcheck.mna.bias)")

    def stamp_linear(self, st: "Stamper") -> None:
        """The linear part of the DC equations: the output branch of a voltage output."""
        if self.has_branch:  # type: ignore[attr-defined]
            st.incidence(self.nodes[0], self.nodes[1], st.branch(self.name))  # type: ignore[attr-defined]

    @property
    def sensed(self) -> tuple[tuple[str, str], ...]:
        return tuple((c[1], c[2]) for c in self.inputs if c[0] == "v")  # type: ignore[attr-defined]

    def controls(self) -> tuple[str, ...]:
        return tuple(c[1] for c in self.inputs if c[0] == "i")  # type: ignore[attr-defined]


@dataclass(slots=True, unsafe_hash=True)
class _Poly(_Nonlinear):
    """What the four polynomial forms share: ``Xname n+ n- POLY(n) controls... p0 p1 ...``.

    The output (voltage for E and H, current for G and F) is the polynomial of the
    controls in the SPICE convention (:func:`poly_terms`); a POLY(1) card with a single
    coefficient takes it as p1, the gain, with p0 = 0 (the convention, from memory). The
    source is not linear: the circuit is solved at its DC operating point and the source
    replaced by its linearisation there (netcheck.mna.bias).
    """

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

    @property
    def inputs(self) -> tuple[tuple[str, ...], ...]:
        """Each control: ``("v", node+, node-)`` or ``("i", source)``."""
        if self.sources:
            return tuple(("i", s) for s in self.sources)
        nodes = self.nodes[2:]
        return tuple(("v", nodes[2 * i], nodes[2 * i + 1]) for i in range(len(nodes) // 2))

    def output(self, u: Sequence[float]) -> tuple[float, Sequence[float]]:
        return poly_value(_terms(len(self.inputs), len(self.coefficients)),
                          self.coefficients, u)

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


# ---------------------------------------------------------------- behavioural sources

class _Behavioural(_Nonlinear):
    """What the behavioural forms share: the expression tree, its controls and where
    each control is written (for errors)."""

    __slots__ = ()
    range_why: ClassVar[str] = ""

    @staticmethod
    def read_expression(rd: "CardReader", fld: Field
                        ) -> tuple[tuple[str, ...], Any, tuple[tuple[str, ...], ...],
                                   tuple[Span, ...]]:
        """(output nodes + the nodes v() reads, tree, controls, their places) after the
        output nodes, read already, and the expression ``fld``."""
        tree, inputs, spans = read_expression(rd, fld)
        sensed = tuple(n for c in inputs if c[0] == "v" for n in c[1:])
        return sensed, tree, inputs, spans

    @classmethod
    def read(cls, rd: "CardReader") -> Any:
        """An E or G card ``n+ n- VALUE={expr}``."""
        outputs = rd.nodes(2)
        sensed, tree, inputs, spans = cls.read_expression(rd, _value_field(rd))
        rd.finish()
        return cls(rd.name, outputs + sensed, rd.span, 0.0, "", tree, inputs, spans)  # type: ignore[call-arg]

    def output(self, u: Sequence[float]) -> tuple[float, Sequence[float]]:
        return value_and_gradient(self.expression, u)  # type: ignore[attr-defined]

    @property
    def value(self) -> float:
        return float("nan")


def _value_field(rd: "CardReader") -> Field:
    """The expression of ``VALUE={expr}`` (or ``VALUE {expr}``), the key taken."""
    if rd.peek_assign() == "value":
        return rd.assigned_field()
    rd.skip()  # VALUE
    if not rd.more():
        raise ElaborationError(f"{printable(rd.name)}: VALUE needs its expression, "
                               "VALUE={...}", rd.field_span(), code="netlist-105")
    fld = rd.items[rd.pos]
    if not isinstance(fld, Field):
        rd.unexpected("VALUE needs its expression, VALUE={...}")
    rd.skip()
    return fld  # type: ignore[return-value]


def is_value_card(rd: "CardReader") -> bool:
    """True if the card reads ``n+ n- VALUE...`` (an E or G behavioural source)."""
    return rd.peek_assign(2) == "value" or rd.peek_keyword(2) == "value"


@dataclass(slots=True, unsafe_hash=True)
class BehaviouralVCVS(_Behavioural, VCVS):
    """``Ename n+ n- VALUE={expr}``: v(n+) − v(n−) = expr."""

    expression: Any = None
    inputs: tuple[tuple[str, ...], ...] = ()
    probe_spans: tuple[Span, ...] = ()



@dataclass(slots=True, unsafe_hash=True)
class BehaviouralVCCS(_Behavioural, VCCS):
    """``Gname n+ n- VALUE={expr}``: current expr flows from n+ through the source to n−."""

    expression: Any = None
    inputs: tuple[tuple[str, ...], ...] = ()
    probe_spans: tuple[Span, ...] = ()



class _OutputKind:
    """A two-terminal source whose output is a voltage (``output_kind`` ``v``: its own
    branch current, voltage-defined) or a current (``i``: current-defined)."""

    __slots__ = ()

    @property
    def has_branch(self) -> bool:
        return self.output_kind == "v"  # type: ignore[attr-defined]

    @property
    def voltage_defined(self) -> bool:
        return self.output_kind == "v"  # type: ignore[attr-defined]

    @property
    def current_defined(self) -> bool:
        return self.output_kind == "i"  # type: ignore[attr-defined]


@dataclass(slots=True, unsafe_hash=True)
class LinearisedSource(_OutputKind, Element):
    """A polynomial or behavioural source replaced by its linearisation at the operating point: the
    output (``output_kind`` ``v``: voltage with its own branch, ``i``: current n+ → n−) is
    Σ gains[k]·control[k] for the controls of the source's ``inputs`` (the constant part
    belongs to the operating point, not to the small-signal circuit)."""

    output_kind: str = "v"
    inputs: tuple[tuple[str, ...], ...] = ()
    gains: tuple[float, ...] = ()

    letter: ClassVar[str] = "Y"
    n_nodes: ClassVar[int] = 2

    def controls(self) -> tuple[str, ...]:
        return tuple(c[1] for c in self.inputs if c[0] == "i")

    def stamp(self, st: "Stamper", value: Any) -> None:
        # per-sample gains (each sample of part values at its own operating point:
        # {"gains": (S, controls)}), or the nominal ones
        sampled = st.sampled(self.name)
        gains: Any = self.gains if sampled is None else sampled["gains"].T
        p, n = self.nodes[0], self.nodes[1]
        if self.output_kind == "v":
            k = st.branch(self.name)
            st.incidence(p, n, k)
            rows, sign = [k], [-1.0]
        else:
            rows, sign = [st.row_of(p), st.row_of(n)], [1.0, -1.0]
        for control, g in zip(self.inputs, gains):
            if not (g.any() if sampled is not None else g):
                continue
            cols = ([(st.row_of(control[1]), 1.0), (st.row_of(control[2]), -1.0)]
                    if control[0] == "v" else [(st.branch(control[1]), 1.0)])
            for r, s in zip(rows, sign):
                for c, t in cols:
                    st.add("G", r, c, s * t * g)


def _is_poly(rd: "CardReader") -> bool:
    return rd.peek_keyword(2) == "poly"


FORMS["E"] += [(lambda rd: rd.peek_keyword(2) == "opamp", IdealOpAmp.read),
               (_is_poly, PolyVCVS.read), (is_value_card, BehaviouralVCVS.read)]
FORMS["G"] += [(_is_poly, PolyVCCS.read), (is_value_card, BehaviouralVCCS.read)]
FORMS["F"] += [(_is_poly, PolyCCCS.read)]
FORMS["H"] += [(_is_poly, PolyCCVS.read)]
