"""Step-response figures from the exact step response (netcheck.mna.step.StepModel):
overshoot, undershoot, rise time, delay and settling time, each found on a dense time
grid and refined on the exact y(t) (Brent's method: bounded search for the peak,
root-finding for the crossings).

Definitions (common practice, no source): with F the final value H(0),
overshoot = (max y − F)/|F| and undershoot = max(0, −min y · sign F)/|F|, in %; the rise
time from the first crossing of lo·F to the first crossing of hi·F (10 % and 90 % unless
stated); the delay, the first crossing of 0.5·F; the settling time, the last time |y − F|
exceeds the band (a fraction of |F|), or 0 when it never does.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from scipy.optimize import brentq, minimize_scalar

from ..measure.measurements import MeasurementFailure
from ..mna.step import StepModel

__all__ = ["StepFigures", "GRID_POINTS"]

#: points of the time grid the figures are found on before refinement
GRID_POINTS = 4000


class StepFigures:
    """The figures of one step response over [0, ``duration``] (default: until every
    pole has decayed to e^−12)."""

    def __init__(self, response: Any, duration: float | None = None) -> None:
        self.model = StepModel(response)
        end = duration or self.model.settles_by
        if end is None:
            raise MeasurementFailure("the response has no rational form, so how long it "
                                     "takes to settle is not known: give duration")
        self.end = float(end)
        self.t = np.linspace(self.end / GRID_POINTS, self.end, GRID_POINTS)
        self.y = self.model.y(self.t)
        if not np.all(np.isfinite(self.y)):
            raise MeasurementFailure(f"the step response is not known over the whole "
                                     f"{self.end:.4g} s ({self.model.method} reaches only "
                                     "part of it): shorten duration")
        self.final = self.model.final
        if not math.isfinite(self.final) or self.final == 0.0:
            raise MeasurementFailure("the step response settles to 0 (no gain at DC: a "
                                     "high-pass or band-pass), so overshoot, rise and "
                                     "settling relative to the final value are not defined")
        self.sign = 1.0 if self.final > 0 else -1.0
        if not np.any((self.y - 0.9 * self.final) * self.sign >= 0.0):
            raise MeasurementFailure(f"the step response does not reach 90 % of its final "
                                     f"value within {self.end:.4g} s, so its shape is not "
                                     "known over that time: give a longer duration")

    def _y(self, t: float) -> float:
        return float(self.model.y(np.array([t]))[0])

    def _peak(self, sign: float) -> tuple[float, float]:
        """(time, value) of the largest sign·y, refined between grid neighbours."""
        k = int(np.argmax(sign * self.y))
        if k in (0, self.t.size - 1):
            return float(self.t[k]), float(self.y[k])
        got = minimize_scalar(lambda x: -sign * self._y(x), method="bounded",
                              bounds=(float(self.t[k - 1]), float(self.t[k + 1])),
                              options={"xatol": self.end * 1e-12})
        return float(got.x), float(sign * -got.fun)

    def overshoot_pct(self) -> tuple[float, float]:
        t, v = self._peak(self.sign)
        return max(0.0, (v - self.final) * self.sign / abs(self.final)) * 100.0, t

    def undershoot_pct(self) -> tuple[float, float]:
        t, v = self._peak(-self.sign)
        return max(0.0, -v * self.sign / abs(self.final)) * 100.0, t

    def crossing(self, fraction: float) -> float:
        """The first time y reaches ``fraction`` of the final value."""
        level = fraction * self.final
        above = (self.y - level) * self.sign >= 0.0
        k = int(np.argmax(above))
        if not above[k]:
            raise MeasurementFailure(f"the step response does not reach {fraction:.0%} of "
                                     f"its final value within {self.end:.4g} s")
        if k == 0:  # there at the first grid point: a response that jumps at t = 0+
            return 0.0
        return float(brentq(lambda x: self._y(x) - level, float(self.t[k - 1]),
                            float(self.t[k]), xtol=self.end * 1e-14))

    def rise_time(self, lo: float = 0.1, hi: float = 0.9) -> tuple[float, float]:
        t_hi = self.crossing(hi)
        return t_hi - self.crossing(lo), t_hi

    def mask_margin(self, low: Any, high: Any) -> tuple[float, float]:
        """(the least margin of y/F inside the mask, the time it is at): above each
        ``low`` line, below each ``high`` line, both [(t, y/F), ...] straight between
        their points, judged where they are given and on the grid of the response."""
        best_m, best_t = math.inf, 0.0
        for pts, sign in ((low, 1.0), (high, -1.0)):
            if not pts:
                continue
            pt, py = np.array([p[0] for p in pts]), np.array([p[1] for p in pts])
            inside = (self.t >= pt[0]) & (self.t <= min(pt[-1], self.end))
            cand = np.r_[self.t[inside], pt[(pt > 0) & (pt <= self.end)]]
            if not cand.size:
                continue

            def margin(x: float) -> float:
                return sign * (self._y(x) / self.final - float(np.interp(x, pt, py)))

            vals = np.array([margin(float(x)) for x in cand])
            k = int(np.argmin(vals))
            t0, m0 = float(cand[k]), float(vals[k])
            lo = max(float(pt[0]), t0 - self.end / GRID_POINTS)
            hi = min(float(pt[-1]), t0 + self.end / GRID_POINTS)
            if hi > lo:
                got = minimize_scalar(margin, method="bounded", bounds=(lo, hi),
                                      options={"xatol": self.end * 1e-12})
                if got.fun < m0:
                    t0, m0 = float(got.x), float(got.fun)
            if m0 < best_m:
                best_m, best_t = m0, t0
        if not math.isfinite(best_m):
            raise MeasurementFailure("the mask's points lie outside the time the response "
                                     f"is followed for ({self.end:.4g} s): give duration")
        return best_m, best_t

    def settling_time(self, band: float) -> tuple[float, float]:
        """The last time |y − F| exceeds ``band``·|F| (0 when it never does)."""
        outside = np.abs(self.y - self.final) > band * abs(self.final)
        if outside[-1]:
            raise MeasurementFailure(f"the step response is still outside ±{band:.3g} of "
                                     f"its final value at {self.end:.4g} s: give a longer "
                                     "duration")
        if not outside.any():
            return 0.0, 0.0
        k = int(np.flatnonzero(outside)[-1])
        edge = band * abs(self.final)

        def gap(x: float) -> float:
            return abs(self._y(x) - self.final) - edge

        t = float(brentq(gap, float(self.t[k]), float(self.t[k + 1]),
                         xtol=self.end * 1e-14))
        return t, t


#: points of the step response the result keeps for its plot
STEP_POINTS_KEPT = 400


def step_block(limits: Any, probe_of: Any, output_of: Any) -> dict[str, Any] | None:
    """The JSON ``step`` block: the step response of the output the first step limit
    judges (``probe_of(k)`` its probe, ``output_of(k)`` its name or None for the main
    one), over the longest duration its step limits ask for (``STEP_POINTS_KEPT``
    points), its final value and method, and the points those limits measured (the
    overshoot's peak, the rise time's crossings, the delay, the settling time with its
    band)."""
    first = next((k for k, lim in enumerate(limits) if getattr(lim, "kind", "") == "step"),
                 None)
    if first is None:
        return None
    output = output_of(first)
    steps = [lim for k, lim in enumerate(limits)
             if getattr(lim, "kind", "") == "step" and output_of(k) == output]
    probe = probe_of(first)
    durations = [lim.duration for lim in steps if lim.duration]
    try:
        fig = probe.step_figures(max(durations) if durations else None)
    except MeasurementFailure:
        return None
    t = np.linspace(0.0, fig.end, STEP_POINTS_KEPT + 1)[1:]
    y = fig.model.y(t)
    marks: list[dict[str, Any]] = []
    masks = [{"limit": lim.name, "min_points": [list(p) for p in lim.min_points],
              "max_points": [list(p) for p in lim.max_points]}
             for lim in steps if lim.quantity == "mask"]
    for lim in steps:
        try:
            if lim.quantity == "overshoot":
                tp = fig.overshoot_pct()[1]
                marks.append({"limit": lim.name, "what": "peak", "t": tp, "y": fig._y(tp)})
            elif lim.quantity == "rise_time":
                for frac in lim.levels:
                    tc = fig.crossing(frac)
                    marks.append({"limit": lim.name, "what": f"{100 * frac:g} %", "t": tc,
                                  "y": frac * fig.final})
            elif lim.quantity == "delay":
                tc = fig.crossing(0.5)
                marks.append({"limit": lim.name, "what": "50 %", "t": tc,
                              "y": 0.5 * fig.final})
            elif lim.quantity == "mask":
                tw = fig.mask_margin(lim.min_points, lim.max_points)[1]
                marks.append({"limit": lim.name, "what": "mask: least margin", "t": tw,
                              "y": fig._y(tw)})
            elif lim.quantity == "settling_time":
                ts = fig.settling_time(lim.settle_band)[0]
                marks.append({"limit": lim.name, "what": "settled", "t": ts,
                              "y": fig._y(ts) if ts > 0 else fig.final,
                              "band": lim.settle_band})
        except MeasurementFailure:
            continue
    return {"t": [float(x) for x in t], "y": [float(v) for v in y], "final": fig.final,
            "method": fig.model.method, "marks": marks, "output": output, "masks": masks}
