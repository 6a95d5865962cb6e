"""The hazardous-voltage caution, raised only where a result warrants it.

A spec's result carries a hazard caution (severity ``caution``) when

* the part-stress analysis called a part out (:func:`netcheck.analyses.stress.stress_cautions`:
  above :data:`~netcheck.analyses.stress.HAZARD_VOLTAGE_PEAK` volts peak, or a reactive
  part far above the stimulus), or
* for a voltage stimulus, a capacitor or inductor sees at least
  :data:`MAGNIFICATION_MIN` times the input voltage somewhere on the sweep
  (:func:`magnification_caution`, this module).

The renderers then print the general statement
(:data:`netcheck.result.HAZARD_CAUTION`) once per output
(:func:`netcheck.result.hazard_warranted`); a run without such a result prints none.
"""

from __future__ import annotations

import math
from typing import Sequence

import numpy as np

from ..mna.solve import Response
from ..netlist.elements import Capacitor, Inductor, VoltageSource
from ..netlist.units import format_si
from ..result import HAZARD_SEVERITY, VOLTAGE_CAUTION_CODE, Caution, LimitResult
from ..spec.stress import StressLimit
from .stress import _solve_at, stress_probes

__all__ = ["MAGNIFICATION_MIN", "magnifications", "magnification_caution"]

#: a capacitor or inductor seeing this multiple of the input voltage (or more) is called
#: out: a section Q of 10 or more. Common practice for a "high-Q" section, no source.
MAGNIFICATION_MIN = 10.0
#: the most parts a magnification caution names
_NAMED_MAX = 3


def magnifications(response: Response, seeds_hz: np.ndarray | None = None
                   ) -> list[tuple[str, float, float]]:
    """(part, largest |V across it| / |V_in|, where in Hz) for every capacitor and inductor.

    The voltage across each part comes from the full nominal solution on the sweep grid
    and at ``seeds_hz`` (the pole frequencies inside the sweep, where a narrow resonance
    between grid points peaks), through the part-stress probes
    (:func:`netcheck.analyses.stress.stress_probes`: the same parts, never an element
    inside a part model). The solution is per unit stimulus, so |V| is the ratio itself.
    Empty for a current stimulus (it has no input voltage) and for a circuit without C or L.
    """
    system = response.system
    if not isinstance(system.circuit.element(system.source), VoltageSource):
        return []
    every = StressLimit(index=0, parts="*", quantity="voltage", rating=math.inf, amplitude=1.0)
    probes = [(name, probe) for name, e, probe in stress_probes(system, every)
              if isinstance(e, (Capacitor, Inductor))]
    if not probes:
        return []
    f = np.asarray(response.frequency_hz, dtype=float)
    x = np.asarray(response.solution())
    if seeds_hz is not None and np.size(seeds_hz):
        # a lossless resonance makes the system singular at its pole: those are dropped
        seeds, xs = _solve_at(response.direct(), np.asarray(seeds_hz, dtype=float))
        if seeds.size:
            f = np.concatenate([f, seeds])
            x = np.concatenate([x, xs])
    out = []
    for name, probe in probes:
        with np.errstate(all="ignore"):
            v = probe.values(f, x)
        v = np.where(np.isfinite(v), v, -np.inf)
        k = int(np.argmax(v))
        if math.isfinite(v[k]):
            out.append((name, float(v[k]), float(f[k])))
    return out


def magnification_caution(response: Response, rows: Sequence[LimitResult],
                          seeds_hz: np.ndarray | None = None) -> Caution | None:
    """The caution for parts seeing :data:`MAGNIFICATION_MIN` × the input voltage or more.

    Parts whose voltage a ``[[stress]]`` table already judges are left out (``rows``:
    the spec's judged rows): the stress analysis calls those out itself, with their
    ratings. One caution per spec, naming the largest ratios first.

    Examples
    --------
    >>> from netcheck import read_netlist
    >>> ckt = read_netlist("rlc\\nV1 in 0 AC 1\\nL1 in a 1m\\nC1 a b 10n\\nR1 b 0 10\\n")
    >>> resp = ckt.ac("V1", "b", freqs=[1e4, 50329.2, 1e5])   # f0 = 1/(2π√(LC))
    >>> magnification_caution(resp, ()).message.split(";")[0]   # Q = √(L/C)/R = 31.6
    'C1 sees 31.6× the input voltage at 50.3 kHz, L1 31.6× at 50.3 kHz'
    """
    judged = {r.name for r in rows if r.kind == "stress"}
    high = [m for m in magnifications(response, seeds_hz)
            if m[1] >= MAGNIFICATION_MIN and f"stress: {m[0]} voltage" not in judged]
    if not high:
        return None
    high.sort(key=lambda m: -m[1])
    name, ratio, f = high[0]
    head = f"{name} sees {_times(ratio)} the input voltage at {format_si(f, 'Hz', 3)}"
    others = [f"{n} {_times(r)} at {format_si(at, 'Hz', 3)}" for n, r, at in high[1:_NAMED_MAX]]
    if len(high) > _NAMED_MAX:
        others.append(f"and {len(high) - _NAMED_MAX} more")
    rest = "".join(", " + o for o in others)
    return Caution(VOLTAGE_CAUTION_CODE, f"{head}{rest}; a resonant section holds about Q times its "
                   "input across its reactances: rate these parts for it and confirm by "
                   "measurement.", HAZARD_SEVERITY)


def _times(ratio: float) -> str:
    """A magnification as printed: ``31.6×`` up to 10,000, then ``8.9e+15×`` (a lossless
    section's ratio is rounding, not a number to read digits from)."""
    return f"{ratio:.1f}×" if ratio < 1e4 else f"{ratio:.2g}×"
