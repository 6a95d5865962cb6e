"""JSON result: the fixed ``netcheck.result/1`` contract other tools consume.

The layout is described by ``docs/result.schema.json`` (JSON Schema draft 2020-12).
Keys are sorted and floats written with ``repr`` precision, so output is reproducible.
"""

from __future__ import annotations

import json
import math
from typing import IO, Any

from ..result import Caution, CheckResult, LimitResult, SpecResult, finite_or_none
from .findings import run_headline, spec_headline

__all__ = ["render", "to_dict", "SCHEMA"]

#: the value of the ``schema`` key; bump the number only for incompatible changes
SCHEMA = "netcheck.result/1"


def _num(v: Any) -> Any:
    if isinstance(v, float):
        if math.isnan(v):
            return None
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
    return v


def _limit(lim: LimitResult) -> dict[str, Any]:
    out = {
        "name": lim.name, "kind": lim.kind, "status": lim.status.value,
        "measured": _num(lim.measured), "limit": [_num(lim.lower), _num(lim.upper)],
        "limit_text": lim.bound_text, "margin": _num(lim.margin), "unit": lim.unit,
        "at_hz": finite_or_none(lim.at_hz), "definition": lim.definition,
        "method": lim.method, "message": lim.message, "spec_line": lim.line,
    }
    if lim.below_floor:  # measured and margin are rounding noise: the value is ≤ floor
        out.update(below_floor=True, floor=_num(lim.floor))
    if lim.reference_db is not None:  # a gain stated relative to a measured level
        out["reference_db"] = _num(lim.reference_db)
    if lim.output is not None:  # a spec with named outputs: the output judged
        out["output"] = lim.output
    return out


def _caution(c: Caution) -> dict[str, Any]:
    return {"code": c.code, "severity": c.severity, "message": c.message, "path": c.path,
            "line": c.line, "column": c.column}


def _spec(s: SpecResult) -> dict[str, Any]:
    out: dict[str, Any] = {
        "spec": s.spec, "netlist": s.netlist, "title": s.title, "status": s.status.value,
        "limits": [_limit(lim) for lim in s.limits],
        "measurements": {k: _num(v) for k, v in s.measurements},
        "counts": s.counts, "headline": spec_headline(s),
        "cautions": [_caution(c) for c in s.cautions],
        "inputs": [{"path": p, "sha256": h} for p, h in s.inputs],
        "sweep": {k: _num(v) for k, v in s.sweep},
    }
    if s.variant is not None:
        out["variant"] = s.variant
    if s.error is not None:
        out["error"] = s.error
    for key, value in s.extra:
        out[key] = value
    return out


def to_dict(result: CheckResult) -> dict[str, Any]:
    """The JSON document as Python data."""
    return {
        "schema": SCHEMA, "tool_version": result.tool_version,
        "created_utc": result.created_utc or None, "status": result.status.value,
        "counts": result.counts, "headline": run_headline(result), "specs": [_spec(s) for s in result.specs],
        "cautions": [_caution(c) for c in result.cautions],
    }


def render(result: CheckResult, stream: IO[str], options: Any = None) -> None:
    """Write ``result`` as JSON to ``stream``."""
    json.dump(to_dict(result), stream, indent=2, sort_keys=True, ensure_ascii=False,
              allow_nan=False)
    stream.write("\n")
