"""Sloped gain masks: a bound that is a straight line in dB over log-frequency, or a
chain of such segments (:class:`Line`), and the true worst point of a gain against it.

Against a segment L(f) = v₁ + s·log10(f/f₁) the worst point is the extreme of
G(f) − L(f), not of G: the nominal search runs on the tilted response
H(f)·(f/f₁)^(−s/20), whose gain is exactly G − s·log10(f/f₁) and whose derivative is
exact too, so the band-extreme search (Brent on the exact derivative) finds it
(:class:`TiltedCurve`). Over Monte Carlo samples the grid, the band ends and each
sample's own gain extreme of the segment are the candidates, refined by golden-section
search in log f (Kiefer 1953). Its sensitivity is that of the gain at the worst point
(envelope theorem: the line does not depend on the parts).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from .base import Probe
from ..reader import SpecReader, Sweep, shown_value
from ...measure.measurements import FunctionCurve, band_extremes
from ...netlist.units import format_eng, format_si

if TYPE_CHECKING:  # pragma: no cover
    from ...analyses.sample_probe import BatchProbe

__all__ = ["Line", "TiltedCurve", "read_line", "worst_nominal", "worst_batch", "band_batch"]

_GOLDEN = (math.sqrt(5.0) - 1.0) / 2.0


@dataclass(frozen=True, slots=True)
class Line:
    """A bound in dB, straight in log f between its vertices (Hz, dB), f increasing."""

    points: tuple[tuple[float, float], ...]

    @property
    def flat(self) -> bool:
        return all(v == self.points[0][1] for _, v in self.points)

    @property
    def band(self) -> tuple[float, float]:
        return self.points[0][0], self.points[-1][0]

    def segments(self) -> list[tuple[float, float, float, float]]:
        """(f₁, v₁, f₂, v₂) of each segment."""
        return [(f1, v1, f2, v2) for (f1, v1), (f2, v2) in zip(self.points, self.points[1:])]

    def value(self, f: Any) -> Any:
        """The bound at ``f`` (Hz; a number or an array), dB."""
        fs = np.log([p[0] for p in self.points])
        vs = [p[1] for p in self.points]
        out = np.interp(np.log(f), fs, vs)
        return float(out) if np.ndim(out) == 0 else out

    def words(self) -> str:
        """``−30.00 dB at 20.00 kHz to −60.00 dB at 40.00 kHz`` (or one value if flat)."""
        if self.flat:
            return format_eng(self.points[0][1], "dB")
        per = [f"{format_eng(v, 'dB')} at {format_si(f, 'Hz', 5)}" for f, v in self.points]
        return ", straight in log f to ".join(per)

    def slope_words(self) -> str:
        """The slope of each segment, dB/decade."""
        return ", ".join(f"{(v2 - v1) / math.log10(f2 / f1):+.4g} dB/decade" if v2 != v1
                         else "flat" for f1, v1, f2, v2 in self.segments())


def read_line(rd: SpecReader, sweep: Sweep, side: str, band: tuple[float, float] | None,
              slope: float | None) -> Line | None:
    """The ``{side}_db`` bound (a number, or [start, stop] values over the band, or a
    number with ``slope_db_per_decade``) or ``{side}_points`` ([[Hz, dB], ...])."""
    key, pkey = f"{side}_db", f"{side}_points"
    if rd.has(key) and rd.has(pkey):
        rd.fail(pkey, f"give {key} or {pkey}, not both", code="spec-262")
    if rd.has(pkey):
        if band is not None:
            rd.fail(pkey, f"{pkey} set their own band (first to last point); leave out band",
                    code="spec-262")
        if slope is not None:
            rd.fail("slope_db_per_decade", f"{pkey} already give every segment's slope",
                    code="spec-262")
        raw = rd.raw(pkey)
        if not isinstance(raw, list) or len(raw) < 2:
            rd.fail(pkey, "expected a list of at least two [frequency, dB] points",
                    code="spec-262")
        pts = []
        for i, item in enumerate(raw):
            if not isinstance(item, list) or len(item) != 2:
                rd.fail(pkey, f"point {i + 1}: expected [frequency, dB], got {item!r}",
                        code="spec-262")
            f = rd.number(pkey, value=item[0], label=f"point {i + 1} frequency", positive=True)
            v = rd.number(pkey, value=item[1], label=f"point {i + 1} dB")
            if pts and f <= pts[-1][0]:
                rd.fail(pkey, f"point {i + 1}: frequency {shown_value(item[0])} is not above "
                        f"the previous point's; list the points from low to high frequency",
                        code="spec-262")
            pts.append((f, v))
        tol = 1e-9
        if pts[0][0] < sweep.start_hz * (1 - tol) or pts[-1][0] > sweep.stop_hz * (1 + tol):
            rd.fail(pkey, f"the points span {shown_value(pts[0][0])}–{shown_value(pts[-1][0])}"
                    f" Hz, outside the sweep {shown_value(sweep.start_hz)}–"
                    f"{shown_value(sweep.stop_hz)} Hz", code="spec-262")
        return Line(tuple(pts))
    if not rd.has(key):
        return None
    raw = rd.raw(key)
    if isinstance(raw, list):
        if len(raw) != 2:
            rd.fail(key, f"expected a number or [value at band start, value at band stop], "
                    f"got {len(raw)} values; for more segments give {pkey} = "
                    "[[frequency, dB], ...]", code="spec-262")
        if band is None:
            rd.fail(key, "a sloped bound [start, stop] needs band", code="spec-262")
        if slope is not None:
            rd.fail("slope_db_per_decade", f"{key} = [start, stop] already gives the slope",
                    code="spec-262")
        a = rd.number(key, value=raw[0], label=f"{key} start")
        b = rd.number(key, value=raw[1], label=f"{key} stop")
        return Line(((band[0], a), (band[1], b)))
    v = rd.number(key)
    if band is None:  # a spot frequency: the caller places it
        return Line(((1.0, v), (2.0, v)))
    if slope is None:
        return Line(((band[0], v), (band[1], v)))
    return Line(((band[0], v), (band[1], v + slope * math.log10(band[1] / band[0]))))


@dataclass(frozen=True, slots=True)
class TiltedCurve:
    """``curve`` times (f/f₀)^(−s/20): its gain is G(f) − s·log10(f/f₀) dB, exactly."""

    curve: Any
    slope_db_per_decade: float
    f0_hz: float

    def as_curve(self) -> FunctionCurve:
        k = self.slope_db_per_decade / 20.0

        def factor(f: np.ndarray) -> np.ndarray:
            return (np.asarray(f, float) / self.f0_hz) ** (-k)

        def transfer(f: np.ndarray) -> np.ndarray:
            return self.curve.transfer(f) * factor(f)

        def dtransfer(f: np.ndarray) -> np.ndarray:
            f = np.asarray(f, float)
            return (self.curve.dtransfer(f) - k / f * self.curve.transfer(f)) * factor(f)

        return FunctionCurve(self.curve.grid_hz, transfer, dtransfer, self.curve.seeds_hz)


def worst_nominal(probe: Probe, line: Line, offset: float, sign: float) -> tuple[float, float]:
    """(f, G(f) − offset) where sign·(G − offset − L) is largest over the line's band:
    sign +1 for an upper bound (the highest excess), −1 for a lower bound."""
    best: tuple[float, float, float] | None = None
    for f1, v1, f2, v2 in line.segments():
        slope = (v2 - v1) / math.log10(f2 / f1)
        if slope == 0.0:
            vmin, vmax = probe.extremes("gain_db", f1, f2)
            e = vmax if sign > 0 else vmin
            f, g = e.frequency_hz, e.value
        else:
            tilted = TiltedCurve(probe.curve, slope, f1).as_curve()
            lo, hi = band_extremes(tilted, "gain_db", f1, f2)
            f = (hi if sign > 0 else lo).frequency_hz
            g = (hi if sign > 0 else lo).value + slope * math.log10(f / f1)
        excess = sign * (g - offset - line.value(f))
        if best is None or excess > best[0]:
            best = (excess, f, g - offset)
    return best[1], best[2]


def worst_batch(bp: "BatchProbe", line: Line, offset: np.ndarray | float, sign: float
                ) -> tuple[np.ndarray, np.ndarray]:
    """Per sample (f, G(f) − offset) at the largest sign·(G − offset − L), as
    :func:`worst_nominal` over the samples."""
    S = bp.ss.S
    best_e = np.full(S, -np.inf)
    best_f, best_g = np.full(S, np.nan), np.full(S, np.nan)
    for f1, v1, f2, v2 in line.segments():
        slope = (v2 - v1) / math.log10(f2 / f1)
        f, g, e = _excess_batch(bp, np.full(S, f1), np.full(S, f2), offset, sign,
                                (f1, v1, slope))
        win = e > best_e
        best_e = np.where(win, e, best_e)
        best_f, best_g = np.where(win, f, best_f), np.where(win, g, best_g)
    return best_f, best_g


def band_batch(bp: "BatchProbe", lo: np.ndarray, hi: np.ndarray, offset: np.ndarray | float,
               sign: float) -> tuple[np.ndarray, np.ndarray]:
    """Per sample (f, G(f) − offset) at the largest sign·G over its own band [lo, hi]
    (a band that moves with a measured frequency); NaN where the band leaves the sweep."""
    f, g, _ = _excess_batch(bp, lo, hi, offset, sign, (1.0, 0.0, 0.0))
    return f, g


def _excess_batch(bp: "BatchProbe", lo: np.ndarray, hi: np.ndarray,
                  offset: np.ndarray | float, sign: float, line: tuple[float, float, float]
                  ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Per sample (f, G − offset, excess) at the largest excess sign·(G − offset − L) over
    [lo, hi] (per sample), L = v₁ + s·log10(f/f₁) given as ``line`` = (f₁, v₁, s).

    Candidates: the grid inside each sample's band, its ends and the sample's own gain
    extreme over the bands (found from its seeds: a narrow peak between grid points);
    the best is refined by golden-section search between its neighbours.
    """
    f1, v1, slope = line
    S, grid = bp.ss.S, bp.grid
    rows = np.arange(S)
    off = np.broadcast_to(np.asarray(offset, float), (S,))
    tol = 1e-9
    ok = (np.isfinite(lo) & np.isfinite(hi) & (lo >= grid[0] * (1 - tol))
          & (hi <= grid[-1] * (1 + tol)) & (hi > lo))
    lo = np.where(ok, np.clip(lo, grid[0], grid[-1]), grid[0])
    hi = np.where(ok, np.clip(hi, grid[0], grid[-1]), grid[-1])

    def excess(f: np.ndarray) -> np.ndarray:
        g = bp.ss.gain_db(f[:, None])[:, 0]
        e = sign * (g - off - (v1 + slope * np.log10(f / f1)))
        return np.where(np.isnan(e), -np.inf, e)

    inside = (grid[None, :] > lo[:, None]) & (grid[None, :] < hi[:, None])
    e_grid = sign * (bp.gain - off[:, None] - (v1 + slope * np.log10(grid / f1)))
    e_grid = np.where(inside & ~np.isnan(e_grid), e_grid, -np.inf)
    k = np.argmax(e_grid, axis=1)
    f_at, e_at = grid[k], e_grid[rows, k]
    for end in (lo, hi):
        e_end = excess(end)
        use = e_end > e_at
        f_at, e_at = np.where(use, end, f_at), np.where(use, e_end, e_at)
    j = np.searchsorted(grid, f_at)
    a = np.maximum(lo, grid[np.maximum(j - 1, 0)])
    b = np.minimum(hi, grid[np.minimum(j + 1, grid.size - 1)])
    ext = bp.band_extremes("gain_db", float(lo.min()), float(hi.max()))
    ext = ext[1 if sign > 0 else 0].frequency_hz
    inside_ext = (ext >= lo) & (ext <= hi)
    e_ext = np.where(inside_ext, excess(np.where(inside_ext, ext, lo)), -np.inf)
    use = e_ext > e_at
    f_at, e_at = np.where(use, ext, f_at), np.where(use, e_ext, e_at)
    a = np.where(use, np.maximum(lo, ext * 0.98), a)
    b = np.where(use, np.minimum(hi, ext * 1.02), b)
    f_ref, e_ref = _golden(excess, a, np.maximum(b, a))
    better = e_ref > e_at
    f_at, e_at = np.where(better, f_ref, f_at), np.where(better, e_ref, e_at)
    g = sign * e_at + v1 + slope * np.log10(f_at / f1)
    nan = ~ok
    return (np.where(nan, np.nan, f_at), np.where(nan, np.nan, g),
            np.where(nan, -np.inf, e_at))


def _golden(fn: Any, a: np.ndarray, b: np.ndarray, iterations: int = 48
            ) -> tuple[np.ndarray, np.ndarray]:
    """Maximum of ``fn`` on [a, b] per sample, golden-section search in log f (Kiefer 1953)."""
    la, lb = np.log(a), np.log(b)
    x1, x2 = lb - _GOLDEN * (lb - la), la + _GOLDEN * (lb - la)
    f1, f2 = fn(np.exp(x1)), fn(np.exp(x2))
    for _ in range(iterations):
        left = f1 > f2
        lb, la = np.where(left, x2, lb), np.where(left, la, x1)
        nx1, nx2 = lb - _GOLDEN * (lb - la), la + _GOLDEN * (lb - la)
        x_new = np.where(left, nx1, nx2)
        f_new = fn(np.exp(x_new))
        f2, f1 = np.where(left, f1, f_new), np.where(left, f_new, f2)
        x2, x1 = np.where(left, x1, nx2), np.where(left, nx1, x2)
    best = np.where(f1 > f2, x1, x2)
    return np.exp(best), np.maximum(f1, f2)

