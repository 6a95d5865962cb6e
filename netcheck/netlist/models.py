"""``.model`` cards: the model of a part, named once and used by element cards.

A model card reads ``.model NAME TYPE [(] key=value ... [)]``. netcheck uses the model
cards of passive parts (types ``R``/``RES``, ``C``/``CAP``, ``L``/``IND``) on R, C and L
cards (``R1 a b RMOD 1k`` or ``R1 a b 1k RMOD``): a multiplier of the value (the key named
after the part, ``R=``, ``C=`` or ``L=``; 1 when not given) and the temperature
coefficients ``TC1``, ``TC2`` with their nominal temperature ``TNOM`` (27 °C). The value
an element stamps is ``value × multiplier``; its coefficients are the model's unless the
card gives its own. Device model cards (diodes, transistors: ``D``, ``NPN``, ``NMOS``...)
are read and kept, with their parameters unevaluated, so the device elements can use
them later; an element that names one is refused with a message saying so.

The brackets round the parameters are part of the convention but not of the card
grammar: :func:`blank_model_brackets` turns them into spaces on ``.model`` lines (and
their continuation lines) before the card grammar reads the text, keeping every column.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import TYPE_CHECKING, Callable

from ..exceptions import ElaborationError
from .source import Span, printable, quoted

if TYPE_CHECKING:  # pragma: no cover - parse.py imports this module
    from .parse import Assign, Directive, Field

__all__ = ["ModelCard", "read_model", "blank_model_brackets", "PASSIVE_TYPES",
           "DEVICE_TYPES", "NOMINAL_C", "passive_model"]

#: the nominal temperature, °C, of temperature coefficients (common practice, no source)
NOMINAL_C = 27.0
#: passive model types → the element letter that may use them
PASSIVE_TYPES = {"R": "R", "RES": "R", "C": "C", "CAP": "C", "L": "L", "IND": "L"}
#: device model types (read and kept; no element uses them yet) → the element letter
DEVICE_TYPES = {"D": "D", "NPN": "Q", "PNP": "Q", "LPNP": "Q", "NMOS": "M", "PMOS": "M",
                "VDMOS": "M", "NJF": "J", "PJF": "J", "SW": "S", "CSW": "W"}
#: the parameters a passive model card may carry (lower case; the first is the multiplier)
_PASSIVE_KEYS = {"R": ("r", "tc1", "tc2", "tnom"), "C": ("c", "tc1", "tc2", "tnom"),
                 "L": ("l", "tc1", "tc2", "tnom")}

_MODEL_LINE = re.compile(r"[ \t]*\.model\b", re.IGNORECASE)


@dataclass(frozen=True, slots=True)
class ModelCard:
    """One ``.model`` card: its name as written, its type upper case and its parameters."""

    name: str
    type: str
    params: tuple["Assign", ...]
    span: Span

    @property
    def letter(self) -> str:
        """The element letter this model is for ('' for a type netcheck does not know)."""
        return PASSIVE_TYPES.get(self.type) or DEVICE_TYPES.get(self.type, "")


def _is_assign(item: object) -> bool:
    return hasattr(item, "key")


def read_model(st: "Directive") -> ModelCard:
    """The :class:`ModelCard` of a ``.model`` directive (netlist-130 if it has no name
    or type, or a parameter that is not ``key=value``)."""
    words = [f for f in st.fields if not _is_assign(f)]
    if len(words) < 2 or st.fields[0] is not words[0] or st.fields[1] is not words[1]:
        raise ElaborationError(".model needs a name and a type, e.g. .model RLOSS RES "
                               "(TC1=0.0039)", st.span, code="netlist-130")
    for item in st.fields[2:]:
        if not _is_assign(item):
            raise ElaborationError(f".model {printable(words[0].text)}: parameters are "
                                   f"key=value pairs; found {quoted(item.text)}", item.span,
                                   code="netlist-130")
    params = tuple(st.fields[2:])
    return ModelCard(words[0].text, words[1].text.upper(), params, st.span)


def passive_model(model: ModelCard, letter: str, value_of: Callable[["Field"], float],
                  used_at: Span) -> tuple[float, float, float, float]:
    """(multiplier, TC1, TC2, TNOM) of a passive ``model`` used by an element of ``letter``.

    netlist-130 when the model is for another kind of element (a device model, or a
    capacitor model on a resistor) or carries a parameter netcheck does not read.
    """
    want = {"R": "a resistor", "C": "a capacitor", "L": "an inductor"}[letter]
    if model.letter != letter:
        if model.type in DEVICE_TYPES:
            why = (f"a device model ({model.type}, for {DEVICE_TYPES[model.type]} cards) "
                   "that netcheck does not read yet")
        elif model.type in PASSIVE_TYPES:
            kind = {"R": "resistor", "C": "capacitor", "L": "inductor"}[PASSIVE_TYPES[model.type]]
            why = f"a {kind} model (type {model.type})"
        else:
            why = f"of type {printable(model.type)}, which netcheck does not know"
        raise ElaborationError(f"model {printable(model.name)} (defined at line "
                               f"{model.span.line}) is {why}, not {want} model (types "
                               f"{'/'.join(k for k, v in PASSIVE_TYPES.items() if v == letter)})",
                               used_at, code="netlist-130")
    keys = _PASSIVE_KEYS[letter]
    got = dict.fromkeys(keys, None)
    for assign in model.params:
        key = assign.key.text.lower()
        if key not in got:
            raise ElaborationError(
                f"model {printable(model.name)}: parameter {quoted(assign.key.text)} is not "
                f"one netcheck reads on {want} model (it reads "
                f"{', '.join(k.upper() for k in keys)}); it would change the part, so it is "
                "not skipped: remove it or fold it into the value", assign.key.span,
                code="netlist-130")
        got[key] = value_of(assign.value)
    scale = got[keys[0]]
    if scale is not None and not scale > 0:
        raise ElaborationError(f"model {printable(model.name)}: the multiplier "
                               f"{keys[0].upper()}={scale:g} must be positive",
                               model.span, code="netlist-130")
    return (1.0 if scale is None else scale, got["tc1"] or 0.0, got["tc2"] or 0.0,
            NOMINAL_C if got["tnom"] is None else got["tnom"])


def blank_model_brackets(text: str) -> str:
    """``text`` with the brackets and commas of ``.model`` cards (and their ``+``
    continuation lines) turned into spaces, outside braces and quotes; every other
    character, and so every line and column, unchanged.

    Examples
    --------
    >>> blank_model_brackets(".model RQ RES(R=1.02, TC1={a*(1+b)})\\nR1 a b (1)")
    '.model RQ RES R=1.02  TC1={a*(1+b)} \\nR1 a b (1)'
    """
    if ".model" not in text.lower():
        return text
    lines = text.split("\n")
    inside = False
    for i, line in enumerate(lines):
        stripped = line.lstrip(" \t")
        if _MODEL_LINE.match(line):
            inside = True
        elif inside and stripped.startswith("+"):
            pass
        elif inside and (not stripped or stripped.startswith("*")):
            continue  # blank and comment lines may sit between continuation lines
        else:
            inside = False
            continue
        lines[i] = _blank(line)
    return "\n".join(lines)


def _blank(line: str) -> str:
    out = []
    depth = 0
    quote = ""
    for ch in line:
        if quote:
            quote = "" if ch == quote else quote
        elif ch in "\"'":
            quote = ch
        elif ch == "{":
            depth += 1
        elif ch == "}":
            depth = max(depth - 1, 0)
        elif depth == 0 and ch in "(),":
            ch = " "
        out.append(ch)
    return "".join(out)
