"""Tolerances on a global ``.param`` (``[tolerances] params``), applied through the netlist.

An op-amp macro-model's gain-bandwidth, say, is a ``.param`` that several hidden element
values are computed from. Its tolerance is applied where it acts: the netlist is
elaborated again with the parameter's value replaced, and every element whose value
changes follows it. The dependent elements are found by elaborating at both ends of the
parameter's band; a parameter that changes anything other than element values (a device
model, a node), or none at all, is refused (spec-273).

* Monte Carlo draws the parameter like a part (its own distribution over its band) and
  elaborates the netlist once per sample, so every dependent value is exact however it
  depends on the parameter (1/GBW, a square root).
* Worst case takes the parameter as one variable: its dependent elements are a group that
  moves together, each at the value the netlist gives at the parameter's low or high end
  (the corners are exact; EVA is the first-order estimate along that secant).
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from typing import Any, Callable

import numpy as np

from ..exceptions import NetcheckError, SpecError
from ..netlist.elaborate import Circuit
from ..spec.tolerances import Spread, Tolerances
from .part_spread import Part, draw

__all__ = ["ParamSpread", "toleranced_params", "param_values", "MAIN_FIELDS"]

#: the field that holds an element's main value, by kind (the first an element has)
MAIN_FIELDS = ("magnitude", "gain", "k", "ac_magnitude")


@dataclass(frozen=True)
class ParamSpread:
    """One toleranced ``.param``: its band and the elements that follow it."""

    name: str
    nominal: float
    low: float
    high: float
    distribution: str
    #: the dependent elements as worst-case parts, each with its own relative ends
    parts: tuple[Part, ...]

    def to_json(self) -> dict[str, Any]:
        return {"param": self.name, "nominal": self.nominal, "low": self.low,
                "high": self.high, "tolerance": max(-self.low, self.high),
                "distribution": self.distribution, "elements": [p[0] for p in self.parts],
                "element_nominal": {p[0]: p[1] for p in self.parts}}


def _main(e: Any) -> str | None:
    return next((f for f in MAIN_FIELDS if hasattr(e, f)), None)


def _stripped(e: Any) -> Any:
    """The element with its main value set to 0 (what else a parameter may change)."""
    f = _main(e)
    return dataclasses.replace(e, **{f: 0.0}) if f else e


def toleranced_params(tol: Tolerances, circuit: Circuit,
                      rebuild: Callable[[dict[str, float]], Circuit] | None,
                      path: str = "<spec>") -> list[ParamSpread]:
    """Every toleranced ``.param`` with the elements that depend on it.

    Such an element takes its spread from the parameter: a letter default or a glob of
    ``parts`` passes over it (the caller drops it from the parts), but a tolerance given
    to it by its exact name, or a second toleranced parameter, is refused (spec-274).
    """
    out: list[ParamSpread] = []
    owner: dict[str, str] = {k: "" for k, _ in tol.parts if not any(c in k for c in "*?[")}
    defined = dict(circuit.params)
    for name, raw in tol.params:
        s = raw if isinstance(raw, Spread) else Spread(-raw, raw)
        where = f"tolerances.params.{name}"

        def fail(message: str, code: str = "spec-273") -> SpecError:
            return SpecError(f"{where}: {message}", code=code, path=path, where=where)

        if s.tc is not None or s.ageing is not None:
            raise fail("tc and ageing apply to parts, not to a .param (give the parameter's "
                       "whole spread as its tolerance)")
        if s.half == 0:
            continue
        if rebuild is None:
            raise fail("a .param tolerance needs the netlist elaborated again, which this "
                       "check cannot do (give the tolerance to the parts instead)")
        if name not in defined:
            raise fail(f"the netlist defines no global .param {name} (it defines "
                       f"{', '.join(sorted(defined)) or 'none'})")
        p0 = float(defined[name])
        if p0 == 0:
            raise fail(f".param {name} is 0, which a relative tolerance cannot move")
        ends = []
        for rel in (s.low, s.high):
            try:
                ends.append(rebuild({name: p0 * (1 + rel)}))
            except NetcheckError as err:
                raise fail(f"with {name} = {p0 * (1 + rel):g} ({rel:+.4g} of its value) the "
                           f"netlist no longer elaborates: {err}") from None
        parts = []
        for e in circuit.elements:
            lo, hi = (c.element(e.name) for c in ends)
            if _stripped(lo) != _stripped(e) or _stripped(hi) != _stripped(e):
                raise fail(f"{name} changes {e.name} beyond its value (a model parameter, an "
                           "option or its nodes); only element values can follow a "
                           "toleranced .param")
            if _main(e) is None or (lo.value == e.value and hi.value == e.value):
                continue  # a device has no value of its own to follow (its model is above)
            if e.value == 0:
                raise fail(f"{e.name} is 0 at the nominal {name}, so its change cannot be "
                           "taken relative to it")
            if e.name in owner:
                why = ("has a tolerance of its own in [tolerances] parts" if owner[e.name] == ""
                       else f"follows .param {owner[e.name]} too")
                raise fail(f"{e.name} depends on {name} and {why}; tolerance one of them",
                           code="spec-274")
            owner[e.name] = name
            parts.append(Part(e.name, e.value, lo.value / e.value - 1.0,
                              hi.value / e.value - 1.0, None, f"param {name}", 1.0))
        if not parts:
            raise fail(f"no element value depends on .param {name}, so its tolerance would "
                       "change nothing")
        out.append(ParamSpread(name, p0, s.low, s.high, s.distribution or tol.distribution,
                               tuple(parts)))
    return out


def param_values(params: list[ParamSpread], samples: int, rng: np.random.Generator,
                 rebuild: Callable[[dict[str, float]], Circuit], path: str = "<spec>"
                 ) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    """The parameters' samples (S,) by name, and the values of their dependent elements,
    the netlist elaborated once per sample."""
    drawn = draw([Part(p.name, p.nominal, p.low, p.high, p.distribution) for p in params],
                 samples, params[0].distribution if params else "uniform", rng, path)
    names = [q[0] for p in params for q in p.parts]
    values = {n: np.empty(samples) for n in names}
    for i in range(samples):
        c = rebuild({p.name: float(drawn[p.name][i]) for p in params})
        for n in names:
            values[n][i] = c.element(n).value
    return drawn, values
