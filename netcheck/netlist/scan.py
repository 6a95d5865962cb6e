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
from .syntax import Assign, Card, Directive, Field, Item, Statement

__all__ = ["scan_statements"]

#: the card grammar's terminals inside a line: WS (ignored), NAME, BRACED, STRING, "=" and
#: INLINE_COMMENT (ignored); anything else is for the grammar to report
_TOKEN = re.compile(r"""[ \t\f\r]+|([^\s=;{}()"',*]+)|(\{[^{}\n]*\})|("[^"\n]*"|'[^'\n]*')|(=)|;.*""")
_DIRECTIVE = re.compile(r"\.[A-Za-z][A-Za-z0-9_]*")
#: ``.end`` first on a line ends the file (the grammar's _END terminal)
_END = re.compile(r"\.end(?![A-Za-z0-9_])", re.I)
_KINDS = (None, "word", "braced", "string")
#: the rest of a common line: white-space-separated words, ``{braced}`` values without white
#: space, and ``key=value`` fields written without spaces, nothing else (no comment, quote,
#: parenthesis): ``str.split`` gives exactly its tokens
_WORD = r"""[^\s=;{}()"',*]+"""
_SIMPLE = re.compile(rf"(?:[ \t]+(?:{_WORD}=)?(?:{_WORD}|\{{[^{{}}\s]*\}}))*[ \t]*")


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
        out = list(heapq.merge(out, prepared, key=lambda st: st.span.line))
    return tuple(out), used


def _scan(source: SourceFile, text: str, used: int) -> tuple[list[Statement], int]:
    out: list[Statement] = []
    lines = text.split("\n")
    head: Field | None = None        # the statement being read: its head and fields
    items: list[Item] = []
    end = (0, 0)                     # (line, column) just after its last token
    separator = True                 # the line before was blank or a comment
    match_token = _TOKEN.match
    for i, line in enumerate(lines):
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
            if head is None or line[pos + 1:].lstrip(" \t").startswith("="):
                raise _GiveUp
            end = (lineno, pos + 2)
            pos += 1
        else:
            if head is not None:
                out.append(_statement(source, head, items, end))
            if s[0] == ".":
                if _END.match(s):
                    return out, used + 1
                m = _DIRECTIVE.match(line, pos)
                if m is None:
                    raise _GiveUp
            else:
                m = match_token(line, pos)
                if m is None or m.lastindex != 1:
                    raise _GiveUp
            tok = m.group()
            head = Field("word", tok, Span(source, lineno, pos + 1, lineno, pos + 1 + len(tok)))
            items = []
            used += 1
            pos = m.end()
            end = (lineno, pos + 1)
        if _SIMPLE.fullmatch(line, pos):  # the common line: split it, no token regex
            for tok in line[pos:].split():
                col = line.find(tok, pos)
                pos = col + len(tok)
                eq = tok.find("=") if tok[0] != "{" else -1
                if eq < 0:
                    items.append(Field("braced" if tok[0] == "{" else "word", tok,
                                       Span(source, lineno, col + 1, lineno, pos + 1)))
                    used += 1
                    continue
                value = tok[eq + 1:]
                items.append(Assign(
                    Field("word", tok[:eq], Span(source, lineno, col + 1, lineno, col + eq + 1)),
                    Field("braced" if value[0] == "{" else "word", value,
                          Span(source, lineno, col + eq + 2, lineno, pos + 1)),
                    Span(source, lineno, col + 1, lineno, pos + 1)))
                used += 3
            end = (lineno, pos + 1)
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
    if head is not None:
        out.append(_statement(source, head, items, end))
    return out, used


def _statement(source: SourceFile, head: Field, items: list[Item], end: tuple[int, int]
               ) -> Statement:
    span = Span(source, head.span.line, head.span.column, end[0], end[1])
    if head.text[0] == ".":
        return Directive(head.text[1:].lower(), tuple(items), span)
    return Card(head, tuple(items), span)
