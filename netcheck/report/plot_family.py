"""Family figures: every variant's gain overlaid on the spec mask, one line style per variant."""

from __future__ import annotations

import math
from typing import Any


from ..result import SpecResult
from ..netlist.units import format_si
from .plot_base import (FONT_PT, PALETTE, Plot, Tag, figure_keys, frequency_axis, legend_above,
                        mark_zoom, new_figure, style_axes, to_svg)
from .plot_gain import (GAIN_QUANTITIES, draw_mask, drawn_gain, gain_label, gain_limits,
                        tags_for, zoom_window)

__all__ = ["VARIANT_STYLES", "variant_style", "variant_tag", "family_plots"]


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


def variant_tag(k: int) -> str:
    """Plot tag of the ``k``-th variant (0-based): ``var 1``, ``var 2``… (never a letter
    and digits alone, which would read as a netlist part name).

    Examples
    --------
    >>> variant_tag(0)
    'var 1'
    """
    return f"var {k + 1}"


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
    limits = [gain_limits(m, *span, zoom) for m in members]
    ylim = (min(a for a, _ in limits), max(b for _, b in limits))
    ax.set_xlim(*span)
    ax.set_ylim(*ylim)
    draw_mask(ax, ref, masks, GAIN_QUANTITIES, 1.0, ylim, span, drawn, skip)
    thin = len(members) > len(VARIANT_STYLES)
    peaks: dict[float, list[tuple[int, float, float]]] = {}
    for k, m in enumerate(members):
        dash, marker, colour, _ = variant_style(k)
        f, g = drawn_gain(m)
        fp, gp = m.measurement("f_peak_hz"), m.measurement("peak_gain_db")
        if zoom and fp is not None and gp is not None and span[0] < fp < span[1] \
                and ylim[0] < gp < ylim[1]:
            peaks.setdefault(round(math.log10(fp) / 0.004), []).append((k, fp, gp))
        # markers evenly spaced along the drawn line (a share of the axes' diagonal), so
        # that exact points crowded round a narrow feature do not crowd the markers too
        ax.plot(f, g, color=colour, linestyle=dash, linewidth=0.9 if thin else 1.25,
                marker=marker or None, markersize=3.6, markerfacecolor="white",
                markeredgewidth=0.8, markevery=(0.1 * (k % 3) / 3.0, 0.1) if marker else None,
                zorder=5 + 0.01 * k, label=variant_tag(k))
    box = {"boxstyle": "round,pad=0.15", "facecolor": "white", "edgecolor": "none", "alpha": 0.85}
    for group in peaks.values():
        fp = group[0][1]
        gp = max(g for _, _, g in group)
        ax.annotate(", ".join(variant_tag(k) for k, _, _ in group), (fp, gp), xytext=(0, 4),
                    textcoords="offset points", ha="center", va="bottom",
                    fontsize=FONT_PT - 0.5, color=PALETTE["ink"], fontweight="bold",
                    zorder=9, bbox=box)


def family_plots(members: list[SpecResult]) -> tuple[Plot, ...]:
    """Overlay of every variant's gain against the spec mask (whole sweep, then zoom).

    Variants are tagged ``var 1``… in the plot (no text from input files is drawn); the
    figure key names them, with each line style in words and the variant's verdict.
    Members without curves (not checked) are left out. The mask is the first plotted
    member's; bands relative to the peak are placed on that member's peak.
    """
    drawn_members = [m for m in members if m.curves is not None and m.curves.frequency_hz.size > 1]
    if not drawn_members:
        return ()
    ref = drawn_members[0]
    masks = _family_mask_tags(drawn_members, ref)
    variant_keys = tuple(Tag(variant_tag(k), m.variant or m.label, variant_style(k)[3], m.status)
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
        fig = new_figure(2.6 + extra)
        h = fig.get_figheight()
        ax = fig.add_axes((0.08, 0.42 / h, 0.885, 1.0 - (0.42 + 0.12 + 0.17 * rows) / h))
        style_axes(ax)
        xlabel = frequency_axis(ax, span, log=panel == "overview")
        drawn: list[Tag] = []
        _family_axes(ax, drawn_members, ref, masks, span, panel == "zoom", drawn,
                     zoom if panel == "overview" else None)
        if panel == "overview" and zoom is not None:
            mark_zoom(ax, zoom)
        legend_above(ax, ncol)
        ax.set_ylabel(gain_label(ref), fontsize=FONT_PT + 0.5, color=PALETTE["ink"])
        ax.set_xlabel(xlabel, fontsize=FONT_PT + 0.5, color=PALETTE["ink"])
        if panel == "overview":
            title = "Gain of every variant over the whole sweep"
            caption = (f"Nominal gain of the {len(drawn_members)} variants against the spec "
                       f"mask, {format_si(full[0], 'Hz')} to {format_si(full[1], 'Hz')}. "
                       "Each variant has its own line style (var 1, var 2… in the legend and "
                       "the key below), so the curves can be told apart in greyscale. Allowed "
                       "regions are tinted, forbidden regions hatched (cross-hatched where the "
                       "limit failed for any variant)."
                       + (" The dashed box marks the zoom below." if zoom else ""))
        else:
            title = "Pass-bands and resonances of every variant in detail"
            caption = (f"The same curves from {format_si(span[0], 'Hz', 5)} to "
                       f"{format_si(span[1], 'Hz', 5)}, spanning every variant's pass-band "
                       "or half-power edges, each drawn through the sweep grid, the exact points "
                       "its result carries off the grid and its own refined peak and edges; "
                       "each peak is tagged with its variant.")
        if any(b.quantity == "gain_re_peak_db" for b in ref.mask):
            caption += (" Bounds relative to the peak are drawn on the peak of var 1; each "
                        "variant is judged against its own peak.")
        if any(b.quantity == "gain_re_reference_db" for b in ref.mask):
            caption += (" Bounds relative to a measured reference level are drawn on var 1's "
                        "level; each variant is judged against its own.")
        plots.append(Plot(title, caption, to_svg(fig), figure_keys(drawn) + variant_keys))
    return tuple(plots)
