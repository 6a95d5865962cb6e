"""The ``shape_factor`` limit kind: the bandwidth at a deep level over the bandwidth at
a shallow one (60 dB over 6 dB, as a datasheet states a band-pass filter's skirts)."""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING, ClassVar

from .base import Limit, Linearised, Probe, Rows, judge_range, range_margin
from .reference import (MEASURED, MEASURED_REFERENCE_KEYS, GainReference, edges, edges_batch,
                        edges_derivative, level_words)
from ..reader import SpecReader, Sweep
from ...measure.measurements import Extremum, MeasurementFailure
from ...netlist.units import format_si
from ...result import LimitResult

if TYPE_CHECKING:  # pragma: no cover
    from ...analyses.sample_probe import BatchProbe
    from ...mna.sensitivity import AdjointSensitivity

__all__ = ["ShapeFactorLimit"]


@dataclass(frozen=True, slots=True)
class ShapeFactorLimit(Limit):
    """BW(wide level) / BW(narrow level), both below the same reference, within ``range``."""

    range: tuple[float | None, float | None] = (None, None)
    levels_db: tuple[float, float] = (6.0, 60.0)
    ref: GainReference = GainReference("peak")

    kind: ClassVar[str] = "shape_factor"
    SUMMARY: ClassVar[str] = ("bandwidth at the deeper level over bandwidth at the shallower "
                              "(e.g. 60 dB / 6 dB), in a range")
    METHOD: ClassVar[str] = "four edges by Brent's root-finding on the exact gain"
    KEYS: ClassVar[dict[str, str]] = {
        "range": "[min, max] allowed shape factor (a ratio, ≥ 1; or {min=, max=})",
        "levels_db": "[shallow, deep] levels below the reference, dB (e.g. [6, 60])",
        **MEASURED_REFERENCE_KEYS,
    }

    @classmethod
    def from_table(cls, rd: SpecReader, sweep: Sweep, name: str | None, index: int,
                   line: int | None) -> ShapeFactorLimit:
        rng = rd.bounds("range", positive=True, required=True)
        levels = rd.bounds("levels_db", positive=True, required=True,
                           ends=("shallow", "deep"))
        if levels[0] is None or levels[1] is None or not levels[0] < levels[1]:
            rd.fail("levels_db", "expected [shallow, deep] levels in dB, the deeper one "
                    "larger (e.g. [6, 60])", code="spec-264")
        ref = GainReference.read(rd, sweep, "peak", MEASURED)
        return cls(name or f"shape factor {levels[1]:g} dB / {levels[0]:g} dB", index, line,
                   rng, (levels[0], levels[1]), ref)

    def judge(self, probe: Probe) -> tuple[LimitResult, ...]:
        try:
            n_lo, n_hi = edges(probe, self.ref, self.levels_db[0])
            w_lo, w_hi = edges(probe, self.ref, self.levels_db[1])
            measured = self.ref.measure(probe)
            ref_db = measured.value
        except MeasurementFailure as err:
            return (self.error(str(err)),)
        sf = (w_hi - w_lo) / (n_hi - n_lo)
        e = Extremum(math.sqrt(n_lo * n_hi), sf)
        hz = lambda f: format_si(f, "Hz", 7)  # noqa: E731
        r = judge_range(
            self.name, self.kind, *self.range, e, e, "",
            f"shape factor = BW({level_words(self.levels_db[1], self.ref)}) / "
            f"BW({self.levels_db[0]:g} dB below it) = ({hz(w_hi)} − {hz(w_lo)}) / "
            f"({hz(n_hi)} − {hz(n_lo)})", self.METHOD, self.index, self.line)
        return (replace(r, reference_db=ref_db, message=self.ref.note(measured))
                if self.ref.kind != "peak" else r,)

    def judge_batch(self, bp: BatchProbe) -> Rows:
        n_lo, n_hi = edges_batch(bp, self.ref, self.levels_db[0])
        w_lo, w_hi = edges_batch(bp, self.ref, self.levels_db[1])
        sf = (w_hi - w_lo) / (n_hi - n_lo)
        return [(self.name, *range_margin(*self.range, sf, sf))]

    def sensitivities(self, probe: Probe, adj: AdjointSensitivity) -> list[Linearised]:
        n_lo, n_hi = edges(probe, self.ref, self.levels_db[0])
        w_lo, w_hi = edges(probe, self.ref, self.levels_db[1])
        dn_lo, dn_hi = edges_derivative(probe, adj, self.ref, self.levels_db[0])
        dw_lo, dw_hi = edges_derivative(probe, adj, self.ref, self.levels_db[1])
        bw_n, bw_w = n_hi - n_lo, w_hi - w_lo
        sf = bw_w / bw_n
        d = sf * ((dw_hi - dw_lo) / bw_w - (dn_hi - dn_lo) / bw_n)
        return [Linearised(self.name, sf, d, sf, d)]
