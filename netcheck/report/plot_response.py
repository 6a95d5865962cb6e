"""Figures of one spec's response: whole-sweep gain, pass-band or resonance zoom, phase, delay."""

from __future__ import annotations

import dataclasses
import math
from typing import Any

import numpy as np

from ..result import Curves, SpecResult
from ..netlist.units import format_eng, format_si
from .plot_base import (FONT_PT, PALETTE, Plot, Tag, figure_keys, frequency_axis, legend_above,
                        mark_zoom, new_figure, si_scale, style_axes, to_svg)
from .plot_gain import (GAIN_QUANTITIES, HALF_POWER_DB, draw_mask, drawn_gain, fail_points,
                        gain_label, gain_limits, tags_for, zoom_is_resonance, zoom_window)
from ..measure.detail import curve_points
from .plot_noise import noise_figure
from .plot_step import step_figure
from .plot_tolerance import draw_envelope, envelope_caption, has_envelope

__all__ = ["spec_plots", "spec_figures"]


#: limit kinds → (Curves attribute, mask quantity, axis label, unit) of extra panels
_PANELS = {
    "phase": ("phase_deg", "phase_deg", "Phase", "deg"),
    "group_delay": ("group_delay_s", "group_delay_s", "Group delay", "s"),
}


def _extra_panels(spec: SpecResult, keep: Any = None) -> list[str]:
    kinds = {lim.kind for lim in spec.limits if keep is None or keep(lim)}
    kinds |= {k for k, p in _PANELS.items() if any(b.quantity == p[1] for b in spec.mask)}
    return [k for k in _PANELS if k in kinds]


def _gain_axes(ax: Any, spec: SpecResult, masks: dict[int, Tag], fails: dict[int, Tag],
               span: tuple[float, float], zoom: bool, drawn: list[Tag],
               skip: tuple[float, float] | None = None) -> None:
    f, g = drawn_gain(spec)
    ylim = gain_limits(spec, *span, zoom)
    ax.set_xlim(*span)
    ax.set_ylim(*ylim)
    draw_mask(ax, spec, masks, GAIN_QUANTITIES, 1.0, ylim, span, drawn, skip)
    draw_envelope(ax, spec)
    ax.plot(f, g, color=PALETTE["ink"], linewidth=1.3, zorder=5, label="nominal gain")
    masked = {spec.mask[i].label for i in masks}
    fail_points(ax, spec, fails, "gain_db", 1.0, span, masked, drawn, skip)
    ax.set_ylabel(gain_label(spec), fontsize=FONT_PT + 0.5, color=PALETTE["ink"])


def _digits(f_hz: float, resolution_hz: float | None) -> int:
    """Significant digits that show ``f_hz`` to ``resolution_hz`` (at least 5): a crystal's
    edges 230 Hz apart at 10 MHz read 9.999884 MHz and 10.00012 MHz, not both 10.000 MHz."""
    if resolution_hz is None or not resolution_hz > 0 or not f_hz > 0:
        return 5
    return max(5, min(12, math.ceil(math.log10(f_hz / resolution_hz)) + 2))


def _q_text(q: float) -> str:
    """Q to four significant digits, without an exponent (``Q 43330``, ``Q 12.02``)."""
    return f"{q:.4g}" if abs(q) < 1e4 else f"{float(f'{q:.4g}'):.0f}"


def _annotate_resonance(ax: Any, spec: SpecResult) -> None:
    """Half-power level, edges, centre, bandwidth and Q on the zoom."""
    peak_f, peak_g = spec.measurement("f_peak_hz"), spec.measurement("peak_gain_db")
    f_lo, f_hi = spec.measurement("f_low_hz"), spec.measurement("f_high_hz")
    f_c, q, bw = (spec.measurement(k) for k in ("f_center_hz", "q", "bandwidth_hz"))
    digits = _digits(peak_f or f_c or 0.0, bw)
    guide = PALETTE["guide"]
    kw = {"fontsize": FONT_PT, "color": guide, "zorder": 9}
    box = {"boxstyle": "round,pad=0.2", "facecolor": "white", "edgecolor": "none", "alpha": 0.85}
    if peak_f is not None and peak_g is not None:
        ax.plot([peak_f], [peak_g], marker="o", markersize=4.5, color=PALETTE["ink"],
                markerfacecolor="white", markeredgewidth=1.0, zorder=8, linestyle="none")
        ax.annotate(f"peak {format_eng(peak_g, 'dB')} at {format_si(peak_f, 'Hz', digits)}",
                    (peak_f, peak_g), xytext=(48, -14), textcoords="offset points",
                    fontsize=FONT_PT, color=PALETTE["ink"], zorder=9, bbox=box, va="center",
                    arrowprops={"arrowstyle": "-", "color": PALETTE["ink"], "linewidth": 0.6,
                                "shrinkA": 0, "shrinkB": 3})
    if peak_g is None or f_lo is None or f_hi is None:
        return
    level = peak_g - HALF_POWER_DB
    ax.axhline(level, color=guide, linewidth=0.8, linestyle=(0, (5, 3)), zorder=4)
    x0, x1 = ax.get_xlim()
    ax.annotate(f"half-power level: peak − {HALF_POWER_DB:.2f} dB  (|H_peak|/√2)",
                (x0, level), xytext=(4, 3), textcoords="offset points", ha="left",
                va="bottom", bbox=box, **kw)
    ymin = ax.get_ylim()[0]
    for fx, name, ha in ((f_lo, "f_low", "right"), (f_hi, "f_high", "left")):
        ax.plot([fx, fx], [ymin, level], color=guide, linewidth=0.8, linestyle=(0, (1.5, 1.5)),
                zorder=4)
        ax.plot([fx], [level], marker="D", markersize=3.5, color=guide, zorder=8,
                linestyle="none")
        ax.annotate(f"{name}\n{format_si(fx, 'Hz', digits)}", (fx, ymin),
                    xytext=(-3 if ha == "right" else 3, 4), textcoords="offset points", ha=ha,
                    va="bottom", bbox=box, **kw)
    y_arrow = level - 0.35 * (level - ymin)
    ax.annotate("", (f_lo, y_arrow), (f_hi, y_arrow),
                arrowprops={"arrowstyle": "<->", "color": guide, "linewidth": 0.8,
                            "shrinkA": 0, "shrinkB": 0}, zorder=8)
    parts = [f"bandwidth {format_si(bw, 'Hz', 4)}" if bw is not None else "",
             f"Q {_q_text(q)}" if q is not None else ""]
    ax.annotate("  ·  ".join(p for p in parts if p), (math.sqrt(f_lo * f_hi), y_arrow),
                xytext=(0, 3), textcoords="offset points", ha="center", va="bottom",
                bbox=box, **kw)
    if f_c is not None:
        ax.axvline(f_c, color=guide, linewidth=0.7, linestyle=(0, (6, 2, 1, 2)), zorder=4)
        ax.annotate(f"f_center\n{format_si(f_c, 'Hz', digits)}", (f_c, ymin), xytext=(0, 4),
                    textcoords="offset points", ha="center", va="bottom", bbox=box, **kw)


def _mark_notches(ax: Any, spec: SpecResult) -> None:
    """A guide line at each measured notch frequency (``notch`` limits), labelled."""
    seen: set[float] = set()
    box = {"boxstyle": "round,pad=0.2", "facecolor": "white", "edgecolor": "none", "alpha": 0.85}
    for lim in spec.limits:
        if lim.kind != "notch" or lim.at_hz is None or lim.measured is None \
                or not math.isfinite(lim.at_hz) or lim.at_hz in seen:
            continue
        seen.add(lim.at_hz)
        name = lim.name.rsplit(": ", 1)[0]
        ax.axvline(lim.at_hz, color=PALETTE["guide"], linewidth=0.7,
                   linestyle=(0, (6, 2, 1, 2)), zorder=4)
        ax.annotate(f"{name}\n{format_si(lim.at_hz, 'Hz', 5)}", (lim.at_hz, ax.get_ylim()[0]),
                    xytext=(3, 4), textcoords="offset points", ha="left", va="bottom",
                    fontsize=FONT_PT, color=PALETTE["guide"], zorder=9, bbox=box)


def _gain_overview(spec: SpecResult, masks: dict[int, Tag], fails: dict[int, Tag],
                   zoom: tuple[float, float] | None, drawn: list[Tag]) -> Any:
    legend = has_envelope(spec)
    fig = new_figure(2.75 if legend else 2.6)
    ax = fig.add_axes((0.08, 0.15, 0.885, 0.75) if legend else (0.08, 0.16, 0.885, 0.79))
    style_axes(ax)
    f = spec.curves.frequency_hz
    span = (float(f[0]), float(f[-1]))
    label = frequency_axis(ax, span, log=True)
    _gain_axes(ax, spec, masks, fails, span, False, drawn, zoom)
    _mark_notches(ax, spec)
    if legend:
        legend_above(ax)
    if zoom is not None:
        mark_zoom(ax, zoom)
    ax.set_xlabel(label, fontsize=FONT_PT + 0.5, color=PALETTE["ink"])
    return fig


def _gain_zoom(spec: SpecResult, masks: dict[int, Tag], fails: dict[int, Tag],
               zoom: tuple[float, float], drawn: list[Tag]) -> Any:
    legend = has_envelope(spec)
    fig = new_figure(2.95 if legend else 2.8)
    ax = fig.add_axes((0.08, 0.145, 0.885, 0.765) if legend else (0.08, 0.155, 0.885, 0.795))
    style_axes(ax)
    label = frequency_axis(ax, zoom)
    _gain_axes(ax, spec, masks, fails, zoom, True, drawn)
    if legend:
        legend_above(ax)
    if zoom_is_resonance(spec):
        _annotate_resonance(ax, spec)
    ax.set_xlabel(label, fontsize=FONT_PT + 0.5, color=PALETTE["ink"])
    return fig


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
                 zoom: tuple[float, float] | None, drawn: list[Tag], keep: Any = None) -> Any:
    kinds = _extra_panels(spec, keep)
    fig = new_figure(1.65 * len(kinds) + 0.45)
    n = len(kinds)
    bottom_margin, top_margin = 0.42 / fig.get_figheight(), 0.08 / fig.get_figheight()
    h = (1.0 - bottom_margin - top_margin) / n
    for k, kind in enumerate(kinds):
        curve, quantity, label, unit = _PANELS[kind]
        span = _panel_span(spec, quantity, zoom)
        ax = fig.add_axes((0.08, 1.0 - top_margin - (k + 1) * h + 0.06 * h, 0.885, h * 0.86))
        style_axes(ax)
        xlabel = frequency_axis(ax, span)
        fy, y = curve_points(spec.curves, curve)
        sel = (fy >= span[0]) & (fy <= span[1]) & np.isfinite(y)
        scale, prefix = (1.0, "") if unit == "deg" else si_scale(
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
        draw_mask(ax, spec, masks, (quantity,), scale, ylim, span, drawn)
        ax.plot(fy, y / scale, color=PALETTE["ink"], linewidth=1.2, zorder=5)
        fail_points(ax, spec, fails, curve, scale, span, {spec.mask[i].label for i in masks},
                    drawn)
        ax.set_ylabel(f"{label} ({prefix}{unit})", fontsize=FONT_PT + 0.5, color=PALETTE["ink"])
        if k == n - 1:
            ax.set_xlabel(xlabel, fontsize=FONT_PT + 0.5, color=PALETTE["ink"])
    return fig


def _mask_forms(spec: SpecResult) -> str:
    """What the caption says of the mask's less usual forms, when it has them."""
    words = []
    if any(b.quantity == "gain_re_peak_db" for b in spec.mask):
        words.append(" Bounds stated relative to the peak gain are drawn at the peak.")
    if any(b.quantity == "gain_re_reference_db" for b in spec.mask):
        words.append(" Bounds stated relative to a measured pass-band level (a mean, lowest "
                     "or highest gain over a band, or the gain at a frequency) are drawn at "
                     "the level measured.")
    if any(not b.f_hi_hz > b.f_lo_hz for b in spec.mask):
        words.append(" A limit at one frequency is a bar of its allowed range there, a "
                     "triangle at each bound.")
    return "".join(words)


def _figures(spec: SpecResult) -> list[tuple[str, str, Any, tuple[Tag, ...]]]:
    """(title, caption, matplotlib Figure, key) of each of the report's figures for ``spec``."""
    if spec.curves is None or spec.curves.frequency_hz.size < 2:
        return []
    if spec.curves.outputs:
        return _output_figures(spec)
    return _response_figures(spec)


def _output_figures(spec: SpecResult) -> list[tuple[str, str, Any, tuple[Tag, ...]]]:
    """A spec with named outputs: each output's figures (whole sweep, the zoom on its
    pass-band, its phase and delay panels), the main output's first; each figure draws
    its output's curves with that output's mask bands and failed worst points only (the
    Monte Carlo envelope and the key measurements are the main output's)."""
    names = list(dict(spec.sweep).get("outputs") or {})
    nodes = dict(spec.sweep).get("outputs") or {}
    main = names[0] if names else ""

    def words(name: str) -> str:
        p, n = (nodes.get(name) or ["?", "0"])[:2]
        return f"output {name}, V({p})" + ("" if n == "0" else f" − V({n})")

    def mine(name: str, lim: Any) -> bool:
        return name in (lim.output or main).split("/")

    def view(name: str) -> SpecResult:
        return dataclasses.replace(spec, mask=tuple(b for b in spec.mask
                                                    if (b.output or main) == name))

    out = []
    first = _response_figures(view(main), lambda lim: mine(main, lim))
    for title, caption, fig, keys in first:
        out.append((f"{title}: {words(main)}",
                    f"{caption} The main output ({words(main)}); the other outputs have "
                    "figures of their own below, each with its own limits.", fig, keys))
    c = spec.curves
    for name, _, gain, phase, delay in c.outputs:
        own = dataclasses.replace(view(name), measurements=(), curves=Curves(
            c.frequency_hz, gain, phase, delay))
        for title, caption, fig, keys in _response_figures(own, lambda lim, n=name:
                                                           mine(n, lim)):
            out.append((f"{title}: {words(name)}",
                        f"{caption} The curve is {words(name)} (same stimulus); the mask, "
                        "that of its own limits.", fig, keys))
    return out


def _response_figures(spec: SpecResult, keep: Any = None
                      ) -> list[tuple[str, str, Any, tuple[Tag, ...]]]:
    """The figures of one output's response (``keep``: which limits' failed worst points
    they mark; all by default)."""
    masks, fails = tags_for(spec)
    if keep is not None:
        fails = {i: t for i, t in fails.items() if keep(spec.limits[i])}
    zoom = zoom_window(spec)
    f = spec.curves.frequency_hz
    envelope = envelope_caption(spec)
    drawn: list[Tag] = []
    fig = _gain_overview(spec, masks, fails, zoom, drawn)
    out = [("Gain over the whole sweep",
            f"Gain in dB against frequency, {format_si(float(f[0]), 'Hz')} to "
            f"{format_si(float(f[-1]), 'Hz')}, with the spec mask: allowed regions are "
            "tinted, forbidden regions hatched (cross-hatched where the limit failed)."
            + _mask_forms(spec)
            + (" The dashed box marks the zoom below; what lies inside it is tagged "
               "there." if zoom else "") + envelope,
            fig, figure_keys(drawn))]
    if zoom is not None:
        resonant = zoom_is_resonance(spec)
        drawn = []
        fig = _gain_zoom(spec, masks, fails, zoom, drawn)
        digits = _digits(zoom[1], zoom[1] - zoom[0])
        out.append((
            "Pass-band and resonance in detail" if resonant else "Pass-band in detail",
            f"Gain from {format_si(zoom[0], 'Hz', digits)} to {format_si(zoom[1], 'Hz', digits)}"
            + (", with the half-power level (peak − 3.01 dB, |H_peak|/√2), the half-power "
               "edges f_low and f_high, the centre f_center = √(f_low·f_high), the bandwidth "
               "and Q." if resonant else ".") + envelope,
            fig, figure_keys(drawn)))
    panels = _extra_panels(spec, keep)
    if panels:
        names = " and ".join(_PANELS[k][2].lower() for k in panels)
        drawn = []
        fig = _phase_delay(spec, masks, fails, zoom, drawn, keep)
        out.append((names[0].upper() + names[1:],
                    f"{names[0].upper()}{names[1:]} against frequency, for the limits on "
                    "them (their bounds and margins are in the summary table).",
                    fig, figure_keys(drawn)))
    for extra in (noise_figure(spec), step_figure(spec)):
        if extra is not None:
            out.append((*extra, ()))
    return out


def spec_figures(spec: SpecResult) -> tuple[tuple[str, Any], ...]:
    """(title, matplotlib Figure) of each figure :func:`spec_plots` draws, for inspection."""
    return tuple((title, fig) for title, _, fig, _ in _figures(spec))


def spec_plots(spec: SpecResult) -> tuple[Plot, ...]:
    """The report's figures for one spec (empty when the spec has no curves)."""
    return tuple(Plot(title, caption, to_svg(fig), keys)
                 for title, caption, fig, keys in _figures(spec))
