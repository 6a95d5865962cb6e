"""The ``notch`` limit kind: frequency, depth, width and Q of a notch (a band-stop dip).

The notch frequency is the true minimum of the gain in the search band (at an exact
transmission zero, the zero itself: the gain there lies at the numerical floor). The
depth is the gain there below a reference: 0 dB, the peak gain of the sweep, the gain at
a frequency, or the mean (in dB) of the gains at two frequencies either side of the
notch. The width is measured between the nearest frequencies below and above the notch
where the gain has risen back to ``level_db`` below the same reference.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, ClassVar

import numpy as np

from .base import (RELATIVE_FLOOR_DB, Limit, Linearised, Probe, Rows, at_floor, band_text,
                   gain_floor_db, judge_range, range_margin)
from .relative import q_bounds, q_text
from ..guard import MIN_FREQUENCY_HZ
from ..reader import SpecReader, Sweep, shown_value
from ...measure.measurements import (HALF_POWER_DB, Extremum, MeasurementFailure, crossing,
                                     gain_db)
from ...result import LimitResult, Status
from ...netlist.units import UnitError, format_eng, format_si, parse_value

if TYPE_CHECKING:  # pragma: no cover
    from ...analyses.sample_probe import BatchProbe
    from ...mna.sensitivity import AdjointSensitivity

__all__ = ["NotchLimit"]

_END_TOL = 1e-12  # a minimum this close (relative) to a band end is at the end


@dataclass(frozen=True, slots=True)
class Notch:
    """A measured notch: its frequency, the gain there and the reference, its edges."""

    f_notch_hz: float
    gain_db: float
    reference_db: float
    f_low_hz: float | None = None
    f_high_hz: float | None = None

    @property
    def width_hz(self) -> float:
        return self.f_high_hz - self.f_low_hz

    @property
    def f_center_hz(self) -> float:
        return math.sqrt(self.f_low_hz * self.f_high_hz)

    @property
    def q(self) -> float:
        return self.f_center_hz / self.width_hz


@dataclass(frozen=True, slots=True)
class NotchLimit(Limit):
    """A notch: its frequency, its depth below a reference, its width and Q at a level."""

    band: tuple[float, float] | None = None
    center: float | None = None
    center_tolerance: float | None = None
    depth: tuple[float | None, float | None] | None = None
    reference: str = "absolute"
    reference_hz: tuple[float, ...] = ()
    level_db: float | None = None
    width: tuple[float | None, float | None] | None = None
    q: tuple[float | None, float | None] | None = None
    q_nominal: tuple[float, float] | None = None

    kind: ClassVar[str] = "notch"
    SUMMARY: ClassVar[str] = "notch frequency, depth below a reference, width and Q at a level"
    METHOD: ClassVar[str] = (
        "true minimum of the exact gain; edges by Brent's root-finding on it"
    )
    KEYS: ClassVar[dict[str, str]] = {
        "band": "[start, stop], Hz: where to look for the notch, the lowest gain in it "
                "(default: the whole sweep)",
        "center": "expected notch frequency, Hz",
        "center_tolerance": "allowed deviation of the notch frequency: '1%', '200ppm', "
                            "'5ppb' or Hz (needs center)",
        "depth_db": "[min, max] depth, dB below the reference (or {min=, max=}); "
                    "{min = 60}, or just 60, asks for a notch at least 60 dB deep",
        "reference": "'absolute' (0 dB, the default), 'peak' (the peak gain of the sweep), "
                     "a frequency (the gain there) or [below, above] (the mean in dB of "
                     "the gains at two frequencies either side of the notch)",
        "level_db": "width measured where the gain is back to this many dB below the "
                    "reference (default: half-power, 10 log10 2 dB)",
        "width": "[min, max] width f_high - f_low at level_db, Hz (or {min=, max=})",
        "q": "[min, max] Q = sqrt(f_low f_high) / width (or {min=, max=}; or {nominal=, "
             "tolerance=}, the tolerance '10%', '5000ppm' or a fraction 0.1)",
    }

    @classmethod
    def from_table(cls, rd: SpecReader, sweep: Sweep, name: str | None, index: int,
                   line: int | None) -> NotchLimit:
        band = rd.band("band", sweep, required=False)
        center = rd.number("center", positive=True)
        tol = rd.percent_or_value("center_tolerance", center or 0.0, MIN_FREQUENCY_HZ, "Hz")
        if tol is not None and center is None:
            rd.fail("center_tolerance", "needs center")
        if center is not None and tol is None:
            rd.fail("center", "give center_tolerance too (e.g. \"1%\" or \"500ppm\")")
        lo, hi = band or (sweep.start_hz, sweep.stop_hz)
        if center is not None and not lo <= center <= hi:
            rd.fail("center", f"{shown_value(rd.raw('center'))} Hz lies outside the band "
                              f"searched for the notch, {band_text((lo, hi))}",
                    code="spec-280")
        raw_depth = rd.raw("depth_db")
        if isinstance(raw_depth, (int, float, str)) and not isinstance(raw_depth, bool):
            depth = (rd.number("depth_db"), None)  # one number: the least depth
        else:
            depth = rd.bounds("depth_db")
        if depth is not None and any(v is not None and v < 0 for v in depth):
            rd.fail("depth_db", "a depth is dB below the reference and may not be negative "
                                "(a notch 60 dB deep is depth_db = {min = 60})",
                    code="spec-280")
        reference, ref_hz = _reference(rd, sweep)
        level = rd.number("level_db", positive=True)
        width = rd.bounds("width", positive=True)
        q, q_nom = q_bounds(rd)
        if level is not None and width is None and q is None:
            rd.fail("level_db", "sets the level of the width: give width or q too",
                    code="spec-280")
        if center is None and depth is None and width is None and q is None:
            rd.fail("", "a notch limit needs center, depth_db, width or q",
                    code="spec-280")
        if ref_hz and center is not None and len(ref_hz) == 2 and \
                not ref_hz[0] < center < ref_hz[1]:
            rd.fail("reference", "the two reference frequencies must lie either side of the "
                                 f"notch (below and above {shown_value(center)} Hz)",
                    code="spec-281")
        return cls(name or "notch", index, line, band, center, tol, depth, reference, ref_hz,
                   level, width, q, q_nom)

    # -------------------------------------------------------------- the measurement

    def _band(self, grid: np.ndarray) -> tuple[float, float]:
        return self.band or (float(grid[0]), float(grid[-1]))

    def _reference_text(self) -> str:
        if self.reference == "absolute":
            return "0 dB"
        if self.reference == "peak":
            return "the peak gain of the sweep"
        if len(self.reference_hz) == 1:
            return f"the gain at {format_si(self.reference_hz[0], 'Hz', 5)}"
        a, b = self.reference_hz
        return (f"the mean in dB of the gains at {format_si(a, 'Hz', 5)} and "
                f"{format_si(b, 'Hz', 5)}")

    def _reference_db(self, probe: Probe) -> float:
        if self.reference == "absolute":
            return 0.0
        if self.reference == "peak":
            return probe.peak().value
        ref = float(np.mean(gain_db(probe.curve, np.array(self.reference_hz))))
        if not np.isfinite(ref):
            raise MeasurementFailure(
                f"the reference, {self._reference_text()}, is not a finite gain (no "
                "transmission there); choose reference frequencies in the pass-band")
        return ref

    def _drop(self) -> float:
        return HALF_POWER_DB if self.level_db is None else self.level_db

    def measure(self, probe: Probe, edges: bool | None = None) -> Notch:
        """The notch in the band (and its edges when a width or Q is judged)."""
        grid = probe.curve.grid_hz
        lo, hi = self._band(grid)
        low = probe.extremes("gain_db", lo, hi)[0]
        f0 = low.frequency_hz
        if f0 <= lo * (1 + _END_TOL) or f0 >= hi * (1 - _END_TOL):
            span = "sweep" if self.band is None else "band"
            raise MeasurementFailure(
                f"the lowest gain in the {span} {band_text((lo, hi))} is at its end "
                f"{format_si(f0, 'Hz', 5)}, so there is no notch inside it; widen or move "
                "the band")
        ref = self._reference_db(probe)
        if edges is None:
            edges = self.width is not None or self.q is not None
        if not edges:
            return Notch(f0, low.value, ref)
        target = ref - self._drop()
        if not low.value < target:
            raise MeasurementFailure(
                f"the notch at {format_si(f0, 'Hz', 5)} ({low.value:.4g} dB) is not "
                f"{self._drop():.4g} dB below the reference ({ref:.4g} dB), so it has no "
                "width at that level")
        found = []
        for limit, way in ((float(grid[0]), "down"), (float(grid[-1]), "up")):
            try:
                found.append(crossing(probe.curve, target, f0, way, limit))
            except MeasurementFailure:
                where = "below" if way == "down" else "above"
                raise MeasurementFailure(
                    f"the gain does not rise back to {target:.4g} dB ({self._drop():.4g} dB "
                    f"below the reference) {where} the notch at {format_si(f0, 'Hz', 5)} "
                    "within the sweep; widen the sweep or lower level_db") from None
        return Notch(f0, low.value, ref, found[0], found[1])

    # -------------------------------------------------------------- nominal judgement

    def judge(self, probe: Probe) -> tuple[LimitResult, ...]:
        try:
            n = self.measure(probe, edges=False)
        except MeasurementFailure as err:
            return tuple(self.error(str(err), u, s) for s, u in self._parts())
        method, out = self.METHOD, []
        where = f"lowest gain in {band_text(self._band(probe.curve.grid_hz))}"
        floor = gain_floor_db(probe, n.f_notch_hz, n.gain_db)
        if self.center is not None:
            dev = abs(n.f_notch_hz - self.center)
            margin = self.center_tolerance - dev
            exact = "; an exact transmission zero" if floor is not None else ""
            out.append(LimitResult(
                f"{self.name}: frequency", self.kind,
                Status.PASS if margin >= 0 else Status.FAIL, n.f_notch_hz,
                self.center - self.center_tolerance, self.center + self.center_tolerance,
                margin, "Hz", n.f_notch_hz,
                f"notch frequency: the {where}{exact}; {self.center_tolerance_text()}",
                method, "", self.index, self.line))
        if self.depth is not None:
            lo_g = None if self.depth[1] is None else -self.depth[1]
            hi_g = None if self.depth[0] is None else -self.depth[0]
            rel = n.gain_db - n.reference_db
            e = Extremum(n.f_notch_hz, rel)
            r = judge_range(f"{self.name}: depth", self.kind, lo_g, hi_g, e, e, "dB",
                            f"gain at the notch re {self._reference_text()} "
                            f"({n.reference_db:.4g} dB); a depth of D dB is a gain of −D dB",
                            method, self.index, self.line)
            if floor is not None:  # an exact zero: the depth is at least the floor's
                r = at_floor(r, floor - n.reference_db, "gain re the reference")
            out.append(r)
        if self.width is not None or self.q is not None:
            try:
                n = self.measure(probe, edges=True)
            except MeasurementFailure as err:
                parts = [p for p in self._parts() if p[0] in ("width", "Q")]
                return (*out, *(self.error(str(err), u, s) for s, u in parts))
            level = f"{self._drop():.4g} dB below {self._reference_text()}"
            edges = (f"edges where the gain is back to {level}: f_low "
                     f"{format_si(n.f_low_hz, 'Hz', 7)}, f_high {format_si(n.f_high_hz, 'Hz', 7)}")
            if self.width is not None:
                e = Extremum(n.f_notch_hz, n.width_hz)
                out.append(judge_range(f"{self.name}: width", self.kind, *self.width, e, e,
                                       "Hz", f"width = f_high − f_low; {edges}", method,
                                       self.index, self.line))
            if self.q is not None:
                e = Extremum(n.f_notch_hz, n.q)
                out.append(judge_range(
                    f"{self.name}: Q", self.kind, *self.q, e, e, "",
                    f"Q = √(f_low·f_high) / width = {format_si(n.f_center_hz, 'Hz', 7)} / "
                    f"{format_si(n.width_hz, 'Hz', 7)}; {edges}{q_text(self.q_nominal)}",
                    method, self.index, self.line))
        return tuple(out)

    def center_tolerance_text(self) -> str:
        return (f"{format_eng(self.center, 'Hz')} ± "
                f"{format_si(self.center_tolerance, 'Hz', 4)} "
                f"({self.center_tolerance / self.center * 1e6:.4g} ppm)")

    def result_names(self) -> tuple[str, ...]:
        return tuple(f"{self.name}: {sub}" for sub, _ in self._parts())

    def _parts(self) -> list[tuple[str, str]]:
        parts = []
        if self.center is not None:
            parts.append(("frequency", "Hz"))
        if self.depth is not None:
            parts.append(("depth", "dB"))
        if self.width is not None:
            parts.append(("width", "Hz"))
        if self.q is not None:
            parts.append(("Q", ""))
        return parts

    # -------------------------------------------------------------- Monte Carlo

    def judge_batch(self, bp: BatchProbe) -> Rows:
        lo, hi = self._band(bp.grid)
        low = bp.band_extremes("gain_db", lo, hi)[0]
        f0 = low.frequency_hz.copy()
        at_end = (f0 <= lo * (1 + _END_TOL)) | (f0 >= hi * (1 - _END_TOL))
        f0[at_end] = np.nan
        if self.reference == "absolute":
            ref = np.zeros(bp.ss.S)
        elif self.reference == "peak":
            ref = bp.peak().value
        else:
            ref = np.mean([bp.at("gain_db", f) for f in self.reference_hz], axis=0)
        rows = []
        if self.center is not None:
            margin = self.center_tolerance - np.abs(f0 - self.center)
            rows.append((f"{self.name}: frequency", f0,
                         np.where(np.isnan(margin), -np.inf, margin)))
        if self.depth is not None:
            # an exact zero in a sample reads as its floor, not −∞ (as in the nominal)
            floor = bp.peak().value + RELATIVE_FLOOR_DB
            rel = np.where(at_end, np.nan, np.maximum(low.value, floor) - ref)
            lo_g = None if self.depth[1] is None else -self.depth[1]
            hi_g = None if self.depth[0] is None else -self.depth[0]
            rows.append((f"{self.name}: depth", *range_margin(lo_g, hi_g, rel, rel)))
        if self.width is not None or self.q is not None:
            target = ref - self._drop()
            start = np.where(np.isnan(f0), bp.grid[0], f0)
            below = ~at_end & (low.value < target)
            f_lo = np.where(below, bp.rise(start, target, "down"), np.nan)
            f_hi = np.where(below, bp.rise(start, target, "up"), np.nan)
            width = f_hi - f_lo
            if self.width is not None:
                rows.append((f"{self.name}: width", *range_margin(*self.width, width, width)))
            if self.q is not None:
                q = np.sqrt(f_lo * f_hi) / width
                rows.append((f"{self.name}: Q", *range_margin(*self.q, q, q)))
        return rows

    # -------------------------------------------------------------- worst case

    def sensitivities(self, probe: Probe, adj: AdjointSensitivity) -> list[Linearised]:
        n = self.measure(probe, edges=False)
        floor = gain_floor_db(probe, n.f_notch_hz, n.gain_db)
        d_ref = self._d_reference(probe, adj)
        out = []
        if self.center is not None:
            d = self._d_notch(adj, n.f_notch_hz, floor is not None)
            out.append(Linearised(f"{self.name}: frequency", n.f_notch_hz, d, n.f_notch_hz, d))
        if self.depth is not None:
            rel = n.gain_db - n.reference_db
            name = f"{self.name}: depth"
            if floor is not None:
                nan = np.full(len(adj.parts), np.nan)
                out.append(Linearised(name, rel, nan, rel, nan, refused=(
                    "the notch is an exact transmission zero (its gain lies at the numerical "
                    "floor): any change of a part moves the zero off the frequency axis and "
                    "sets a finite depth, so the depth has no linearisation; judge it with "
                    "Monte Carlo")))
            else:
                d = adj.extreme("gain_db", n.f_notch_hz) - d_ref
                out.append(Linearised(name, rel, d, rel, d))
        if self.width is not None or self.q is not None:
            n = self.measure(probe, edges=True)
            d_lo = adj.crossing_shift(n.f_low_hz, d_ref)
            d_hi = adj.crossing_shift(n.f_high_hz, d_ref)
            d_w = d_hi - d_lo
            if self.width is not None:
                out.append(Linearised(f"{self.name}: width", n.width_hz, d_w, n.width_hz, d_w))
            if self.q is not None:
                d_fc = n.f_center_hz * 0.5 * (d_lo / n.f_low_hz + d_hi / n.f_high_hz)
                d_q = n.q * (d_fc / n.f_center_hz - d_w / n.width_hz)
                out.append(Linearised(f"{self.name}: Q", n.q, d_q, n.q, d_q))
        return out

    def _d_reference(self, probe: Probe, adj: AdjointSensitivity) -> np.ndarray | float:
        if self.reference == "absolute":
            return 0.0
        if self.reference == "peak":
            return adj.extreme("gain_db", probe.peak().frequency_hz)
        return np.mean([adj.extreme("gain_db", f) for f in self.reference_hz], axis=0)

    @staticmethod
    def _d_notch(adj: AdjointSensitivity, f0: float, exact_zero: bool) -> np.ndarray:
        """∂f_notch/∂ln p: of a minimum of the gain by implicit differentiation of
        ∂ ln|H|/∂f = 0; of an exact zero, the real part of the zero's own move,
        −(p ∂H/∂p)/(∂H/∂f) (the zero leaves the axis, the notch follows its real part)."""
        if not exact_zero:
            return adj.peak_shift(f0)
        for f in (f0, f0 * (1 + 1e-12), f0 * (1 - 1e-12)):  # H exactly 0: step off it
            d = adj.log_derivatives(f)
            with np.errstate(all="ignore"):
                shift = -(d.w_p[0] / d.w_f[0]).real
            if np.all(np.isfinite(shift)):
                return shift
        return shift


def _reference(rd: SpecReader, sweep: Sweep) -> tuple[str, tuple[float, ...]]:
    """The ``reference`` key: 'absolute', 'peak', a frequency or [below, above]."""
    raw: Any = rd.raw("reference", "absolute")
    if raw in ("absolute", "peak"):
        return raw, ()
    values = raw if isinstance(raw, list) else [raw]
    if isinstance(raw, dict) or len(values) not in (1, 2) or any(
            isinstance(v, (bool, list, dict)) for v in values):
        rd.fail("reference", "expected 'absolute', 'peak', a frequency such as \"1k\" or two "
                             f"frequencies [below, above] either side of the notch, got {raw!r}",
                code="spec-281")
    freqs = []
    for v in values:
        try:
            f = parse_value(v, "reference")
        except UnitError:
            f = None
        if f is None or not f > 0:
            rd.fail("reference", f"{v!r} is neither 'absolute', 'peak' nor a frequency > 0",
                    code="spec-281")
        if not sweep.start_hz * (1 - 1e-9) <= f <= sweep.stop_hz * (1 + 1e-9):
            rd.fail("reference", f"{shown_value(v)} Hz lies outside the sweep", code="spec-281")
        freqs.append(min(max(f, sweep.start_hz), sweep.stop_hz))
    if len(freqs) == 2 and not freqs[0] < freqs[1]:
        rd.fail("reference", "give the frequency below the notch first: [below, above]",
                code="spec-281")
    return ("frequency" if len(freqs) == 1 else "sides"), tuple(freqs)
