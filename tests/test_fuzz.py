"""Fuzzing the front end: whatever the text, read_netlist succeeds or raises a NetcheckError.

The default hypothesis profile runs a few thousand examples over all tests here; the
"fuzz" profile (NETCHECK_HYPOTHESIS_PROFILE=fuzz) runs its own, much larger, count.
Besides mutated text, hostile shapes are generated: deep and multiplying subcircuit
nests, extreme values, control characters in names, and bytes written to a file and
read by path (lone CR line ends, UTF-16, byte-order marks, stray bytes), directly and
through ``.include``. Whatever happens, the message is a bounded, escaped NetcheckError.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from netcheck import NetcheckError, read_netlist
from netcheck.netlist.parse import ELEMENTS_MAX, SUBCKT_DEPTH_MAX

SAMPLES = Path(__file__).resolve().parents[1] / "sample_netlists"

SAMPLE_TEXTS = tuple(p.read_text("utf-8") for p in sorted(SAMPLES.glob("*.cir")))
ROOT = str(SAMPLES)  # so the samples' .include "lib/..." resolves for text input

# Tokens worth splicing in: everything with a meaning to the grammar or elaboration.
VOCABULARY = [
    "{", "}", "(", ")", "=", "+", "*", ";", "'", '"', ",", ".", "\n", "\n+", "\n*", "\t",
    "\r\n", "\f", "\x00", "µ", "Ω", "\u2028", ".subckt", ".ends", ".param", ".include",
    ".end", ".END", ".tran", "params:", "AC", "DC", "0", "gnd", "1M5", "4k7", "1meg",
    "1e999", "1e-999", "-1", "{a}", "{1/0}", "{sqrt(-1)}", "{min(1)}", "{pi}", "{2^-1}",
    "{__import__('os')}", "X1", "K1", "L1", "V1", "E1", "F1", "H1", "G1", "Q1", "lib/opamp.lib",
    '"../x"', '"/etc/passwd"', '"lib"', "qm_opamp", "a0=1", "r={r}",
]


def budget(n: int) -> int:
    """``n`` examples in the default profile, the profile's count in a larger one."""
    configured = settings.default.max_examples
    return n if configured <= 100 else max(n, configured)


def must_not_crash(text: str, root: str = ROOT):
    """Read ``text`` (netlist text, or a path): a Circuit, or a clean NetcheckError."""
    try:
        ckt = read_netlist(text, root=root)
    except NetcheckError as err:
        shown = err.format()
        head = shown.split("\n")[0]
        assert f"error {err.code}: " in head
        assert_safe(shown)
        return err
    else:
        for diag in ckt.diagnostics:
            assert_safe(diag.format())
        assert len(ckt.diagnostics) <= 11 * 6  # at most 10 and a summary per code
        return ckt


def assert_safe(shown: str) -> None:
    """A formatted diagnostic: no raw control characters, bounded (head, line, caret)."""
    lines = shown.split("\n")
    assert len(lines) <= 3
    for line in lines:
        assert not any(ord(c) < 32 and c != "\t" or 0x7F <= ord(c) < 0xA0 for c in line)
        assert len(line) <= 2200


_char_ops = st.lists(st.tuples(st.sampled_from(["delete", "duplicate", "swap", "insert"]),
                               st.integers(0, 10 ** 6), st.integers(0, 10 ** 6),
                               st.sampled_from(VOCABULARY[:24]) | st.characters()),
                     min_size=1, max_size=6)


@settings(max_examples=budget(700), suppress_health_check=[HealthCheck.too_slow])
@given(st.sampled_from(SAMPLE_TEXTS), _char_ops)
def test_character_mutations_of_samples(text, ops):
    chars = list(text)
    for op, i, j, new in ops:
        if not chars:
            break
        i, j = i % len(chars), j % len(chars)
        if op == "delete":
            del chars[i]
        elif op == "duplicate":
            chars.insert(i, chars[i])
        elif op == "swap":
            chars[i], chars[j] = chars[j], chars[i]
        else:
            chars.insert(i, new)
    mutated = "".join(chars)
    if "\n" in mutated:  # without a newline the string would be taken as a path
        must_not_crash(mutated)


_token_ops = st.lists(st.tuples(st.sampled_from(["delete", "duplicate", "swap", "replace"]),
                                st.integers(0, 10 ** 6), st.integers(0, 10 ** 6),
                                st.sampled_from(VOCABULARY)),
                      min_size=1, max_size=5)


@settings(max_examples=budget(700), suppress_health_check=[HealthCheck.too_slow])
@given(st.sampled_from(SAMPLE_TEXTS), _token_ops)
def test_token_mutations_of_samples(text, ops):
    tokens = re.split(r"(\s+)", text)
    for op, i, j, new in ops:
        i, j = i % len(tokens), j % len(tokens)
        if op == "delete":
            del tokens[i]
        elif op == "duplicate":
            tokens.insert(i, tokens[i])
        elif op == "swap":
            tokens[i], tokens[j] = tokens[j], tokens[i]
        else:
            tokens[i] = new
        if not tokens:
            return
    mutated = "".join(tokens)
    if "\n" in mutated:
        must_not_crash(mutated)


@settings(max_examples=budget(500), suppress_health_check=[HealthCheck.too_slow])
@given(st.text(max_size=200))
def test_random_text(body):
    must_not_crash("title\n" + body)


_line = st.lists(st.sampled_from(VOCABULARY + ["R1", "C2", "n1", "n2", "out", "in", "1k",
                                               "10n", " ", " ", " "]), max_size=8)


@settings(max_examples=budget(500), suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(_line, max_size=10))
def test_random_cards(lines):
    must_not_crash("title\n" + "\n".join(" ".join(words) for words in lines) + "\n")


# --- hostile shapes -----------------------------------------------------------------------

#: values at the edges of what a quantity can be
EXTREME_VALUES = ["1e308", "1e309", "1e308k", "-1e308meg", "1e-400", "0", "-0", "9" * 400,
                  "1" + "0" * 5000 + "k", "." + "0" * 500 + "1", "1kk", "1megk", "4k7k",
                  "1" + "k" * 500, "{1e308*10}", "{1/1e-320}", "{-(-(-(-1)))}",
                  "{" + "(" * 300 + "1" + ")" * 300 + "}", "{" + "+".join(["1"] * 3000) + "}",
                  "{x}", "1µ", "1\u00b5F", "1e", "1e+", "1.", ".", "--1"]

_controls = st.text(st.characters(min_codepoint=0, max_codepoint=0x9F).filter(
    lambda c: c not in "\n\r\t "), min_size=1, max_size=4)


@st.composite
def nests(draw):
    """A subcircuit nest: depth 0..80, lexical or by instances, cheap or a bomb."""
    depth = draw(st.integers(0, 80))
    lexical = draw(st.booleans())
    bomb = depth >= 7 and draw(st.booleans())
    counts, product = [], 1
    for _ in range(depth):
        n = 10 if bomb else draw(st.integers(1, 3))
        if not bomb and product * n > 2000:
            n = 1  # keep accepted designs small; a bomb is refused before it is built
        counts.append(n)
        product *= n
    param = draw(st.booleans())
    value = draw(st.sampled_from(["1k", "{r}", "{r*2}"] + EXTREME_VALUES[:8]))
    lines = ["fuzz nest", ".param r=1k"]
    if lexical:
        lines += [f".subckt d{i} a" for i in range(depth)] + ["R1 a 0 1k"] + [".ends"] * depth
        lines += ["V1 in 0 AC 1", "R0 in 0 1k"]
    else:
        lines += [".subckt s0 a" + (" params: r=1" if param else ""), f"R1 a 0 {value}",
                  ".ends"]
        for i, n in enumerate(counts):
            lines.append(f".subckt s{i + 1} a" + (" params: r=1" if param else ""))
            lines += [f"X{j} a s{i}" + (" r={r}" if param else "") for j in range(n)]
            lines.append(".ends")
        lines += ["V1 in 0 AC 1", "R0 in out 1k", f"XTOP out s{depth}"]
    # over a budget: definitions nested deeper than allowed, or instances (XTOP and one
    # level per definition) nested deeper, or more elements than allowed
    over = depth > SUBCKT_DEPTH_MAX if lexical else \
        depth + 1 > SUBCKT_DEPTH_MAX or product > ELEMENTS_MAX
    return "\n".join(lines) + "\n", over


@settings(max_examples=budget(60), suppress_health_check=[HealthCheck.too_slow])
@given(nests())
def test_deep_and_multiplying_nests(nest):
    text, over = nest
    got = must_not_crash(text)
    if over:
        assert isinstance(got, NetcheckError) and got.code == "netlist-116"


@settings(max_examples=budget(150), suppress_health_check=[HealthCheck.too_slow])
@given(st.sampled_from(SAMPLE_TEXTS), st.lists(st.tuples(st.integers(0, 10 ** 6),
                                                         st.sampled_from(EXTREME_VALUES)),
                                               min_size=1, max_size=3))
def test_extreme_values_in_samples(text, swaps):
    tokens = re.split(r"(\s+)", text)
    for i, value in swaps:
        tokens[i % len(tokens)] = value
    mutated = "".join(tokens)
    if "\n" in mutated:
        must_not_crash(mutated)


@settings(max_examples=budget(150), suppress_health_check=[HealthCheck.too_slow])
@given(st.sampled_from(SAMPLE_TEXTS), st.lists(st.tuples(st.integers(0, 10 ** 6), _controls),
                                               min_size=1, max_size=4))
def test_control_characters_in_names(text, inserts):
    lines = text.split("\n")
    for i, junk in inserts:
        k = 1 + i % max(len(lines) - 1, 1)
        if k < len(lines):
            lines[k] = junk + lines[k] if i % 2 else lines[k].replace(" ", junk + " ", 1)
    must_not_crash("\n".join(lines))


def _encode(text: str, how: str, cut: int) -> bytes:
    data = text.encode("utf-8")
    if how == "cr":
        return text.replace("\n", "\r").encode("utf-8")
    if how == "some-cr":
        head, tail = text[:cut % (len(text) + 1)], text[cut % (len(text) + 1):]
        return (head + tail.replace("\n", "\r", 1)).encode("utf-8")
    if how == "crlf":
        return text.replace("\n", "\r\n").encode("utf-8")
    if how in ("utf-16", "utf-16-le", "utf-16-be", "utf-32"):
        return text.encode(how)
    if how == "bom":
        return b"\xef\xbb\xbf" + data
    if how == "latin-1":
        return text.encode("utf-8").replace(b"u", b"\xb5")
    if how == "truncated":
        return data[:cut % (len(data) + 1)]
    return data[:cut % (len(data) + 1)] + bytes([cut % 256]) + data[cut % (len(data) + 1):]


_HOW = ["cr", "some-cr", "crlf", "utf-16", "utf-16-le", "utf-16-be", "utf-32", "bom",
        "latin-1", "truncated", "stray-byte"]


@pytest.fixture(scope="module")
def folder(tmp_path_factory) -> Path:
    """One folder for the files the byte-level tests write (rewritten per example)."""
    return tmp_path_factory.mktemp("fuzz_bytes")


@settings(max_examples=budget(200), suppress_health_check=[HealthCheck.too_slow,
                                                           HealthCheck.function_scoped_fixture])
@given(text=st.sampled_from(SAMPLE_TEXTS), how=st.sampled_from(_HOW),
       cut=st.integers(0, 10 ** 6), via_include=st.booleans())
def test_bytes_read_by_path(folder, text, how, cut, via_include):
    data = _encode(text.replace(".include", "* .include"), how, cut)
    if via_include:
        (folder / "part.lib").write_bytes(data)
        (folder / "top.cir").write_text('fuzz top\n.include "part.lib"\nV9 n9 0 AC 1\n'
                                        "R9 n9 0 1k\n", encoding="utf-8")
        got = must_not_crash(str(folder / "top.cir"), root=str(folder))
    else:
        (folder / "top.cir").write_bytes(data)
        got = must_not_crash(str(folder / "top.cir"), root=str(folder))
    if how.startswith("utf-") and len(text) > 1:
        assert isinstance(got, NetcheckError) and got.code == "netlist-117"
        assert "save it as UTF-8" in got.message
