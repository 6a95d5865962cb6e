"""The ``corner`` limit kind: where the gain falls a level below the pass-band reference."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, ClassVar

from .base import Limit, Linearised, Probe, Rows, judge_range, range_margin
from ..reader import SpecReader, Sweep
from ...measure.measurements import Extremum, MeasurementFailure
from ...result import LimitResult
from ...netlist.units import format_eng

if TYPE_CHECKING:  # pragma: no cover
    from ...analyses.sample_probe import BatchProbe
    from ...mna.sensitivity import AdjointSensitivity

__all__ = ["CornerLimit"]


@dataclass(frozen=True, slots=True)
class CornerLimit(Limit):
    """A low- or high-pass edge: where gain falls level_db below the pass-band reference."""

    range: tuple[float | None, float | None] = (None, None)
    level_db: float | None = None
    side: str = "auto"
    reference_db: float | None = None

    kind: ClassVar[str] = "corner"
    SUMMARY: ClassVar[str] = "frequency where gain falls level_db below the pass-band, in a range"
    METHOD: ClassVar[str] = (
        "first crossing from the peak; Brent's root-finding on the exact "
        "gain"
    )
    KEYS: ClassVar[dict[str, str]] = {
        "range": "[min, max] allowed corner frequency, Hz",
        "level_db": "drop below the reference, dB (default: half-power, 10 log10 2 dB)",
        "side": "'auto', 'high' (edge above the pass-band: low-pass) or 'low' (high-pass)",
        "reference_db": "pass-band reference gain, dB (default: the peak gain of the sweep)",
    }

    @classmethod
    def from_table(cls, rd: SpecReader, sweep: Sweep, name: str | None, index: int,
                   line: int | None) -> CornerLimit:
        rng = rd.bounds("range", positive=True, required=True)
        level = rd.number("level_db", positive=True)
        side = rd.choice("side", ("auto", "high", "low"), "auto")
        ref = rd.number("reference_db")
        return cls(name or f"corner ({'half-power' if level is None else f'-{level:g} dB'})",
                   index, line, rng, level, side, ref)

    def judge(self, probe: Probe) -> tuple[LimitResult, ...]:
        try:
            f = probe.corner(self.level_db, self.reference_db, self.side)
        except MeasurementFailure as err:
            return (self.error(str(err), "Hz"),)
        e = Extremum(f, f)
        level = "half-power" if self.level_db is None else f"{self.level_db:g} dB"
        ref = "the peak gain" if self.reference_db is None else format_eng(self.reference_db, "dB")
        return (judge_range(self.name, self.kind, self.range[0], self.range[1], e, e, "Hz",
                            f"frequency where gain is {level} below {ref}",
                            self.METHOD, self.index, self.line),)

    def judge_batch(self, bp: BatchProbe) -> Rows:
        f = bp.corner(self.level_db, self.reference_db, self.side)
        return [(self.name, *range_margin(self.range[0], self.range[1], f, f))]

    def sensitivities(self, probe: Probe, adj: AdjointSensitivity) -> list[Linearised]:
        f = probe.corner(self.level_db, self.reference_db, self.side)
        d_level = adj.extreme("gain_db", probe.peak().frequency_hz) \
            if self.reference_db is None else 0.0
        d = adj.crossing_shift(f, d_level)
        return [Linearised(self.name, f, d, f, d)]
