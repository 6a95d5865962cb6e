"""Card forms the pre-pass rewrites for the card grammar, columns kept: polynomial and
Laplace controlled sources.

* ``POLY(n) (a,b) (c,d) ...``: the brackets and commas become spaces.
* ``Ename n+ n- nc+ nc- LAPLACE=<expression to the end of the line>`` (the expression
  unbraced, with its own brackets and spaces): the ``=`` becomes ``{`` and a ``}`` closes
  the expression after its last character, so it is one braced field starting at the
  column it starts at (``LAPLACE={...}`` already braced is left as it is).
* ``Ename n+ n- LAPLACE {v(a)} = {H(s)}``: the ``=`` becomes a space.
* ``Bname n+ n- V=<expression to the end of the line>`` (and ``I=``), ``Ename n+ n-
  VALUE=<expression>`` (and G): braced as the unbraced LAPLACE form is.
"""

from __future__ import annotations

from typing import Protocol

__all__ = ["card_form_edits"]


class _Token(Protocol):
    text: str
    line: int   # 0-based
    col: int    # 0-based


def card_form_edits(toks: list[_Token]) -> list[tuple[int, int, int, str]] | None:
    """The edits (line, start column, end column, new text) that make the E/F/G/H card
    ``toks`` (its name first) readable by the card grammar; None if it is not a POLY or
    LAPLACE form. An edit's text replaces columns start..end."""
    words = [t.text.lower() for t in toks]
    if len(toks) > 4 and toks[4].text == "=" and (
            (words[0][:1] == "b" and words[3] in ("v", "i"))
            or (words[0][:1] in ("e", "g") and words[3] == "value")):
        return _brace_rest(toks[4:])
    if len(toks) > 3 and words[3] == "poly":
        return [(t.line, t.col, t.col + 1, " ") for t in toks[1:] if t.text in "(),"]
    if "laplace" not in words[1:] or words[0][:1] not in ("e", "g"):
        return None  # (an F, H or B card with LAPLACE is refused by the pre-pass)
    k = words.index("laplace")
    after = toks[k + 1:]
    if after and after[0].text == "=" and len(after) > 1 and after[1].text.startswith("{"):
        return []  # LAPLACE={...}: a key=value field already
    if after and after[0].text == "=" and len(after) > 1:  # LAPLACE=<expression>
        return _brace_rest(after)
    # LAPLACE {control} [=] {H}
    return [(t.line, t.col, t.col + 1, " ") for t in after if t.text == "="]


def _brace_rest(after: list[_Token]) -> list[tuple[int, int, int, str]] | None:
    """``= <expression to the end of the line>`` made one braced field: the ``=`` becomes
    ``{`` and a ``}`` follows the last character ([] when it is braced already; None
    when it runs over lines or has braces inside, which the card reader then judges)."""
    if len(after) < 2 or after[1].text.startswith("{"):
        return [] if len(after) > 1 else None
    last = after[-1]
    if last.line != after[0].line or any(t.text.startswith("{") for t in after[1:]):
        return None
    eq = after[0]
    end = last.col + len(last.text)
    return [(eq.line, eq.col, eq.col + 1, "{"), (last.line, end, end, "}")]
