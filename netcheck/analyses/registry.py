"""The analyses a check runs after the nominal judgement, listed in one table."""

from __future__ import annotations

import importlib
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any, Callable

from ..exceptions import Diagnostic
from ..result import Caution, LimitResult

if TYPE_CHECKING:  # pragma: no cover
    from ..mna.assemble import System
    from ..netlist.circuit import Circuit
    from ..spec.load import Spec
    from .nominal import SpecProbe

__all__ = ["ANALYSES", "Nominal", "Outcome", "run_analyses", "diag_caution"]

#: name → "module:function", run in this order. Each function takes the :class:`Nominal`
#: state and returns an :class:`Outcome`, or None when the spec does not ask for it.
#: Adding an analysis: its spec table in ``netcheck/spec/`` (parsed at load time into
#: the Spec), one module here with its function, one line in this table.
ANALYSES: dict[str, str] = {
    "stress": "netcheck.analyses.stress:analyse",
    "tolerance": "netcheck.analyses.tolerance_study:analyse",
}


@dataclass(frozen=True, slots=True)
class Nominal:
    """What every analysis starts from: the spec, the circuit and its nominal solution."""

    spec: "Spec"
    circuit: "Circuit"
    system: "System"
    probe: "SpecProbe"
    #: the rows judged so far (the limits, then each earlier analysis's rows)
    limits: tuple[LimitResult, ...]
    #: the nominal measurements (peak, edges, ...), by name
    measurements: dict[str, float] = field(default_factory=dict)
    #: the circuit elaborated again with some global ``.param`` values replaced (name →
    #: value), for tolerances on a ``.param``; None when the netlist is not at hand
    rebuild: "Callable[[dict[str, float]], Circuit] | None" = None


@dataclass(frozen=True, slots=True)
class Outcome:
    """One analysis's share of the SpecResult."""

    rows: tuple[LimitResult, ...] = ()
    cautions: tuple[Caution, ...] = ()
    #: its block of the JSON result (``SpecResult.extra[name]``)
    block: Any = None
    #: the Monte Carlo gain envelope (low, high) over the grid, for the plots
    envelope: tuple | None = None


def _function(target: str) -> Callable[[Nominal], Outcome | None]:
    module, _, name = target.partition(":")
    return getattr(importlib.import_module(module), name)


def run_analyses(nominal: Nominal) -> list[tuple[str, Outcome]]:
    """Run every analysis of :data:`ANALYSES` the spec asks for, in order; each sees the
    rows of those before it."""
    out = []
    for name, target in ANALYSES.items():
        outcome = _function(target)(nominal)
        if outcome is None:
            continue
        out.append((name, outcome))
        nominal = Nominal(nominal.spec, nominal.circuit, nominal.system, nominal.probe,
                          nominal.limits + tuple(outcome.rows), nominal.measurements)
    return out


def diag_caution(d: Diagnostic) -> Caution:
    """A netlist diagnostic as a caution of the result (with its place, when it has one)."""
    if d.span is None:
        return Caution(d.code, d.message, d.severity)
    return Caution(d.code, d.message, d.severity, d.span.path, d.span.line, d.span.column)
