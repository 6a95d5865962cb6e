"""The ``ripple`` limit kind: maximum minus minimum gain over a band."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, ClassVar

from .base import Limit, Linearised, Probe, Rows, band_text
from ..reader import SpecReader, Sweep
from ...measure.measurements import MeasurementFailure
from ...result import LimitResult, Status
from ...netlist.units import format_eng, format_si

if TYPE_CHECKING:  # pragma: no cover
    from ...analyses.sample_probe import BatchProbe
    from ...mna.sensitivity import AdjointSensitivity

__all__ = ["RippleLimit"]


@dataclass(frozen=True, slots=True)
class RippleLimit(Limit):
    """Ripple: maximum minus minimum gain over a band."""

    band: tuple[float, float] = (0.0, 0.0)
    max_db: float = 0.0

    kind: ClassVar[str] = "ripple"
    SUMMARY: ClassVar[str] = "max minus min gain over a band, at most max_db"
    METHOD: ClassVar[str] = (
        "highest minus lowest of the true band extremes of the gain"
    )
    KEYS: ClassVar[dict[str, str]] = {"band": "[start, stop], Hz",
                                      "max_db": "largest allowed ripple, dB"}

    @classmethod
    def from_table(cls, rd: SpecReader, sweep: Sweep, name: str | None, index: int,
                   line: int | None) -> RippleLimit:
        band = rd.band("band", sweep)
        mx = rd.number("max_db", required=True)
        if mx < 0:
            rd.fail("max_db", "ripple limit must not be negative")
        return cls(name or f"ripple {band_text(band)}", index, line, band, mx)

    def judge(self, probe: Probe) -> tuple[LimitResult, ...]:
        try:
            vmin, vmax = probe.extremes("gain_db", *self.band)
            value = vmax.value - vmin.value
        except MeasurementFailure as err:
            return (self.error(str(err), "dB"),)
        margin = self.max_db - value
        return (LimitResult(self.name, self.kind, Status.PASS if margin >= 0 else Status.FAIL,
                            value, None, self.max_db, margin, "dB", vmin.frequency_hz,
                            f"maximum minus minimum gain over {band_text(self.band)} (max "
                            f"{format_eng(vmax.value, 'dB')} at {format_si(vmax.frequency_hz, 'Hz')}, "
                            f"min {format_eng(vmin.value, 'dB')} at {format_si(vmin.frequency_hz, 'Hz')})",
                            self.METHOD,
                            "", self.index, self.line),)

    def judge_batch(self, bp: BatchProbe) -> Rows:
        value = bp.ripple(*self.band)
        return [(self.name, value, self.max_db - value)]

    def sensitivities(self, probe: Probe, adj: AdjointSensitivity) -> list[Linearised]:
        vmin, vmax = probe.extremes("gain_db", *self.band)
        value = vmax.value - vmin.value
        d = adj.extreme("gain_db", vmax.frequency_hz) - adj.extreme("gain_db", vmin.frequency_hz)
        return [Linearised(self.name, value, d, value, d)]
