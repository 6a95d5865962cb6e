"""The limit-kind table: TOML ``kind`` → Limit class (its keys, its measurement, its judge).

A new limit kind is one class here, registered with :func:`register` (the contract,
the registry and the judging helpers are in :mod:`netcheck.spec.limits.base`). The spec
loader, the docs table and the renderers all read :data:`LIMITS`; no renderer
branches on the kind.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from .base import (LIMITS, Limit, Linearised, Probe, Rows, _band_text, at_floor,
                          build_limit, gain_floor_db, judge_range, linearised_range,
                          range_margin, register)
from ..guard import MIN_FREQUENCY_HZ
from ...measure.measurements import Extremum, MeasurementFailure
from ...result import LimitResult, MaskBand, Status
from ...netlist.units import format_eng, format_si

__all__ = ["Limit", "LIMITS", "register", "build_limit", "Probe", "judge_range", "Linearised",
           "range_margin", "linearised_range", "Rows", "GainLimit", "RippleLimit",
           "ResonanceLimit", "CornerLimit", "GroupDelayLimit", "PhaseLimit", "ImpedanceLimit"]


@register
@dataclass(frozen=True, slots=True)
class GainLimit(Limit):
    """Gain over a band: the true minimum and maximum over the band, not grid samples."""

    band: tuple[float, float] = (0.0, 0.0)
    min_db: float | None = None
    max_db: float | None = None
    reference: str = "absolute"

    kind: ClassVar[str] = "gain"
    SUMMARY: ClassVar[str] = "gain over a band between min_db and/or max_db (pass-band, stop-band)"
    KEYS: ClassVar[dict[str, str]] = {
        "band": "[start, stop], Hz",
        "min_db": "lowest allowed gain, dB",
        "max_db": "highest allowed gain, dB",
        "reference": "'absolute' (dB re the stimulus) or 'peak' (dB re the peak gain)",
    }

    @classmethod
    def from_table(cls, rd, sweep, name, index, line):
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
            name = f"{word} {_band_text(band)}"
        return cls(name, index, line, band, lo, hi, ref)

    def judge(self, probe):
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
            f"true {which} of gain{re} over {_band_text(self.band)}",
            "grid samples and pole/zero seeds refined by Brent's method on the exact derivative",
            self.index, self.line)
        # a gain at the numerical floor (an exact transmission zero) is not a number
        floor = gain_floor_db(probe, r.at_hz, r.measured + offset)
        if floor is not None:
            r = at_floor(r, floor - offset, "gain" + re)
        return (r,)

    def judge_batch(self, bp):
        vmin, vmax = bp.band_extremes("gain_db", *self.band)
        off = bp.peak().value if self.reference == "peak" else 0.0
        measured, margin = range_margin(self.min_db, self.max_db, vmin.value - off,
                                        vmax.value - off)
        return [(self.name, measured, margin)]

    def sensitivities(self, probe, adj):
        vmin, vmax = probe.extremes("gain_db", *self.band)
        off, d_off = 0.0, 0.0
        if self.reference == "peak":
            pk = probe.peak()
            off, d_off = pk.value, adj.extreme("gain_db", pk.frequency_hz)
        return [linearised_range(self.name, self.min_db, self.max_db, vmin.value - off,
                                 adj.extreme("gain_db", vmin.frequency_hz) - d_off,
                                 vmax.value - off,
                                 adj.extreme("gain_db", vmax.frequency_hz) - d_off)]

    def mask(self):
        return (MaskBand(self.name, self.band[0], self.band[1], self.min_db, self.max_db,
                         "gain_db" if self.reference == "absolute" else "gain_re_peak_db"),)


@register
@dataclass(frozen=True, slots=True)
class RippleLimit(Limit):
    """Ripple: maximum minus minimum gain over a band."""

    band: tuple[float, float] = (0.0, 0.0)
    max_db: float = 0.0

    kind: ClassVar[str] = "ripple"
    SUMMARY: ClassVar[str] = "max minus min gain over a band, at most max_db"
    KEYS: ClassVar[dict[str, str]] = {"band": "[start, stop], Hz",
                                      "max_db": "largest allowed ripple, dB"}

    @classmethod
    def from_table(cls, rd, sweep, name, index, line):
        band = rd.band("band", sweep)
        mx = rd.number("max_db", required=True)
        if mx < 0:
            rd.fail("max_db", "ripple limit must not be negative")
        return cls(name or f"ripple {_band_text(band)}", index, line, band, mx)

    def judge(self, probe):
        try:
            vmin, vmax = probe.extremes("gain_db", *self.band)
            value = vmax.value - vmin.value
        except MeasurementFailure as err:
            return (self.error(str(err), "dB"),)
        margin = self.max_db - value
        return (LimitResult(self.name, self.kind, Status.PASS if margin >= 0 else Status.FAIL,
                            value, None, self.max_db, margin, "dB", vmin.frequency_hz,
                            f"maximum minus minimum gain over {_band_text(self.band)} (max "
                            f"{format_eng(vmax.value, 'dB')} at {format_si(vmax.frequency_hz, 'Hz')}, "
                            f"min {format_eng(vmin.value, 'dB')} at {format_si(vmin.frequency_hz, 'Hz')})",
                            "true band extremes (Brent's method on the exact response)",
                            "", self.index, self.line),)

    def judge_batch(self, bp):
        value = bp.ripple(*self.band)
        return [(self.name, value, self.max_db - value)]

    def sensitivities(self, probe, adj):
        vmin, vmax = probe.extremes("gain_db", *self.band)
        value = vmax.value - vmin.value
        d = adj.extreme("gain_db", vmax.frequency_hz) - adj.extreme("gain_db", vmin.frequency_hz)
        return [Linearised(self.name, value, d, value, d)]


@register
@dataclass(frozen=True, slots=True)
class ResonanceLimit(Limit):
    """The main peak: centre frequency, bandwidth at a level below the peak, and Q."""

    center: float | None = None
    center_tolerance: float | None = None
    bandwidth: tuple[float | None, float | None] | None = None
    q: tuple[float | None, float | None] | None = None
    level_db: float | None = None
    band: tuple[float, float] | None = None

    kind: ClassVar[str] = "resonance"
    SUMMARY: ClassVar[str] = "centre frequency, half-power bandwidth and Q of the main peak"
    KEYS: ClassVar[dict[str, str]] = {
        "center": "expected centre frequency f_center = sqrt(f_low f_high), Hz",
        "center_tolerance": "allowed deviation of the centre: '1%', '20ppm', '5ppb' or Hz "
                            "(needs center)",
        "bandwidth": "[min, max] bandwidth f_high - f_low, Hz (or {min=, max=})",
        "q": "[min, max] Q = f_center / bandwidth (or {min=, max=})",
        "level_db": "edges this many dB below the peak (default: half-power, 10 log10 2 dB)",
        "band": "[start, stop], Hz: where to look for the peak (default: the whole sweep)",
    }

    @classmethod
    def from_table(cls, rd, sweep, name, index, line):
        center = rd.number("center", positive=True)
        tol = rd.percent_or_value("center_tolerance", center or 0.0, MIN_FREQUENCY_HZ, "Hz")
        if tol is not None and center is None:
            rd.fail("center_tolerance", "needs center")
        if center is not None and tol is None:
            rd.fail("center", "give center_tolerance too (e.g. \"1%\")")
        bw = rd.bounds("bandwidth", positive=True)
        q = rd.bounds("q", positive=True)
        level = rd.number("level_db", positive=True)
        band = rd.band("band", sweep, required=False)
        if center is None and bw is None and q is None:
            rd.fail("", "a resonance limit needs center, bandwidth or q")
        return cls(name or "resonance", index, line, center, tol, bw, q, level, band)

    def judge(self, probe):
        try:
            res = probe.resonance(self.level_db, self.band)
        except MeasurementFailure as err:
            return tuple(self.error(str(err), u, s) for s, u in self._parts())
        level = "half-power (|H_peak|/√2)" if self.level_db is None else \
            f"{self.level_db:g} dB below the peak"
        edges = (f"edges at {level}: f_low {format_si(res.f_low_hz, 'Hz', 7)}, "
                 f"f_high {format_si(res.f_high_hz, 'Hz', 7)}")
        method = "peak by root of the exact gain derivative; edges by Brent's method"
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
                          f" / {format_si(res.bandwidth_hz, 'Hz', 7)}")
            r = judge_range(f"{self.name}: {sub}", self.kind, bounds[0], bounds[1], e, e, unit,
                            definition, method, self.index, self.line)
            out.append(r)
        return tuple(out)

    def judge_batch(self, bp):
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

    def sensitivities(self, probe, adj):
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

    def result_names(self):
        return tuple(f"{self.name}: {sub}" for sub, _ in self._parts())

    def _parts(self):
        parts = []
        if self.center is not None:
            parts.append(("centre", "Hz"))
        if self.bandwidth is not None:
            parts.append(("bandwidth", "Hz"))
        if self.q is not None:
            parts.append(("Q", ""))
        return parts


@register
@dataclass(frozen=True, slots=True)
class CornerLimit(Limit):
    """A low- or high-pass edge: where gain falls level_db below the pass-band reference."""

    range: tuple[float | None, float | None] = (None, None)
    level_db: float | None = None
    side: str = "auto"
    reference_db: float | None = None

    kind: ClassVar[str] = "corner"
    SUMMARY: ClassVar[str] = "frequency where gain falls level_db below the pass-band, in a range"
    KEYS: ClassVar[dict[str, str]] = {
        "range": "[min, max] allowed corner frequency, Hz",
        "level_db": "drop below the reference, dB (default: half-power, 10 log10 2 dB)",
        "side": "'auto', 'high' (edge above the pass-band: low-pass) or 'low' (high-pass)",
        "reference_db": "pass-band reference gain, dB (default: the peak gain of the sweep)",
    }

    @classmethod
    def from_table(cls, rd, sweep, name, index, line):
        rng = rd.bounds("range", positive=True, required=True)
        level = rd.number("level_db", positive=True)
        side = rd.choice("side", ("auto", "high", "low"), "auto")
        ref = rd.number("reference_db")
        return cls(name or f"corner ({'half-power' if level is None else f'-{level:g} dB'})",
                   index, line, rng, level, side, ref)

    def judge(self, probe):
        try:
            f = probe.corner(self.level_db, self.reference_db, self.side)
        except MeasurementFailure as err:
            return (self.error(str(err), "Hz"),)
        e = Extremum(f, f)
        level = "half-power" if self.level_db is None else f"{self.level_db:g} dB"
        ref = "the peak gain" if self.reference_db is None else format_eng(self.reference_db, "dB")
        return (judge_range(self.name, self.kind, self.range[0], self.range[1], e, e, "Hz",
                            f"frequency where gain is {level} below {ref}",
                            "Brent's method on the exact response", self.index, self.line),)

    def judge_batch(self, bp):
        f = bp.corner(self.level_db, self.reference_db, self.side)
        return [(self.name, *range_margin(self.range[0], self.range[1], f, f))]

    def sensitivities(self, probe, adj):
        f = probe.corner(self.level_db, self.reference_db, self.side)
        d_level = adj.extreme("gain_db", probe.peak().frequency_hz) \
            if self.reference_db is None else 0.0
        d = adj.crossing_shift(f, d_level)
        return [Linearised(self.name, f, d, f, d)]


@register
@dataclass(frozen=True, slots=True)
class GroupDelayLimit(Limit):
    """Group delay over a band: its maximum (and minimum) and its variation."""

    band: tuple[float, float] = (0.0, 0.0)
    max: float | None = None
    min: float | None = None
    max_variation: float | None = None

    kind: ClassVar[str] = "group_delay"
    SUMMARY: ClassVar[str] = "group delay −dφ/dω over a band: max, min and max_variation"
    KEYS: ClassVar[dict[str, str]] = {"band": "[start, stop], Hz", "max": "largest delay, s",
                                      "min": "smallest delay, s",
                                      "max_variation": "largest max − min over the band, s"}

    @classmethod
    def from_table(cls, rd, sweep, name, index, line):
        band = rd.band("band", sweep)
        mx, mn, var = rd.number("max"), rd.number("min"), rd.number("max_variation")
        if mx is None and mn is None and var is None:
            rd.fail("", "a group_delay limit needs max, min or max_variation")
        return cls(name or f"group delay {_band_text(band)}", index, line, band, mx, mn, var)

    def judge(self, probe):
        try:
            vmin, vmax = probe.extremes("group_delay_s", *self.band)
        except MeasurementFailure as err:
            return (self.error(str(err), "s"),)
        out = []
        method = "exact derivative of the solution; extremes by bounded minimisation"
        if self.max is not None or self.min is not None:
            out.append(judge_range(self.name, self.kind, self.min, self.max, vmin, vmax, "s",
                                   f"group delay −dφ/dω over {_band_text(self.band)}", method,
                                   self.index, self.line))
        if self.max_variation is not None:
            var = vmax.value - vmin.value
            margin = self.max_variation - var
            out.append(LimitResult(
                f"{self.name}: variation", self.kind, Status.PASS if margin >= 0 else Status.FAIL,
                var, None, self.max_variation, margin, "s", vmax.frequency_hz,
                f"max − min group delay over {_band_text(self.band)}", method, "",
                self.index, self.line))
        return tuple(out)

    def result_names(self):
        names = (self.name,) if self.max is not None or self.min is not None else ()
        return names + ((f"{self.name}: variation",) if self.max_variation is not None else ())

    def mask(self):
        if self.max is None and self.min is None:
            return ()
        return (MaskBand(self.name, self.band[0], self.band[1], self.min, self.max,
                         "group_delay_s"),)

    def judge_batch(self, bp):
        vmin, vmax = bp.band_extremes("group_delay_s", *self.band)
        rows = []
        if self.max is not None or self.min is not None:
            rows.append((self.name, *range_margin(self.min, self.max, vmin.value, vmax.value)))
        if self.max_variation is not None:
            var = vmax.value - vmin.value
            rows.append((f"{self.name}: variation", var, self.max_variation - var))
        return rows

    def sensitivities(self, probe, adj):
        vmin, vmax = probe.extremes("group_delay_s", *self.band)
        d_min = adj.extreme("group_delay_s", vmin.frequency_hz)
        d_max = adj.extreme("group_delay_s", vmax.frequency_hz)
        out = []
        if self.max is not None or self.min is not None:
            out.append(linearised_range(self.name, self.min, self.max, vmin.value, d_min,
                                        vmax.value, d_max))
        if self.max_variation is not None:
            var = vmax.value - vmin.value
            out.append(Linearised(f"{self.name}: variation", var, d_max - d_min, var,
                                  d_max - d_min))
        return out


@register
@dataclass(frozen=True, slots=True)
class PhaseLimit(Limit):
    """Phase over a band within [min, max] degrees (unwrapped from the sweep start)."""

    band: tuple[float, float] = (0.0, 0.0)
    range_deg: tuple[float | None, float | None] = (None, None)

    kind: ClassVar[str] = "phase"
    SUMMARY: ClassVar[str] = "phase over a band within range_deg"
    KEYS: ClassVar[dict[str, str]] = {"band": "[start, stop], Hz",
                                      "range_deg": "[min, max] phase, degrees"}

    @classmethod
    def from_table(cls, rd, sweep, name, index, line):
        band = rd.band("band", sweep)
        rng = rd.bounds("range_deg", required=True)
        return cls(name or f"phase {_band_text(band)}", index, line, band, rng)

    def judge(self, probe):
        try:
            vmin, vmax = probe.extremes("phase_deg", *self.band)
        except MeasurementFailure as err:
            return (self.error(str(err), "deg"),)
        return (judge_range(self.name, self.kind, self.range_deg[0], self.range_deg[1], vmin,
                            vmax, "deg", f"phase over {_band_text(self.band)}, unwrapped "
                            "continuously from the start of the sweep",
                            "true band extremes (bounded minimisation)", self.index, self.line),)

    def mask(self):
        return (MaskBand(self.name, self.band[0], self.band[1], self.range_deg[0],
                         self.range_deg[1], "phase_deg"),)

    def judge_batch(self, bp):
        vmin, vmax = bp.band_extremes("phase_deg", *self.band)
        return [(self.name, *range_margin(self.range_deg[0], self.range_deg[1], vmin.value,
                                          vmax.value))]

    def sensitivities(self, probe, adj):
        vmin, vmax = probe.extremes("phase_deg", *self.band)
        return [linearised_range(self.name, *self.range_deg, vmin.value,
                                 adj.extreme("phase_deg", vmin.frequency_hz), vmax.value,
                                 adj.extreme("phase_deg", vmax.frequency_hz))]


@register
@dataclass(frozen=True, slots=True)
class ImpedanceLimit(Limit):
    """Magnitude of the input impedance seen by the stimulus, over a band."""

    band: tuple[float, float] = (0.0, 0.0)
    range: tuple[float | None, float | None] = (None, None)

    kind: ClassVar[str] = "impedance"
    SUMMARY: ClassVar[str] = "input impedance magnitude seen by the source, over a band"
    KEYS: ClassVar[dict[str, str]] = {"band": "[start, stop], Hz",
                                      "range": "[min, max] |Z|, ohms"}

    @classmethod
    def from_table(cls, rd, sweep, name, index, line):
        band = rd.band("band", sweep)
        rng = rd.bounds("range", positive=True, required=True)
        return cls(name or f"input impedance {_band_text(band)}", index, line, band, rng)

    def judge(self, probe):
        try:
            zmin, zmax = probe.extremes("impedance_db", *self.band)
        except MeasurementFailure as err:
            return (self.error(str(err), "Ω"),)
        to_ohm = lambda e: Extremum(e.frequency_hz, 10.0 ** (e.value / 20.0))  # noqa: E731
        return (judge_range(self.name, self.kind, self.range[0], self.range[1], to_ohm(zmin),
                            to_ohm(zmax), "Ω", f"|Z_in| seen by the stimulus over "
                            f"{_band_text(self.band)}", "true band extremes of the exact "
                            "input impedance", self.index, self.line),)

    def judge_batch(self, bp):
        zmin, zmax = bp.band_extremes("impedance_db", *self.band)
        return [(self.name, *range_margin(self.range[0], self.range[1],
                                          10.0 ** (zmin.value / 20.0), 10.0 ** (zmax.value / 20.0)))]

    def sensitivities(self, probe, adj):
        zmin, zmax = probe.extremes("impedance_db", *self.band)
        return [linearised_range(self.name, *self.range, 10.0 ** (zmin.value / 20.0),
                                 adj.extreme("impedance_ohm", zmin.frequency_hz),
                                 10.0 ** (zmax.value / 20.0),
                                 adj.extreme("impedance_ohm", zmax.frequency_hz))]
