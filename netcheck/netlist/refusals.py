"""What netcheck refuses or questions by name: devices out of reach, a title that is a card."""

from __future__ import annotations

import re

from ..exceptions import Diagnostic
from .source import SourceFile, Span, printable

__all__ = ["REFUSED_CODE", "device_advice", "behavioural_refusal", "title_warning"]

#: the code of a construct netcheck refuses by name (out of reach of a small-signal solve)
REFUSED_CODE = "netlist-120"

_DEVICES = {
    "Z": "a MESFET", "U": "a distributed or digital element", "O": "a lossy line",
    "S": "a voltage-controlled switch", "W": "a current-controlled switch",
    "B": "a behavioural source", "A": "a code-model or digital element",
    "N": "a simulator-specific device", "P": "a simulator-specific device",
    "Y": "a simulator-specific device",
}


def device_advice(letter: str, name: str) -> str | None:
    """Why element ``name`` (letter ``letter``) is out of reach, and what would work instead.

    >>> device_advice("Z", "Z1").split(":")[0]
    'Z1 is a MESFET'
    >>> device_advice("R", "R1") is None
    True
    """
    what = _DEVICES.get(letter.upper())
    if what is None:
        return None
    shown = printable(name, 80)
    if letter.upper() == "Z":
        return (f"{shown} is {what}: netcheck has no equations for it (it solves D, Q, M and "
                "J devices at their operating point); replace it "
                "by its small-signal equivalent at the operating point (R, C and controlled "
                "sources E, F, G, H, in a subcircuit if it is used more than once)")
    if letter.upper() in "SW":
        return (f"{shown} is {what}: a switch has no small-signal model; write the resistor "
                "of the state you want to check (on or off resistance) in its place")
    if letter.upper() == "B":
        return (f"{shown} is {what} in a form netcheck does not read: write "
                "Bname n+ n- V={expression} (a voltage) or Bname n+ n- I={expression} (a "
                "current), the expression in braces (docs/elements.md)")
    return (f"{shown} is {what}, which netcheck does not read; a linear equivalent of R, L, "
            "C, K and controlled sources would work instead")


def behavioural_refusal(name: str, texts: list[str]) -> tuple[int, str, str] | None:
    """Why the E, F, G, H or B card ``name`` (its tokens ``texts``, the name first, the
    brackets, commas and ``=`` as tokens of their own, a ``{…}`` one token) cannot be read:
    (the token to point at, message, code), or None if it can.

    >>> behavioural_refusal("E1", ["E1", "out", "0", "VALUE", "=", "{2*v(a)}"]) is None
    True
    >>> behavioural_refusal("B1", ["B1", "out", "0", "V", "=", "2", "*", "v", "(", "a", ")"])[2]
    'netlist-120'
    """
    letter, shown = name[0].upper(), printable(name, 80)
    for k, text in enumerate(texts[1:], 1):
        word = text.lower()
        if word in ("freq", "table", "poly") or (word == "value" and letter in "FH") or (
                word == "laplace" and letter in "FHB"):
            return k, (f"{shown}: a {word.upper()} controlled source is a behavioural model (a "
                       "transfer function, frequency table or polynomial) netcheck does not "
                       "read: it solves R, L, C, K, constant-gain E, F, G, H, their POLY "
                       "forms, E and G VALUE={expression} and LAPLACE={H(s)}, and B "
                       "V={expression} or I={expression}; build the response from those (an RC section for "
                       "each pole, for instance)"), REFUSED_CODE
    key = texts[3].lower() if len(texts) > 3 else ""
    assigned = len(texts) > 5 and texts[4] == "="
    if letter == "B" and not (key in ("v", "i") and assigned and texts[5][:1] == "{"):
        return 0, device_advice("B", name) or "", REFUSED_CODE
    if letter in "EGB" and (key == "value" or (key in ("v", "i") and assigned)):
        for k, text in enumerate(texts[1:], 1):
            if text in "()":
                return k, (f"{shown}: write the expression in braces, {texts[3]}={{...}}: "
                           "its brackets would be read as card fields"), "netlist-100"
    return None


_CARD_LIKE = re.compile(r"[RCLVIEFGHKXT][A-Za-z0-9_]*([ \t]+[^ \t]+){3}[ \t]*$", re.I)


def title_warning(source: SourceFile, title: str) -> Diagnostic | None:
    """A warning when the title line (always the first line) looks like a card.

    >>> title_warning(SourceFile("<t>", "R1 1 2 1k"), "R1 1 2 1k").code
    'netlist-157'
    >>> title_warning(SourceFile("<t>", "Quillmere notch"), "Quillmere notch") is None
    True
    """
    line = title.strip()
    low = line.lower()
    directive = low.startswith((".subckt", ".param", ".include", ".inc ", ".lib", ".model",
                                ".ac ", ".tran", ".options", ".global"))
    if not (directive or _CARD_LIKE.match(line)):
        return None
    what = "a directive" if directive else "an element card"
    return Diagnostic("netlist-157", f"the first line is the title, and this one looks like "
                      f"{what}: it is not read as part of the circuit; put a title line "
                      "above it", Span(source, 1, 1, 1, len(title) + 1))
