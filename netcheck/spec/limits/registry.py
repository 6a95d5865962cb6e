"""The limit-kind table: TOML ``kind`` → the class that implements it, imported on first use.

A new limit kind is one module in this package holding one :class:`~.base.Limit`
subclass, and one line in :data:`KINDS`. The spec loader (:func:`build_limit`), the
worst case, the docs tables and the renderers all read the kinds through :data:`LIMITS`;
no renderer branches on the kind.
"""

from __future__ import annotations

import importlib
from collections.abc import Iterator, Mapping
from typing import Any

from .base import Limit
from ..reader import SpecReader, Sweep

__all__ = ["KINDS", "LIMITS", "build_limit", "limit_class"]

#: Every limit kind: its TOML ``kind`` → ``"module:Class"``, the module relative to this
#: package. The order is the order kinds are listed in (the worst case, the docs).
KINDS: dict[str, str] = {
    "gain": "gain:GainLimit",
    "ripple": "ripple:RippleLimit",
    "resonance": "resonance:ResonanceLimit",
    "corner": "corner:CornerLimit",
    "bandwidth": "bandwidth:BandwidthLimit",
    "shape_factor": "shape_factor:ShapeFactorLimit",
    "group_delay": "delay:GroupDelayLimit",
    "phase": "phase:PhaseLimit",
    "impedance": "impedance:ImpedanceLimit",
    "notch": "notch:NotchLimit",
    "port": "port:PortLimit",
    "noise": "noise:NoiseLimit",
    "step": "step:StepLimit",
    "crossover": "crossover:CrossoverLimit",
}

_loaded: dict[str, type[Limit]] = {}


def limit_class(kind: str) -> type[Limit]:
    """The Limit class of ``kind``, its module imported on first use; KeyError if unknown."""
    cls = _loaded.get(kind)
    if cls is None:
        module, name = KINDS[kind].split(":")
        cls = getattr(importlib.import_module(f"{__package__}.{module}"), name)
        _loaded[kind] = cls
    return cls


class _LimitClasses(Mapping[str, type[Limit]]):
    """:data:`KINDS` read as kind → class: keys, length and ``in`` import nothing; looking
    a kind up imports its module only."""

    def __getitem__(self, kind: str) -> type[Limit]:
        return limit_class(kind)

    def __contains__(self, kind: object) -> bool:
        return kind in KINDS

    def __iter__(self) -> Iterator[str]:
        return iter(KINDS)

    def __len__(self) -> int:
        return len(KINDS)

    def __repr__(self) -> str:
        return f"LIMITS({', '.join(KINDS)})"


#: Every limit kind: its TOML ``kind`` → its Limit class, in the order of :data:`KINDS`.
LIMITS: Mapping[str, type[Limit]] = _LimitClasses()


def build_limit(table: Any, index: int, path: str, sweep: Sweep, line: int | None) -> Limit:
    """Validate one ``[[limits]]`` table and build its Limit."""
    where = f"limits[{index}]"
    if not isinstance(table, dict):
        SpecReader({}, where, path, {}).fail("", "expected a table")
    kind = table.get("kind")
    kinds = ", ".join(sorted(LIMITS))
    if kind is None:
        SpecReader({}, where, path, {}).fail("kind", f"missing (required): one of {kinds}")
    if not isinstance(kind, str) or kind not in LIMITS:
        import difflib
        close = difflib.get_close_matches(str(kind), list(LIMITS), n=1)
        hint = f"; did you mean {close[0]!r}?" if close else ""
        SpecReader({}, where, path, {}).fail(
            "kind", f"unknown limit kind {kind!r}{hint} (kinds: {kinds})",
            code="spec-201" if isinstance(kind, str) else "spec-202")
    cls = LIMITS[kind]
    rd = SpecReader(table, where, path, {"kind": "", "name": "", **cls.KEYS})
    name = rd.text("name")
    return cls.from_table(rd, sweep, name, index, line)
