"""The card scanner: the common card shapes read without the card grammar.

Most lines of a large netlist are plain cards: a name, then fields separated by white
space (words, ``{braces}``, quoted strings, ``key=value``), perhaps an inline ``;``
comment, perhaps continued on ``+`` lines. :func:`scan_statements` reads a whole file
of such lines with one regular expression per line into exactly the statements (and
spans, and token count) the card grammar (grammar/netlist.lark, :mod:`.parse`) would
give. At the first line it does not read as plainly — an error, a stray character, a
``+ =`` continuation, a budget reached — it gives up and the grammar reads the file,
so every message and caret stays the grammar's.
"""

from __future__ import annotations

import heapq
import re

from .source import SourceFile, Span
from .syntax import (PLAIN_REST, Assign, Card, Directive, Field, Item, LineCard, Statement,
                     plain_items)

__all__ = ["scan_statements"]

#: the card grammar's terminals inside a line: WS (ignored), NAME, BRACED, STRING, "=" and
#: INLINE_COMMENT (ignored); anything else is for the grammar to report
_TOKEN = re.compile(r"""[ \t\f\r]+|([^\s=;{}()"',*]+)|(\{[^{}\n]*\})|("[^"\n]*"|'[^'\n]*')|(=)|;.*""")
_DIRECTIVE = re.compile(r"\.[A-Za-z][A-Za-z0-9_]*")
#: ``.end`` first on a line ends the file (the grammar's _END terminal)
_END = re.compile(r"\.end(?![A-Za-z0-9_])", re.I)
_KINDS = (None, "word", "braced", "string")
#: a whole plain card line: white space, a name (a NAME token), then :data:`PLAIN_REST`
_PLAIN_CARD = re.compile(r"""[ \t]*[^\s=;{}()"',*]+""" + PLAIN_REST.pattern)
#: a line starting with one of these is not a card from column 1 (indented, a comment, a
#: continuation or a directive)
_NOT_PLAIN_START = " \t*+."
#: a run of whole lines, each a plain card from column 1: matched in one call, not line by
#: line (a generated netlist is little else)
_PLAIN_BLOCK = re.compile(r"""(?:[^\s=;{}()"',*+.][^\s=;{}()"',*]*""" + PLAIN_REST.pattern +
                          r"\n)*+")


class _GiveUp(Exception):
    """The line is not a plain card: the grammar reads the file."""


def scan_statements(source: SourceFile, text: str, used: int, allowed: int,
                    prepared: list[Statement]) -> tuple[tuple[Statement, ...], int] | None:
    """The statements of ``text`` (a file's text after the dialect pre-pass, its title
    line emptied when it has one) merged with ``prepared`` (those the pre-pass read) in
    line order, and the token count ``used`` plus this file's, as the card grammar
    counts them; ``None`` where the grammar must read the file."""
    try:
        out, used = _scan(source, text, used)
    except _GiveUp:
        return None
    if used > allowed:
        return None  # the grammar stops at the exact token over the budget
    if prepared:
        out = list(heapq.merge(out, prepared,
                               key=lambda st: st.line if isinstance(st, Card) else st.span.line))
    return tuple(out), used


def _scan(source: SourceFile, text: str, used: int) -> tuple[list[Statement], int]:
    out: list[Statement] = []
    lines = text.split("\n")
    head: Field | None = None        # the statement being read: its head and fields
    items: list[Item] = []
    lazy: Card | None = None         # or a card read from one plain line, kept as its words
    end = (0, 0)                     # (line, column) just after its last token
    separator = True                 # the line before was blank or a comment
    match_token = _TOKEN.match
    plain_rest = PLAIN_REST.fullmatch
    plain_card = _PLAIN_CARD.fullmatch
    plain_block = _PLAIN_BLOCK.match
    skip, after = 0, 0               # lines before ``skip`` are read; where line i+1 starts
    for i, line in enumerate(lines):
        start, after = after, after + len(line) + 1
        if i < skip:
            continue
        if line and line[0] not in _NOT_PLAIN_START:
            stop = plain_block(text, start).end()
            if stop > start:  # lines i.. are cards on one plain line each, from column 1
                count = text.count("\n", start, stop)
                if i == 1 or (i and not separator):
                    used += 1
                used += count - 1 + 2 * text.count("=", start, stop)
                separator = False
                if lazy is not None:
                    out.append(lazy)
                elif head is not None:
                    out.append(_statement(source, head, items, end))
                    head = None
                cards = [LineCard(source, k + 1, lines[k], 0, lines[k].split())
                         for k in range(i, i + count)]
                used += len(cards) + sum([len(c.words) for c in cards])
                lazy = cards.pop()  # a continuation line may follow the last
                out.extend(cards)
                skip = i + count
                continue
        s = line.lstrip(" \t")
        if i == 1 or (i and not separator):
            used += 1  # the line end after a card starts a separator (_NL or _CONTINUATION)
        if not s or s[0] == "*":
            if i == 0 and s:
                if len(s) != len(line):
                    raise _GiveUp  # an indented comment on the first line of an include
                used += 1  # _HEAD_COMMENT
            separator = True
            continue
        separator = False
        lineno = i + 1
        pos = len(line) - len(s)
        if s[0] == "+":
            if lazy is not None:  # the plain card goes on: read it as fields after all
                head, items, lazy = lazy.name, list(lazy.fields), None
            if head is None or line[pos + 1:].lstrip(" \t").startswith("="):
                raise _GiveUp
            end = (lineno, pos + 2)
            pos += 1
        else:
            if lazy is not None:
                out.append(lazy)
                lazy = None
            elif head is not None:
                out.append(_statement(source, head, items, end))
            head = None
            if s[0] == ".":
                if _END.match(s):
                    return out, used + 1
                m = _DIRECTIVE.match(line, pos)
                if m is None:
                    raise _GiveUp
            else:
                if plain_card(line):  # the common card: kept as its words
                    words = line.split()
                    lazy = LineCard(source, lineno, line, pos, words)
                    used += len(words) + 2 * line.count("=")
                    continue
                m = match_token(line, pos)
                if m is None or m.lastindex != 1:
                    raise _GiveUp
            tok = m.group()
            head = Field("word", tok, Span(source, lineno, pos + 1, lineno, pos + 1 + len(tok)))
            items = []
            used += 1
            pos = m.end()
            end = (lineno, pos + 1)
        if plain_rest(line, pos):  # no token regex needed
            new = plain_items(source, lineno, line, pos)
            if new:
                items.extend(new)
                used += len(new) + 2 * line.count("=", pos)
                end = (lineno, new[-1].span.end_column)
            continue
        n = len(line)
        while pos < n:
            m = match_token(line, pos)
            if m is None:
                raise _GiveUp
            kind = m.lastindex
            if kind is None:  # white space or an inline comment
                pos = m.end()
                continue
            if kind == 4:  # '=': the word before it is the key, the next token the value
                key = items.pop() if items else None
                if not isinstance(key, Field) or key.kind != "word" or key.span.line != lineno:
                    raise _GiveUp
                pos = m.end()
                m = match_token(line, pos)
                while m is not None and m.lastindex is None and m.end() < n:
                    m = match_token(line, m.end())
                if m is None or m.lastindex is None or m.lastindex == 4:
                    raise _GiveUp
                start = m.start()
                value = Field(_KINDS[m.lastindex], m.group(),
                              Span(source, lineno, start + 1, lineno, m.end() + 1))
                items.append(Assign(key, value, Span(source, lineno, key.span.column, lineno,
                                                     m.end() + 1)))
                used += 2
            else:
                start = m.start()
                items.append(Field(_KINDS[kind], m.group(),
                                   Span(source, lineno, start + 1, lineno, m.end() + 1)))
                used += 1
            pos = m.end()
            end = (lineno, pos + 1)
    if lazy is not None:
        out.append(lazy)
    elif head is not None:
        out.append(_statement(source, head, items, end))
    return out, used


def _statement(source: SourceFile, head: Field, items: list[Item], end: tuple[int, int]
               ) -> Statement:
    span = Span(source, head.span.line, head.span.column, end[0], end[1])
    if head.text[0] == ".":
        return Directive(head.text[1:].lower(), tuple(items), span)
    return Card(head, tuple(items), span)
