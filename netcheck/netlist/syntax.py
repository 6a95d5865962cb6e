"""The syntax a netlist reads into: fields, cards, directives, subcircuit scopes, Netlist.

:class:`Field`, :class:`Assign`, :class:`Card` and :class:`Directive` (and
:class:`~.source.Span`) are made by the hundred thousand for a big netlist, so they are
plain slotted classes rather than frozen ones (a frozen dataclass pays a call per field
to be built: 2-3 times the cost). Nothing changes them after they are made; they hash and
compare by value like the frozen ones around them.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

from ..exceptions import Diagnostic
from .source import SourceFile, Span

__all__ = ["Field", "Assign", "Item", "Card", "LineCard", "PLAIN_REST", "plain_items", "Directive", "Statement", "SubcktDef", "Scope",
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


class Card:
    """An element line: a name and its fields, continuation lines joined.

    A card the scanner read from one plain line (a :class:`LineCard`) keeps that line and
    its white-space-separated :attr:`words`, and makes its :class:`Field` objects and
    spans only when something asks for them: a big netlist's plain cards are elaborated
    from their words, and most of their fields are never looked at.
    """

    __slots__ = ("_name", "_fields", "_span", "_line", "head", "words", "letter")

    def __init__(self, name: Field, fields: tuple[Item, ...], span: Span) -> None:
        self._name, self._fields, self._span = name, fields, span
        self._line: tuple[SourceFile, int, str, int] | None = None
        #: the name as written
        self.head: str = name.text
        #: the element letter (first character of the name, upper case)
        self.letter: str = name.text[:1].upper()
        #: the fields as written, when the card is one plain line (:data:`PLAIN_REST`);
        #: else None
        self.words: tuple[str, ...] | None = None

    def _make(self) -> None:
        source, lineno, line, column = self._line  # type: ignore[misc]
        self._fields = tuple(plain_items(source, lineno, line, column + len(self.head)))

    @property
    def name(self) -> Field:
        """The card's name (its first field)."""
        if self._name is None:
            source, lineno, _, column = self._line  # type: ignore[misc]
            self._name = Field("word", self.head, Span(source, lineno, column + 1, lineno,
                                                       column + len(self.head) + 1))
        return self._name

    @property
    def fields(self) -> tuple[Item, ...]:
        """The fields after the name."""
        if self._fields is None:
            self._make()
        return self._fields  # type: ignore[return-value]

    @property
    def span(self) -> Span:
        """From the start of the name to the end of the last field."""
        if self._span is None:
            source, lineno, line, column = self._line  # type: ignore[misc]
            self._span = Span(source, lineno, column + 1, lineno, len(line.rstrip(" \t")) + 1)
        return self._span

    @property
    def line(self) -> int:
        """The line the card starts on."""
        return self._line[1] if self._line is not None else self._span.line  # type: ignore[union-attr]

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, Card):
            return NotImplemented
        return (self.name, self.fields, self.span) == (other.name, other.fields, other.span)

    def __hash__(self) -> int:
        return hash((self.name, self.fields, self.span))

    def __repr__(self) -> str:
        return f"Card(name={self.name!r}, fields={self.fields!r}, span={self.span!r})"


class LineCard(Card):
    """A :class:`Card` read from one plain line: ``line`` (the text of line ``lineno``),
    its name starting at 0-based ``column``, and ``words`` = ``line.split()`` (the name
    and the fields). The text after the name matches :data:`PLAIN_REST`."""

    __slots__ = ()

    def __init__(self, source: SourceFile, lineno: int, line: str, column: int,
                 words: list[str]) -> None:
        self._name = self._fields = self._span = None
        self._line = (source, lineno, line, column)
        self.head = words[0]
        self.letter = words[0][0].upper()
        self.words = tuple(words)[1:]


#: what may follow a card's name on a plain line: white-space-separated words, ``{braced}``
#: values without white space or ``=``, and ``key=value`` fields written without spaces;
#: nothing else (no comment, quote or parenthesis), so ``str.split`` gives its fields
_WORD = r"""[^\s=;{}()"',*]+"""
_BRACED = r"\{[^{}\s=]*\}"
#: (written so that no word is matched twice: ``word`` then perhaps ``=value``; possessive
#: repetition, so a line that is not plain fails without backtracking over its words)
PLAIN_REST = re.compile(rf"(?:[ \t]+(?:{_WORD}(?:=(?:{_WORD}|{_BRACED}))?|{_BRACED}))*+[ \t]*")


def plain_items(source: SourceFile, lineno: int, line: str, pos: int) -> list[Item]:
    """The fields of ``line`` from 0-based ``pos`` on, where ``line[pos:]`` matches
    :data:`PLAIN_REST`: words, ``{braced}`` values and ``key=value`` fields."""
    out: list[Item] = []
    for tok in line[pos:].split():
        col = line.find(tok, pos)
        pos = col + len(tok)
        eq = tok.find("=") if tok[0] != "{" else -1
        if eq < 0:
            out.append(Field("braced" if tok[0] == "{" else "word", tok,
                             Span(source, lineno, col + 1, lineno, pos + 1)))
            continue
        value = tok[eq + 1:]
        out.append(Assign(
            Field("word", tok[:eq], Span(source, lineno, col + 1, lineno, col + eq + 1)),
            Field("braced" if value[0] == "{" else "word", value,
                  Span(source, lineno, col + eq + 2, lineno, pos + 1)),
            Span(source, lineno, col + 1, lineno, pos + 1)))
    return out


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
    #: the netlist's ``.temp`` temperature, °C, for the parts' TC1/TC2 (None: 27 °C)
    temp_c: float | None = None


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
