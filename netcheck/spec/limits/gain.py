"""The ``gain`` limit kind: the gain over a band, or at one frequency, within bounds.

A band is judged by its true minimum and maximum (not grid samples); a bound may be
sloped, straight in dB over log-frequency (:mod:`.sloped`). The frequency may be a spot
(``at``) or a multiple of a measured corner or centre (``at_multiple``), and the gain
may be stated relative to a reference the spec names (:mod:`.reference`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, ClassVar

import numpy as np

from .base import (Limit, Linearised, Probe, Rows, at_floor, band_text, gain_floor_db,
                   range_margin)
from .reference import ANCHOR_KEYS, REFERENCE_KEYS, Anchor, GainReference, spot_frequency
from .sloped import Line, band_batch, read_line, worst_batch, worst_nominal
from ..reader import SpecReader, Sweep
from ...measure.measurements import MeasurementFailure, gain_db
from ...netlist.units import format_si
from ...result import LimitResult, MaskBand, Status

if TYPE_CHECKING:  # pragma: no cover
    from ...analyses.sample_probe import BatchProbe
    from ...mna.sensitivity import AdjointSensitivity

__all__ = ["GainLimit"]

_DB = 20.0 / math.log(10.0)


@dataclass(frozen=True, slots=True)
class GainLimit(Limit):
    """Gain over a band (true extremes) or at a spot frequency, against flat or sloped
    bounds, absolute or relative to a named reference."""

    band: tuple[float, float] | None = (0.0, 0.0)
    min_db: float | None = None
    max_db: float | None = None
    reference: str = "absolute"
    ref: GainReference = GainReference()
    min_line: Line | None = None
    max_line: Line | None = None
    at_hz: float | None = None
    at_multiple: float | None = None
    anchor: Anchor | None = None
    band_multiple: tuple[float, float] | None = None

    def __post_init__(self) -> None:
        # built from the plain fields alone (band, min_db, max_db, reference): the same
        # limit as the spec table would give
        if self.reference == "peak" and self.ref.kind == "absolute":
            object.__setattr__(self, "ref", GainReference("peak"))
        if self.band is not None:
            for attr, value in (("min_line", self.min_db), ("max_line", self.max_db)):
                if getattr(self, attr) is None and value is not None:
                    object.__setattr__(self, attr, Line(((self.band[0], value),
                                                         (self.band[1], value))))

    kind: ClassVar[str] = "gain"
    SUMMARY: ClassVar[str] = ("gain over a band or at a frequency between min_db and/or max_db "
                              "(flat or sloped), absolute or relative to a reference")
    METHOD: ClassVar[str] = (
        "true band extremes by Brent's root-finding on the exact gain "
        "derivative"
    )
    #: the method of a spot frequency and of a sloped bound (one line each)
    SPOT_METHOD: ClassVar[str] = ("exact gain at the frequency (a measured anchor: Brent's "
                                  "root-finding)")
    SLOPED_METHOD: ClassVar[str] = ("worst excess over the line by Brent's method on the tilted "
                                    "exact gain")
    KEYS: ClassVar[dict[str, str]] = {
        "band": "[start, stop], Hz",
        "at": "a spot frequency, Hz (instead of band)",
        "min_db": "lowest allowed gain, dB; or [at band start, at band stop]: a sloped bound",
        "max_db": "highest allowed gain, dB; or [at band start, at band stop]: a sloped bound",
        "min_points": "lowest allowed gain as [[Hz, dB], ...], straight in log f between "
                      "points (instead of min_db and band)",
        "max_points": "highest allowed gain as [[Hz, dB], ...], straight in log f between "
                      "points (instead of max_db and band)",
        "slope_db_per_decade": "slope of min_db/max_db from the band start, dB/decade",
        "reference": "'absolute' (dB re the stimulus), 'peak' (re the peak gain), 'at' "
                     "(re the gain at reference_at), 'mean', 'max' or 'min' (re the mean, "
                     "highest or lowest gain over reference_band)",
        **REFERENCE_KEYS,
        **ANCHOR_KEYS,
    }

    @classmethod
    def from_table(cls, rd: SpecReader, sweep: Sweep, name: str | None, index: int,
                   line: int | None) -> GainLimit:
        forms = [k for k in ("band", "at", "at_multiple", "band_multiple") if rd.has(k)]
        points = [k for k in ("min_points", "max_points") if rd.has(k)]
        if len(forms) > 1:
            rd.fail(forms[1], f"give one of band, at, at_multiple and band_multiple, not "
                    f"{forms[0]} and {forms[1]}", code="spec-263")
        band = rd.band("band", sweep, required=not (forms or points))
        at = spot_frequency(rd, "at", sweep, "spec-263")
        multiple = rd.number("at_multiple", positive=True)
        moving = rd.bounds("band_multiple", positive=True, ends=("from", "to"))
        if moving is not None and (None in moving or not moving[0] < moving[1]):
            rd.fail("band_multiple", "expected [from, to] multiples of the anchor, from below "
                    "to (e.g. [2, 10])", code="spec-263")
        anchored = [k for k in ("anchor", "anchor_level_db", "anchor_side") if rd.has(k)]
        if anchored and multiple is None and moving is None:
            rd.fail(anchored[0], f"{anchored[0]} goes with at_multiple or band_multiple",
                    code="spec-261")
        anchor = Anchor.read(rd) if multiple is not None or moving is not None else None
        spot = at is not None or multiple is not None
        fixed = spot or moving is not None  # one value per bound
        if fixed and points:
            rd.fail(points[0], f"{points[0]} set a band; {forms[0]} takes min_db/max_db",
                    code="spec-262")
        slope = rd.number("slope_db_per_decade")
        if fixed and (slope is not None or any(isinstance(rd.raw(k), list)
                                               for k in ("min_db", "max_db"))):
            rd.fail("slope_db_per_decade" if slope is not None else "max_db" if
                    isinstance(rd.raw("max_db"), list) else "min_db",
                    f"{forms[0]} takes one value per bound, not a slope", code="spec-262")
        lo_line = read_line(rd, sweep, "min", band, slope)
        hi_line = read_line(rd, sweep, "max", band, slope)
        if lo_line is None and hi_line is None:
            rd.fail("", "a gain limit needs min_db, max_db or both")
        if slope is not None and not (rd.has("min_db") or rd.has("max_db")):
            rd.fail("slope_db_per_decade", "needs min_db or max_db", code="spec-262")
        if band is None and not fixed:  # the points give the band
            ends = [ln.band for ln in (lo_line, hi_line) if ln is not None]
            band = (min(e[0] for e in ends), max(e[1] for e in ends))
            if lo_line is not None and hi_line is not None and lo_line.band != hi_line.band:
                rd.fail("max_points", "min_points and max_points must span the same band",
                        code="spec-262")
        lo = None if lo_line is None or not lo_line.flat else lo_line.points[0][1]
        hi = None if hi_line is None or not hi_line.flat else hi_line.points[0][1]
        if lo is not None and hi is not None and lo > hi:
            rd.fail("min_db", f"min_db {lo:g} is above max_db {hi:g}")
        if lo_line is not None and hi_line is not None and not fixed:
            fs = np.array(sorted({f for ln in (lo_line, hi_line) for f, _ in ln.points}))
            crossed = fs[lo_line.value(fs) > hi_line.value(fs)]
            if crossed.size:
                rd.fail("min_db" if rd.has("min_db") else "min_points",
                        f"the lower bound is above the upper bound at {crossed[0]:g} Hz",
                        code="spec-262")
        ref = GainReference.read(rd, sweep, "absolute")
        if name is None:
            where = (band_text(band) if band is not None else
                     format_si(at, "Hz", 5) if at is not None else
                     f"{multiple:g} × {anchor.kind}" if multiple is not None else
                     f"{moving[0]:g}–{moving[1]:g} × {anchor.kind}")
            word = "stop-band gain" if lo_line is None else "pass-band gain" if \
                hi_line is None or (lo is not None and hi is not None and hi - lo < 20) \
                else "gain"
            name = f"{word} {where}"
        return cls(name, index, line, band if not fixed else None, lo, hi,
                   ref.kind if ref.kind in ("absolute", "peak") else "reference", ref,
                   lo_line, hi_line, at, multiple, anchor, moving)

    # --------------------------------------------------------------------------- forms
    @property
    def spot(self) -> bool:
        return self.band is None and self.band_multiple is None

    @property
    def sloped(self) -> bool:
        return any(ln is not None and not ln.flat for ln in (self.min_line, self.max_line))

    def _re(self) -> str:
        return "" if not self.ref.relative else f" re {self.ref.words()}"

    def _which(self) -> str:
        return ("minimum and maximum" if self.min_line is not None and self.max_line is not None
                else "minimum" if self.min_line is not None else "maximum")

    def _bound(self, line: Line | None, f: float) -> float | None:
        if line is None:
            return None
        return line.points[0][1] if self.band is None else line.value(f)

    def _moving_band(self, probe: Probe) -> tuple[float, float]:
        """The band ``band_multiple`` × the measured anchor, Hz (inside the sweep)."""
        fa = self.anchor.measure(probe, self.ref)
        lo, hi = self.band_multiple[0] * fa, self.band_multiple[1] * fa
        start, stop = probe.sweep.start_hz, probe.sweep.stop_hz
        if lo < start * (1 - 1e-9) or hi > stop * (1 + 1e-9):
            raise MeasurementFailure(
                f"the band {self.band_multiple[0]:g}–{self.band_multiple[1]:g} × the "
                f"{self.anchor.kind} ({band_text((lo, hi))}) leaves the sweep "
                f"{band_text((start, stop))}: widen the sweep")
        return max(lo, start), min(hi, stop)

    def _spot_hz(self, probe: Probe) -> float:
        if self.at_hz is not None:
            return self.at_hz
        return self.at_multiple * self.anchor.measure(probe, self.ref)

    # --------------------------------------------------------------------------- nominal
    def judge(self, probe: Probe) -> tuple[LimitResult, ...]:
        try:
            reference = self.ref.measure(probe)
            offset = reference.value
            sides = self._worst(probe, offset)
        except MeasurementFailure as err:
            return (self.error(str(err), "dB"),)
        margin, f, g, _ = min(sides, key=lambda s: s[0])
        if math.isnan(margin):
            margin = -math.inf
        r = LimitResult(self.name, self.kind, Status.PASS if margin >= 0 else Status.FAIL, g,
                        self._bound(self.min_line, f), self._bound(self.max_line, f), margin,
                        "dB", f, self._definition(probe), self._method(),
                        self.ref.note(reference), self.index, self.line,
                        reference_db=offset if self.ref.relative else None)
        # a gain at the numerical floor (an exact transmission zero) is not a number
        floor = gain_floor_db(probe, r.at_hz, r.measured + offset)
        if floor is not None:
            r = at_floor(r, floor - offset, "gain" + self._re())
        return (r,)

    def _worst(self, probe: Probe, offset: float) -> list[tuple[float, float, float, float]]:
        """(margin, f, gain − offset, bound there) of each side judged."""
        out = []
        if self.band_multiple is not None:
            vmin, vmax = probe.extremes("gain_db", *self._moving_band(probe))
            for line, sign, e in ((self.min_line, -1.0, vmin), (self.max_line, 1.0, vmax)):
                if line is not None:
                    b, g = line.points[0][1], e.value - offset
                    out.append((sign * (b - g), e.frequency_hz, g, b))
            return out
        if self.spot:
            f = self._spot_hz(probe)
            g = float(gain_db(probe.curve, f)) - offset
            for line, sign in ((self.min_line, -1.0), (self.max_line, 1.0)):
                if line is not None:
                    b = line.points[0][1]
                    out.append((sign * (b - g), f, g, b))
            return out
        for line, sign in ((self.min_line, -1.0), (self.max_line, 1.0)):
            if line is not None:
                f, g = worst_nominal(probe, line, offset, sign)
                b = line.value(f)
                out.append((sign * (b - g), f, g, b))
        return out

    def _method(self) -> str:
        return self.SPOT_METHOD if self.spot else self.SLOPED_METHOD if self.sloped else \
            self.METHOD

    def _definition(self, probe: Probe) -> str:
        re = self._re()
        if self.spot:
            where = (f"at {format_si(self.at_hz, 'Hz', 5)}" if self.at_hz is not None else
                     f"at {self.at_multiple:g} × {self.anchor.words(self.ref)}")
            return f"gain{re} {where}"
        if self.band_multiple is not None:
            k1, k2 = self.band_multiple
            return (f"true {self._which()} of gain{re} over {k1:g}–{k2:g} × "
                    f"{self.anchor.words(self.ref)} ({band_text(self._moving_band(probe))})")
        text = f"true {self._which()} of gain{re} over {band_text(self.band)}"
        if self.sloped:
            lines = [f"{w} bound {ln.words()} ({ln.slope_words()})" for w, ln in
                     (("lower", self.min_line), ("upper", self.max_line)) if ln is not None]
            text = (f"true worst excess of gain{re} over its bound over "
                    f"{band_text(self.band)}; " + "; ".join(lines))
        return text

    # --------------------------------------------------------------------------- Monte Carlo
    def judge_batch(self, bp: BatchProbe) -> Rows:
        off = self.ref.batch(bp)
        if self.spot:
            if self.at_hz is not None:
                f = np.full(bp.ss.S, self.at_hz)
            else:
                f = self.at_multiple * self.anchor.batch(bp, self.ref)
            g = np.full(bp.ss.S, np.nan)
            ok = np.isfinite(f)
            if ok.any():
                g[ok] = bp.ss.gain_db(f[ok][:, None], np.flatnonzero(ok))[:, 0] - \
                    np.broadcast_to(off, g.shape)[ok]
            measured, margin = range_margin(self.min_db, self.max_db, g, g)
            return [(self.name, measured, margin)]
        if self.band_multiple is not None:
            fa = self.anchor.batch(bp, self.ref)
            lo, hi = self.band_multiple[0] * fa, self.band_multiple[1] * fa
            sides = [(band_batch(bp, lo, hi, off, sign)[1], line.points[0][1], sign)
                     for line, sign in ((self.min_line, -1.0), (self.max_line, 1.0))
                     if line is not None]
            return [(self.name, *_decide([(sign * (b - g), g) for g, b, sign in sides]))]
        if not self.sloped:
            vmin, vmax = bp.band_extremes("gain_db", *self.band)
            measured, margin = range_margin(self.min_db, self.max_db, vmin.value - off,
                                            vmax.value - off)
            return [(self.name, measured, margin)]
        sides = []
        for line, sign in ((self.min_line, -1.0), (self.max_line, 1.0)):
            if line is not None:
                f, g = worst_batch(bp, line, off, sign)
                sides.append((sign * (line.value(f) - g), g))
        return [(self.name, *_decide(sides))]

    # --------------------------------------------------------------------------- worst case
    def sensitivities(self, probe: Probe, adj: AdjointSensitivity) -> list[Linearised]:
        offset = self.ref.measure(probe).value
        d_off = self.ref.derivative(probe, adj)
        sides = self._worst(probe, offset)
        margin, f0, g0, _ = min(sides, key=lambda s: s[0])
        lower, upper = self._bound(self.min_line, f0), self._bound(self.max_line, f0)
        rows = {}
        for (m, f, g, b), line, sign in zip(
                sides, [ln for ln in (self.min_line, self.max_line) if ln is not None],
                [s for s, ln in ((-1.0, self.min_line), (1.0, self.max_line)) if ln is not None]):
            d = adj.extreme("gain_db", f) - d_off
            k = self._end_multiple(probe, f)
            if k is not None:  # the frequency moves with the anchor
                slope = _DB * adj.log_derivatives(f).w_f[0].real  # dB per Hz
                d = d + slope * k * self.anchor.derivative(probe, adj, self.ref)
            # the value against the row's bound: the same margin as at its own point
            shown = (g - b + lower) if sign < 0 else (g - b + upper)
            rows[sign] = (shown, d)
        lo_v, lo_d = rows.get(-1.0, rows.get(1.0))
        hi_v, hi_d = rows.get(1.0, rows.get(-1.0))
        return [Linearised(self.name, lo_v, lo_d, hi_v, hi_d)]

    def _end_multiple(self, probe: Probe, f: float) -> float | None:
        """The multiple of the anchor the judged frequency ``f`` is (a spot at a multiple,
        or an end of a moving band), None when it does not move with the anchor (a fixed
        frequency, or an extreme inside the band: envelope theorem)."""
        if self.at_multiple is not None:
            return self.at_multiple
        if self.band_multiple is not None:
            lo, hi = self._moving_band(probe)
            for end, k in ((lo, self.band_multiple[0]), (hi, self.band_multiple[1])):
                if abs(f - end) <= 1e-12 * end:
                    return k
        return None

    # --------------------------------------------------------------------------- plot
    def mask(self) -> tuple[MaskBand, ...]:
        quantity = ("gain_db" if not self.ref.relative else
                    "gain_re_peak_db" if self.ref.kind == "peak" else "gain_re_reference_db")
        if self.band is None:  # one frequency (NaN: measured, the result's at_hz)
            f = self.at_hz if self.at_hz is not None else math.nan
            return (MaskBand(self.name, f, f, self.min_db, self.max_db, quantity),)
        if not self.sloped:
            return (MaskBand(self.name, self.band[0], self.band[1], self.min_db, self.max_db,
                             quantity),)
        fs = sorted({f for ln in (self.min_line, self.max_line) if ln is not None
                     for f, _ in ln.points})
        out = []
        for a, b in zip(fs, fs[1:]):
            lo = None if self.min_line is None else (self.min_line.value(a),
                                                     self.min_line.value(b))
            hi = None if self.max_line is None else (self.max_line.value(a),
                                                     self.max_line.value(b))
            out.append(MaskBand(self.name, a, b, None if lo is None else lo[0],
                                None if hi is None else hi[0], quantity,
                                lo_end=None if lo is None else lo[1],
                                hi_end=None if hi is None else hi[1]))
        return tuple(out)


def _decide(sides: list[tuple[np.ndarray, np.ndarray]]) -> tuple[np.ndarray, np.ndarray]:
    """Per sample (value, margin) of the side closest to failing, from (margin, value)
    per side; a NaN margin (not measured) counts as −inf."""
    m = np.stack([mg for mg, _ in sides])
    m = np.where(np.isnan(m), -np.inf, m)
    k = np.argmin(m, axis=0)
    cols = np.arange(m.shape[1])
    return np.stack([v for _, v in sides])[k, cols], m[k, cols]
