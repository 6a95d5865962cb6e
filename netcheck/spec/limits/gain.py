"""The ``gain`` limit kind: the true minimum and maximum gain over a band, within bounds."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, ClassVar

from .base import (Limit, Linearised, Probe, Rows, at_floor, band_text, gain_floor_db,
                   judge_range, linearised_range, range_margin)
from ..reader import SpecReader, Sweep
from ...measure.measurements import Extremum, MeasurementFailure
from ...result import LimitResult, MaskBand

if TYPE_CHECKING:  # pragma: no cover
    from ...analyses.sample_probe import BatchProbe
    from ...mna.sensitivity import AdjointSensitivity

__all__ = ["GainLimit"]


@dataclass(frozen=True, slots=True)
class GainLimit(Limit):
    """Gain over a band: the true minimum and maximum over the band, not grid samples."""

    band: tuple[float, float] = (0.0, 0.0)
    min_db: float | None = None
    max_db: float | None = None
    reference: str = "absolute"

    kind: ClassVar[str] = "gain"
    SUMMARY: ClassVar[str] = "gain over a band between min_db and/or max_db (pass-band, stop-band)"
    METHOD: ClassVar[str] = (
        "true band extremes by Brent's root-finding on the exact gain "
        "derivative"
    )
    KEYS: ClassVar[dict[str, str]] = {
        "band": "[start, stop], Hz",
        "min_db": "lowest allowed gain, dB",
        "max_db": "highest allowed gain, dB",
        "reference": "'absolute' (dB re the stimulus) or 'peak' (dB re the peak gain)",
    }

    @classmethod
    def from_table(cls, rd: SpecReader, sweep: Sweep, name: str | None, index: int,
                   line: int | None) -> GainLimit:
        band = rd.band("band", sweep)
        lo, hi = rd.number("min_db"), rd.number("max_db")
        if lo is None and hi is None:
            rd.fail("", "a gain limit needs min_db, max_db or both")
        if lo is not None and hi is not None and lo > hi:
            rd.fail("min_db", f"min_db {lo:g} is above max_db {hi:g}")
        ref = rd.choice("reference", ("absolute", "peak"), "absolute")
        if name is None:
            word = "stop-band gain" if lo is None else "pass-band gain" if hi is None or \
                hi - lo < 20 else "gain"
            name = f"{word} {band_text(band)}"
        return cls(name, index, line, band, lo, hi, ref)

    def judge(self, probe: Probe) -> tuple[LimitResult, ...]:
        try:
            vmin, vmax = probe.extremes("gain_db", *self.band)
            offset = probe.peak().value if self.reference == "peak" else 0.0
        except MeasurementFailure as err:
            return (self.error(str(err), "dB"),)
        vmin = Extremum(vmin.frequency_hz, vmin.value - offset)
        vmax = Extremum(vmax.frequency_hz, vmax.value - offset)
        re = " re the peak gain" if self.reference == "peak" else ""
        which = "minimum and maximum" if self.min_db is not None and self.max_db is not None \
            else "minimum" if self.min_db is not None else "maximum"
        r = judge_range(
            self.name, self.kind, self.min_db, self.max_db, vmin, vmax, "dB",
            f"true {which} of gain{re} over {band_text(self.band)}",
            self.METHOD,
            self.index, self.line)
        # a gain at the numerical floor (an exact transmission zero) is not a number
        floor = gain_floor_db(probe, r.at_hz, r.measured + offset)
        if floor is not None:
            r = at_floor(r, floor - offset, "gain" + re)
        return (r,)

    def judge_batch(self, bp: BatchProbe) -> Rows:
        vmin, vmax = bp.band_extremes("gain_db", *self.band)
        off = bp.peak().value if self.reference == "peak" else 0.0
        measured, margin = range_margin(self.min_db, self.max_db, vmin.value - off,
                                        vmax.value - off)
        return [(self.name, measured, margin)]

    def sensitivities(self, probe: Probe, adj: AdjointSensitivity) -> list[Linearised]:
        vmin, vmax = probe.extremes("gain_db", *self.band)
        off, d_off = 0.0, 0.0
        if self.reference == "peak":
            pk = probe.peak()
            off, d_off = pk.value, adj.extreme("gain_db", pk.frequency_hz)
        return [linearised_range(self.name, self.min_db, self.max_db, vmin.value - off,
                                 adj.extreme("gain_db", vmin.frequency_hz) - d_off,
                                 vmax.value - off,
                                 adj.extreme("gain_db", vmax.frequency_hz) - d_off)]

    def mask(self) -> tuple[MaskBand, ...]:
        return (MaskBand(self.name, self.band[0], self.band[1], self.min_db, self.max_db,
                         "gain_db" if self.reference == "absolute" else "gain_re_peak_db"),)
