"""Limit kinds: each parses its table of the spec and judges one measurement, with a
margin; one module per kind, all listed in one table (:data:`KINDS`, read as kind →
class through :data:`LIMITS`), each imported on first use."""

from __future__ import annotations

from typing import Any

from .base import Limit, Linearised, Probe, Rows, judge_range, linearised_range, range_margin
from .registry import KINDS, LIMITS, build_limit, limit_class

#: class name → kind, for the classes this package gives on first use (``GainLimit``...)
_CLASS_KINDS: dict[str, str] = {entry.split(":")[1]: kind for kind, entry in KINDS.items()}

__all__ = ["Limit", "LIMITS", "KINDS", "build_limit", "limit_class", "Probe", "judge_range",
           "Linearised", "range_margin", "linearised_range", "Rows", *_CLASS_KINDS]


def __getattr__(name: str) -> Any:
    """A kind's class by its name (``GainLimit``), importing its module on first use."""
    kind = _CLASS_KINDS.get(name)
    if kind is None:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    return limit_class(kind)


def __dir__() -> list[str]:
    """The module's names, the kind classes not yet imported included."""
    return sorted({*globals(), *_CLASS_KINDS})
