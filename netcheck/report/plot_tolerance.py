"""Tolerance figures: the Monte Carlo gain envelope and the histogram of the deciding value."""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from ..result import SpecResult
from ..netlist.units import format_eng
from .lookup import analysis_block, nominal_limits
from .plot_base import (FONT_PT, PALETTE, Plot, legend_above, new_figure, si_scale, style_axes,
                        to_svg)

__all__ = ["has_envelope", "draw_envelope", "envelope_caption", "histogram_plot"]


def has_envelope(spec: SpecResult) -> bool:
    """Whether the spec's curves carry a Monte Carlo gain envelope."""
    c = spec.curves
    return c is not None and c.envelope_lo_db is not None and c.envelope_hi_db is not None


def _mc_samples(spec: SpecResult) -> int | None:
    """Number of Monte Carlo samples behind the envelope, when the result records it."""
    mc = analysis_block(spec, "tolerance", "monte_carlo")
    return None if mc is None else mc.get("samples")


def _envelope_label(spec: SpecResult) -> str:
    n = _mc_samples(spec)
    return f"Monte Carlo envelope, {n} samples (lowest to highest gain)" if n else \
        "Monte Carlo envelope (lowest to highest gain over the samples)"


def draw_envelope(ax: Any, spec: SpecResult) -> None:
    """The Monte Carlo gain envelope as a grey band on a gain axis, when the spec has one."""
    if has_envelope(spec):
        c = spec.curves
        ax.fill_between(c.frequency_hz, c.envelope_lo_db, c.envelope_hi_db,
                        facecolor=PALETTE["envelope"], edgecolor=PALETTE["slate"],
                        linewidth=0.35, alpha=0.7, zorder=1, label=_envelope_label(spec))


def envelope_caption(spec: SpecResult) -> str:
    """The caption sentences explaining the envelope band ('' when there is none)."""
    if not has_envelope(spec):
        return ""
    n = _mc_samples(spec)
    return (" The grey band (named in the legend above the plot) is the Monte Carlo "
            f"envelope: at each grid frequency, the lowest to the highest gain over the "
            f"{f'{n} ' if n else ''}tolerance samples. The mask is judged on every sample "
            "separately; the band only shows how far the response spreads.")


def _quantity_scale(values: list[float], unit: str) -> tuple[float, str]:
    """(scale, axis unit) for a value axis: SI prefixes except for dB, deg and pure numbers."""
    if unit in ("", "1", "dB", "deg") or not values:
        return 1.0, unit
    scale, prefix = si_scale(max(abs(v) for v in values) or 1.0)
    return scale, prefix + unit


def histogram_plot(spec: SpecResult) -> Plot | None:
    """Histogram of the Monte Carlo samples of the deciding measurement, or None.

    Reads ``extra["tolerance"]["monte_carlo"]["histogram"]`` (name, counts, edges). When
    the name is a limit with bounds, the bounds are drawn with the forbidden side
    hatched, as on the gain mask; the nominal value is a dashed line, and the
    worst-case range (what decided the worst-case verdict: the corners, or the worse of
    EVA and the corners) a bracket above the bars. The bars are the samples where the
    quantity could be measured; the legend and the caption say how many of all.
    """
    mc = analysis_block(spec, "tolerance", "monte_carlo")
    hist = analysis_block(spec, "tolerance", "monte_carlo", "histogram")
    if hist is None or not hist.get("counts") or len(hist.get("edges", ())) < 2:
        return None
    counts = np.asarray(hist["counts"], float)
    edges = np.asarray(hist["edges"], float)
    binned = int(hist.get("n", counts.sum()))
    total = int(hist.get("samples") or (mc or {}).get("samples") or 0)
    name = str(hist.get("name", ""))
    lim = nominal_limits(spec).get(name)
    unit = lim.unit if lim is not None else ""
    wc_block = analysis_block(spec, "tolerance", "worst_case") or {}
    wc = next((e for e in wc_block.get("limits", ()) if e.get("name") == name), None)
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
    if wc is not None and wc.get("worst_min") is not None and wc.get("worst_max") is not None:
        wc_range = (float(wc["worst_min"]), float(wc["worst_max"]))
    elif wc is not None and "decided_by" not in wc and wc.get("min") is not None \
            and wc.get("max") is not None:  # a result written before worst_min/max
        a, b = float(wc["min"]), float(wc["max"])
        if wc.get("corners_min") is not None:
            a, b = min(a, float(wc["corners_min"])), max(b, float(wc["corners_max"]))
        wc_range = (a, b)
    if wc_range is not None:
        a, b = wc_range
        lo, hi = min(lo, a - 0.04 * width), max(hi, b + 0.04 * width)
    scale, axis_unit = _quantity_scale([lo, hi], unit)

    fig = new_figure(2.35)
    ax = fig.add_axes((0.08, 0.17, 0.885, 0.70))
    style_axes(ax)
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
           label=f"samples per bin ({binned}{f' of {total}' if total else ''} in "
                 f"{counts.size} bins)")
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
            ha="left" if side == "lower" else "right", fontsize=FONT_PT - 0.5,
            color=PALETTE["hatch"], fontweight="bold", zorder=6, bbox=box)
    for side, value in off_scale:
        ax.annotate(f"{side} limit {format_eng(value, unit)} off scale "
                    f"{'←' if side == 'lower' else '→'}",
                    (0.0 if side == "lower" else 1.0, 0.97), xycoords="axes fraction",
                    ha="left" if side == "lower" else "right", va="top",
                    fontsize=FONT_PT - 0.5, color=PALETTE["hatch"], zorder=6, bbox=box)
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
                    fontsize=FONT_PT - 0.5, color=PALETTE["ink"], zorder=7, bbox=box)
    legend_above(ax, ncol=3)
    ax.set_ylabel("Samples", fontsize=FONT_PT + 0.5, color=PALETTE["ink"])
    ax.set_xlabel(f"Measured value ({axis_unit})" if axis_unit else "Measured value",
                  fontsize=FONT_PT + 0.5, color=PALETTE["ink"])
    if total and binned < total:
        caption = (f"The {binned} of {total} Monte Carlo samples where this could be "
                   f"measured, binned; in the other {total - binned} it could not (the "
                   "feature left the sweep or the band), so they fail the limit and are not "
                   "drawn. ")
    elif total:
        caption = f"The {total} Monte Carlo values of this measurement, binned. "
    else:
        caption = "The Monte Carlo values of this measurement, binned. "
    if bounds or off_scale:
        caption += ("Hatched background: outside the limit; cross-hatched bars: bins whose "
                    "centre lies outside it. " if outside.any() and counts[outside].sum() > 0
                    else "Hatched: outside the limit. ")
    if lim is not None:
        caption += "Dashed: the nominal value. "
    if wc_range is not None:
        caption += ("The bracket above the bars is the worst-case range, " + (
            "from the corners, which decide here (the quantity is monotone in every part)."
            if wc.get("decided_by") == "corners" and wc.get("monotone") else
            "the wider of extreme-value analysis and the corners." if wc.get("corners_min")
            is not None else "from extreme-value analysis (corners not evaluated)."))
    if lim is not None:
        caption += f" Allowed: {lim.bound_text}."
    return Plot(f"Spread of {name} over the samples (the measurement with the least mean "
                "margin)", caption.strip(), to_svg(fig))
