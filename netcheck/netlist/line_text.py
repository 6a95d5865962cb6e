"""Text tests on the lines of a netlist for the dialect pre-pass (:mod:`.dialect`)."""

from __future__ import annotations

import re
from collections.abc import Iterator

__all__ = ["has_function", "strip_comment", "lines_to_visit", "has_endl"]

_BRACED = re.compile(r"""\{[^{}\n]*\}|"[^"\n]*"|'[^'\n]*'""")

#: what puts a line before the pre-pass when every line is kept (no ``.lib`` sections): a
#: directive, a ``;`` comment line, a V/I card (a transient function), an E/F/G/H/B card
#: (a behavioural form) — :data:`_FIRST` at the start of the text, :data:`_LINE_START`
#: after a line end — or anywhere on it ``$`` or ``//`` (an inline comment), ``(``, ``#``
#: or ``<`` (a function, an optimiser placeholder) (:data:`_SPECIAL`). The pre-pass leaves
#: any other line (a plain card, a ``*`` comment, a ``+`` continuation) as it is. Each
#: pattern starts with a literal or a character set, which the regular expression engine
#: searches for quickly: one pattern of all of them takes ten times as long. (The dotless
#: ı is there because the pre-pass upper-cases a card's letter, and "ı".upper() is "I".)
_FIRST = re.compile(r"[^\S\n]*[.;VvIiıEeFfGgHhBb]")
_LINE_START = re.compile(r"\n[^\S\n]*[.;VvIiıEeFfGgHhBb]")
_SPECIAL = re.compile(r"[$(#<]")
#: a ``.endl`` card after a line end (:func:`has_endl`)
_ENDL = re.compile(r"\n[ \t]*\.[eE][nN][dD][lL]\b")


def has_endl(text: str) -> bool:
    """True if a line of ``text`` is an ``.endl`` card (the file has ``.lib`` sections)."""
    return bool(re.match(r"[ \t]*\.endl\b", text, re.I) or _ENDL.search(text))


def lines_to_visit(text: str) -> Iterator[int]:
    """The 0-based index of every line of ``text`` the pre-pass must read when it keeps
    every line, in order, each once."""
    at = [m.start() + 1 for m in _LINE_START.finditer(text)]
    at += [m.start() for m in _SPECIAL.finditer(text)]
    k = text.find("//")
    while k >= 0:
        at.append(k)
        k = text.find("//", k + 2)
    if _FIRST.match(text):
        at.append(0)
    line, was, last = 0, 0, -1
    for k in sorted(at):
        line += text.count("\n", was, k)
        was = k
        if line != last:
            last = line
            yield line


def has_function(s: str) -> bool:
    """True if a V or I card's text may hold a transient source function."""
    low = s.lower()
    return "(" in low or any(f in low for f in ("sin", "pulse", "pwl", "exp", "sffm", "am",
                                                "trnoise", "trrandom"))


def strip_comment(line: str) -> str:
    """``line`` without an inline ``$`` or ``//`` comment (at the start or after white
    space, outside braces and quotes)."""
    cut = len(line)
    for mark in ("$", "//"):
        k = line.find(mark)
        while 0 <= k < cut:
            if (k == 0 or line[k - 1] in " \t") and not _inside(line, k):
                cut = k
                break
            k = line.find(mark, k + 1)
    return line[:cut].rstrip() if cut < len(line) else line


def _inside(line: str, k: int) -> bool:
    return any(m.start() < k < m.end() for m in _BRACED.finditer(line))
