"""Fuzzing the front end: whatever the text, read_netlist succeeds or raises a NetcheckError.

The default hypothesis profile runs a few thousand examples over all tests here; the
"fuzz" profile (NETCHECK_HYPOTHESIS_PROFILE=fuzz) runs its own, much larger, count.
"""

from __future__ import annotations

import re
from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from netcheck import NetcheckError, read_netlist

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


def must_not_crash(text: str) -> None:
    try:
        ckt = read_netlist(text, root=ROOT)
    except NetcheckError as err:
        head = err.format().split("\n")[0]
        assert f"error {err.code}: " in head
    else:
        for diag in ckt.diagnostics:
            diag.format()


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
