"""The syntax a netlist reads into: fields, cards, directives, subcircuit scopes, Netlist.

:class:`Field`, :class:`Assign`, :class:`Card` and :class:`Directive` (and
:class:`~.source.Span`) are made by the hundred thousand for a big netlist, so they are
plain slotted classes rather than frozen ones (a frozen dataclass pays a call per field
to be built: 2-3 times the cost). Nothing changes them after they are made; they hash and
compare by value like the frozen ones around them.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from ..exceptions import Diagnostic
from .source import SourceFile, Span

__all__ = ["Field", "Assign", "Item", "Card", "Directive", "Statement", "SubcktDef", "Scope",
           "Netlist", "AcCard", "FuncDef"]


@dataclass(slots=True, unsafe_hash=True)
class Field:
    """One field of a card: ``kind`` is ``word``, ``braced`` (``{expr}``) or ``string``."""

    kind: str
    text: str
    span: Span

    @property
    def expr_text(self) -> str:
        """The text to read as an expression (braces or quotes taken off)."""
        return self.text[1:-1] if self.kind in ("braced", "string") else self.text

    @property
    def expr_column(self) -> int:
        """Column where :attr:`expr_text` starts."""
        return self.span.column + (1 if self.kind in ("braced", "string") else 0)


@dataclass(slots=True, unsafe_hash=True)
class Assign:
    """A ``key=value`` field."""

    key: Field
    value: Field
    span: Span


Item = Field | Assign


@dataclass(slots=True, unsafe_hash=True)
class Card:
    """An element line: a name and its fields, continuation lines joined."""

    name: Field
    fields: tuple[Item, ...]
    span: Span

    @property
    def letter(self) -> str:
        """The element letter (first character of the name, upper case)."""
        return self.name.text[0].upper()


@dataclass(slots=True, unsafe_hash=True)
class Directive:
    """A dot-directive; ``name`` is lower case without the dot."""

    name: str
    fields: tuple[Item, ...]
    span: Span


@dataclass(frozen=True, slots=True)
class SubcktDef:
    """A ``.subckt`` definition: ports, default parameters and body."""

    name: Field
    ports: tuple[Field, ...]
    params: tuple[Assign, ...]
    body: "Scope"
    span: Span


@dataclass(frozen=True, slots=True)
class Scope:
    """What one level of hierarchy declares: cards, ``.param`` assignments, subcircuits."""

    cards: tuple[Card, ...] = ()
    params: tuple[Assign, ...] = ()
    subckts: tuple[SubcktDef, ...] = ()
    funcs: tuple["FuncDef", ...] = ()
    models: tuple[Directive, ...] = ()  # the .model cards (netcheck.netlist.models)


@dataclass(frozen=True, slots=True)
class Netlist:
    """A parsed netlist with its includes expanded and its hierarchy grouped."""

    title: str
    source: SourceFile
    top: Scope
    sources: tuple[SourceFile, ...] = ()
    diagnostics: tuple[Diagnostic, ...] = field(default=())
    #: the netlist's own AC sweep (its first ``.ac`` card), the default of ``netcheck sweep``
    ac: "AcCard | None" = None
    #: node names declared ``.global``: the same node inside every subcircuit (lower case)
    globals: tuple[str, ...] = ()


@dataclass(frozen=True, slots=True)
class FuncDef:
    """A ``.func name(args) {body}`` definition: a user function for expressions."""

    name: str
    args: tuple[str, ...]
    body: Field
    span: Span


@dataclass(frozen=True, slots=True)
class AcCard:
    """An ``.ac dec|oct|lin N fstart fstop`` card: the sweep the netlist asks for.

    ``points`` counts per decade (dec), per octave (oct) or over the whole range (lin).
    """

    kind: str
    points: int
    start: float
    stop: float
    span: Span
    #: read from the ``ac`` command of a ``.control`` block (the file has no ``.ac`` card)
    in_control: bool = False

    def log_grid(self) -> tuple[float, float, int]:
        """``(start, stop, points per decade)`` of a log grid covering this sweep.

        ``oct N`` is N·log2(10) points per decade (rounded up); ``lin N`` over a range of
        D decades becomes ceil(N / D) per decade (at least 10), so the log grid has about
        as many points as the card, denser where a log axis shows them.

        >>> from .source import SourceFile
        >>> sp = SourceFile("<t>", ".ac").span(1, 1)
        >>> AcCard("oct", 10, 100.0, 200.0, sp).log_grid()
        (100.0, 200.0, 34)
        >>> AcCard("lin", 1000, 0.1, 1000.0, sp).log_grid()
        (0.1, 1000.0, 250)
        """
        import math
        if self.kind == "dec":
            ppd = self.points
        elif self.kind == "oct":
            ppd = math.ceil(self.points * math.log2(10) - 1e-9)
        else:
            decades = max(math.log10(self.stop / self.start), 1e-9)
            ppd = max(10, math.ceil(self.points / decades - 1e-9))
        return self.start, self.stop, ppd


#: what a file reads into, in file order (a ``.func`` is a FuncDef)
Statement = Card | Directive | FuncDef
