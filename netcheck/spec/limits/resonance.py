"""The ``resonance`` limit kind: centre frequency, bandwidth and Q of the main peak."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, ClassVar

import numpy as np

from .base import Limit, Linearised, Probe, Rows, judge_range, range_margin
from .relative import Q_KEY, q_bounds, q_text
from ..guard import MIN_FREQUENCY_HZ
from ..reader import SpecReader, Sweep
from ...measure.measurements import Extremum, MeasurementFailure
from ...result import LimitResult, Status
from ...netlist.units import format_si

if TYPE_CHECKING:  # pragma: no cover
    from ...analyses.sample_probe import BatchProbe
    from ...mna.sensitivity import AdjointSensitivity

__all__ = ["ResonanceLimit"]


@dataclass(frozen=True, slots=True)
class ResonanceLimit(Limit):
    """The main peak: centre frequency, bandwidth at a level below the peak, and Q."""

    center: float | None = None
    center_tolerance: float | None = None
    bandwidth: tuple[float | None, float | None] | None = None
    q: tuple[float | None, float | None] | None = None
    level_db: float | None = None
    band: tuple[float, float] | None = None
    q_nominal: tuple[float, float] | None = None

    kind: ClassVar[str] = "resonance"
    SUMMARY: ClassVar[str] = "centre frequency, half-power bandwidth and Q of the main peak"
    METHOD: ClassVar[str] = (
        "true peak of the exact gain; edges by Brent's root-finding on it"
    )
    KEYS: ClassVar[dict[str, str]] = {
        "center": "expected centre frequency f_center = sqrt(f_low f_high), Hz",
        "center_tolerance": "allowed deviation of the centre: '1%', '20ppm', '5ppb' or Hz "
                            "(needs center)",
        "bandwidth": "[min, max] bandwidth f_high - f_low, Hz (or {min=, max=})",
        "q": Q_KEY,
        "level_db": "edges this many dB below the peak (default: half-power, 10 log10 2 dB)",
        "band": "[start, stop], Hz: where to look for the peak (default: the whole sweep)",
    }

    @classmethod
    def from_table(cls, rd: SpecReader, sweep: Sweep, name: str | None, index: int,
                   line: int | None) -> ResonanceLimit:
        center = rd.number("center", positive=True)
        tol = rd.percent_or_value("center_tolerance", center or 0.0, MIN_FREQUENCY_HZ, "Hz")
        if tol is not None and center is None:
            rd.fail("center_tolerance", "needs center")
        if center is not None and tol is None:
            rd.fail("center", "give center_tolerance too (e.g. \"1%\")")
        bw = rd.bounds("bandwidth", positive=True)
        q, q_nominal = q_bounds(rd)
        level = rd.number("level_db", positive=True)
        band = rd.band("band", sweep, required=False)
        if center is None and bw is None and q is None:
            rd.fail("", "a resonance limit needs center, bandwidth or q")
        return cls(name or "resonance", index, line, center, tol, bw, q, level, band, q_nominal)

    def judge(self, probe: Probe) -> tuple[LimitResult, ...]:
        try:
            res = probe.resonance(self.level_db, self.band)
        except MeasurementFailure as err:
            return tuple(self.error(str(err), u, s) for s, u in self._parts())
        level = "half-power (|H_peak|/√2)" if self.level_db is None else \
            f"{self.level_db:g} dB below the peak"
        edges = (f"edges at {level}: f_low {format_si(res.f_low_hz, 'Hz', 7)}, "
                 f"f_high {format_si(res.f_high_hz, 'Hz', 7)}")
        method = self.METHOD
        out = []
        if self.center is not None:
            dev = abs(res.f_center_hz - self.center)
            margin = self.center_tolerance - dev
            out.append(LimitResult(
                f"{self.name}: centre", self.kind, Status.PASS if margin >= 0 else Status.FAIL,
                res.f_center_hz, self.center - self.center_tolerance,
                self.center + self.center_tolerance, margin, "Hz", res.f_center_hz,
                f"f_center = √(f_low·f_high); {edges}", method, "", self.index, self.line))
        for sub, unit, bounds, value in (("bandwidth", "Hz", self.bandwidth, res.bandwidth_hz),
                                         ("Q", "", self.q, res.q)):
            if bounds is None:
                continue
            e = Extremum(res.f_center_hz, value)
            definition = (f"bandwidth = f_high − f_low; {edges}" if sub == "bandwidth" else
                          f"Q = f_center / bandwidth = {format_si(res.f_center_hz, 'Hz', 7)}"
                          f" / {format_si(res.bandwidth_hz, 'Hz', 7)}{q_text(self.q_nominal)}")
            r = judge_range(f"{self.name}: {sub}", self.kind, bounds[0], bounds[1], e, e, unit,
                            definition, method, self.index, self.line)
            out.append(r)
        return tuple(out)

    def judge_batch(self, bp: BatchProbe) -> Rows:
        res = bp.resonance(self.level_db, self.band)
        rows = []
        if self.center is not None:
            fc = res["f_center_hz"]
            margin = self.center_tolerance - np.abs(fc - self.center)
            rows.append((f"{self.name}: centre", fc, np.where(np.isnan(margin), -np.inf, margin)))
        if self.bandwidth is not None:
            bw = res["bandwidth_hz"]
            rows.append((f"{self.name}: bandwidth", *range_margin(*self.bandwidth, bw, bw)))
        if self.q is not None:
            q = res["q"]
            rows.append((f"{self.name}: Q", *range_margin(*self.q, q, q)))
        return rows

    def sensitivities(self, probe: Probe, adj: AdjointSensitivity) -> list[Linearised]:
        res = probe.resonance(self.level_db, self.band)
        d = adj.resonance(res)
        out = []
        for sub, key, wanted in (("centre", "f_center_hz", self.center),
                                 ("bandwidth", "bandwidth_hz", self.bandwidth),
                                 ("Q", "q", self.q)):
            if wanted is not None:
                v = getattr(res, key)
                out.append(Linearised(f"{self.name}: {sub}", v, d[key], v, d[key]))
        return out

    def result_names(self) -> tuple[str, ...]:
        return tuple(f"{self.name}: {sub}" for sub, _ in self._parts())

    def _parts(self) -> list[tuple[str, str]]:
        parts = []
        if self.center is not None:
            parts.append(("centre", "Hz"))
        if self.bandwidth is not None:
            parts.append(("bandwidth", "Hz"))
        if self.q is not None:
            parts.append(("Q", ""))
        return parts
