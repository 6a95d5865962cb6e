"""The ``group_delay`` limit kind: group delay over a band, its bounds and its variation."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, ClassVar

import numpy as np

from .base import (Limit, Linearised, Probe, Rows, band_text,
                   judge_range, linearised_range, range_margin)
from ..reader import SpecReader, Sweep
from ...measure.measurements import MeasurementFailure
from ...result import LimitResult, MaskBand, Status
from ...measure.measurements import group_delay_s
from ...netlist.units import UnitError, format_eng, format_si, relative_unit

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
    #: max_variation given as a fraction of the delay at ``reference_hz`` ('5%', '2000ppm')
    variation_fraction: float | None = None
    reference_hz: float | None = None

    kind: ClassVar[str] = "group_delay"
    SUMMARY: ClassVar[str] = "group delay −dφ/dω over a band: max, min and max_variation"
    METHOD: ClassVar[str] = (
        "exact −dφ/dω; band extremes by Brent's bounded minimisation"
    )
    KEYS: ClassVar[dict[str, str]] = {
        "band": "[start, stop], Hz", "max": "largest delay, s", "min": "smallest delay, s",
        "max_variation": "largest max − min over the band, s; or relative to the delay at "
                         "reference_hz: '5%', '2000ppm'",
        "reference_hz": "where the reference delay of a relative max_variation is taken, Hz "
                        "(default: the start of the sweep, the low-frequency delay)",
    }

    @classmethod
    def from_table(cls, rd: SpecReader, sweep: Sweep, name: str | None, index: int,
                   line: int | None) -> GroupDelayLimit:
        band = rd.band("band", sweep)
        mx, mn = rd.number("max"), rd.number("min")
        raw, frac = rd.raw("max_variation"), None
        try:
            relative = relative_unit(raw) if isinstance(raw, str) else None
        except UnitError as err:
            rd.fail("max_variation", str(err))
        if relative is not None:
            frac, var = rd.relative("max_variation"), None
            if not frac > 0:
                rd.fail("max_variation", f"must be > 0, got {raw!r}", code="spec-284")
        else:
            var = rd.number("max_variation")
        ref = rd.number("reference_hz", positive=True)
        if ref is not None:
            if frac is None:
                rd.fail("reference_hz", "sets the reference of a relative max_variation "
                                        "('5%', '2000ppm'); max_variation is not relative",
                        code="spec-284")
            if not sweep.start_hz * (1 - 1e-9) <= ref <= sweep.stop_hz * (1 + 1e-9):
                rd.fail("reference_hz", f"{ref:g} Hz lies outside the sweep", code="spec-284")
            ref = min(max(ref, sweep.start_hz), sweep.stop_hz)
        elif frac is not None:
            ref = sweep.start_hz
        if mx is None and mn is None and var is None and frac is None:
            rd.fail("", "a group_delay limit needs max, min or max_variation")
        return cls(name or f"group delay {band_text(band)}", index, line, band, mx, mn, var,
                   frac, ref)


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
        elif self.variation_fraction is not None:  # a ratio to the reference delay
            tau_ref = float(group_delay_s(probe.curve, self.reference_hz))
            var = vmax.value - vmin.value
            ratio = var / tau_ref
            margin = self.variation_fraction - ratio
            out.append(LimitResult(
                f"{self.name}: variation", self.kind, Status.PASS if margin >= 0 else Status.FAIL,
                ratio, None, self.variation_fraction, margin, "", vmax.frequency_hz,
                f"(max − min group delay over {band_text(self.band)}) / delay at "
                f"{format_si(self.reference_hz, 'Hz', 5)}: {format_eng(var, 's')} / "
                f"{format_eng(tau_ref, 's')} = {ratio * 100:.4g} %; allowed "
                f"{self.variation_fraction * 100:.4g} %", method, "", self.index, self.line))
        return tuple(out)

    def result_names(self) -> tuple[str, ...]:
        names = (self.name,) if self.max is not None or self.min is not None else ()
        varies = self.max_variation is not None or self.variation_fraction is not None
        return names + ((f"{self.name}: variation",) if varies else ())

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
        elif self.variation_fraction is not None:  # each sample against its own reference
            ratio = (vmax.value - vmin.value) / bp.at("group_delay_s", self.reference_hz)
            margin = self.variation_fraction - ratio
            rows.append((f"{self.name}: variation", ratio,
                         np.where(np.isnan(margin), -np.inf, margin)))
        return rows

    def sensitivities(self, probe: Probe, adj: AdjointSensitivity) -> list[Linearised]:
        vmin, vmax = probe.extremes("group_delay_s", *self.band)
        d_min = adj.extreme("group_delay_s", vmin.frequency_hz)
        d_max = adj.extreme("group_delay_s", vmax.frequency_hz)
        out = []
        if self.max is not None or self.min is not None:
            out.append(linearised_range(self.name, self.min, self.max, vmin.value, d_min,
                                        vmax.value, d_max))
        if self.max_variation is not None or self.variation_fraction is not None:
            var = vmax.value - vmin.value
            d = d_max - d_min
            if self.variation_fraction is not None:  # the ratio var / τ_ref
                tau_ref = float(group_delay_s(probe.curve, self.reference_hz))
                var = var / tau_ref
                d = (d - var * adj.extreme("group_delay_s", self.reference_hz)) / tau_ref
            out.append(Linearised(f"{self.name}: variation", var, d, var, d))
        return out
