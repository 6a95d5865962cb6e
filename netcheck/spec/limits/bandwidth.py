"""The ``bandwidth`` limit kind: the width between the two edges at a stated level.

The edges are the first frequencies either side of the peak where the gain falls
``level_db`` below the reference (the peak, or a named pass-band level, as
:mod:`.reference` gives it): the bandwidth at 6 dB, at 40 dB, at any level.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING, ClassVar

from .base import Limit, Linearised, Probe, Rows, judge_range, range_margin
from .reference import (MEASURED, MEASURED_REFERENCE_KEYS, GainReference, edges, edges_batch,
                        edges_derivative, level_words)
from ..reader import SpecReader, Sweep
from ...measure.measurements import Extremum, MeasurementFailure
from ...netlist.units import format_eng, format_si
from ...result import LimitResult

if TYPE_CHECKING:  # pragma: no cover
    from ...analyses.sample_probe import BatchProbe
    from ...mna.sensitivity import AdjointSensitivity

__all__ = ["BandwidthLimit"]


@dataclass(frozen=True, slots=True)
class BandwidthLimit(Limit):
    """f_high − f_low at ``level_db`` below the reference, within ``range``."""

    range: tuple[float | None, float | None] = (None, None)
    level_db: float | None = None
    ref: GainReference = GainReference("peak")

    kind: ClassVar[str] = "bandwidth"
    SUMMARY: ClassVar[str] = ("width between the two edges level_db below the pass-band "
                              "reference (6 dB, 40 dB, any level), in a range")
    METHOD: ClassVar[str] = "both edges by Brent's root-finding on the exact gain"
    KEYS: ClassVar[dict[str, str]] = {
        "range": "[min, max] allowed bandwidth f_high - f_low, Hz (or {min=, max=})",
        "level_db": "the edges' level below the reference, dB (default: half-power)",
        **MEASURED_REFERENCE_KEYS,
    }

    @classmethod
    def from_table(cls, rd: SpecReader, sweep: Sweep, name: str | None, index: int,
                   line: int | None) -> BandwidthLimit:
        rng = rd.bounds("range", positive=True, required=True)
        level = rd.number("level_db", positive=True)
        ref = GainReference.read(rd, sweep, "peak", MEASURED)
        word = "half-power" if level is None else f"{level:g} dB"
        return cls(name or f"bandwidth ({word})", index, line, rng, level, ref)

    def judge(self, probe: Probe) -> tuple[LimitResult, ...]:
        try:
            lo, hi = edges(probe, self.ref, self.level_db)
            measured = self.ref.measure(probe)
            ref_db = measured.value
        except MeasurementFailure as err:
            return (self.error(str(err), "Hz"),)
        bw = hi - lo
        e = Extremum(math.sqrt(lo * hi), bw)
        r = judge_range(self.name, self.kind, *self.range, e, e, "Hz",
                        f"bandwidth = f_high − f_low, edges {level_words(self.level_db, self.ref)}"
                        f" ({format_eng(ref_db, 'dB')}): f_low {format_si(lo, 'Hz', 7)}, "
                        f"f_high {format_si(hi, 'Hz', 7)}", self.METHOD, self.index, self.line)
        return (replace(r, reference_db=ref_db, message=self.ref.note(measured))
                if self.ref.kind != "peak" else r,)

    def judge_batch(self, bp: BatchProbe) -> Rows:
        lo, hi = edges_batch(bp, self.ref, self.level_db)
        bw = hi - lo
        return [(self.name, *range_margin(*self.range, bw, bw))]

    def sensitivities(self, probe: Probe, adj: AdjointSensitivity) -> list[Linearised]:
        lo, hi = edges(probe, self.ref, self.level_db)
        d_lo, d_hi = edges_derivative(probe, adj, self.ref, self.level_db)
        bw, d = hi - lo, d_hi - d_lo
        return [Linearised(self.name, bw, d, bw, d)]
