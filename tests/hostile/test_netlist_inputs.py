"""Hostile and broken netlist inputs: never a hang, a crash, a traceback or a flood.

Every input is built here, in tmp_path. A case that could hang or exhaust memory
before its fix runs in a child interpreter with a timeout and an address-space limit
(``run_bounded``); the others are small enough to run in-process.
"""

from __future__ import annotations

import json
import os
import resource
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from netcheck import NetcheckError, read_netlist
from netcheck.netlist import parse as parse_mod
from netcheck.exceptions import SpecError
from netcheck.netlist.parse import INCLUDE_DEPTH_MAX, SUBCKT_DEPTH_MAX
from netcheck.netlist.source import FILE_MAX_BYTES, SourceFile, format_caret, read_text

ROOT = Path(__file__).resolve().parents[2]
ESC = "\x1b"

#: address-space limit of a bounded child: far above what netcheck needs for these
#: inputs, far below what the unbounded behaviour took
CHILD_MEMORY = 2 * 2**30
CHILD_TIMEOUT = 120


def run_bounded(code: str, cwd: Path) -> dict:
    """Run ``code`` in a child interpreter with a timeout and an address-space limit.

    ``code`` sets ``result`` (a JSON-able value); a NetcheckError becomes
    ``{"error": format(), "code": ...}``; anything else fails the child.
    """
    def limit() -> None:
        resource.setrlimit(resource.RLIMIT_AS, (CHILD_MEMORY, CHILD_MEMORY))

    script = textwrap.dedent("""
        import json, sys
        from netcheck import NetcheckError
        try:
        {body}
        except NetcheckError as err:
            result = {{"error": err.format(), "code": err.code, "message": err.message}}
        print(json.dumps(result))
        """).format(body=textwrap.indent(textwrap.dedent(code), "    "))
    env = {**os.environ, "PYTHONPATH": str(ROOT), "OPENBLAS_NUM_THREADS": "1",
           "OMP_NUM_THREADS": "1", "MKL_NUM_THREADS": "1"}
    proc = subprocess.run([sys.executable, "-c", script], cwd=cwd, env=env, timeout=CHILD_TIMEOUT,
                          capture_output=True, text=True, preexec_fn=limit)
    assert proc.returncode == 0, proc.stderr[-3000:]
    assert "Traceback" not in proc.stderr
    return json.loads(proc.stdout.splitlines()[-1])


def refused(path_or_text, root=None) -> NetcheckError:
    """The NetcheckError reading ``path_or_text`` raises (the test fails if none)."""
    with pytest.raises(NetcheckError) as info:
        read_netlist(str(path_or_text), root=root)
    text = info.value.format()
    assert "Traceback" not in text and ESC not in text
    return info.value


def write(path: Path, text: str) -> Path:
    path.write_text(text, encoding="utf-8")
    return path


RC = "V1 in 0 AC 1\nR1 in out 1k\nC1 out 0 1n\n"


# --- 1. one safe reader: regular files only, a size budget --------------------------------

class TestNotARegularFile:
    def test_fifo_netlist_is_refused_not_waited_on(self, tmp_path):
        # before: open() of a FIFO with no writer blocks forever
        os.mkfifo(tmp_path / "pipe.cir")
        got = run_bounded("""
            from netcheck import read_netlist
            read_netlist("pipe.cir")
            result = "read"
            """, tmp_path)
        assert got["code"] == "netlist-117"
        assert got["error"].startswith("pipe.cir: error netlist-117: netlist is a FIFO")

    def test_fifo_include_is_refused_at_the_include(self, tmp_path):
        os.mkfifo(tmp_path / "parts.lib")
        write(tmp_path / "top.cir", "Quillmere QM-1\n.include \"parts.lib\"\n" + RC)
        got = run_bounded("""
            from netcheck import read_netlist
            read_netlist("top.cir")
            result = "read"
            """, tmp_path)
        assert got["code"] == "netlist-117"
        assert got["error"].startswith("top.cir:2:10: error netlist-117: included file 'parts.lib' "
                                       "is a FIFO (named pipe), not a regular file")

    def test_fifo_spec_keeps_the_callers_error_class(self, tmp_path):
        os.mkfifo(tmp_path / "x.toml")
        got = run_bounded("""
            from netcheck.exceptions import SpecError
            from netcheck.netlist.source import read_text
            try:
                read_text("x.toml", SpecError, "spec")
            except SpecError as err:
                result = {"class": type(err).__name__, "code": err.code, "text": err.format()}
            """, tmp_path)
        assert got == {"class": "SpecError", "code": "netlist-117",
                       "text": "x.toml: error netlist-117: spec is a FIFO (named pipe), not a regular "
                               "file; netcheck reads regular files only"}

    def test_dev_zero_as_netlist_and_baseline(self, tmp_path):
        # before: /dev/zero was read until memory ran out
        got = run_bounded("""
            from netcheck import read_netlist
            from netcheck.exceptions import NetcheckError
            from netcheck.runs.baseline import BaselineError
            from netcheck.netlist.source import read_text
            result = {}
            for name, load in (("netlist", read_netlist),
                               ("baseline", lambda p: read_text(p, BaselineError, "baseline",
                                                                encoding="utf-8-sig"))):
                try:
                    load("/dev/zero")
                except NetcheckError as err:
                    result[name] = [type(err).__name__, err.code, err.format()]
            """, tmp_path)
        assert got["netlist"] == ["NetlistSyntaxError", "netlist-117", "/dev/zero: error netlist-117: "
                                  "netlist is a character device, not a regular file; netcheck "
                                  "reads regular files only"]
        assert got["baseline"][:2] == ["BaselineError", "netlist-117"]
        assert "baseline is a character device" in got["baseline"][2]

    def test_folder(self, tmp_path):
        (tmp_path / "d.cir").mkdir()
        err = refused(tmp_path / "d.cir")
        assert err.code == "netlist-117" and "netlist is a folder" in err.message

    def test_missing_file_keeps_its_code(self, tmp_path):
        err = refused(tmp_path / "absent.cir")
        assert err.code == "netlist-104" and "cannot read netlist: No such file" in err.message


class TestSizeBudget:
    def test_oversized_file_is_refused_unread(self, tmp_path):
        big = tmp_path / "big.cir"
        with open(big, "wb") as f:  # a sparse file: no disk or memory spent
            f.truncate(FILE_MAX_BYTES + 1)
        err = refused(big)
        assert err.code == "netlist-117"
        assert (f"netlist is {FILE_MAX_BYTES + 1:,} bytes (16.0 MiB), over the budget of "
                f"{FILE_MAX_BYTES:,} bytes (16.0 MiB)") in err.message

    def test_file_at_the_budget_is_read(self, tmp_path):
        text = "Quillmere QM-2\n" + RC
        path = write(tmp_path / "ok.cir", text + "*" * (FILE_MAX_BYTES - len(text)))
        assert path.stat().st_size == FILE_MAX_BYTES
        assert [e.name for e in read_netlist(str(path)).elements] == ["V1", "R1", "C1"]

    def test_file_that_grows_while_read(self, tmp_path, monkeypatch):
        # the stat said small, the file is not: never read more than budget + 1 bytes
        path = tmp_path / "grows.toml"
        path.write_bytes(b"x" * 5000)
        real_stat = os.stat

        class Small:
            def __init__(self, info):
                self.st_mode, self.st_size = info.st_mode, 10

        monkeypatch.setattr("netcheck.netlist.source.os.stat", lambda p: Small(real_stat(p)))
        with pytest.raises(SpecError) as info:
            read_text(path, SpecError, "spec", budget=100)
        assert info.value.code == "netlist-117"
        assert "grew past the budget of 100 bytes" in info.value.message


# --- 2. encodings and line ends -----------------------------------------------------------

class TestEncodings:
    @pytest.mark.parametrize("encoding,how", [
        ("utf-16", "byte-order mark"), ("utf-16-le", "every other byte is NUL"),
        ("utf-16-be", "every other byte is NUL"), ("utf-32", "UTF-32 byte-order mark")])
    def test_utf16_and_utf32_are_named(self, tmp_path, encoding, how):
        path = tmp_path / "wide.cir"
        path.write_bytes(("Quillmere QM-4\n" + RC).encode(encoding))
        err = refused(path)
        assert err.code == "netlist-117"
        assert how in err.message
        assert "UTF-16" in err.message or "UTF-32" in err.message
        assert "save it as UTF-8" in err.message

    def test_utf16_include_is_named_at_its_include(self, tmp_path):
        (tmp_path / "parts.lib").write_bytes("R9 out 0 1k\n".encode("utf-16"))
        top = write(tmp_path / "top.cir", "Quillmere QM-4\n.include 'parts.lib'\n" + RC)
        err = refused(top)
        assert str(err.span) == f"{top}:2:10"
        assert "parts.lib' is UTF-16 text" in err.message

    def test_utf8_byte_order_mark_is_dropped(self, tmp_path):
        (tmp_path / "parts.lib").write_bytes(b"\xef\xbb\xbfR9 out 0 1k\n")
        top = tmp_path / "top.cir"
        top.write_bytes(b"\xef\xbb\xbfQuillmere QM-5\n.include 'parts.lib'\n" + RC.encode())
        ckt = read_netlist(str(top))
        assert ckt.title == "Quillmere QM-5"
        assert [e.name for e in ckt.elements] == ["R9", "V1", "R1", "C1"]

    def test_undecodable_bytes_are_still_replaced(self, tmp_path):
        # unchanged: a stray Latin-1 byte in a comment is not fatal
        path = tmp_path / "latin.cir"
        path.write_bytes(b"Quillmere QM-6\n* 10 \xb5F\n" + RC.encode())
        assert len(read_netlist(str(path)).elements) == 3


class TestLineEnds:
    # Decision: lone-CR line ends (classic Mac OS) are refused, at the first one, since
    # the card grammar reads CR as a space and would silently join the lines.
    def test_lone_cr_is_refused_at_its_position(self, tmp_path):
        path = tmp_path / "mac.cir"
        path.write_bytes(b"Quillmere QM-7\nV1 in 0 AC 1\rR1 in 0 1k\r")
        err = refused(path)
        assert err.code == "netlist-117"
        assert str(err.span) == f"{path}:2:13"
        assert "lone carriage return" in err.message and "LF or CR LF" in err.message
        source, caret = err.format().split("\n")[1:]
        assert source == "    V1 in 0 AC 1\\x0dR1 in 0 1k"
        assert caret == "    " + " " * 12 + "^^^^"  # under the escaped CR

    def test_lone_cr_in_an_include(self, tmp_path):
        (tmp_path / "p.lib").write_bytes(b"R8 out 0 1k\rR9 out 0 2k\r")
        top = write(tmp_path / "top.cir", "Quillmere QM-7\n.include 'p.lib'\n" + RC)
        err = refused(top)
        assert err.code == "netlist-117" and err.span.path.endswith("p.lib")
        assert (err.span.line, err.span.column) == (1, 12)

    @pytest.mark.parametrize("data", [
        b"Quillmere QM-7\r\nV1 in 0 AC 1\r\nR1 in 0 1k\r\n",  # CR LF
        b"Quillmere QM-7\nV1 in 0 AC 1 \r\r\nR1 in 0 1k\r",  # stray CRs before a line end
    ])
    def test_cr_lf_and_stray_cr_are_read(self, tmp_path, data):
        path = tmp_path / "ok.cir"
        path.write_bytes(data)
        assert [e.name for e in read_netlist(str(path)).elements] == ["V1", "R1"]


# --- 3. depth and size budgets ----------------------------------------------------------

def include_chain(folder: Path, depth: int) -> Path:
    """top.cir includes i0.lib, which includes i1.lib ... ``depth`` levels in all."""
    for i in range(depth):
        body = f'.include "i{i + 1}.lib"\n' if i < depth - 1 else "R9 out 0 1k\n"
        write(folder / f"i{i}.lib", body)
    return write(folder / "top.cir", 'Quillmere QM-8\n.include "i0.lib"\n' + RC)


def subckt_chain(depth: int, param: bool = True) -> str:
    """A netlist nesting subcircuit instances ``depth`` levels deep; with ``param`` every
    level passes a parameter on from its parent (the deepest chain of evaluation)."""
    lines = ["Quillmere QM-9", ".param r0=1k"]
    for i in range(depth):
        head = f".subckt s{i} a" + (" params: r=1" if param else "")
        inner = (f"X1 a s{i + 1}" + (" r={r*1}" if param else "")) if i < depth - 1 else \
            ("R1 a 0 {r}" if param else "R1 a 0 1k")
        lines += [head, inner, ".ends"]
    lines += ["X1 out s0" + (" r={r0}" if param else ""), "V1 in 0 AC 1", "R0 in out 1k"]
    return "\n".join(lines) + "\n"


class TestDepthBudgets:
    def test_include_chain_far_past_the_budget(self, tmp_path):
        # before: a 1,500-file chain ended in RecursionError
        top = include_chain(tmp_path, 1500)
        err = refused(top)
        assert err.code == "netlist-116"
        assert f"includes nest {INCLUDE_DEPTH_MAX + 1} deep here, over the budget of " \
            f"{INCLUDE_DEPTH_MAX} nested .include files" in err.message
        assert err.span.path.endswith(f"i{INCLUDE_DEPTH_MAX - 1}.lib")

    def test_include_chain_at_the_budget_works(self, tmp_path):
        top = include_chain(tmp_path, INCLUDE_DEPTH_MAX)
        ckt = read_netlist(str(top))
        assert [e.name for e in ckt.elements] == ["R9", "V1", "R1", "C1"]
        assert len(ckt.sources) == INCLUDE_DEPTH_MAX + 1

    def test_subckt_nest_far_past_the_budget(self):
        # before: a 1,000-level nest ended in RecursionError
        err = refused(subckt_chain(1000))
        assert err.code == "netlist-116"
        assert f"nests subcircuit instances {SUBCKT_DEPTH_MAX + 1} levels deep" in err.message
        assert err.span.line == 4 + 3 * (SUBCKT_DEPTH_MAX - 1)  # X1 inside s63

    def test_subckt_nest_at_the_budget_works_with_parameters_through_every_level(self):
        ckt = read_netlist(subckt_chain(SUBCKT_DEPTH_MAX))
        deepest = "X1." * SUBCKT_DEPTH_MAX + "R1"
        assert ckt.element(deepest).value == 1000.0  # r0 handed down 64 levels

    def test_nest_at_the_budget_works_under_a_small_stack(self):
        # the budget leaves room: the nest (its parameters evaluated through all 64
        # levels, about 450 frames) still elaborates with a quarter of the default
        # recursion limit already used by the caller
        text = subckt_chain(SUBCKT_DEPTH_MAX)
        old = sys.getrecursionlimit()

        def nested(k):
            return nested(k - 1) if k else read_netlist(text)

        try:
            sys.setrecursionlimit(1000)
            ckt = nested(250)
        finally:
            sys.setrecursionlimit(old)
        assert len(ckt.elements) == 3

    def test_definition_nesting(self):
        def nest(depth):
            return ("Quillmere QM-9\n" + "".join(f".subckt d{i} a\n" for i in range(depth))
                    + ".ends\n" * depth + RC)

        assert len(read_netlist(nest(SUBCKT_DEPTH_MAX)).elements) == 3
        err = refused(nest(1000))
        assert err.code == "netlist-116" and err.span.line == 2 + SUBCKT_DEPTH_MAX
        assert ".subckt definitions nest 65 deep here, over the budget of 64" in err.message


class TestSizeBudgets:
    def test_multiplying_nest_is_refused_before_expansion(self, tmp_path):
        # before: 12 levels of 10 instances (10^12 elements) grew until Python aborted
        lines = ["Quillmere QM-10", ".subckt l0 a", "R1 a 0 1k", ".ends"]
        for level in range(1, 13):
            lines += [f".subckt l{level} a"] + [f"X{j} a l{level - 1}" for j in range(10)]
            lines += [".ends"]
        lines += ["V1 in 0 AC 1", "R0 in out 1k", "XBANK out l12"]
        write(tmp_path / "bomb.cir", "\n".join(lines) + "\n")
        got = run_bounded("""
            from netcheck import read_netlist
            result = len(read_netlist("bomb.cir").elements)
            """, tmp_path)
        assert got["code"] == "netlist-116"
        assert got["error"].startswith(f"bomb.cir:{len(lines)}:1: error netlist-116: XBANK "
                                       "instantiates subcircuit l12, which flattens to "
                                       "1,000,000,000,000 elements: the design is over the "
                                       "budget of 1,000,000 elements here")

    @pytest.mark.parametrize("extra,ok", [(0, True), (1, False)])
    def test_element_count_at_the_budget(self, monkeypatch, extra, ok):
        # counted, not flattened: 4 at the top + 3 levels of 3 instances of 3 resistors
        monkeypatch.setattr(parse_mod, "ELEMENTS_MAX", 85)
        lines = ["Quillmere QM-11", ".subckt c0 a", "R1 a 0 1k", "R2 a 0 1k", "R3 a 0 1k",
                 ".ends"]
        for level in range(1, 4):
            lines += [f".subckt c{level} a"] + [f"X{j} a c{level - 1}" for j in range(3)]
            lines += [".ends"]
        lines += ["V1 in 0 AC 1", "R0 in out 1k", "XB out c3", "R5 out 0 1k", "R6 out 0 1k"]
        lines += [f"R{7 + i} out 0 1k" for i in range(extra)]
        text = "\n".join(lines) + "\n"
        if ok:
            assert len(read_netlist(text).elements) == 85
        else:
            err = refused(text)
            assert err.code == "netlist-116" and err.span.line == len(lines)
            assert "over the budget of 85 elements here (86 so far" in err.message

    def test_diamond_of_includes(self, tmp_path):
        # before: each file including the next one twice grew 4x per two levels
        for i in range(40):
            body = f'.include "d{i + 1}.lib"\n.include "d{i + 1}.lib"\n' if i < 39 else \
                "* leaf\n"
            write(tmp_path / f"d{i}.lib", body)
        write(tmp_path / "top.cir", 'Quillmere QM-12\n.include "d0.lib"\n' + RC)
        got = run_bounded("""
            from netcheck import read_netlist
            result = len(read_netlist("top.cir").elements)
            """, tmp_path)
        assert got["code"] == "netlist-116"
        assert "over the budget of 1,000 .include directives followed" in got["message"]

    def test_repeated_include_counts_its_text_each_time(self, tmp_path, monkeypatch):
        write(tmp_path / "p.lib", ".param a=1\n" + "* padding\n" * 50)
        top = write(tmp_path / "top.cir", "Quillmere QM-12\n" + ".include 'p.lib'\n" * 5 + RC)
        size = len((tmp_path / "p.lib").read_text()) * 5 + len(top.read_text())
        monkeypatch.setattr(parse_mod, "INCLUDE_TEXT_MAX", size)
        assert len(read_netlist(str(top)).elements) == 3
        monkeypatch.setattr(parse_mod, "INCLUDE_TEXT_MAX", size - 1)
        err = refused(top)
        assert err.code == "netlist-116" and (err.span.line, err.span.column) == (6, 10)
        assert f"reaches {size:,} characters, over the budget of {size - 1:,}" in err.message

    def test_token_budget_stops_the_parse_where_it_is_reached(self, monkeypatch):
        monkeypatch.setattr(parse_mod, "TOKENS_MAX", 11)
        # a line end after the title, then 5 tokens per card with its line end: R3 is the 12th
        text = "Quillmere QM-13\nR1 in out 1k\nR2 out 0 1k\nR3 out 0 2k\n"
        err = refused(text)
        assert err.code == "netlist-116" and (err.span.line, err.span.column) == (4, 1)
        assert "over the budget of 11 tokens" in err.message

    def test_millions_of_blank_lines_parse_in_bounded_memory(self, tmp_path):
        # before: the line-end terminals could backtrack line by line; 15 MiB of blank
        # lines took 93 s and 11.7 GB (one saved regex state per line)
        path = tmp_path / "blank.cir"
        path.write_bytes(b"Quillmere QM-13\nV1 in 0 AC 1" + b"\n" * (6 * 2**20) +
                         b"\n* note\n" * 1000 + b"R1 in 0 1k\n")
        got = run_bounded("""
            from netcheck import read_netlist
            result = [e.name for e in read_netlist("blank.cir").elements]
            """, tmp_path)
        assert got == ["V1", "R1"]

    def test_long_expression(self):
        err = refused("Quillmere QM-14\nR1 a 0 {" + "+".join(["1"] * 6000) + "}\n")
        assert err.code == "netlist-101" and "over the budget of 10,000" in err.message


# --- 4. malformed scale suffix (see also tests/netlist/test_units.py) ---------------------------

def test_double_scale_suffix_is_refused_with_its_position(tmp_path):
    path = write(tmp_path / "kk.cir", "Quillmere QM-15\nV1 in 0 AC 1\nR1 in out 1kk\n"
                 "C1 out 0 10nF\n")
    err = refused(path)
    assert err.code == "netlist-101" and str(err.span) == f"{path}:3:11"
    assert "'1kk': 'k' after the scale suffix 'k' is a second scale suffix" in err.message


# --- 5. singular circuits name the file and the elements --------------------------------

# A VCVS whose output is its own input at gain 1 (E1 out 0 out 0 1) gives the branch
# equation v_out - v_out = 0: a zero row, so G + sC is singular for every s (MNA,
# Ho, Ruehli & Brennan 1975), although no loop or cut-set of sources exists.
SINGULAR = "Quillmere QM-16 unity follower wired to itself\nV1 in 0 AC 1\nR1 in out 100\n" \
    "E1 out 0 out 0 1\n"


@pytest.mark.parametrize("padding", [0, 400])  # dense path, and sparse (> 300 unknowns)
def test_singular_circuit_names_file_line_and_elements(tmp_path, padding):
    extra = "".join(f"RP{i} p{i} p{i + 1} 1k\n" for i in range(padding))
    if padding:
        extra += "RA in p0 1\nRB p{} 0 1\n".format(padding)
    path = write(tmp_path / "follower.cir", SINGULAR + extra)
    ckt = read_netlist(str(path))
    with pytest.raises(NetcheckError) as info:
        ckt.ac("V1", "out", freqs=[1e3])
    err = info.value
    assert err.code == "analysis-300"
    assert str(err.span) == f"{path}:4:1"  # the card of E1
    first = err.format().split("\n")[0]
    assert "the unknowns most involved are V(out), I(E1)" in first
    assert "the elements touching them most are E1 (line 4), R1 (line 3)" in first


# --- 6. escaping and bounds on what reaches a terminal ----------------------------------

class TestTerminalSafety:
    def test_escape_sequences_in_names_are_shown_escaped(self):
        err = refused(f"Quillmere QM-17\nC1{ESC}[2J{chr(7)}x a 0 0\n")
        text = err.format()
        assert ESC not in text and "\x07" not in text
        assert "C1\\x1b[2J\\x07X has value 0" in text.split("\n")[0]
        assert "\\x1b" in text.split("\n")[1]

    def test_50_mb_line_gives_a_bounded_message_with_a_true_caret(self):
        filler = "x" * (50 * 2**20)
        err = refused("Quillmere QM-18\nR1 a 0 " + filler + "(1k)\n")
        text = err.format()
        assert len(text) < 2000
        head, line, caret = text.split("\n")
        assert err.span.column == 8 + len(filler)
        assert line[caret.index("^")] == "(" and caret.strip() == "^"
        assert line.startswith("    …x") and line.endswith("(1k)")

    def test_huge_name_in_a_message_is_bounded(self):
        err = refused("Quillmere QM-19\nQ" + "x" * 2_000_000 + " a 0 1\n")
        assert err.code == "netlist-130"  # a transistor without its model card
        assert len(err.message) < 1000 and len(err.format()) < 2000
        assert "more characters" in err.message

    def test_caret_window_keeps_control_characters_aligned(self):
        src = SourceFile("f.cir", "t\n" + f"{ESC}[31m" * 40 + "R1 a 0 1kk\n")
        col = 5 * 40 + 8
        line, caret = format_caret(src.span(2, col, col + 3)).split("\n")
        start = caret.index("^")
        assert line[start:start + 3] == "1kk" and caret.count("^") == 3
        assert ESC not in line and len(line) < 300

    def test_many_dangling_nodes_are_summarised(self):
        # before: 20,000 netlist-152 warnings (2.25 MB of text)
        lines = ["Quillmere QM-20", "V1 in 0 AC 1", "R0 in 0 1k"]
        lines += [f"C{i} in d{i} 1n" for i in range(20_000)]
        ckt = read_netlist("\n".join(lines) + "\n")
        codes = [d.code for d in ckt.diagnostics]
        assert codes == ["netlist-152"] * 11
        summary = ckt.diagnostics[-1]
        assert summary.message.startswith("19,990 more netlist-152 warnings (node with one "
                                          "connection) not listed, the first of them here")
        assert str(summary.span) == "<text>:14:8"  # C10's node d10, the first left out
        assert sum(len(d.format()) for d in ckt.diagnostics) < 5000

    def test_summaries_are_per_code_and_keep_order(self):
        lines = ["Quillmere QM-21", "V1 in 0 AC 1", "R0 in 0 1k"]
        lines += [f".opt{i} x" for i in range(15)] + [f"C{i} in d{i} 1n" for i in range(12)]
        ckt = read_netlist("\n".join(lines) + "\n")
        codes = [d.code for d in ckt.diagnostics]
        assert codes == ["netlist-150"] * 10 + ["netlist-152"] * 10 + ["netlist-150", "netlist-152"]
        assert ckt.diagnostics[-2].message.startswith("5 more netlist-150 warnings")
        assert ckt.diagnostics[-1].message.startswith("2 more netlist-152 warnings")


def test_sweep_command_prints_the_bounded_list(tmp_path, capsys):
    from netcheck.cli import main

    lines = ["Quillmere QM-22", "V1 in 0 AC 1", "R0 in out 1k", "C0 out 0 1n"]
    lines += [f"C{i + 1} out d{i} 1n" for i in range(5000)]
    path = write(tmp_path / "dangling.cir", "\n".join(lines) + "\n")
    code = main(["sweep", str(path), "--source", "V1", "--node", "out", "--start", "1k",
                 "--stop", "10k", "--ppd", "10"])
    err = capsys.readouterr().err
    assert code == 0
    assert err.count("warning netlist-152") == 11 and "4,990 more netlist-152 warnings" in err
    assert len(err) < 5000


def test_errors_md_states_the_budgets_in_force():
    # docs/errors.md gives the budgets in numbers; they must be the ones the code uses
    from netcheck.netlist.parse import ELEMENTS_MAX, INCLUDE_TEXT_MAX, INCLUDES_MAX, TOKENS_MAX

    doc = (ROOT / "docs" / "errors.md").read_text("utf-8")
    nc116 = doc[doc.index('id="netlist-116"'):doc.index('id="netlist-117"')]
    nc117 = doc[doc.index('id="netlist-117"'):doc.index('id="netlist-150"')]
    assert f"({ELEMENTS_MAX:,})" in nc116 and f"({INCLUDES_MAX:,}," in nc116
    assert INCLUDE_DEPTH_MAX == SUBCKT_DEPTH_MAX and f"({INCLUDE_DEPTH_MAX} levels each)" in nc116
    assert f"{TOKENS_MAX:,} tokens, {INCLUDE_TEXT_MAX // 2**20} MiB of text" in nc116
    assert f"({FILE_MAX_BYTES // 2**20} MiB)" in nc117
