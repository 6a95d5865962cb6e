"""The card scanner (netlist/scan.py) against the card grammar (grammar/netlist.lark).

The reference for every check here is the lark grammar run on the same text: the
scanner must give the same statements, spans and token count, or give the file back
to the grammar. Nothing is written out by hand but the inputs.
"""

from __future__ import annotations

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from netcheck.netlist import parse
from netcheck.netlist.dialect import prepare
from netcheck.netlist.scan import scan_statements
from netcheck.netlist.source import SourceFile


def read(text: str, has_title: bool, grammar_only: bool, allowed: int = parse.TOKENS_MAX):
    """What ``parse._parse`` makes of ``text``: (title, statements, tokens) or the error
    (message and span), with the scanner on or off."""
    saved = parse.scan_statements
    if grammar_only:
        parse.scan_statements = lambda *args: None
    try:
        title, stmts, used, _ = parse._parse(SourceFile("f.cir", text), has_title, allowed)
        return title, stmts, used
    except parse.NetlistSyntaxError as err:
        sp = err.span
        return str(err), (sp.line, sp.column, sp.end_line, sp.end_column)
    finally:
        parse.scan_statements = saved


def scanned(text: str, has_title: bool = True) -> bool:
    """True if the scanner reads ``text`` itself (it does not give it to the grammar)."""
    src = SourceFile("f.cir", text)
    if has_title:
        text = "\n" + text.partition("\n")[2]
    prepared = prepare(src, text, None, parse.TOKENS_MAX)
    return scan_statements(src, prepared.text, prepared.tokens, parse.TOKENS_MAX,
                           prepared.statements) is not None


SHAPES = [
    "t\nR1 a b 1k\nC1 b 0 10n ; inline\n* comment\n\nV1 a 0 AC 1\n",
    "t\nX1 a b sect params: rs = {rbase*2}  cs='3n' w=\"x y\"\n.subckt sect a b params: rs=1\n"
    "R1 a b {rs}\n.ends sect\n",
    "t\nR1 a b\n\n* between\n+ 1k ; joined\n+\nR2 b 0 1\n.END\nanything ( after",
    "* first line of an include\nR1 a 0 1\n",
    "t\nR1\ta\fb 1k\nR2 a{b} \"c\"'d' x=y\n",
    "t\nR1 a 0 1", "t\n", "", "t\nR1 a=b\n", "t\n.ends\n.subckt-x a\n",
]
GIVEN_BACK = [
    "t\n+R1 a b 1\n", "t\nR1 a b= \n+ 1\n", "t\nR1 a b\n+= 1\n",
    "t\nR1 a b 1k * c\n", "t\nR1 a 0 {x\n", "t\nR1 a 0 \"x\n",
    "t\nR1 a b c=d=e\n", "t\nR1 a b 1\xa0\n", "t\nR1 = a\n", "t\n\fR1 a b 1\n",
    "  * indented\nR1 a 0 1\n",
]


@pytest.mark.parametrize("text", SHAPES)
def test_plain_shapes_read_as_the_grammar_reads_them(text):
    has_title = not text.startswith("*")
    assert scanned(text, has_title)
    assert read(text, has_title, False) == read(text, has_title, True)


@pytest.mark.parametrize("text", GIVEN_BACK)
def test_unusual_lines_go_to_the_grammar(text):
    has_title = not text.startswith(" ")
    assert not scanned(text, has_title)
    assert read(text, has_title, False) == read(text, has_title, True)


def test_token_budget_is_the_grammar_count():
    text = "t\n" + "".join(f"R{i} n{i} 0 {i + 1}k ; c\n* x\n" for i in range(40))
    _, _, used = read(text, True, True)
    for allowed in (used - 1, used, used + 1):
        assert read(text, True, False, allowed) == read(text, True, True, allowed)


_WORDS = ["R1", "X2", "a", "0", "1k", "{r*2}", "{", "}", "'s'", '"q"', "=", "k=v", ";c", "*",
          "+", ".subckt", ".ends", ".end", ".END", "params:", "(", "\t", "\f", "\r", "µ", " "]


@settings(max_examples=400, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(st.lists(st.sampled_from(_WORDS), max_size=7), max_size=8), st.booleans())
def test_random_lines_read_as_the_grammar_reads_them(lines, has_title):
    text = "title\n" + "\n".join(" ".join(words) for words in lines)
    assert read(text, has_title, False) == read(text, has_title, True)
