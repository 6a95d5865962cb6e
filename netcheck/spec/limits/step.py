"""The ``step`` limit kind: the response to a step of the stimulus — overshoot,
undershoot, rise time, delay and settling time — from the exact step response
(netcheck.mna.step, netcheck.analyses.step_probe)."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, ClassVar

import numpy as np

from .base import (BOUND_KEYS, Limit, Probe, Rows, judge_range, quantity_and_bounds,
                   range_margin)
from ..reader import SpecReader, Sweep
from ...measure.measurements import Extremum, MeasurementFailure
from ...result import LimitResult
from ...netlist.units import format_si

if TYPE_CHECKING:  # pragma: no cover
    from ...analyses.sample_probe import BatchProbe

__all__ = ["StepLimit"]

_QUANTITIES = {"overshoot": ("%", "overshoot"), "undershoot": ("%", "undershoot"),
               "rise_time": ("s", "rise time"), "delay": ("s", "delay"),
               "settling_time": ("s", "settling time"), "mask": ("", "mask")}


@dataclass(frozen=True, slots=True)
class StepLimit(Limit):
    """A figure of the step response, between ``min`` and/or ``max``."""

    quantity: str = "overshoot"
    min: float | None = None
    max: float | None = None
    levels: tuple[float, float] = (0.1, 0.9)
    settle_band: float | None = None
    duration: float | None = None
    #: a mask: (time s, bound in units of the final value) corners, straight between
    min_points: tuple[tuple[float, float], ...] = ()
    max_points: tuple[tuple[float, float], ...] = ()

    kind: ClassVar[str] = "step"
    SUMMARY: ClassVar[str] = ("the response to a step: overshoot, undershoot, rise time, "
                              "delay, settling time")
    METHOD: ClassVar[str] = "exact step response from the pole-zero form; Brent refinement"
    KEYS: ClassVar[dict[str, str]] = {
        "quantity": "overshoot (%), undershoot (%), rise_time (s), delay (s), "
                    "settling_time (s) or mask (the response within min_points and "
                    "max_points)",
        **BOUND_KEYS,
        "levels": "rise_time: [lo, hi] in % of the final value (default [10, 90])",
        "settle_band": "settling_time: the band around the final value, '0.1%' or a "
                       "fraction",
        "settle_bits": "settling_time: the band as an ADC's half LSB, ±2^-(N+1) of the "
                       "final value, for N bits",
        "duration": "how long to follow the response, s (default: until every pole has "
                    "decayed to e^-12)",
        "min_points": "mask: [[t, y], ...] the lowest the response may be, y in units of "
                      "its final value, straight between the points",
        "max_points": "mask: [[t, y], ...] the highest the response may be, the same way",
    }

    @classmethod
    def from_table(cls, rd: SpecReader, sweep: Sweep, name: str | None, index: int,
                   line: int | None) -> StepLimit:
        if rd.raw("quantity") == "mask":
            return cls._mask(rd, name, index, line)
        quantity, lo, hi = quantity_and_bounds(rd, tuple(_QUANTITIES), "step")
        if quantity == "mask":  # pragma: no cover - taken above
            raise AssertionError
        for key in ("min_points", "max_points"):
            if rd.has(key):
                rd.fail(key, "mask points are for quantity = \"mask\"")
        levels = (0.1, 0.9)
        if rd.has("levels"):
            if quantity != "rise_time":
                rd.fail("levels", "levels are for a rise_time")
            raw = rd.raw("levels")
            if not (isinstance(raw, list) and len(raw) == 2):
                rd.fail("levels", "expected [lo, hi] in % of the final value")
            a = rd.number("", value=raw[0], label="levels[0]")
            b = rd.number("", value=raw[1], label="levels[1]")
            if not 0 < a < b < 100:
                rd.fail("levels", f"expected 0 < lo < hi < 100 %, got [{a:g}, {b:g}]")
            levels = (a / 100.0, b / 100.0)
        band = None
        if rd.has("settle_band") and rd.has("settle_bits"):
            rd.fail("settle_bits", "give settle_band or settle_bits, not both")
        if rd.has("settle_band"):
            band = rd.relative("settle_band")
            if band is None or band <= 0:
                rd.fail("settle_band", "must be above 0")
        elif rd.has("settle_bits"):
            bits = rd.number("settle_bits", positive=True)
            if bits != int(bits) or bits > 32:
                rd.fail("settle_bits", f"expected a whole number of bits up to 32, got {bits:g}")
            band = 2.0 ** -(int(bits) + 1)
        if quantity == "settling_time" and band is None:
            rd.fail("settle_band", "missing (required for settling_time): the band around "
                    "the final value ('0.1%', a fraction, or settle_bits)")
        if quantity != "settling_time" and band is not None:
            rd.fail("settle_band" if rd.has("settle_band") else "settle_bits",
                    "a settling band is for a settling_time")
        if band is not None and band >= 1:
            rd.fail("settle_band", f"a band of {band:g} of the final value settles nothing")
        duration = rd.number("duration", positive=True)
        return cls(name or f"step: {_QUANTITIES[quantity][1]}", index, line, quantity, lo,
                   hi, levels, band, duration)

    @classmethod
    def _mask(cls, rd: SpecReader, name: str | None, index: int, line: int | None
              ) -> StepLimit:
        """A mask: the response within min_points and max_points; judged as the margin
        (in units of the final value) at the worst time, ≥ 0 inside."""
        for key in ("min", "max", "levels", "settle_band", "settle_bits"):
            if rd.has(key):
                rd.fail(key, "a mask is judged by its points: drop " + key)
        points = {}
        for key in ("min_points", "max_points"):
            raw = rd.raw(key)
            if raw is None:
                points[key] = ()
                continue
            if not isinstance(raw, list) or len(raw) < 2 or not all(
                    isinstance(p, list) and len(p) == 2 for p in raw):
                rd.fail(key, "expected at least two [t, y] pairs")
            pts = tuple((rd.number("", value=p[0], label=f"{key}[{k}][0]"),
                         rd.number("", value=p[1], label=f"{key}[{k}][1]"))
                        for k, p in enumerate(raw))
            times = [t for t, _ in pts]
            if times[0] < 0 or any(b <= a for a, b in zip(times, times[1:])):
                rd.fail(key, "the times must be at or after 0 and rise from point to point")
            points[key] = pts
        if not points["min_points"] and not points["max_points"]:
            rd.fail("", "a step mask needs min_points, max_points or both")
        duration = rd.number("duration", positive=True)
        return cls(name or "step: mask", index, line, "mask", 0.0, None, (0.1, 0.9), None,
                   duration, points["min_points"], points["max_points"])

    def _measure(self, probe: Any) -> tuple[float, float, str]:
        """(value, time it is at, definition)."""
        fig = probe.step_figures(self.duration)
        if self.quantity == "mask":
            v, t = fig.mask_margin(self.min_points, self.max_points)
            return v, t, ("the response against its mask, in units of the final value; "
                          "the margin at the worst time")
        if self.quantity == "overshoot":
            v, t = fig.overshoot_pct()
            return v, t, "largest excursion beyond the final value, % of it"
        if self.quantity == "undershoot":
            v, t = fig.undershoot_pct()
            return v, t, "largest excursion below zero against the final value, % of it"
        if self.quantity == "rise_time":
            v, t = fig.rise_time(*self.levels)
            lo, hi = (round(100 * x, 6) for x in self.levels)
            return v, t, f"from {lo:g} % to {hi:g} % of the final value"
        if self.quantity == "delay":
            t = fig.crossing(0.5)
            return t, t, "first time at 50 % of the final value"
        v, t = fig.settling_time(self.settle_band)
        return v, t, f"last time outside ±{self.settle_band:.4g} of the final value"

    def judge(self, probe: Probe) -> tuple[LimitResult, ...]:
        unit = _QUANTITIES[self.quantity][0]
        try:
            v, t, definition = self._measure(probe)
        except MeasurementFailure as err:
            return (self.error(str(err), unit),)
        # the result's "at" is a frequency: the time goes into the definition instead
        e = Extremum(None, v)  # type: ignore[arg-type]
        method = f"{self.METHOD} ({probe.step_figures(self.duration).model.method})"
        when = f"; at t = {format_si(t, 's', 5)}" if t else ""
        return (judge_range(self.name, self.kind, self.min, self.max, e, e, unit,
                            definition + when, method, self.index, self.line),)

    def judge_batch(self, bp: BatchProbe) -> Rows:
        """Each sample solved as a circuit of its own (one solve and one pole–zero form
        per sample)."""
        values = []
        for probe in bp.each_sample():
            try:
                values.append(self._measure(probe)[0])
            except MeasurementFailure:
                values.append(np.nan)
        v = np.array(values)
        measured, margin = range_margin(self.min, self.max, v, v)
        return [(self.name, measured, margin)]
