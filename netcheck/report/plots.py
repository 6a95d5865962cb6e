"""Plots for the PDF report: matplotlib ``Figure`` objects rendered to deterministic inline SVG.

matplotlib is imported inside the drawing functions only (never pyplot), so importing
this module costs nothing. The plots hold no text taken from input files: mask bands
and failure points carry short tags (``M1``, ``F1``) that the report explains in an
escaped HTML key below each figure.

The palette is colour-blind safe and reads in greyscale: the response is near-black,
allowed regions a pale tint without hatching, forbidden regions a sand tint with
diagonal hatching (cross-hatched and darker where the limit failed), and every
failure is also spelled out in words (``FAIL``) next to its marker.
"""

from __future__ import annotations

import io
import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..result import LimitResult, MaskBand, SpecResult, Status
from ..units import format_eng, format_si

__all__ = ["PALETTE", "Tag", "Plot", "tags_for", "zoom_window", "spec_plots", "FIG_WIDTH_IN",
           "histogram_plot", "family_plots", "variant_style", "VARIANT_STYLES"]

#: Named colours of the report (plots and CSS share them; see report.css).
PALETTE = {
    "ink": "#1d2330",        # response curves, text (L* ~ 13)
    "slate": "#5e6675",      # axes, grid labels (L* ~ 43)
    "grid": "#d5d9df",       # grid lines
    "allowed": "#dcebe6",    # allowed region tint (pale sea-green, L* ~ 92)
    "forbid": "#f1dfc6",     # forbidden region tint (pale sand, L* ~ 90)
    "hatch": "#8c5a24",      # forbidden hatching and bound lines (umber, L* ~ 43)
    "fail": "#6e1d55",       # failed bands and failure markers (plum, L* ~ 25)
    "guide": "#2c6687",      # annotations: half-power level, edges (steel blue, L* ~ 41)
    "envelope": "#b9c3cf",   # tolerance envelope
}

#: Figure width in inches: the A4 text block of report.css (210 mm − 2 × 17 mm).
FIG_WIDTH_IN = 176 / 25.4
_FONT_PT = 7.5
_GAIN_QUANTITIES = ("gain_db", "gain_re_peak_db")
_HALF_POWER_DB = 10.0 * math.log10(2.0)
#: unit of a limit → the curve (Curves attribute) its worst point lies on
_UNIT_CURVE = {"dB": "gain_db", "s": "group_delay_s", "deg": "phase_deg"}
#: limit kinds → (Curves attribute, mask quantity, axis label, unit) of extra panels
_PANELS = {
    "phase": ("phase_deg", "phase_deg", "Phase", "deg"),
    "group_delay": ("group_delay_s", "group_delay_s", "Group delay", "s"),
}


@dataclass(frozen=True, slots=True)
class Tag:
    """A short plot tag (``M1``/``F1``) and what it stands for, for the figure key."""

    tag: str
    name: str
    text: str
    status: Status


@dataclass(frozen=True, slots=True)
class Plot:
    """One figure of the report: caption, inline SVG markup and its key."""

    title: str
    caption: str
    svg: str
    keys: tuple[Tag, ...] = ()


# --------------------------------------------------------------------------- pure data


def _offset(band: MaskBand, spec: SpecResult) -> float | None:
    """dB to add to a mask band's bounds to put it on the absolute gain axis."""
    if band.quantity == "gain_re_peak_db":
        return spec.measurement("peak_gain_db")
    return 0.0


def _band_text(band: MaskBand, unit: str) -> str:
    lo = "open" if band.lo is None else format_eng(band.lo, unit)
    hi = "open" if band.hi is None else format_eng(band.hi, unit)
    span = f"{format_si(band.f_lo_hz, 'Hz')} – {format_si(band.f_hi_hz, 'Hz')}"
    ref = " re peak" if band.quantity == "gain_re_peak_db" else ""
    if band.lo is not None and band.hi is not None:
        allowed = f"allowed {lo} … {hi}{ref}"
    elif band.lo is not None:
        allowed = f"allowed ≥ {lo}{ref}"
    else:
        allowed = f"allowed ≤ {hi}{ref}"
    return f"{span}, {allowed}"


def _limit_for(band: MaskBand, spec: SpecResult) -> LimitResult | None:
    for lim in spec.limits:
        if lim.name == band.label:
            return lim
    return None


def tags_for(spec: SpecResult) -> tuple[dict[int, Tag], dict[int, Tag]]:
    """Tags of the mask bands (``M1``…) and of the failed limits' worst points (``F1``…).

    Returns two dicts keyed by position in ``spec.mask`` and ``spec.limits``.
    """
    units = {"gain_db": "dB", "gain_re_peak_db": "dB", "phase_deg": "deg",
             "group_delay_s": "s"}
    masks: dict[int, Tag] = {}
    for i, band in enumerate(spec.mask):
        if band.quantity not in units:
            continue
        lim = _limit_for(band, spec)
        status = lim.status if lim is not None else (Status.FAIL if band.failed else Status.PASS)
        masks[i] = Tag(f"M{len(masks) + 1}", band.label, _band_text(band, units[band.quantity]),
                       status)
    re_peak = {b.label for b in spec.mask if b.quantity == "gain_re_peak_db"}
    fails: dict[int, Tag] = {}
    for i, lim in enumerate(spec.limits):
        if lim.status is not Status.FAIL or lim.at_hz is None or lim.measured is None:
            continue
        ref = " (re peak)" if lim.name in re_peak else ""
        fails[i] = Tag(f"F{len(fails) + 1}", lim.name,
                       f"worst value {format_eng(lim.measured, lim.unit)}{ref} at "
                       f"{format_si(lim.at_hz, 'Hz', 5)}, limit {lim.bound_text}", lim.status)
    return masks, fails


def zoom_window(spec: SpecResult) -> tuple[float, float] | None:
    """Frequency span (Hz) of the pass-band / resonance zoom, or None when there is none.

    With half-power edges measured: the edges widened by 1.2 bandwidths each side.
    Otherwise the union of the gain mask bands that set a minimum (pass-bands),
    widened by 8 % of its width in log frequency.
    """
    f = spec.curves.frequency_hz if spec.curves is not None else None
    if f is None or f.size < 2:
        return None
    f_lo, f_hi = spec.measurement("f_low_hz"), spec.measurement("f_high_hz")
    if f_lo is not None and f_hi is not None and 0 < f_lo < f_hi:
        bw = f_hi - f_lo
        lo, hi = max(f[0], f_lo - 1.2 * bw), min(f[-1], f_hi + 1.2 * bw)
    else:
        bands = [b for b in spec.mask if b.quantity in _GAIN_QUANTITIES and b.lo is not None]
        if not bands:
            return None
        blo, bhi = min(b.f_lo_hz for b in bands), max(b.f_hi_hz for b in bands)
        if not (0 < blo < bhi):
            return None
        pad = 0.08 * math.log10(bhi / blo) + 0.01
        lo, hi = max(f[0], blo / 10 ** pad), min(f[-1], bhi * 10 ** pad)
    if not hi > lo or (lo <= f[0] and hi >= f[-1]):
        return None
    return float(lo), float(hi)


def _extra_panels(spec: SpecResult) -> list[str]:
    kinds = {lim.kind for lim in spec.limits}
    kinds |= {k for k, p in _PANELS.items() if any(b.quantity == p[1] for b in spec.mask)}
    return [k for k in _PANELS if k in kinds]


# --------------------------------------------------------------------------- drawing


#: rcParams for drawing and saving: deterministic SVG ids, text kept as text
_RC = {"svg.hashsalt": "netcheck-report", "svg.fonttype": "none", "svg.image_inline": True,
       "font.family": "DejaVu Sans", "hatch.linewidth": 0.45, "axes.unicode_minus": True}


def _svg(fig: Any) -> str:
    """The figure as an SVG ``<svg>`` element, byte-identical between runs."""
    import matplotlib

    buf = io.StringIO()
    with matplotlib.rc_context(_RC):
        fig.savefig(buf, format="svg", metadata={"Date": None, "Creator": None})
    text = buf.getvalue()
    return text[text.index("<svg"):]


def _figure(height_in: float) -> Any:
    import matplotlib
    from matplotlib.figure import Figure

    with matplotlib.rc_context(_RC):
        fig = Figure(figsize=(FIG_WIDTH_IN, height_in), dpi=100)
    return fig


def _style(ax: Any) -> None:
    ax.set_facecolor("white")
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    for side in ("left", "bottom"):
        ax.spines[side].set_color(PALETTE["slate"])
        ax.spines[side].set_linewidth(0.6)
    ax.tick_params(colors=PALETTE["slate"], labelcolor=PALETTE["ink"], labelsize=_FONT_PT,
                   width=0.6, length=3)
    ax.tick_params(which="minor", length=1.8, width=0.4)
    ax.grid(True, which="major", color=PALETTE["grid"], linewidth=0.5)
    ax.set_axisbelow(True)


def _hz_log_axis(ax: Any, lo: float, hi: float) -> None:
    """Log frequency axis; decades labelled, and 2 and 5 as well on short spans."""
    from matplotlib.ticker import FuncFormatter, LogLocator, NullFormatter

    ax.set_xscale("log")
    label = FuncFormatter(lambda v, _: _hz_text(v) if v > 0 else "")
    if hi / lo < 200.0:
        ax.xaxis.set_major_locator(LogLocator(base=10.0, subs=(1.0, 2.0, 5.0)))
    else:
        ax.xaxis.set_major_locator(LogLocator(base=10.0))
    ax.xaxis.set_major_formatter(label)
    ax.xaxis.set_minor_locator(LogLocator(base=10.0, subs=np.arange(2, 10) * 0.1))
    ax.xaxis.set_minor_formatter(NullFormatter())


def _hz_text(v: float) -> str:
    """Tick label: ``20 kHz``, ``1 MHz`` (no trailing zeros)."""
    scale, prefix = _si_scale(v * (1 + 1e-9))
    return f"{v / scale:.3g} {prefix}Hz"


def _hz_linear_axis(ax: Any, lo: float, hi: float) -> str:
    """Linear frequency ticks in one SI prefix; returns the axis label."""
    from matplotlib.ticker import FuncFormatter, MaxNLocator

    scale, prefix = _si_scale(max(abs(lo), abs(hi)))
    ax.xaxis.set_major_locator(MaxNLocator(nbins=9, steps=[1, 2, 2.5, 5, 10]))
    ax.xaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v / scale:g}"))
    return f"Frequency ({prefix}Hz, linear scale)"


def _si_scale(mag: float) -> tuple[float, str]:
    for s, p in ((1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m"), (1e-6, "µ"),
                 (1e-9, "n"), (1e-12, "p")):
        if mag >= s:
            return s, p
    return 1e-12, "p"


def _gain_limits(spec: SpecResult, lo_hz: float, hi_hz: float, zoom: bool) -> tuple[float, float]:
    """y-range (dB) for a gain panel over [lo_hz, hi_hz].

    Whole sweep: the curve (down to 120 dB below its top) and every mask bound.
    Resonance zoom: the peak down to 12 dB below it. Pass-band zoom: the pass-band
    bounds and the curve inside the pass-bands only, so that flatness is readable.
    """
    c = spec.curves
    f = c.frequency_hz
    ok = np.isfinite(c.gain_db)
    sel = (f >= lo_hz) & (f <= hi_hz) & ok
    g = c.gain_db[sel]
    if g.size == 0:
        return -60.0, 10.0
    peak = spec.measurement("peak_gain_db")
    bands = [(b, _offset(b, spec)) for b in spec.mask if b.quantity in _GAIN_QUANTITIES
             and b.f_hi_hz >= lo_hz and b.f_lo_hz <= hi_hz]
    bands = [(b, off) for b, off in bands if off is not None]
    resonant = spec.measurement("f_low_hz") is not None
    if not zoom:
        top = float(g.max())
        values = [top, max(float(g.min()), top - 120.0)]
    elif resonant:
        ref = peak if peak is not None else float(g.max())
        values = [float(g.max()), max(min(float(g.min()), ref - _HALF_POWER_DB - 3.0),
                                      ref - 12.0)]
    else:
        values = []
        for b, _ in bands:
            if b.lo is not None:
                inside = (f >= b.f_lo_hz) & (f <= b.f_hi_hz) & ok
                if inside.any():
                    values += [float(c.gain_db[inside].min()), float(c.gain_db[inside].max())]
        values = values or [float(g.max()), float(g.min())]
    for b, off in bands:
        if zoom and not resonant and b.lo is None:
            continue  # a stop-band bound would squash the pass-band detail
        values += [v + off for v in (b.lo, b.hi) if v is not None]
    lo, hi = min(values), max(values)
    span = max(hi - lo, 1.0)
    if zoom and not resonant:
        return lo - 0.35 * span, hi + 0.35 * span
    return lo - 0.1 * span, hi + (0.2 if zoom else 0.12) * span


def _draw_mask(ax: Any, spec: SpecResult, masks: dict[int, Tag], quantity: tuple[str, ...],
               scale: float, ylim: tuple[float, float], x_span: tuple[float, float],
               drawn: list[Tag], skip: tuple[float, float] | None = None) -> None:
    """Allowed (tint) and forbidden (hatched) regions of each band, tagged M1, M2…

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
        a, b = max(band.f_lo_hz, x_span[0]), min(band.f_hi_hz, x_span[1])
        if not b > a:
            continue
        failed = masks[i].status is Status.FAIL or band.failed
        lo = None if band.lo is None else (band.lo + off) / scale
        hi = None if band.hi is None else (band.hi + off) / scale
        edge = PALETTE["fail"] if failed else PALETTE["hatch"]
        hatch = "xx" if failed else "///"
        ax.fill_between([a, b], lo if lo is not None else y0, hi if hi is not None else y1,
                        facecolor=PALETTE["allowed"], edgecolor="none", linewidth=0, zorder=0.5)
        for bound, far in ((hi, y1), (lo, y0)):
            if bound is None:
                continue
            ax.fill_between([a, b], bound, far, facecolor=PALETTE["forbid"], edgecolor=edge,
                            hatch=hatch, linewidth=0, zorder=0.6)
            ax.plot([a, b], [bound, bound], color=edge, linewidth=1.1 if failed else 0.9,
                    solid_capstyle="butt", zorder=2)
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
                        textcoords="offset points", ha=ha, va=va, fontsize=_FONT_PT - 0.5,
                        color=edge, fontweight="bold", zorder=6,
                        bbox={"boxstyle": "round,pad=0.15", "facecolor": "white",
                              "edgecolor": edge, "linewidth": 0.5})


def _fail_points(ax: Any, spec: SpecResult, fails: dict[int, Tag], curve: str, scale: float,
                 x_span: tuple[float, float], masked: set[str], drawn: list[Tag],
                 skip: tuple[float, float] | None = None) -> None:
    """Mark the worst point of each failed limit that belongs on this panel.

    A limit whose unit is the panel's (dB on gain, s on group delay, deg on phase) gets
    a cross at its worst point: exactly (at_hz, measured) when it draws a mask band,
    else on the curve at at_hz. On the gain panel, limits in other units (frequency,
    Q, impedance) get a wedge on the top edge at at_hz: where, not a value. Tags of
    points that coincide share one label.
    """
    c = spec.curves
    f = c.frequency_hz
    ylo, yhi = ax.get_ylim()
    offsets = {b.label: _offset(b, spec) for b in spec.mask if b.quantity in _GAIN_QUANTITIES}
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
                y = float(np.interp(np.log(lim.at_hz), np.log(f), getattr(c, curve))) / scale
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
                label += f"  {format_eng(lim.measured, lim.unit)}"
            ax.plot([x], [y], marker="X", markersize=7, color=PALETTE["fail"],
                    markeredgecolor="white", markeredgewidth=0.7, zorder=7, linestyle="none")
            ax.annotate(label, (x, y), xytext=(6, -9), textcoords="offset points",
                        fontsize=_FONT_PT, color=PALETTE["fail"], fontweight="bold", zorder=8,
                        bbox=box)
        else:
            ax.plot([x], [y], marker="v", markersize=7, color=PALETTE["fail"], clip_on=False,
                    markeredgecolor="white", markeredgewidth=0.6, zorder=7, linestyle="none")
            ax.annotate(label, (x, y), xytext=(7, -3), textcoords="offset points", va="top",
                        fontsize=_FONT_PT, color=PALETTE["fail"], fontweight="bold", zorder=8,
                        bbox=box, annotation_clip=False)


def _with_exact_points(spec: SpecResult, f: np.ndarray, g: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Add the refined peak and half-power edges (exact points of the same response)."""
    pts = []
    peak_f, peak_g = spec.measurement("f_peak_hz"), spec.measurement("peak_gain_db")
    if peak_f is not None and peak_g is not None:
        pts.append((peak_f, peak_g))
        for key in ("f_low_hz", "f_high_hz"):
            fe = spec.measurement(key)
            if fe is not None:
                pts.append((fe, peak_g - _HALF_POWER_DB))
    pts = [(x, y) for x, y in pts if math.isfinite(x) and math.isfinite(y) and f[0] < x < f[-1]]
    if not pts:
        return f, g
    fx = np.concatenate([f, [p[0] for p in pts]])
    gx = np.concatenate([g, [p[1] for p in pts]])
    order = np.argsort(fx, kind="stable")
    return fx[order], gx[order]


def _gain_axes(ax: Any, spec: SpecResult, masks: dict[int, Tag], fails: dict[int, Tag],
               span: tuple[float, float], zoom: bool, drawn: list[Tag],
               skip: tuple[float, float] | None = None) -> None:
    c = spec.curves
    f, g = _with_exact_points(spec, c.frequency_hz, c.gain_db)
    ylim = _gain_limits(spec, *span, zoom)
    ax.set_xlim(*span)
    ax.set_ylim(*ylim)
    _draw_mask(ax, spec, masks, _GAIN_QUANTITIES, 1.0, ylim, span, drawn, skip)
    if _has_envelope(spec):
        ax.fill_between(c.frequency_hz, c.envelope_lo_db, c.envelope_hi_db,
                        facecolor=PALETTE["envelope"], edgecolor=PALETTE["slate"],
                        linewidth=0.35, alpha=0.7, zorder=1, label=_envelope_label(spec))
    ax.plot(f, g, color=PALETTE["ink"], linewidth=1.3, zorder=5, label="nominal gain")
    masked = {spec.mask[i].label for i in masks}
    _fail_points(ax, spec, fails, "gain_db", 1.0, span, masked, drawn, skip)
    ax.set_ylabel(_gain_label(spec), fontsize=_FONT_PT + 0.5, color=PALETTE["ink"])


def _has_envelope(spec: SpecResult) -> bool:
    c = spec.curves
    return c is not None and c.envelope_lo_db is not None and c.envelope_hi_db is not None


def _mc_samples(spec: SpecResult) -> int | None:
    """Number of Monte Carlo samples behind the envelope, when the result records it."""
    tol = spec.extra_value("tolerance")
    mc = tol.get("monte_carlo") if isinstance(tol, dict) else None
    return mc.get("samples") if isinstance(mc, dict) else None


def _envelope_label(spec: SpecResult) -> str:
    n = _mc_samples(spec)
    return f"Monte Carlo envelope, {n} samples (lowest to highest gain)" if n else \
        "Monte Carlo envelope (lowest to highest gain over the samples)"


def _legend_above(ax: Any, ncol: int = 2) -> None:
    """The axes' legend in the margin above them, right-aligned, so it hides no data."""
    handles, labels = ax.get_legend_handles_labels()
    if not handles:
        return
    order = sorted(range(len(labels)), key=lambda i: not labels[i].startswith("nominal"))
    handles, labels = [handles[i] for i in order], [labels[i] for i in order]
    ax.legend(handles, labels, loc="lower right", bbox_to_anchor=(1.0, 1.0), ncol=ncol,
              frameon=False, fontsize=_FONT_PT, borderaxespad=0.25, handlelength=2.6,
              columnspacing=1.6, handletextpad=0.6, labelcolor=PALETTE["ink"])


def _gain_label(spec: SpecResult) -> str:
    """y label: dB re 1 V/V for a voltage stimulus, re 1 V/A (transimpedance) for a current."""
    if dict(spec.sweep).get("stimulus_unit") == "A":
        return "Gain (dB re 1 V/A)"
    return "Gain (dB)"


def _annotate_resonance(ax: Any, spec: SpecResult) -> None:
    """Half-power level, edges, centre, bandwidth and Q on the zoom."""
    peak_f, peak_g = spec.measurement("f_peak_hz"), spec.measurement("peak_gain_db")
    f_lo, f_hi = spec.measurement("f_low_hz"), spec.measurement("f_high_hz")
    f_c, q, bw = (spec.measurement(k) for k in ("f_center_hz", "q", "bandwidth_hz"))
    guide = PALETTE["guide"]
    kw = {"fontsize": _FONT_PT, "color": guide, "zorder": 9}
    box = {"boxstyle": "round,pad=0.2", "facecolor": "white", "edgecolor": "none", "alpha": 0.85}
    if peak_f is not None and peak_g is not None:
        ax.plot([peak_f], [peak_g], marker="o", markersize=4.5, color=PALETTE["ink"],
                markerfacecolor="white", markeredgewidth=1.0, zorder=8, linestyle="none")
        ax.annotate(f"peak {format_eng(peak_g, 'dB')} at {format_si(peak_f, 'Hz', 5)}",
                    (peak_f, peak_g), xytext=(48, -14), textcoords="offset points",
                    fontsize=_FONT_PT, color=PALETTE["ink"], zorder=9, bbox=box, va="center",
                    arrowprops={"arrowstyle": "-", "color": PALETTE["ink"], "linewidth": 0.6,
                                "shrinkA": 0, "shrinkB": 3})
    if peak_g is None or f_lo is None or f_hi is None:
        return
    level = peak_g - _HALF_POWER_DB
    ax.axhline(level, color=guide, linewidth=0.8, linestyle=(0, (5, 3)), zorder=4)
    x0, x1 = ax.get_xlim()
    ax.annotate(f"half-power level: peak − {_HALF_POWER_DB:.2f} dB  (|H_peak|/√2)",
                (x0, level), xytext=(4, 3), textcoords="offset points", ha="left",
                va="bottom", bbox=box, **kw)
    ymin = ax.get_ylim()[0]
    for fx, name, ha in ((f_lo, "f_low", "right"), (f_hi, "f_high", "left")):
        ax.plot([fx, fx], [ymin, level], color=guide, linewidth=0.8, linestyle=(0, (1.5, 1.5)),
                zorder=4)
        ax.plot([fx], [level], marker="D", markersize=3.5, color=guide, zorder=8,
                linestyle="none")
        ax.annotate(f"{name}\n{format_si(fx, 'Hz', 5)}", (fx, ymin), xytext=(-3 if ha == "right"
                    else 3, 4), textcoords="offset points", ha=ha, va="bottom", bbox=box, **kw)
    y_arrow = level - 0.35 * (level - ymin)
    ax.annotate("", (f_lo, y_arrow), (f_hi, y_arrow),
                arrowprops={"arrowstyle": "<->", "color": guide, "linewidth": 0.8,
                            "shrinkA": 0, "shrinkB": 0}, zorder=8)
    parts = [f"bandwidth {format_si(bw, 'Hz', 4)}" if bw is not None else "",
             f"Q {q:.4g}" if q is not None else ""]
    ax.annotate("  ·  ".join(p for p in parts if p), (math.sqrt(f_lo * f_hi), y_arrow),
                xytext=(0, 3), textcoords="offset points", ha="center", va="bottom",
                bbox=box, **kw)
    if f_c is not None:
        ax.axvline(f_c, color=guide, linewidth=0.7, linestyle=(0, (6, 2, 1, 2)), zorder=4)
        ax.annotate(f"f_center\n{format_si(f_c, 'Hz', 5)}", (f_c, ymin), xytext=(0, 4),
                    textcoords="offset points", ha="center", va="bottom", bbox=box, **kw)


def _gain_overview(spec: SpecResult, masks: dict[int, Tag], fails: dict[int, Tag],
                   zoom: tuple[float, float] | None, drawn: list[Tag]) -> str:
    legend = _has_envelope(spec)
    fig = _figure(2.75 if legend else 2.6)
    ax = fig.add_axes((0.08, 0.15, 0.885, 0.75) if legend else (0.08, 0.16, 0.885, 0.79))
    _style(ax)
    f = spec.curves.frequency_hz
    _hz_log_axis(ax, float(f[0]), float(f[-1]))
    _gain_axes(ax, spec, masks, fails, (float(f[0]), float(f[-1])), False, drawn, zoom)
    if legend:
        _legend_above(ax)
    if zoom is not None:
        ax.axvspan(*zoom, facecolor="none", edgecolor=PALETTE["guide"], linewidth=0.7,
                   linestyle=(0, (3, 2)), zorder=3)
        ax.annotate("zoom", (math.sqrt(zoom[0] * zoom[1]), ax.get_ylim()[0]), xytext=(0, 3),
                    textcoords="offset points", ha="center", va="bottom",
                    fontsize=_FONT_PT - 0.5, color=PALETTE["guide"], zorder=9)
    ax.set_xlabel("Frequency (log scale)", fontsize=_FONT_PT + 0.5, color=PALETTE["ink"])
    return _svg(fig)


def _gain_zoom(spec: SpecResult, masks: dict[int, Tag], fails: dict[int, Tag],
               zoom: tuple[float, float], drawn: list[Tag]) -> str:
    legend = _has_envelope(spec)
    fig = _figure(2.95 if legend else 2.8)
    ax = fig.add_axes((0.08, 0.145, 0.885, 0.765) if legend else (0.08, 0.155, 0.885, 0.795))
    _style(ax)
    if zoom[1] / zoom[0] > 3.0:
        _hz_log_axis(ax, *zoom)
        label = "Frequency (log scale)"
    else:
        label = _hz_linear_axis(ax, *zoom)
    _gain_axes(ax, spec, masks, fails, zoom, True, drawn)
    if legend:
        _legend_above(ax)
    if spec.measurement("f_low_hz") is not None:
        _annotate_resonance(ax, spec)
    ax.set_xlabel(label, fontsize=_FONT_PT + 0.5, color=PALETTE["ink"])
    return _svg(fig)


def _panel_span(spec: SpecResult, quantity: str,
                zoom: tuple[float, float] | None) -> tuple[float, float]:
    f = spec.curves.frequency_hz
    bands = [b for b in spec.mask if b.quantity == quantity]
    if bands:
        lo, hi = min(b.f_lo_hz for b in bands), max(b.f_hi_hz for b in bands)
        pad = 0.3 * math.log10(hi / lo) + 0.02
        return max(f[0], lo / 10 ** pad), min(f[-1], hi * 10 ** pad)
    if zoom is not None:
        return zoom
    return float(f[0]), float(f[-1])


def _phase_delay(spec: SpecResult, masks: dict[int, Tag], fails: dict[int, Tag],
                 zoom: tuple[float, float] | None, drawn: list[Tag]) -> str:
    kinds = _extra_panels(spec)
    fig = _figure(1.65 * len(kinds) + 0.45)
    c = spec.curves
    n = len(kinds)
    bottom_margin, top_margin = 0.42 / fig.get_figheight(), 0.08 / fig.get_figheight()
    h = (1.0 - bottom_margin - top_margin) / n
    for k, kind in enumerate(kinds):
        curve, quantity, label, unit = _PANELS[kind]
        span = _panel_span(spec, quantity, zoom)
        ax = fig.add_axes((0.08, 1.0 - top_margin - (k + 1) * h + 0.06 * h, 0.885, h * 0.86))
        _style(ax)
        log = span[1] / span[0] > 3.0
        if log:
            _hz_log_axis(ax, *span)
        xlabel = "Frequency (log scale)" if log else _hz_linear_axis(ax, *span)
        y = getattr(c, curve)
        sel = (c.frequency_hz >= span[0]) & (c.frequency_hz <= span[1]) & np.isfinite(y)
        scale, prefix = (1.0, "") if unit == "deg" else _si_scale(
            float(np.nanmax(np.abs(y[sel]))) if sel.any() else 1.0)
        vals = list(y[sel] / scale)
        for band in spec.mask:
            if band.quantity == quantity:
                vals += [v / scale for v in (band.lo, band.hi) if v is not None]
        lo, hi = (min(vals), max(vals)) if vals else (-1.0, 1.0)
        pad = 0.12 * max(hi - lo, 1e-9 if unit == "s" else 1.0)
        ylim = (lo - pad, hi + pad)
        ax.set_xlim(*span)
        ax.set_ylim(*ylim)
        _draw_mask(ax, spec, masks, (quantity,), scale, ylim, span, drawn)
        ax.plot(c.frequency_hz, y / scale, color=PALETTE["ink"], linewidth=1.2, zorder=5)
        _fail_points(ax, spec, fails, curve, scale, span, {spec.mask[i].label for i in masks},
                     drawn)
        ax.set_ylabel(f"{label} ({prefix}{unit})", fontsize=_FONT_PT + 0.5, color=PALETTE["ink"])
        if k == n - 1:
            ax.set_xlabel(xlabel, fontsize=_FONT_PT + 0.5, color=PALETTE["ink"])
    return _svg(fig)


def _keys(drawn: list[Tag]) -> tuple[Tag, ...]:
    """Drawn tags, each once, masks before failures, in tag order."""
    unique = {t.tag: t for t in drawn}
    return tuple(sorted(unique.values(), key=lambda t: (t.tag[0] != "M", int(t.tag[1:]))))


def spec_plots(spec: SpecResult) -> tuple[Plot, ...]:
    """The report's figures for one spec (empty when the spec has no curves)."""
    if spec.curves is None or spec.curves.frequency_hz.size < 2:
        return ()
    masks, fails = tags_for(spec)
    zoom = zoom_window(spec)
    f = spec.curves.frequency_hz
    n = _mc_samples(spec)
    envelope = (" The grey band (named in the legend above the plot) is the Monte Carlo "
                f"envelope: at each grid frequency, the lowest to the highest gain over the "
                f"{f'{n} ' if n else ''}tolerance samples. The mask is judged on every sample "
                "separately; the band only shows how far the response spreads."
                if _has_envelope(spec) else "")
    drawn: list[Tag] = []
    svg = _gain_overview(spec, masks, fails, zoom, drawn)
    plots = [Plot("Gain over the whole sweep",
                  f"Gain in dB against frequency, {format_si(float(f[0]), 'Hz')} to "
                  f"{format_si(float(f[-1]), 'Hz')}, with the spec mask: allowed regions are "
                  "tinted, forbidden regions hatched (cross-hatched where the limit failed)."
                  + (" The dashed box marks the zoom below; what lies inside it is tagged "
                     "there." if zoom else "") + envelope,
                  svg, _keys(drawn))]
    if zoom is not None:
        resonant = spec.measurement("f_low_hz") is not None
        drawn = []
        svg = _gain_zoom(spec, masks, fails, zoom, drawn)
        plots.append(Plot(
            "Pass-band and resonance in detail" if resonant else "Pass-band in detail",
            f"Gain from {format_si(zoom[0], 'Hz', 5)} to {format_si(zoom[1], 'Hz', 5)}"
            + (", with the half-power level (peak − 3.01 dB, |H_peak|/√2), the half-power edges "
               "f_low and f_high, the centre f_center = √(f_low·f_high), the bandwidth and Q."
               if resonant else ".") + envelope,
            svg, _keys(drawn)))
    panels = _extra_panels(spec)
    if panels:
        names = " and ".join(_PANELS[k][2].lower() for k in panels)
        drawn = []
        svg = _phase_delay(spec, masks, fails, zoom, drawn)
        plots.append(Plot(names[0].upper() + names[1:],
                          f"{names[0].upper()}{names[1:]} against frequency, for the limits on "
                          "them (their bounds and margins are in the summary table).",
                          svg, _keys(drawn)))
    return tuple(plots)


# --------------------------------------------------------------------------- tolerance


def _quantity_scale(values: list[float], unit: str) -> tuple[float, str]:
    """(scale, axis unit) for a value axis: SI prefixes except for dB, deg and pure numbers."""
    if unit in ("", "1", "dB", "deg") or not values:
        return 1.0, unit
    scale, prefix = _si_scale(max(abs(v) for v in values) or 1.0)
    return scale, prefix + unit


def _bound_limit(spec: SpecResult, name: str) -> LimitResult | None:
    """The nominal limit row called ``name`` (not a yield, worst-case or stress row)."""
    for lim in spec.limits:
        if lim.name == name and lim.kind not in ("yield", "worst_case", "stress"):
            return lim
    return None


def histogram_plot(spec: SpecResult) -> Plot | None:
    """Histogram of the Monte Carlo samples of the deciding measurement, or None.

    Reads ``extra["tolerance"]["monte_carlo"]["histogram"]`` (name, counts, edges). When
    the name is a limit with bounds, the bounds are drawn with the forbidden side
    hatched, as on the gain mask; the nominal value is a dashed line, and the
    worst-case range (EVA, widened by the corners when evaluated) a bracket above the bars.
    """
    tol = spec.extra_value("tolerance")
    mc = tol.get("monte_carlo") if isinstance(tol, dict) else None
    hist = mc.get("histogram") if isinstance(mc, dict) else None
    if not isinstance(hist, dict) or not hist.get("counts") or len(hist.get("edges", ())) < 2:
        return None
    counts = np.asarray(hist["counts"], float)
    edges = np.asarray(hist["edges"], float)
    name = str(hist.get("name", ""))
    lim = _bound_limit(spec, name)
    unit = lim.unit if lim is not None else ""
    wc = next((e for e in (tol.get("worst_case") or {}).get("limits", ())
               if e.get("name") == name), None)
    data_lo, data_hi = float(edges[0]), float(edges[-1])
    width = max(data_hi - data_lo, abs(data_hi) * 1e-9, 1e-300)
    lo, hi = data_lo - 0.08 * width, data_hi + 0.08 * width
    bounds, off_scale = [], []
    for side, value in (("lower", None if lim is None else lim.lower),
                        ("upper", None if lim is None else lim.upper)):
        if value is None or not math.isfinite(value):
            continue
        if (data_lo - value if side == "lower" else value - data_hi) <= 3.0 * width:
            bounds.append((side, value))
            lo, hi = min(lo, value - 0.2 * width), max(hi, value + 0.2 * width)
        else:
            off_scale.append((side, value))
    wc_range = None
    if wc is not None and wc.get("min") is not None and wc.get("max") is not None:
        a, b = float(wc["min"]), float(wc["max"])
        if wc.get("corners_min") is not None:
            a, b = min(a, float(wc["corners_min"])), max(b, float(wc["corners_max"]))
        wc_range = (a, b)
        lo, hi = min(lo, a - 0.04 * width), max(hi, b + 0.04 * width)
    scale, axis_unit = _quantity_scale([lo, hi], unit)

    fig = _figure(2.35)
    ax = fig.add_axes((0.08, 0.17, 0.885, 0.70))
    _style(ax)
    ax.grid(False, axis="x")
    top = float(counts.max()) * 1.32 + 1.0
    ax.set_xlim(lo / scale, hi / scale)
    ax.set_ylim(0.0, top)
    centres = 0.5 * (edges[:-1] + edges[1:])
    outside = np.zeros(counts.size, bool)
    for side, value in bounds + off_scale:
        outside |= centres < value if side == "lower" else centres > value
    inside = ~outside
    ax.bar(edges[:-1][inside] / scale, counts[inside], width=np.diff(edges)[inside] / scale,
           align="edge", facecolor=PALETTE["envelope"], edgecolor=PALETTE["ink"],
           linewidth=0.45, zorder=3,
           label=f"samples per bin ({int(counts.sum())} in {counts.size} bins)")
    if outside.any() and counts[outside].sum() > 0:
        ax.bar(edges[:-1][outside] / scale, counts[outside], width=np.diff(edges)[outside] / scale,
               align="edge", facecolor="white", edgecolor=PALETTE["fail"], hatch="xxxx",
               linewidth=0.6, zorder=3,
               label="bins outside the limit")
    box = {"boxstyle": "round,pad=0.15", "facecolor": "white", "edgecolor": "none", "alpha": 0.9}
    for side, value in bounds:
        x = value / scale
        far = lo / scale if side == "lower" else hi / scale
        ax.fill_betweenx([0.0, top], min(x, far), max(x, far), facecolor=PALETTE["forbid"],
                         edgecolor=PALETTE["hatch"], hatch="///", linewidth=0, zorder=1)
        ax.axvline(x, color=PALETTE["hatch"], linewidth=1.0, zorder=4)
        ax.annotate(f"{side} limit {format_eng(value, unit)}", (x, top), xytext=(
            4 if side == "lower" else -4, -3), textcoords="offset points", va="top",
            ha="left" if side == "lower" else "right", fontsize=_FONT_PT - 0.5,
            color=PALETTE["hatch"], fontweight="bold", zorder=6, bbox=box)
    for side, value in off_scale:
        ax.annotate(f"{side} limit {format_eng(value, unit)} off scale "
                    f"{'←' if side == 'lower' else '→'}",
                    (0.0 if side == "lower" else 1.0, 0.97), xycoords="axes fraction",
                    ha="left" if side == "lower" else "right", va="top",
                    fontsize=_FONT_PT - 0.5, color=PALETTE["hatch"], zorder=6, bbox=box)
    if lim is not None and lim.measured is not None and math.isfinite(lim.measured):
        x = lim.measured / scale
        ax.axvline(x, color=PALETTE["guide"], linewidth=0.9, linestyle=(0, (4, 2)), zorder=5,
                   label=f"nominal {format_eng(lim.measured, unit)}")
    if wc_range is not None:
        y = float(counts.max()) * 1.13
        ax.annotate("", (wc_range[0] / scale, y), (wc_range[1] / scale, y),
                    arrowprops={"arrowstyle": "|-|,widthA=0.25,widthB=0.25",
                                "color": PALETTE["ink"], "linewidth": 0.8,
                                "shrinkA": 0, "shrinkB": 0}, zorder=6)
        ax.annotate(f"worst-case range {format_eng(wc_range[0], unit)} … "
                    f"{format_eng(wc_range[1], unit)}",
                    (0.5 * (wc_range[0] + wc_range[1]) / scale, y), xytext=(0, 2),
                    textcoords="offset points", ha="center", va="bottom",
                    fontsize=_FONT_PT - 0.5, color=PALETTE["ink"], zorder=7, bbox=box)
    _legend_above(ax, ncol=3)
    ax.set_ylabel("Samples", fontsize=_FONT_PT + 0.5, color=PALETTE["ink"])
    ax.set_xlabel(f"Measured value ({axis_unit})" if axis_unit else "Measured value",
                  fontsize=_FONT_PT + 0.5, color=PALETTE["ink"])
    samples = mc.get("samples")
    caption = (f"The {samples} Monte Carlo values of this measurement, binned. " if samples
               else "The Monte Carlo values of this measurement, binned. ")
    if bounds or off_scale:
        caption += ("Hatched background: outside the limit; cross-hatched bars: bins whose "
                    "centre lies outside it. " if outside.any() and counts[outside].sum() > 0
                    else "Hatched: outside the limit. ")
    if lim is not None:
        caption += "Dashed: the nominal value. "
    if wc_range is not None:
        caption += ("The bracket above the bars is the worst-case range (extreme-value "
                    "analysis" + (", widened to the corners" if wc.get("corners_min")
                                  is not None else "") + ").")
    if lim is not None:
        caption += f" Allowed: {lim.bound_text}."
    return Plot(f"Spread of {name} over the samples (the measurement with the least mean "
                "margin)", caption.strip(), _svg(fig))


# --------------------------------------------------------------------------- families


#: line styles of a family overlay: (dash pattern, marker, colour key, words)
VARIANT_STYLES = (
    ("-", "", "ink", "solid line"),
    ((0, (6, 2.5)), "", "guide", "dashed line"),
    ((0, (1.2, 1.6)), "", "hatch", "dotted line"),
    ((0, (7, 2, 1.5, 2)), "", "slate", "dash-dot line"),
    ("-", "o", "guide", "solid line with circles"),
    ((0, (6, 2.5)), "s", "hatch", "dashed line with squares"),
    ((0, (1.2, 1.6)), "^", "ink", "dotted line with triangles"),
    ((0, (7, 2, 1.5, 2)), "D", "guide", "dash-dot line with diamonds"),
)


def variant_style(k: int) -> tuple[Any, str, str, str]:
    """Line style of the ``k``-th variant (0-based): dash pattern, marker, colour, words.

    Eight distinct styles; beyond eight the cycle repeats with thinner lines, said in words.
    """
    dash, marker, colour, words = VARIANT_STYLES[k % len(VARIANT_STYLES)]
    if k >= len(VARIANT_STYLES):
        words += ", thin"
    return dash, marker, PALETTE[colour], words


def _family_window(members: list[SpecResult]) -> tuple[float, float] | None:
    wins = [w for w in (zoom_window(m) for m in members) if w is not None]
    if not wins:
        return None
    return min(w[0] for w in wins), max(w[1] for w in wins)


def _family_mask_tags(members: list[SpecResult], ref: SpecResult) -> dict[int, Tag]:
    """The reference member's mask tags, each with the worst status over the family."""
    masks, _ = tags_for(ref)
    out = {}
    for i, tag in masks.items():
        statuses = [lim.status for m in members for lim in m.limits if lim.name == tag.name]
        worst = max(statuses, key=lambda s: s.rank) if statuses else tag.status
        out[i] = Tag(tag.tag, tag.name, tag.text, worst)
    return out


def _family_axes(ax: Any, members: list[SpecResult], ref: SpecResult, masks: dict[int, Tag],
                 span: tuple[float, float], zoom: bool, drawn: list[Tag],
                 skip: tuple[float, float] | None) -> None:
    limits = [_gain_limits(m, *span, zoom) for m in members]
    ylim = (min(a for a, _ in limits), max(b for _, b in limits))
    ax.set_xlim(*span)
    ax.set_ylim(*ylim)
    _draw_mask(ax, ref, masks, _GAIN_QUANTITIES, 1.0, ylim, span, drawn, skip)
    thin = len(members) > len(VARIANT_STYLES)
    peaks: dict[float, list[tuple[int, float, float]]] = {}
    for k, m in enumerate(members):
        dash, marker, colour, _ = variant_style(k)
        f, g = _with_exact_points(m, m.curves.frequency_hz, m.curves.gain_db)
        fp, gp = m.measurement("f_peak_hz"), m.measurement("peak_gain_db")
        if zoom and fp is not None and gp is not None and span[0] < fp < span[1] \
                and ylim[0] < gp < ylim[1]:
            peaks.setdefault(round(math.log10(fp) / 0.004), []).append((k, fp, gp))
        sel = (f >= span[0]) & (f <= span[1])
        every = max(1, int(sel.sum()) // 9)
        ax.plot(f, g, color=colour, linestyle=dash, linewidth=0.9 if thin else 1.25,
                marker=marker or None, markersize=3.6, markerfacecolor="white",
                markeredgewidth=0.8, markevery=(int(np.argmax(sel)) + (k * every) // 3 % every,
                                               every) if marker else None,
                zorder=5 + 0.01 * k, label=f"V{k + 1}")
    box = {"boxstyle": "round,pad=0.15", "facecolor": "white", "edgecolor": "none", "alpha": 0.85}
    for group in peaks.values():
        fp = group[0][1]
        gp = max(g for _, _, g in group)
        ax.annotate(" ".join(f"V{k + 1}" for k, _, _ in group), (fp, gp), xytext=(0, 4),
                    textcoords="offset points", ha="center", va="bottom",
                    fontsize=_FONT_PT - 0.5, color=PALETTE["ink"], fontweight="bold",
                    zorder=9, bbox=box)


def family_plots(members: list[SpecResult]) -> tuple[Plot, ...]:
    """Overlay of every variant's gain against the spec mask (whole sweep, then zoom).

    Variants are tagged ``V1``… in the plot (no text from input files is drawn); the
    figure key names them, with each line style in words and the variant's verdict.
    Members without curves (not checked) are left out. The mask is the first plotted
    member's; bands relative to the peak are placed on that member's peak.
    """
    drawn_members = [m for m in members if m.curves is not None and m.curves.frequency_hz.size > 1]
    if not drawn_members:
        return ()
    ref = drawn_members[0]
    masks = _family_mask_tags(drawn_members, ref)
    variant_keys = tuple(Tag(f"V{k + 1}", m.variant or m.label, variant_style(k)[3], m.status)
                         for k, m in enumerate(drawn_members))
    full = (min(float(m.curves.frequency_hz[0]) for m in drawn_members),
            max(float(m.curves.frequency_hz[-1]) for m in drawn_members))
    zoom = _family_window(drawn_members)
    if zoom is not None and zoom[0] <= full[0] and zoom[1] >= full[1]:
        zoom = None
    ncol = min(len(drawn_members), 8)
    rows = math.ceil(len(drawn_members) / ncol)
    plots = []
    for panel in ("overview", "zoom"):
        if panel == "zoom" and zoom is None:
            break
        span = full if panel == "overview" else zoom
        extra = 0.17 * rows
        fig = _figure(2.6 + extra)
        h = fig.get_figheight()
        ax = fig.add_axes((0.08, 0.42 / h, 0.885, 1.0 - (0.42 + 0.12 + 0.17 * rows) / h))
        _style(ax)
        if panel == "overview" or span[1] / span[0] > 3.0:
            _hz_log_axis(ax, *span)
            xlabel = "Frequency (log scale)"
        else:
            xlabel = _hz_linear_axis(ax, *span)
        drawn: list[Tag] = []
        _family_axes(ax, drawn_members, ref, masks, span, panel == "zoom", drawn,
                     zoom if panel == "overview" else None)
        if panel == "overview" and zoom is not None:
            ax.axvspan(*zoom, facecolor="none", edgecolor=PALETTE["guide"], linewidth=0.7,
                       linestyle=(0, (3, 2)), zorder=3)
            ax.annotate("zoom", (math.sqrt(zoom[0] * zoom[1]), ax.get_ylim()[0]),
                        xytext=(0, 3), textcoords="offset points", ha="center", va="bottom",
                        fontsize=_FONT_PT - 0.5, color=PALETTE["guide"], zorder=9)
        _legend_above(ax, ncol)
        ax.set_ylabel(_gain_label(ref), fontsize=_FONT_PT + 0.5, color=PALETTE["ink"])
        ax.set_xlabel(xlabel, fontsize=_FONT_PT + 0.5, color=PALETTE["ink"])
        if panel == "overview":
            title = "Gain of every variant over the whole sweep"
            caption = (f"Nominal gain of the {len(drawn_members)} variants against the spec "
                       f"mask, {format_si(full[0], 'Hz')} to {format_si(full[1], 'Hz')}. "
                       "Each variant has its own line style (V1, V2… in the legend and the key "
                       "below), so the curves can be told apart in greyscale. Allowed regions "
                       "are tinted, forbidden regions hatched (cross-hatched where the limit "
                       "failed for any variant)."
                       + (" The dashed box marks the zoom below." if zoom else ""))
        else:
            title = "Pass-bands and resonances of every variant in detail"
            caption = (f"The same curves from {format_si(span[0], 'Hz', 5)} to "
                       f"{format_si(span[1], 'Hz', 5)}, spanning every variant's pass-band "
                       "or half-power edges, each drawn through the sweep grid and its own "
                       "refined peak and edges; each peak is tagged with its variant.")
        if any(b.quantity == "gain_re_peak_db" for b in ref.mask):
            caption += (" Bounds relative to the peak are drawn on the peak of V1; each "
                        "variant is judged against its own peak.")
        plots.append(Plot(title, caption, _svg(fig), _keys(drawn) + variant_keys))
    return tuple(plots)
