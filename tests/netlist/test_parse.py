"""Netlist syntax (grammar/netlist.lark → parse.py), includes, and the shipped grammars."""

from __future__ import annotations

import importlib.util
import shutil
import subprocess
import sys
import zipfile
from pathlib import Path

import pytest

from netcheck import NetcheckError, NetlistSyntaxError, load_netlist, read_netlist
from netcheck.netlist.parse import Assign, Card, Field, parse_statements
from netcheck.netlist.source import SourceFile, format_caret

ROOT = Path(__file__).resolve().parents[2]


def cards(text: str) -> list[tuple[str, ...]]:
    """Each top-level card as (name, field texts...)."""
    out = []
    for card in load_netlist(text).top.cards:
        out.append((card.name.text,) + tuple(
            f.text if isinstance(f, Field) else f"{f.key.text}={f.value.text}"
            for f in card.fields))
    return out


class TestCardShape:
    # The conventions below are those of SPICE-style netlists (common practice, no
    # source): first line = title, '*' comment lines, ';' inline comments, '+' joins.
    def test_title_line_is_not_a_card(self):
        nl = load_netlist("R1 a 0 1k is only a title here\nR2 a 0 2k\n")
        assert nl.title == "R1 a 0 1k is only a title here"
        assert cards("R1 a 0 1k is only a title\nR2 a 0 2k\n") == [("R2", "a", "0", "2k")]

    def test_comments(self):
        text = "t\n* a comment\nR1 a 0 1k ; inline comment\n   * indented comment\nR2 a 0 2k;x\n"
        assert cards(text) == [("R1", "a", "0", "1k"), ("R2", "a", "0", "2k")]

    def test_star_inside_a_card_is_refused(self):
        with pytest.raises(NetlistSyntaxError, match="use ';'") as info:
            load_netlist("t\nR1 a 0 1k * not a comment\n")
        assert str(info.value.span) == "<text>:2:11"

    @pytest.mark.parametrize("text", [
        "t\nR1 a\n+ 0\n+ 1k\n",
        "t\nR1 a\n* a comment between\n+ 0 1k\n",
        "t\nR1 a\n\n   \n+ 0 1k\n",
        "t\nR1 a ; inline\n* c1\n* c2\n  + 0 ; more\n+1k\n",
    ])
    def test_continuation(self, text):
        assert cards(text) == [("R1", "a", "0", "1k")]

    @pytest.mark.parametrize("text", ["t\nX1 a s r=\n+ 2k\n", "t\nX1 a s r\n+ =2k\n",
                                      "t\nX1 a s\n+ r\n+ =\n+ 2k\n"])
    def test_continuation_around_an_equals_sign(self, text):
        assert cards(text) == [("X1", "a", "s", "r=2k")]

    def test_continuation_keeps_file_positions(self):
        card = load_netlist("t\nR1 a\n* note\n+ 0 1k\n").top.cards[0]
        assert (card.fields[2].span.line, card.fields[2].span.column) == (4, 5)
        assert (card.span.line, card.span.end_line) == (2, 4)

    @pytest.mark.parametrize("text,where", [
        ("t\n+ R1 a 0 1k\n", "2:1"),
        ("t\n* comment\n\n  + R1 a 0 1k\n", "4:3"),
        ("* just a title\n+ R1 a 0 1k\n", "2:1"),
    ])
    def test_continuation_without_a_card(self, text, where):
        with pytest.raises(NetlistSyntaxError, match="has no card to continue") as info:
            load_netlist(text)
        assert str(info.value.span) == f"<text>:{where}"

    def test_case_insensitive(self):
        ckt = read_netlist("t\n.PARAM RV=2K\nr1 A GND {rv}\nR2 a 0 {RV}\n.Subckt S p "
                           "PARAMS: x=1\nr9 P 0 {X}\n.ENDS s\nx1 a s X=3\n")
        assert [e.name for e in ckt.elements] == ["R1", "R2", "X1.R9"]
        assert ckt.nodes == ("a",)
        assert ckt.element("r1").value == 2000.0
        assert ckt.element("x1.r9").value == 3.0

    def test_gnd_is_ground(self):
        ckt = read_netlist("t\nR1 a gnd 1k\nR2 a GND 1k\nR3 a 0 1k\n")
        assert all(e.nodes == ("a", "0") for e in ckt.elements)

    def test_end_stops_reading(self):
        text = "t\nR1 a 0 1k\nR2 a 0 1k\n.END\nR3 ((( garbage that never parses\n.bogus\n"
        nl = load_netlist(text)
        assert [c.name.text for c in nl.top.cards] == ["R1", "R2"]
        assert nl.diagnostics == ()

    def test_end_is_not_ends(self):
        with pytest.raises(NetlistSyntaxError, match=".ends without"):
            load_netlist("t\nR1 a 0 1\n.ends\n")

    def test_unknown_directive_is_a_warning_naming_the_line(self):
        nl = load_netlist("t\nR1 a 0 1k\n.qmcheck 1n 1u\nR2 a 0 1k\n")
        [diag] = nl.diagnostics
        assert diag.code == "netlist-150"
        assert str(diag.span) == "<text>:3:1"
        assert ".qmcheck" in diag.message
        assert diag.format().splitlines()[0] == ("<text>:3:1: warning netlist-150: unknown "
                                                 "directive .qmcheck ignored")
        assert [c.name.text for c in nl.top.cards] == ["R1", "R2"]

    def test_crlf_and_no_final_newline(self):
        assert cards("t\r\nR1 a 0 1k\r\nR2 a 0 2k") == [("R1", "a", "0", "1k"),
                                                      ("R2", "a", "0", "2k")]

    def test_fields_kinds(self):
        _, [card] = parse_statements(SourceFile("f", "t\nX1 a b sub r={2*k} s='q' c=4\n"))
        assert isinstance(card, Card)
        kinds = [f.value.kind if isinstance(f, Assign) else f.kind for f in card.fields]
        assert kinds == ["word", "word", "word", "braced", "string", "word"]

    @pytest.mark.parametrize("text,where,match", [
        ("t\nR1 a 0 (1k)\n", "2:8", "write expressions in braces"),
        ("t\nR1 a 0 {{1}}\n", "2:8", "braces"),
        ("t\nR1 a 0 {1k\n", "2:8", "braces"),
        ("t\nR1 a 0 '1k\n", "2:8", "unterminated string"),
        ("t\nR1 = 1k\n", "2:4", "'=' needs a name"),
        ("t\nX1 a s r=\nR1 a 0 1\n", "2:10", "'=' needs a value"),
        ("t\n.subckt s a\nR1 a 0 1\n", "2:1", "no matching .ends"),
        ("t\n.ends\n", "2:1", "without a matching .subckt"),
        ("t\n.subckt s a\nR1 a 0 1\n.ends q\n", "4:7", ".ends q closes .subckt s"),
        ("t\n.param r\n", "2:8", "name=value"),
        ("t\n.subckt\n.ends\n", "2:1", "needs a name"),
    ])
    def test_syntax_errors_have_positions(self, text, where, match):
        with pytest.raises(NetlistSyntaxError, match=match) as info:
            load_netlist(text)
        assert str(info.value.span) == f"<text>:{where}"

    def test_subckt_grouping(self):
        nl = load_netlist("t\n.subckt outer a b params: r=1\n.subckt inner p\nC1 p 0 1n\n.ends"
                          "\nR1 a b {r}\n.ends outer\nX1 n 0 outer\nR0 n 0 1\n")
        [outer] = nl.top.subckts
        assert outer.name.text == "outer"
        assert [p.text for p in outer.ports] == ["a", "b"]
        assert [(a.key.text, a.value.text) for a in outer.params] == [("r", "1")]
        assert [s.name.text for s in outer.body.subckts] == ["inner"]
        assert [c.name.text for c in outer.body.cards] == ["R1"]
        assert [c.name.text for c in nl.top.cards] == ["X1", "R0"]


class TestSource:
    def test_caret(self):
        src = SourceFile("f.cir", "title\nR1 a b 0\n")
        assert format_caret(src.span(2, 8)) == "    R1 a b 0\n           ^"

    def test_lines_are_counted_like_the_parser(self):
        # lark counts lines at '\n' only; a form feed or U+2028 inside a line must not
        # shift the quoted line
        src = SourceFile("f", "a\fb\nc\u2028d\r\ne\n")
        assert [src.line_text(i) for i in (1, 2, 3, 4)] == ["a\fb", "c\u2028d", "e", ""]

    def test_error_after_a_form_feed_quotes_the_right_line(self):
        with pytest.raises(NetcheckError) as info:
            read_netlist("t\nR1 a 0 1\fR2 a 0 1\n")
        lines = info.value.format().split("\n")
        assert lines[0].startswith("<text>:2:10: error netlist-105: R1: unexpected extra field 'R2'")
        assert "R2" in lines[1]


def write(path: Path, text: str) -> Path:
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text)
    return path


class TestInclude:
    def test_relative_include(self, tmp_path):
        write(tmp_path / "lib" / "parts.lib", "* parts\n.subckt s a\nR1 a 0 1k\n.ends\n")
        write(tmp_path / "lib" / "more.lib", ".include \"parts.lib\"\n")  # relative to lib/
        top = write(tmp_path / "top.cir", "t\n.include \"lib/more.lib\"\nX1 n s\nR0 n 0 1\n")
        ckt = read_netlist(str(top))
        assert [e.name for e in ckt.elements] == ["X1.R1", "R0"]
        assert len(ckt.sources) == 3

    def test_error_in_included_file_names_that_file(self, tmp_path):
        write(tmp_path / "bad.lib", "* parts\nC9 a 0 0\n")
        top = write(tmp_path / "top.cir", "t\n.include 'bad.lib'\nR0 a 0 1\n")
        with pytest.raises(NetcheckError) as info:
            read_netlist(str(top))
        assert info.value.span.path.endswith("bad.lib")
        assert (info.value.span.line, info.value.span.column) == (2, 8)

    def test_outside_the_root_is_refused(self, tmp_path):
        write(tmp_path / "shared" / "x.lib", "R5 n 0 1\n")
        top = write(tmp_path / "design" / "top.cir", "t\n.include \"../shared/x.lib\"\nR0 n 0 1\n")
        with pytest.raises(NetlistSyntaxError, match="leaves the design root") as info:
            read_netlist(str(top))
        assert info.value.code == "netlist-104"
        assert str(info.value.span) == f"{top}:2:10"

    def test_root_widens(self, tmp_path):
        write(tmp_path / "shared" / "x.lib", "R5 n 0 1\n")
        top = write(tmp_path / "design" / "top.cir", "t\n.include \"../shared/x.lib\"\nR0 n 0 1\n")
        ckt = read_netlist(str(top), root=str(tmp_path))
        assert [e.name for e in ckt.elements] == ["R5", "R0"]

    def test_absolute_path_is_refused(self, tmp_path):
        lib = write(tmp_path / "x.lib", "R5 n 0 1\n")
        top = write(tmp_path / "top.cir", f"t\n.include \"{lib}\"\nR0 n 0 1\n")
        with pytest.raises(NetlistSyntaxError, match="absolute include path") as info:
            read_netlist(str(top))
        assert info.value.code == "netlist-104"

    def test_home_path_is_refused(self, tmp_path):
        top = write(tmp_path / "top.cir", "t\n.include \"~/x.lib\"\nR0 n 0 1\n")
        with pytest.raises(NetlistSyntaxError, match="absolute"):
            read_netlist(str(top))

    def test_cycle(self, tmp_path):
        write(tmp_path / "a.lib", ".include \"b.lib\"\n")
        write(tmp_path / "b.lib", "R1 n 0 1\n.include \"a.lib\"\n")
        top = write(tmp_path / "top.cir", "t\n.include \"a.lib\"\nR0 n 0 1\n")
        with pytest.raises(NetlistSyntaxError, match=r"include cycle: a.lib -> b.lib -> a.lib") as info:
            read_netlist(str(top))
        assert info.value.code == "netlist-104"
        assert info.value.span.path.endswith("b.lib")
        assert info.value.span.line == 2

    def test_self_include(self, tmp_path):
        top = write(tmp_path / "top.cir", "t\n.include \"top.cir\"\nR0 n 0 1\n")
        with pytest.raises(NetlistSyntaxError, match="include cycle"):
            read_netlist(str(top))

    def test_the_same_file_twice_is_not_a_cycle(self, tmp_path):
        write(tmp_path / "r.lib", ".param r=5\n")
        top = write(tmp_path / "top.cir", "t\n.include 'r.lib'\n.include 'r.lib'\nR0 n 0 {r}\nR1 n 0 1\n")
        assert read_netlist(str(top)).element("R0").value == 5.0

    def test_missing_file(self, tmp_path):
        top = write(tmp_path / "top.cir", "t\n.include \"nope.lib\"\nR0 n 0 1\n")
        with pytest.raises(NetlistSyntaxError, match="not found") as info:
            read_netlist(str(top))
        assert (info.value.code, str(info.value.span)) == ("netlist-104", f"{top}:2:10")

    @pytest.mark.parametrize("name", ["lib/op\0amp.lib", "x" * 5000])
    def test_unusable_include_name(self, tmp_path, name):
        # found by test_fuzz.py: a NUL byte (ValueError) or a name longer than the OS
        # allows (OSError ENAMETOOLONG) must be a positioned netlist error
        top = write(tmp_path / "top.cir", f"t\n.include \"{name}\"\nR0 n 0 1\n")
        with pytest.raises(NetlistSyntaxError, match="cannot be used") as info:
            read_netlist(str(top))
        assert (info.value.code, str(info.value.span)) == ("netlist-104", f"{top}:2:10")

    def test_include_needs_one_name(self, tmp_path):
        top = write(tmp_path / "top.cir", "t\n.include\nR0 n 0 1\n")
        with pytest.raises(NetlistSyntaxError, match="one file name"):
            read_netlist(str(top))

    def test_text_input_includes_relative_to_root(self, tmp_path):
        write(tmp_path / "x.lib", "R5 n 0 1\n")
        ckt = read_netlist("t\n.include \"x.lib\"\nR0 n 0 1\n", root=str(tmp_path))
        assert [e.name for e in ckt.elements] == ["R5", "R0"]

    @pytest.mark.parametrize("path", ["no/such/file.cir", "bad\0name.cir"])
    def test_unreadable_top_file(self, path):
        with pytest.raises(NetlistSyntaxError, match="cannot read netlist") as info:
            read_netlist(path)
        assert info.value.code == "netlist-104"


def _have_wheel_tools() -> bool:
    if importlib.util.find_spec("setuptools") is None:
        return False
    if importlib.util.find_spec("wheel") is not None:
        return True
    # setuptools >= 70.1 builds wheels without the separate 'wheel' package
    from importlib.metadata import version
    major, minor = (int(x) for x in version("setuptools").split(".")[:2])
    return (major, minor) >= (70, 1)


@pytest.mark.skipif(not _have_wheel_tools(), reason="setuptools/wheel not importable")
def test_wheel_ships_the_grammars(tmp_path):
    # build from a copy so the checkout gets no build/ or egg-info litter
    src = tmp_path / "src"
    shutil.copytree(ROOT, src, ignore=shutil.ignore_patterns(
        ".git", "build", "dist", "*.egg-info", ".hypothesis", ".pytest_cache", "__pycache__",
        "out", "tests"))
    out = tmp_path / "wheels"
    proc = subprocess.run([sys.executable, "-m", "pip", "wheel", "--no-deps",
                           "--no-build-isolation", "-q", "-w", str(out), str(src)],
                          capture_output=True, text=True, timeout=300)
    assert proc.returncode == 0, proc.stderr
    [whl] = out.glob("netcheck_filters-*.whl")  # the distribution's own name
    names = zipfile.ZipFile(whl).namelist()
    assert "netcheck/grammar/netlist.lark" in names
    assert "netcheck/grammar/expr.lark" in names
    # and the installed package finds them (no source tree beside it)
    site = tmp_path / "site"
    zipfile.ZipFile(whl).extractall(site)
    probe = (f"import netcheck, netcheck.netlist.grammars as g; "
             f"assert netcheck.__file__.startswith({str(site)!r}); "
             "assert g.grammar_text('netlist.lark'); "
             "print(netcheck.read_netlist('t\\nR1 a 0 4k7\\nR2 a 0 1\\n').element('R1').value)")
    run = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True,
                         cwd=tmp_path, env={"PYTHONPATH": str(site), "PATH": "/usr/bin:/bin"},
                         timeout=120)
    assert run.returncode == 0, run.stderr
    assert run.stdout.strip() == "4700.0"
