"""Lookups into a SpecResult shared by the report's views and plots."""

from __future__ import annotations

from typing import Any

from ..result import LimitResult, SpecResult

__all__ = ["analysis_block", "nominal_limits"]

#: limit kinds that judge an analysis (not the nominal response)
_ANALYSIS_KINDS = ("yield", "worst_case", "stress")


def analysis_block(spec: SpecResult, *keys: str) -> dict[str, Any] | None:
    """The table at ``extra[keys[0]][keys[1]]…``, or None when a step is missing or not a table.

    Examples
    --------
    >>> from netcheck.result import SpecResult, Status
    >>> s = SpecResult("a.toml", "", "", Status.PASS,
    ...                extra=(("tolerance", {"monte_carlo": {"samples": 200}}),))
    >>> analysis_block(s, "tolerance", "monte_carlo"), analysis_block(s, "tolerance", "worst_case")
    ({'samples': 200}, None)
    """
    value: Any = spec.extra_value(keys[0])
    for key in keys[1:]:
        value = value.get(key) if isinstance(value, dict) else None
    return value if isinstance(value, dict) else None


def nominal_limits(spec: SpecResult) -> dict[str, LimitResult]:
    """The nominal limit rows by name (first of each name; no yield, worst-case or stress rows)."""
    out: dict[str, LimitResult] = {}
    for lim in spec.limits:
        if lim.kind not in _ANALYSIS_KINDS:
            out.setdefault(lim.name, lim)
    return out
