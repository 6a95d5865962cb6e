"""The DC bias a part carries at the operating point, added to its AC stress.

A circuit with devices is solved around its DC operating point, so a coupling capacitor
holds its DC voltage and the AC swing on top of it, and a collector resistor dissipates
its DC power and the AC power besides. Part stress (:mod:`netcheck.analyses.stress`)
judges the sum against the rating (common practice, no source):

* voltage and current: the instantaneous peak of DC + AC sine, |X_DC| + X_AC,peak;
* power in a resistor: the average of (V_DC + v(t))²/R over a period, V_DC²/R + the
  average AC power (the cross term averages to zero).

The DC value of each quantity is the probe's own linear function of the solution taken at
the DC solution: node voltages and branch currents of the operating point, laid out as
the small-signal system's unknowns. A capacitor carries no DC current. The DC value of a
current source is its DC current, and a part model's port current counts the DC current
of the current sources inside it. (A part model with devices or behavioural current
outputs inside has no port current judged at all: :func:`~.stress._model_probes`.)
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ..mna.assemble import System
from ..netlist.elements import CurrentSource, Element, Resistor

__all__ = ["dc_solution", "dc_part", "sampled_dc"]


def _places(system: System, op: Any) -> tuple[np.ndarray, np.ndarray]:
    """(unknown of ``system``, index in the DC solution) for every node voltage and branch
    current both have; the DC solution lists the operating point's ``voltages`` then its
    ``currents``. A branch the DC solution has none of stays 0."""
    place = {("v", n): j for j, (n, _) in enumerate(op.voltages)}
    place.update({("i", b): len(op.voltages) + j for j, (b, _) in enumerate(op.currents)})
    pairs = [(i, place[(kind, name)])
             for kind, index in (("v", system.node_index), ("i", system.branch_index))
             for name, i in index.items() if (kind, name) in place]
    return (np.array([i for i, _ in pairs], dtype=np.intp),
            np.array([j for _, j in pairs], dtype=np.intp))


def dc_solution(system: System) -> np.ndarray | None:
    """The operating point of ``system``'s circuit as a vector of its unknowns (node
    voltages, branch currents), or None for a circuit without one (no devices: nothing
    is biased)."""
    op = system.circuit.operating_point
    if op is None:
        return None
    mine, theirs = _places(system, op)
    x = np.zeros(system.size)
    x[mine] = np.array([v for _, v in op.voltages] + [i for _, i in op.currents])[theirs]
    return x


def sampled_dc(system: System, rows: np.ndarray, bias: Any) -> np.ndarray | None:
    """The operating points of the sample rows ``rows`` (``bias``, a
    :class:`~netcheck.mna.bias_samples.SampledBias` of them) laid out as ``system``'s
    unknowns, (R, n), as :func:`dc_solution` lays out the nominal one; None without
    ``bias`` (a circuit without an operating point)."""
    op = system.circuit.operating_point
    if op is None or bias is None:
        return None
    mine, theirs = _places(system, op)
    out = np.zeros((rows.size, system.size))
    out[:, mine] = bias.solutions[:, theirs]
    return out


def dc_part(probe: Any, quantity: str, element: Element | None, x_dc: np.ndarray) -> Any:
    """The DC term a stress ``probe`` (a :class:`~netcheck.analyses.stress._Probe` of
    ``quantity`` on ``element``, None for a part model's port) adds at DC solution
    ``x_dc``: |V| or |I| at DC, or the DC power V²/R of a resistor. ``x_dc`` may be one
    solution (n,) or one per sample (R, n); like the probe's AC value, the term is for
    the part's own nominal value, and scales with a sampled one as (p/nominal)^own."""
    if isinstance(element, CurrentSource) and quantity == "current":
        return abs(element.dc) + 0.0 * x_dc[..., 0]
    value = 0.0 * x_dc[..., 0] if probe.jw else x_dc @ probe.sel  # jω terms vanish at DC
    value = value + probe.dc_const  # a part model's current sources
    if quantity != "power":
        return np.abs(value)
    assert isinstance(element, Resistor)
    return value * value / element.value if element.value else 0.0 * value
