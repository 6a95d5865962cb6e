"""The pre-pass's line finder against a line-by-line test written here.

:func:`lines_to_visit` finds the lines the dialect pre-pass must read with a few searches
over the whole text; the reference below asks each line the question the pre-pass asks
(its first non-blank character, and whether it holds ``$ // ( # <``) one line at a time.
"""

from __future__ import annotations

import random
import re

import pytest

from netcheck.netlist.line_text import has_endl, lines_to_visit


def _visit_reference(text: str) -> list[int]:
    out = []
    for i, line in enumerate(text.split("\n")):
        first = line.lstrip()[:1]
        if (first and (first in ".;" or first.upper() in "VIEFGHB")) or any(
                c in line for c in ("$", "(", "#", "<", "//")):
            out.append(i)
    return out


@pytest.mark.parametrize("text", [
    "", "\n", "V1 a 0 AC 1", "  .param x=1\nR1 a b 1k\n", "R1 a b 1k $ note\n+ c\n",
    "title\n* comment (with parens)\nC1 a 0 1n\n;gone\n  e1 a 0 b 0 2\nL1 a b 1u // x\n",
    "R1 a b {f(1)}\nX1 a b sub\n\tb1 a 0 V=V(a)\nR2 a b 1k#c\n<x>\nR3 a b //\n",
])
def test_lines_to_visit_matches_a_line_by_line_test(text):
    assert list(lines_to_visit(text)) == _visit_reference(text)


def test_lines_to_visit_on_random_text():
    # characters the test cares about, white space and plain letters, in random lines
    rng = random.Random(7)
    alphabet = "RrXxCcVvIiıEeBbHh.;$(#</+* \t\f\r\x1c\xa0\u20281a=\n\n"
    for _ in range(2000):
        text = "".join(rng.choice(alphabet) for _ in range(rng.randint(0, 40)))
        assert list(lines_to_visit(text)) == _visit_reference(text), repr(text)


def test_has_endl_matches_a_line_start_search():
    # the reference: the pattern the pre-pass used before, one multi-line search
    reference = re.compile(r"(?im)^[ \t]*\.endl\b")
    cases = [".endl", "x\n.ENDL sec", "x\n \t.Endl", "x\n.endlx", "x .endl", "x\n\f.endl",
             "R1 a b 1k\n+.endl", ".lib a\n.endl a\n", "\n\n   .endl\n"]
    for text in cases:
        assert has_endl(text) == bool(reference.search(text)), text
