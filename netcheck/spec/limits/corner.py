"""The ``corner`` limit kind: where the gain falls a level below the pass-band reference."""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import TYPE_CHECKING, ClassVar

from .base import Limit, Linearised, Probe, Rows, judge_range, range_margin
from .reference import MEASURED, MEASURED_REFERENCE_KEYS, GainReference
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
    ref: GainReference = GainReference("peak")

    def __post_init__(self) -> None:
        if self.reference_db is not None and self.ref.kind == "peak":
            object.__setattr__(self, "ref", GainReference("fixed", fixed_db=self.reference_db))

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
        "reference_db": "pass-band reference gain as a stated number, dB (default: the "
                        "peak gain of the sweep)",
        **MEASURED_REFERENCE_KEYS,
    }

    @classmethod
    def from_table(cls, rd: SpecReader, sweep: Sweep, name: str | None, index: int,
                   line: int | None) -> CornerLimit:
        rng = rd.bounds("range", positive=True, required=True)
        level = rd.number("level_db", positive=True)
        side = rd.choice("side", ("auto", "high", "low"), "auto")
        fixed = rd.number("reference_db")
        given = [k for k in ("reference", "reference_band", "reference_at") if rd.has(k)]
        if fixed is not None and given:
            rd.fail(given[0], f"give reference_db (a stated level) or {given[0]} (a measured "
                    "one), not both", code="spec-260")
        ref = GainReference.read(rd, sweep, "peak", MEASURED)
        return cls(name or f"corner ({'half-power' if level is None else f'-{level:g} dB'})",
                   index, line, rng, level, side, fixed, ref)

    def _ref_words(self) -> str:
        if self.ref.kind == "fixed":
            return format_eng(self.ref.fixed_db, "dB")
        return self.ref.words()

    def judge(self, probe: Probe) -> tuple[LimitResult, ...]:
        try:
            ref_db = self.ref.corner_reference(probe)
            f = probe.corner(self.level_db, ref_db, self.side)
        except MeasurementFailure as err:
            return (self.error(str(err), "Hz"),)
        e = Extremum(f, f)
        level = "half-power" if self.level_db is None else f"{self.level_db:g} dB"
        r = judge_range(self.name, self.kind, self.range[0], self.range[1], e, e, "Hz",
                        f"frequency where gain is {level} below {self._ref_words()}"
                        + ("" if ref_db is None or self.ref.kind == "fixed" else
                           f" ({format_eng(ref_db, 'dB')})"),
                        self.METHOD, self.index, self.line)
        if ref_db is not None and self.ref.kind != "fixed":
            r = replace(r, reference_db=ref_db, message=self.ref.note(self.ref.measure(probe)))
        return (r,)

    def judge_batch(self, bp: BatchProbe) -> Rows:
        f = bp.corner(self.level_db, self.ref.corner_batch(bp), self.side)
        return [(self.name, *range_margin(self.range[0], self.range[1], f, f))]

    def sensitivities(self, probe: Probe, adj: AdjointSensitivity) -> list[Linearised]:
        f = probe.corner(self.level_db, self.ref.corner_reference(probe), self.side)
        d = adj.crossing_shift(f, self.ref.derivative(probe, adj))
        return [Linearised(self.name, f, d, f, d)]
