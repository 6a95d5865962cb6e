"""source.printable: what reaches a terminal from an input file is shown, never acted on."""

from __future__ import annotations

import unicodedata

import pytest

from netcheck.netlist.source import MESSAGE_MAX, printable


@pytest.mark.parametrize("code", [*range(0x00, 0x09), *range(0x0A, 0x20), *range(0x7F, 0xA0)])
def test_control_characters_are_escaped(code):
    # C0, DEL and C1 controls (ECMA-48 / ISO 6429): a terminal acts on every one of them
    shown = printable(f"R1{chr(code)}x")
    assert chr(code) not in shown and f"\\x{code:02x}" in shown


def test_every_bidirectional_control_is_escaped():
    # Unicode's own list: the characters of class "Cf" with a bidirectional type of
    # LRE/RLE/PDF/LRO/RLO/LRI/RLI/FSI/PDI, and the marks LRM, RLM, ALM (UAX #9, table 1)
    bidi_types = {"LRE", "RLE", "PDF", "LRO", "RLO", "LRI", "RLI", "FSI", "PDI"}
    controls = [c for c in range(0x10000)
                if unicodedata.bidirectional(chr(c)) in bidi_types
                or c in (0x200E, 0x200F, 0x061C)]
    assert len(controls) >= 12
    for c in controls:
        assert chr(c) not in printable(f"a{chr(c)}b"), hex(c)
    for sep in ("\u2028", "\u2029"):  # line and paragraph separators break lines
        assert sep not in printable(f"a{sep}b")


def test_ordinary_text_is_unchanged():
    text = "Quillmere 40 kHz receiver: 4k7 Ω, 10 µF, ±1 %\tend"
    assert printable(text) == text


def test_long_text_is_cut_and_says_how_much():
    shown = printable("x" * (MESSAGE_MAX + 5000))
    assert shown.startswith("x" * MESSAGE_MAX)
    assert shown.endswith("(5000 more characters)")
    assert len(shown) < MESSAGE_MAX + 40
    assert printable("y" * 10_000, limit=None) == "y" * 10_000
