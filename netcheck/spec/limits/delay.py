"""The ``group_delay`` limit kind: group delay over a band, its bounds and its variation."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, ClassVar

from .base import (Limit, Linearised, Probe, Rows, band_text,
                   judge_range, linearised_range, range_margin)
from ..reader import SpecReader, Sweep
from ...measure.measurements import MeasurementFailure
from ...result import LimitResult, MaskBand, Status

if TYPE_CHECKING:  # pragma: no cover
    from ...analyses.sample_probe import BatchProbe
    from ...mna.sensitivity import AdjointSensitivity

__all__ = ["GroupDelayLimit"]


@dataclass(frozen=True, slots=True)
class GroupDelayLimit(Limit):
    """Group delay over a band: its maximum (and minimum) and its variation."""

    band: tuple[float, float] = (0.0, 0.0)
    max: float | None = None
    min: float | None = None
    max_variation: float | None = None

    kind: ClassVar[str] = "group_delay"
    SUMMARY: ClassVar[str] = "group delay −dφ/dω over a band: max, min and max_variation"
    METHOD: ClassVar[str] = (
        "exact −dφ/dω; band extremes by Brent's bounded minimisation"
    )
    KEYS: ClassVar[dict[str, str]] = {"band": "[start, stop], Hz", "max": "largest delay, s",
                                      "min": "smallest delay, s",
                                      "max_variation": "largest max − min over the band, s"}

    @classmethod
    def from_table(cls, rd: SpecReader, sweep: Sweep, name: str | None, index: int,
                   line: int | None) -> GroupDelayLimit:
        band = rd.band("band", sweep)
        mx, mn, var = rd.number("max"), rd.number("min"), rd.number("max_variation")
        if mx is None and mn is None and var is None:
            rd.fail("", "a group_delay limit needs max, min or max_variation")
        return cls(name or f"group delay {band_text(band)}", index, line, band, mx, mn, var)

    def judge(self, probe: Probe) -> tuple[LimitResult, ...]:
        try:
            vmin, vmax = probe.extremes("group_delay_s", *self.band)
        except MeasurementFailure as err:
            return (self.error(str(err), "s"),)
        out = []
        method = self.METHOD
        if self.max is not None or self.min is not None:
            out.append(judge_range(self.name, self.kind, self.min, self.max, vmin, vmax, "s",
                                   f"group delay −dφ/dω over {band_text(self.band)}", method,
                                   self.index, self.line))
        if self.max_variation is not None:
            var = vmax.value - vmin.value
            margin = self.max_variation - var
            out.append(LimitResult(
                f"{self.name}: variation", self.kind, Status.PASS if margin >= 0 else Status.FAIL,
                var, None, self.max_variation, margin, "s", vmax.frequency_hz,
                f"max − min group delay over {band_text(self.band)}", method, "",
                self.index, self.line))
        return tuple(out)

    def result_names(self) -> tuple[str, ...]:
        names = (self.name,) if self.max is not None or self.min is not None else ()
        return names + ((f"{self.name}: variation",) if self.max_variation is not None else ())

    def mask(self) -> tuple[MaskBand, ...]:
        if self.max is None and self.min is None:
            return ()
        return (MaskBand(self.name, self.band[0], self.band[1], self.min, self.max,
                         "group_delay_s"),)

    def judge_batch(self, bp: BatchProbe) -> Rows:
        vmin, vmax = bp.band_extremes("group_delay_s", *self.band)
        rows = []
        if self.max is not None or self.min is not None:
            rows.append((self.name, *range_margin(self.min, self.max, vmin.value, vmax.value)))
        if self.max_variation is not None:
            var = vmax.value - vmin.value
            rows.append((f"{self.name}: variation", var, self.max_variation - var))
        return rows

    def sensitivities(self, probe: Probe, adj: AdjointSensitivity) -> list[Linearised]:
        vmin, vmax = probe.extremes("group_delay_s", *self.band)
        d_min = adj.extreme("group_delay_s", vmin.frequency_hz)
        d_max = adj.extreme("group_delay_s", vmax.frequency_hz)
        out = []
        if self.max is not None or self.min is not None:
            out.append(linearised_range(self.name, self.min, self.max, vmin.value, d_min,
                                        vmax.value, d_max))
        if self.max_variation is not None:
            var = vmax.value - vmin.value
            out.append(Linearised(f"{self.name}: variation", var, d_max - d_min, var,
                                  d_max - d_min))
        return out
