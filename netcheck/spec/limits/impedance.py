"""The ``impedance`` limit kind: magnitude of the input impedance over a band."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, ClassVar

from .base import (Limit, Linearised, Probe, Rows, band_text,
                   judge_range, linearised_range, range_margin)
from ..reader import SpecReader, Sweep
from ...measure.measurements import Extremum, MeasurementFailure
from ...result import LimitResult

if TYPE_CHECKING:  # pragma: no cover
    from ...analyses.sample_probe import BatchProbe
    from ...mna.sensitivity import AdjointSensitivity

__all__ = ["ImpedanceLimit"]


@dataclass(frozen=True, slots=True)
class ImpedanceLimit(Limit):
    """Magnitude of the input impedance seen by the stimulus, over a band."""

    band: tuple[float, float] = (0.0, 0.0)
    range: tuple[float | None, float | None] = (None, None)

    kind: ClassVar[str] = "impedance"
    SUMMARY: ClassVar[str] = "input impedance magnitude seen by the source, over a band"
    METHOD: ClassVar[str] = (
        "|Z_in| by direct solves; true band extremes by Brent's "
        "root-finding"
    )
    KEYS: ClassVar[dict[str, str]] = {"band": "[start, stop], Hz",
                                      "range": "[min, max] |Z|, ohms"}

    @classmethod
    def from_table(cls, rd: SpecReader, sweep: Sweep, name: str | None, index: int,
                   line: int | None) -> ImpedanceLimit:
        band = rd.band("band", sweep)
        rng = rd.bounds("range", positive=True, required=True)
        return cls(name or f"input impedance {band_text(band)}", index, line, band, rng)

    def judge(self, probe: Probe) -> tuple[LimitResult, ...]:
        try:
            zmin, zmax = probe.extremes("impedance_db", *self.band)
        except MeasurementFailure as err:
            return (self.error(str(err), "Ω"),)
        to_ohm = lambda e: Extremum(e.frequency_hz, 10.0 ** (e.value / 20.0))  # noqa: E731
        return (judge_range(self.name, self.kind, self.range[0], self.range[1], to_ohm(zmin),
                            to_ohm(zmax), "Ω", f"|Z_in| seen by the stimulus over "
                            f"{band_text(self.band)}", self.METHOD, self.index, self.line),)

    def judge_batch(self, bp: BatchProbe) -> Rows:
        zmin, zmax = bp.band_extremes("impedance_db", *self.band)
        return [(self.name, *range_margin(self.range[0], self.range[1],
                                          10.0 ** (zmin.value / 20.0), 10.0 ** (zmax.value / 20.0)))]

    def sensitivities(self, probe: Probe, adj: AdjointSensitivity) -> list[Linearised]:
        zmin, zmax = probe.extremes("impedance_db", *self.band)
        return [linearised_range(self.name, *self.range, 10.0 ** (zmin.value / 20.0),
                                 adj.extreme("impedance_ohm", zmin.frequency_hz),
                                 10.0 ** (zmax.value / 20.0),
                                 adj.extreme("impedance_ohm", zmax.frequency_hz))]
