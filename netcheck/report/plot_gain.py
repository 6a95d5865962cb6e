"""Gain-axis pieces shared by the spec and family figures: tags, zoom, mask regions, failures.

The plots hold no text taken from input files: mask bands and failure points carry
the number of their limit (``#4``, its row number in the report's limit table, see
:func:`limit_number`) that the report explains in an escaped HTML key below each figure.
A tag never reads as a netlist part name (a letter and digits, such as ``M1`` or ``F3``).
Allowed regions are a pale tint without hatching, forbidden regions a sand tint with
diagonal hatching (cross-hatched and darker where the limit failed), and every
failure is also spelled out in words (``FAIL``) next to its marker.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from ..result import LimitResult, MaskBand, SpecResult, Status
from ..netlist.units import format_eng, format_si
from .plot_base import FONT_PT, PALETTE, Tag
from ..measure.detail import curve_points

__all__ = ["GAIN_QUANTITIES", "HALF_POWER_DB", "limit_number", "limit_tag", "tags_for",
           "zoom_window", "zoom_is_resonance",
           "gain_limits", "draw_mask", "fail_points", "with_exact_points", "drawn_gain",
           "gain_label"]

#: mask quantities drawn on the gain axis
GAIN_QUANTITIES = ("gain_db", "gain_re_peak_db", "gain_re_reference_db")
#: mask quantities that mark a pass-band for the zoom without drawing a region: a band
#: whose gain is judged against itself (ripple), when a limit reports one
PASS_QUANTITIES = ("ripple_db",)
#: the half-power level below the peak, dB: 10·log10(2)
HALF_POWER_DB = 10.0 * math.log10(2.0)
#: unit of a limit → the curve (Curves attribute) its worst point lies on
_UNIT_CURVE = {"dB": "gain_db", "s": "group_delay_s", "deg": "phase_deg"}


def _offset(band: MaskBand, spec: SpecResult) -> float | None:
    """dB to add to a mask band's bounds to put it on the absolute gain axis."""
    if band.quantity == "gain_re_peak_db":
        return spec.measurement("peak_gain_db")
    if band.quantity == "gain_re_reference_db":  # the level its limit measured
        found = _limit_for(band, spec)
        return None if found is None else found[1].reference_db
    return 0.0


def _band_text(band: MaskBand, unit: str) -> str:
    def bound(v: float | None, end: float | None) -> str:
        if v is None:
            return "open"
        if end is None or end == v:
            return format_eng(v, unit)
        return f"{format_eng(v, unit)} → {format_eng(end, unit)}"

    lo, hi = bound(band.lo, band.lo_end), bound(band.hi, band.hi_end)
    span = (f"{format_si(band.f_lo_hz, 'Hz')} – {format_si(band.f_hi_hz, 'Hz')}"
            if band.f_hi_hz > band.f_lo_hz else f"at {format_si(band.f_lo_hz, 'Hz')}"
            if math.isfinite(band.f_lo_hz) else "at the measured frequency")
    ref = {"gain_re_peak_db": " re peak",
           "gain_re_reference_db": " re its reference"}.get(band.quantity, "")
    if band.lo is not None and band.hi is not None:
        allowed = f"allowed {lo} … {hi}{ref}"
    elif band.lo is not None:
        allowed = f"allowed ≥ {lo}{ref}"
    else:
        allowed = f"allowed ≤ {hi}{ref}"
    return f"{span}, {allowed}"


def limit_number(position: int) -> int:
    """The number of the limit at ``position`` (0-based) in ``SpecResult.limits``: the
    report's limit table shows it as ``#n`` beside the limit's name, and the plots tag the
    limit's mask band and worst point with the same ``#n``."""
    return position + 1


def limit_tag(position: int) -> str:
    """The plot tag of the limit at ``position`` in ``SpecResult.limits``: ``#1``, ``#2``…

    Examples
    --------
    >>> limit_tag(2)
    '#3'
    """
    return f"#{limit_number(position)}"


def _limit_for(band: MaskBand, spec: SpecResult) -> tuple[int, LimitResult] | None:
    for i, lim in enumerate(spec.limits):
        if lim.name == band.label:
            return i, lim
    return None


def tags_for(spec: SpecResult) -> tuple[dict[int, Tag], dict[int, Tag]]:
    """Tags of the mask bands and of the failed limits' worst points.

    Both carry their limit's number (:func:`limit_tag`), so that a band and the worst
    point of the same limit share a tag; a band without a limit of its name is tagged
    ``band 1``, ``band 2``… Returns two dicts keyed by position in ``spec.mask`` and
    ``spec.limits``.
    """
    units = {"gain_db": "dB", "gain_re_peak_db": "dB", "gain_re_reference_db": "dB",
             "phase_deg": "deg",
             "group_delay_s": "s"}
    masks: dict[int, Tag] = {}
    loose = 0
    for i, band in enumerate(spec.mask):
        if band.quantity not in units:
            continue
        found = _limit_for(band, spec)
        text = _band_text(band, units[band.quantity])
        if found is None:
            loose += 1
            masks[i] = Tag(f"band {loose}", band.label, text,
                           Status.FAIL if band.failed else Status.PASS)
        else:
            k, lim = found
            masks[i] = Tag(limit_tag(k), band.label, text, lim.status, limit_number(k))
    re_peak = {b.label for b in spec.mask if b.quantity == "gain_re_peak_db"}
    re_ref = {b.label for b in spec.mask if b.quantity == "gain_re_reference_db"}
    fails: dict[int, Tag] = {}
    for i, lim in enumerate(spec.limits):
        if lim.status is not Status.FAIL or lim.at_hz is None or lim.measured is None:
            continue
        ref = " (re peak)" if lim.name in re_peak else \
            " (re its reference)" if lim.name in re_ref else ""
        fails[i] = Tag(limit_tag(i), lim.name,
                       f"worst value {lim.figures.measured}{ref} at "
                       f"{format_si(lim.at_hz, 'Hz', 5)}, limit {lim.bound_text}", lim.status,
                       limit_number(i))
    return masks, fails


def _resonance_window(spec: SpecResult, f: np.ndarray) -> tuple[float, float] | None:
    """The half-power edges widened by 1.2 bandwidths each side, when they were measured."""
    f_lo, f_hi = spec.measurement("f_low_hz"), spec.measurement("f_high_hz")
    if f_lo is None or f_hi is None or not 0 < f_lo < f_hi:
        return None
    bw = f_hi - f_lo
    return max(f[0], f_lo - 1.2 * bw), min(f[-1], f_hi + 1.2 * bw)


def _pass_window(spec: SpecResult, f: np.ndarray) -> tuple[float, float] | None:
    """The union of the pass-bands (gain bands that set a minimum, ripple bands), widened
    by 8 % of its width in log frequency."""
    bands = [b for b in spec.mask if ((b.quantity in GAIN_QUANTITIES and b.lo is not None)
                                      or b.quantity in PASS_QUANTITIES)
             and b.f_hi_hz > b.f_lo_hz]  # not a spot frequency
    if not bands:
        return None
    blo, bhi = min(b.f_lo_hz for b in bands), max(b.f_hi_hz for b in bands)
    if not (0 < blo < bhi):
        return None
    pad = 0.08 * math.log10(bhi / blo) + 0.01
    return max(f[0], blo / 10 ** pad), min(f[-1], bhi * 10 ** pad)


def _zoom(spec: SpecResult) -> tuple[tuple[float, float], bool] | None:
    """(span, whether it shows the resonance) of the zoom, or None (see :func:`zoom_window`)."""
    f = spec.curves.frequency_hz if spec.curves is not None else None
    if f is None or f.size < 2:
        return None
    res, band = _resonance_window(spec, f), _pass_window(spec, f)
    if band is None:
        win = res
    elif res is None or res[1] < band[0] or res[0] > band[1]:
        win = band
    else:
        win = (min(res[0], band[0]), max(res[1], band[1]))
    if win is None:
        return None
    lo, hi = float(win[0]), float(win[1])
    if not hi > lo or (lo <= f[0] and hi >= f[-1]):
        return None
    resonant = (res is not None and res[0] >= lo and res[1] <= hi
                and res[1] - res[0] >= 0.1 * (hi - lo))
    return (lo, hi), resonant


def zoom_window(spec: SpecResult) -> tuple[float, float] | None:
    """Frequency span (Hz) of the pass-band / resonance zoom, or None when there is none.

    The band that matters: the pass-bands (the gain mask bands that set a minimum, and
    ripple bands), widened by 8 % of their width in log frequency; with half-power edges
    measured, the edges widened by 1.2 bandwidths each side as well, when that window
    meets the pass-bands (a narrow peak elsewhere does not take the zoom from them).
    """
    z = _zoom(spec)
    return None if z is None else z[0]


def zoom_is_resonance(spec: SpecResult) -> bool:
    """Whether the zoom shows the resonance (its half-power edges, at a readable width)
    rather than the pass-bands only: it is then annotated with the edges, bandwidth and Q."""
    z = _zoom(spec)
    return z is not None and z[1]


def drawn_gain(spec: SpecResult) -> tuple[np.ndarray, np.ndarray]:
    """(frequency Hz, gain dB) drawn for ``spec``: the sweep grid, the exact detail points
    the result carries (:func:`~netcheck.measure.detail.curve_points`) and the refined
    peak and half-power edges (:func:`with_exact_points`)."""
    return with_exact_points(spec, *curve_points(spec.curves, "gain_db"))


def gain_limits(spec: SpecResult, lo_hz: float, hi_hz: float, zoom: bool) -> tuple[float, float]:
    """y-range (dB) for a gain panel over [lo_hz, hi_hz].

    Whole sweep: the curve (down to 120 dB below its top) and every mask bound.
    Resonance zoom: the peak down to 12 dB below it. Pass-band zoom: the pass-band
    bounds and the curve inside the pass-bands only, so that flatness is readable.
    The curve is the drawn one (:func:`drawn_gain`), detail points included.
    """
    f, gain = drawn_gain(spec)
    ok = np.isfinite(gain)
    sel = (f >= lo_hz) & (f <= hi_hz) & ok
    g = gain[sel]
    if g.size == 0:
        return -60.0, 10.0
    peak = spec.measurement("peak_gain_db")
    bands = [(b, _offset(b, spec)) for b in spec.mask if b.quantity in GAIN_QUANTITIES
             and b.f_hi_hz >= lo_hz and b.f_lo_hz <= hi_hz]
    bands = [(b, off) for b, off in bands if off is not None]
    resonant = zoom and zoom_is_resonance(spec)
    if not zoom:
        top = float(g.max())
        values = [top, max(float(g.min()), top - 120.0)]
    elif resonant:
        ref = peak if peak is not None else float(g.max())
        values = [float(g.max()), max(min(float(g.min()), ref - HALF_POWER_DB - 3.0),
                                      ref - 12.0)]
    else:
        values = []
        for b, _ in bands:
            if b.lo is not None:
                inside = (f >= b.f_lo_hz) & (f <= b.f_hi_hz) & ok
                if inside.any():
                    values += [float(gain[inside].min()), float(gain[inside].max())]
        values = values or [float(g.max()), float(g.min())]
    for b, off in bands:
        if zoom and not resonant and b.lo is None:
            continue  # a stop-band bound would squash the pass-band detail
        values += [v + off for v in (b.lo, b.hi, b.lo_end, b.hi_end) if v is not None]
    lo, hi = min(values), max(values)
    span = max(hi - lo, 1.0)
    if zoom and not resonant:
        return lo - 0.35 * span, hi + 0.35 * span
    return lo - 0.1 * span, hi + (0.2 if zoom else 0.12) * span


def draw_mask(ax: Any, spec: SpecResult, masks: dict[int, Tag], quantity: tuple[str, ...],
              scale: float, ylim: tuple[float, float], x_span: tuple[float, float],
              drawn: list[Tag], skip: tuple[float, float] | None = None) -> None:
    """Allowed (tint) and forbidden (hatched) regions of each band, tagged with its limit's
    number (``#1 FAIL`` where the limit failed).

    Bands lying inside ``skip`` (the zoom, on the overview) are drawn but not tagged:
    the zoom figure tags them where there is room.
    """
    y0, y1 = ylim
    log = ax.get_xscale() == "log"

    def frac(u: float, v: float) -> float:
        if log:
            return math.log10(v / u) / math.log10(x_span[1] / x_span[0])
        return (v - u) / (x_span[1] - x_span[0])

    for i, band in enumerate(spec.mask):
        if i not in masks or band.quantity not in quantity:
            continue
        off = _offset(band, spec)
        if off is None:
            continue
        if not band.f_hi_hz > band.f_lo_hz:  # a spot frequency: an allowed range there
            _draw_spot(ax, spec, band, masks[i], off / scale, scale, ylim, x_span, drawn)
            continue
        a, b = max(band.f_lo_hz, x_span[0]), min(band.f_hi_hz, x_span[1])
        if not b > a:
            continue
        failed = masks[i].status is Status.FAIL or band.failed
        xs = np.geomspace(a, b, 24) if log else np.linspace(a, b, 24)
        lo = _bound_line(band.lo, band.lo_end, band, xs, off, scale)
        hi = _bound_line(band.hi, band.hi_end, band, xs, off, scale)
        edge = PALETTE["fail"] if failed else PALETTE["hatch"]
        hatch = "xx" if failed else "///"
        ax.fill_between(xs, lo if lo is not None else y0, hi if hi is not None else y1,
                        facecolor=PALETTE["allowed"], edgecolor="none", linewidth=0, zorder=0.5)
        for bound, far in ((hi, y1), (lo, y0)):
            if bound is None:
                continue
            ax.fill_between(xs, bound, far, facecolor=PALETTE["forbid"], edgecolor=edge,
                            hatch=hatch, linewidth=0, zorder=0.6)
            ax.plot(xs, bound, color=edge, linewidth=1.1 if failed else 0.9,
                    solid_capstyle="butt", zorder=2)
        x_label = np.array([(math.sqrt(a * b) if log else 0.5 * (a + b))
                            if frac(a, b) > 0.25 else a])
        lo, hi = (None if v is None else float(_bound_line(v, e, band, x_label, off, scale)[0])
                  for v, e in ((band.lo, band.lo_end), (band.hi, band.hi_end)))
        if skip is not None and skip[0] <= band.f_lo_hz and band.f_hi_hz <= skip[1]:
            continue
        drawn.append(masks[i])
        label = masks[i].tag + (" FAIL" if failed else "")
        y_txt = hi if hi is not None else lo
        va = "bottom" if hi is not None else "top"
        if frac(a, b) > 0.25:
            xm, ha, dx = (math.sqrt(a * b) if log else 0.5 * (a + b)), "center", 0
        else:
            xm, ha, dx = a, "left", 2
        if y_txt is not None and y0 < y_txt < y1:
            ax.annotate(label, (xm, y_txt), xytext=(dx, 3 if va == "bottom" else -3),
                        textcoords="offset points", ha=ha, va=va, fontsize=FONT_PT - 0.5,
                        color=edge, fontweight="bold", zorder=6,
                        bbox={"boxstyle": "round,pad=0.15", "facecolor": "white",
                              "edgecolor": edge, "linewidth": 0.5})


def _draw_spot(ax: Any, spec: SpecResult, band: MaskBand, tag: Tag, off: float, scale: float,
               ylim: tuple[float, float], x_span: tuple[float, float], drawn: list[Tag]
               ) -> None:
    """A limit at one frequency (given, or measured: the limit's own ``at_hz``): the
    allowed range as a bar there, each bound a cap, tagged like a band."""
    f = band.f_lo_hz
    if not math.isfinite(f):
        found = _limit_for(band, spec)
        f = found[1].at_hz if found is not None and found[1].at_hz is not None else math.nan
    if not (math.isfinite(f) and x_span[0] <= f <= x_span[1]):
        return
    failed = tag.status is Status.FAIL or band.failed
    edge = PALETTE["fail"] if failed else PALETTE["hatch"]
    lo = None if band.lo is None else band.lo / scale + off
    hi = None if band.hi is None else band.hi / scale + off
    y0, y1 = ylim
    ax.plot([f, f], [lo if lo is not None else y0, hi if hi is not None else y1],
            color=PALETTE["allowed"], linewidth=5, solid_capstyle="butt", zorder=1.5)
    for bound, marker in ((hi, "v"), (lo, "^")):
        if bound is not None and y0 < bound < y1:
            ax.plot([f], [bound], marker=marker, markersize=6, color=edge, zorder=2.5,
                    markeredgewidth=0.6, markeredgecolor=edge)
    drawn.append(tag)
    y_txt = hi if hi is not None else lo
    if y_txt is not None and y0 < y_txt < y1:
        ax.annotate(tag.tag + (" FAIL" if failed else ""), (f, y_txt), xytext=(4, 3),
                    textcoords="offset points", ha="left", va="bottom",
                    fontsize=FONT_PT - 0.5, color=edge, fontweight="bold", zorder=6,
                    bbox={"boxstyle": "round,pad=0.15", "facecolor": "white",
                          "edgecolor": edge, "linewidth": 0.5})


def _bound_line(start: float | None, end: float | None, band: MaskBand, xs: np.ndarray,
                off: float, scale: float) -> np.ndarray | None:
    """A band's bound at ``xs`` on the plot's axis: flat, or straight in log f from its
    value at the band's start to ``end`` at its stop (a sloped mask)."""
    if start is None:
        return None
    if end is None:
        return np.full(xs.size, (start + off) / scale)
    t = np.log(xs / band.f_lo_hz) / math.log(band.f_hi_hz / band.f_lo_hz)
    return (start + (end - start) * t + off) / scale


def fail_points(ax: Any, spec: SpecResult, fails: dict[int, Tag], curve: str, scale: float,
                x_span: tuple[float, float], masked: set[str], drawn: list[Tag],
                skip: tuple[float, float] | None = None) -> None:
    """Mark the worst point of each failed limit that belongs on this panel.

    A limit whose unit is the panel's (dB on gain, s on group delay, deg on phase) gets
    a cross at its worst point: exactly (at_hz, measured) when it draws a mask band,
    else on the curve at at_hz. On the gain panel, limits in other units (frequency,
    Q, impedance) get a wedge on the top edge at at_hz: where, not a value. Tags of
    points that coincide share one label.
    """
    ylo, yhi = ax.get_ylim()
    offsets = {b.label: _offset(b, spec) for b in spec.mask if b.quantity in GAIN_QUANTITIES}
    groups: dict[tuple[str, float, float], list[tuple[Tag, LimitResult]]] = {}
    for i, tag in fails.items():
        lim = spec.limits[i]
        if not (x_span[0] <= lim.at_hz <= x_span[1]):
            continue
        if skip is not None and skip[0] <= lim.at_hz <= skip[1]:
            continue  # marked on the zoom instead
        if _UNIT_CURVE.get(lim.unit) == curve:
            if lim.name in masked and offsets.get(lim.name) is not None:
                y = (lim.measured + offsets[lim.name]) / scale
            else:
                f, values = curve_points(spec.curves, curve)
                y = float(np.interp(np.log(lim.at_hz), np.log(f), values)) / scale
            if not math.isfinite(y):
                continue
            where = ("point", round(math.log10(lim.at_hz), 4),
                     round(min(max(y, ylo), yhi), 6))
        elif curve == "gain_db" and lim.unit not in _UNIT_CURVE:
            where = ("edge", round(math.log10(lim.at_hz), 4), yhi)
        else:
            continue
        groups.setdefault(where, []).append((tag, lim))
    box = {"boxstyle": "round,pad=0.2", "facecolor": "white", "edgecolor": PALETTE["fail"],
           "linewidth": 0.6}
    for (kind, logx, y), members in groups.items():
        drawn.extend(t for t, _ in members)
        x = 10.0 ** logx
        label = " ".join(t.tag for t, _ in members) + " FAIL"
        if kind == "point":
            if len(members) == 1:
                lim = members[0][1]
                label += f"  {lim.figures.measured}"
            ax.plot([x], [y], marker="X", markersize=7, color=PALETTE["fail"],
                    markeredgecolor="white", markeredgewidth=0.7, zorder=7, linestyle="none")
            ax.annotate(label, (x, y), xytext=(6, -9), textcoords="offset points",
                        fontsize=FONT_PT, color=PALETTE["fail"], fontweight="bold", zorder=8,
                        bbox=box)
        else:
            ax.plot([x], [y], marker="v", markersize=7, color=PALETTE["fail"], clip_on=False,
                    markeredgecolor="white", markeredgewidth=0.6, zorder=7, linestyle="none")
            ax.annotate(label, (x, y), xytext=(7, -3), textcoords="offset points", va="top",
                        fontsize=FONT_PT, color=PALETTE["fail"], fontweight="bold", zorder=8,
                        bbox=box, annotation_clip=False)


def with_exact_points(spec: SpecResult, f: np.ndarray,
                      g: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Add the refined peak and half-power edges (exact points of the same response)."""
    pts = []
    peak_f, peak_g = spec.measurement("f_peak_hz"), spec.measurement("peak_gain_db")
    if peak_f is not None and peak_g is not None:
        pts.append((peak_f, peak_g))
        for key in ("f_low_hz", "f_high_hz"):
            fe = spec.measurement(key)
            if fe is not None:
                pts.append((fe, peak_g - HALF_POWER_DB))
    pts = [(x, y) for x, y in pts if math.isfinite(x) and math.isfinite(y) and f[0] < x < f[-1]]
    if not pts:
        return f, g
    fx = np.concatenate([f, [p[0] for p in pts]])
    gx = np.concatenate([g, [p[1] for p in pts]])
    order = np.argsort(fx, kind="stable")
    return fx[order], gx[order]


def gain_label(spec: SpecResult) -> str:
    """y label: dB re 1 V/V for a voltage stimulus, re 1 V/A (transimpedance) for a current."""
    if dict(spec.sweep).get("stimulus_unit") == "A":
        return "Gain (dB re 1 V/A)"
    return "Gain (dB)"
