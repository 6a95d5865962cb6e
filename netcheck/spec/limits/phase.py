"""The ``phase`` limit kind: phase over a band, unwrapped from the sweep start."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, ClassVar

from .base import (Limit, Linearised, Probe, Rows, band_text,
                   judge_range, linearised_range, range_margin)
from ..reader import SpecReader, Sweep
from ...measure.measurements import MeasurementFailure
from ...result import LimitResult, MaskBand

if TYPE_CHECKING:  # pragma: no cover
    from ...analyses.sample_probe import BatchProbe
    from ...mna.sensitivity import AdjointSensitivity

__all__ = ["PhaseLimit"]


@dataclass(frozen=True, slots=True)
class PhaseLimit(Limit):
    """Phase over a band within [min, max] degrees (unwrapped from the sweep start)."""

    band: tuple[float, float] = (0.0, 0.0)
    range_deg: tuple[float | None, float | None] = (None, None)

    kind: ClassVar[str] = "phase"
    SUMMARY: ClassVar[str] = "phase over a band within range_deg"
    METHOD: ClassVar[str] = (
        "unwrapped phase; true band extremes by Brent's root-finding"
    )
    KEYS: ClassVar[dict[str, str]] = {"band": "[start, stop], Hz",
                                      "range_deg": "[min, max] phase, degrees"}

    @classmethod
    def from_table(cls, rd: SpecReader, sweep: Sweep, name: str | None, index: int,
                   line: int | None) -> PhaseLimit:
        band = rd.band("band", sweep)
        rng = rd.bounds("range_deg", required=True)
        return cls(name or f"phase {band_text(band)}", index, line, band, rng)

    def judge(self, probe: Probe) -> tuple[LimitResult, ...]:
        try:
            vmin, vmax = probe.extremes("phase_deg", *self.band)
        except MeasurementFailure as err:
            return (self.error(str(err), "deg"),)
        return (judge_range(self.name, self.kind, self.range_deg[0], self.range_deg[1], vmin,
                            vmax, "deg", f"phase over {band_text(self.band)}, unwrapped "
                            "continuously from the start of the sweep",
                            self.METHOD, self.index, self.line),)

    def mask(self) -> tuple[MaskBand, ...]:
        return (MaskBand(self.name, self.band[0], self.band[1], self.range_deg[0],
                         self.range_deg[1], "phase_deg"),)

    def judge_batch(self, bp: BatchProbe) -> Rows:
        vmin, vmax = bp.band_extremes("phase_deg", *self.band)
        return [(self.name, *range_margin(self.range_deg[0], self.range_deg[1], vmin.value,
                                          vmax.value))]

    def sensitivities(self, probe: Probe, adj: AdjointSensitivity) -> list[Linearised]:
        vmin, vmax = probe.extremes("phase_deg", *self.band)
        return [linearised_range(self.name, *self.range_deg, vmin.value,
                                 adj.extreme("phase_deg", vmin.frequency_hz), vmax.value,
                                 adj.extreme("phase_deg", vmax.frequency_hz))]
