"""CardReader: reads one element card's fields in order for ``Element.from_card``."""

from __future__ import annotations

from typing import Callable

from ..exceptions import ElaborationError
from .params import Env
from .parse import Assign, Card, Field
from .source import Span, printable, quoted

__all__ = ["CardReader", "card_label"]


def card_label(card: Card) -> str:
    """A card's name as messages show it (escaped, bounded)."""
    return printable(card.name.text, 80)


class CardReader:
    """Reads one card's fields in order for :meth:`Element.from_card`."""

    def __init__(self, card: Card, name: str, env: Env, node_of: Callable[[Field], str],
                 ref_of: Callable[[str], str],
                 model_of: Callable[[str], object | None] | None = None) -> None:
        self.card, self.name, self.env = card, name, env
        self.span = card.span
        self._node_of, self._ref_of = node_of, ref_of
        self._model_of = model_of
        self.items = list(card.fields)
        self.pos = 0

    def take_options(self, names: tuple[str, ...]) -> dict[str, tuple[float, Span]]:
        """Take every ``key=value`` field whose key is one of ``names`` (lower case) off
        the card, wherever it stands: key → (value, span of the field). A key given
        twice is refused."""
        out: dict[str, tuple[float, Span]] = {}
        keep: list = self.items[:self.pos]
        for item in self.items[self.pos:]:
            key = item.key.text.lower() if isinstance(item, Assign) else ""
            if key not in names:
                keep.append(item)
                continue
            if key in out:
                raise ElaborationError(f"{card_label(self.card)}: {printable(item.key.text)}= "
                                       "given twice", item.span, code="netlist-105")
            out[key] = (self.env.value_of(item.value), item.span)
        self.items = keep
        return out

    def plain(self) -> tuple[tuple[str, str], float] | None:
        """For a card of exactly two node names and a value (no option, no model), its
        nodes and value, read as :meth:`nodes` then :meth:`value` read them; else None
        (nothing read). The common card, read without the general steps."""
        items = self.items
        if self.pos or len(items) != 3:
            return None
        a, b, v = items
        if type(a) is not Field or type(b) is not Field or type(v) is not Field \
                or a.kind != "word" or b.kind != "word":
            return None
        if v.kind == "word" and self._model_of is not None and \
                self._model_of(v.text) is not None:
            return None
        self.pos = 3
        return (self._node_of(a), self._node_of(b)), self.env.value_of(v)

    def model(self) -> object | None:
        """The ``.model`` card the next field names, taking the field, or None (the
        field is left) when it names none."""
        if self._model_of is None or not self.more():
            return None
        item = self.items[self.pos]
        if not isinstance(item, Field) or item.kind != "word":
            return None
        found = self._model_of(item.text)
        if found is not None:
            self.pos += 1
        return found

    def field_span(self) -> Span:
        """The span of the next field (or of the card's end)."""
        return self.items[self.pos].span if self.more() else self._end_span()

    def _next(self, what: str) -> Field:
        if self.pos >= len(self.items):
            raise ElaborationError(f"{card_label(self.card)}: missing {what}",
                                   self._end_span(), code="netlist-105")
        item = self.items[self.pos]
        if isinstance(item, Assign):
            raise ElaborationError(f"{card_label(self.card)}: expected {what}, found "
                                   f"{printable(item.key.text)}=...", item.span, code="netlist-105")
        self.pos += 1
        return item

    def _end_span(self) -> Span:
        last = self.items[-1].span if self.items else self.card.name.span
        return Span(last.source, last.end_line, last.end_column, last.end_line,
                    last.end_column + 1)

    def nodes(self, count: int) -> tuple[str, ...]:
        """Read ``count`` node names."""
        out = []
        for i in range(count):
            fld = self._next(f"node {i + 1} of {count}")
            if fld.kind != "word":
                raise ElaborationError("a node name cannot be an expression", fld.span,
                                       code="netlist-105")
            out.append(self._node_of(fld))
        return tuple(out)

    def value(self, what: str) -> float:
        """Read and evaluate a value."""
        return self.env.value_of(self._next(what))

    def reference(self, what: str) -> str:
        """Read the (scope-qualified) name of another element."""
        fld = self._next(what)
        if fld.kind != "word":
            raise ElaborationError(f"{what} must be an element name", fld.span, code="netlist-105")
        return self._ref_of(fld.text)

    def more(self) -> bool:
        """True if fields remain."""
        return self.pos < len(self.items)

    def more_values(self) -> bool:
        """True if the next field is a value (not a keyword such as AC/DC)."""
        return (self.more() and not isinstance(self.items[self.pos], Assign)
                and self.peek_keyword() not in ("ac", "dc"))

    def peek_keyword(self, ahead: int = 0) -> str:
        """The next field's text (or the one ``ahead`` fields further), lower case ('' if
        it is not a plain word or there is none)."""
        if self.pos + ahead >= len(self.items):
            return ""
        item = self.items[self.pos + ahead]
        return item.text.lower() if isinstance(item, Field) and item.kind == "word" else ""

    def peek_assign(self, ahead: int = 0) -> str:
        """The key of the next field (or the one ``ahead`` fields further) if it is
        ``key=value`` (lower case), else ``''``."""
        k = self.pos + ahead
        item = self.items[k] if k < len(self.items) else None
        return item.key.text.lower() if isinstance(item, Assign) else ""

    def assigned_field(self) -> Field:
        """The value field of the next field, a ``key=value`` one (not evaluated)."""
        item = self.items[self.pos]
        assert isinstance(item, Assign)
        self.pos += 1
        return item.value

    def node_at(self, text: str, span: Span) -> str:
        """The circuit node that node name ``text`` (written at ``span``) is in this scope."""
        return self._node_of(Field("word", text, span))

    def element_ref(self, text: str) -> str:
        """The (scope-qualified) name of the element ``text`` names."""
        return self._ref_of(text)

    def assigned(self, what: str) -> float:
        """Read and evaluate the value of the next field, a ``key=value`` one."""
        item = self.items[self.pos]
        assert isinstance(item, Assign)
        self.pos += 1
        return self.env.value_of(item.value)

    def skip(self) -> None:
        """Step over the next field."""
        self.pos += 1

    def unexpected(self, hint: str) -> None:
        """Raise for the next field."""
        item = self.items[self.pos]
        raise ElaborationError(f"{card_label(self.card)}: {hint}", item.span, code="netlist-105")

    def finish(self) -> None:
        """Refuse left-over fields."""
        if self.more():
            item = self.items[self.pos]
            text = item.text if isinstance(item, Field) else \
                f"{item.key.text}={item.value.text}"
            raise ElaborationError(f"{card_label(self.card)}: unexpected extra field "
                                   f"{quoted(text)}", item.span, code="netlist-105")

