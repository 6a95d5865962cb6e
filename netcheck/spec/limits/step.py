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
               "settling_time": ("s", "settling time")}


@dataclass(frozen=True, slots=True)
class StepLimit(Limit):
    """A figure of the step response, between ``min`` and/or ``max``."""

    quantity: str = "overshoot"
    min: float | None = None
    max: float | None = None
    levels: tuple[float, float] = (0.1, 0.9)
    settle_band: float | None = None
    duration: float | None = None

    kind: ClassVar[str] = "step"
    SUMMARY: ClassVar[str] = ("the response to a step: overshoot, undershoot, rise time, "
                              "delay, settling time")
    METHOD: ClassVar[str] = "exact step response from the pole-zero form; Brent refinement"
    KEYS: ClassVar[dict[str, str]] = {
        "quantity": "overshoot (%), undershoot (%), rise_time (s), delay (s) or "
                    "settling_time (s)",
        **BOUND_KEYS,
        "levels": "rise_time: [lo, hi] in % of the final value (default [10, 90])",
        "settle_band": "settling_time: the band around the final value, '0.1%' or a "
                       "fraction",
        "settle_bits": "settling_time: the band as an ADC's half LSB, ±2^-(N+1) of the "
                       "final value, for N bits",
        "duration": "how long to follow the response, s (default: until every pole has "
                    "decayed to e^-12)",
    }

    @classmethod
    def from_table(cls, rd: SpecReader, sweep: Sweep, name: str | None, index: int,
                   line: int | None) -> StepLimit:
        quantity, lo, hi = quantity_and_bounds(rd, tuple(_QUANTITIES), "step")
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

    def _measure(self, probe: Any) -> tuple[float, float, str]:
        """(value, time it is at, definition)."""
        fig = probe.step_figures(self.duration)
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
