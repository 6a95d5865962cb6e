"""Drawing kit of the report's plots: palette, figure types, deterministic SVG, axes, legend.

matplotlib is imported inside the functions only (never pyplot), so importing this
module costs nothing.
"""

from __future__ import annotations

import io
import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..result import Status

__all__ = ["PALETTE", "FIG_WIDTH_IN", "FONT_PT", "Tag", "Plot", "to_svg", "new_figure",
           "style_axes", "hz_log_axis", "hz_linear_axis", "frequency_axis", "si_scale",
           "legend_above", "mark_zoom", "figure_keys"]

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
#: tick-label size in points (labels and annotations are set relative to it)
FONT_PT = 7.5


@dataclass(frozen=True, slots=True)
class Tag:
    """A short plot tag and what it stands for, for the figure key.

    ``#4`` for the limit numbered 4 in the report's limit table (its mask band and its
    worst point; ``number`` is then 4), ``var 1``… for the variants of a family overlay.
    No tag reads as a netlist part name (a letter and digits).
    """

    tag: str
    name: str
    text: str
    status: Status
    number: int | None = None


@dataclass(frozen=True, slots=True)
class Plot:
    """One figure of the report: caption, inline SVG markup and its key."""

    title: str
    caption: str
    svg: str
    keys: tuple[Tag, ...] = ()


#: rcParams for drawing and saving: deterministic SVG ids, text kept as text
_RC = {"svg.hashsalt": "netcheck-report", "svg.fonttype": "none", "svg.image_inline": True,
       "font.family": "DejaVu Sans", "hatch.linewidth": 0.45, "axes.unicode_minus": True}


def to_svg(fig: Any) -> str:
    """The figure as an SVG ``<svg>`` element, byte-identical between runs."""
    import matplotlib

    buf = io.StringIO()
    with matplotlib.rc_context(_RC):
        fig.savefig(buf, format="svg", metadata={"Date": None, "Creator": None})
    text = buf.getvalue()
    return text[text.index("<svg"):]


def new_figure(height_in: float) -> Any:
    """A new matplotlib ``Figure`` of the text-block width and ``height_in`` inches."""
    import matplotlib
    from matplotlib.figure import Figure

    with matplotlib.rc_context(_RC):
        fig = Figure(figsize=(FIG_WIDTH_IN, height_in), dpi=100)
    return fig


def style_axes(ax: Any) -> None:
    """The report's axes style: white face, left and bottom spines, light major grid."""
    ax.set_facecolor("white")
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    for side in ("left", "bottom"):
        ax.spines[side].set_color(PALETTE["slate"])
        ax.spines[side].set_linewidth(0.6)
    ax.tick_params(colors=PALETTE["slate"], labelcolor=PALETTE["ink"], labelsize=FONT_PT,
                   width=0.6, length=3)
    ax.tick_params(which="minor", length=1.8, width=0.4)
    ax.grid(True, which="major", color=PALETTE["grid"], linewidth=0.5)
    ax.set_axisbelow(True)


def hz_log_axis(ax: Any, lo: float, hi: float) -> None:
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
    scale, prefix = si_scale(v * (1 + 1e-9))
    return f"{v / scale:.3g} {prefix}Hz"


def hz_linear_axis(ax: Any, lo: float, hi: float) -> str:
    """Linear frequency ticks in one SI prefix; returns the axis label.

    A window too narrow for its ticks to read apart in six significant digits (a
    crystal's resonance: hundreds of Hz at 10 MHz) is labelled as offsets from a round
    centre frequency named in the axis label, so that no two ticks read alike.
    """
    from matplotlib.ticker import FuncFormatter, MaxNLocator

    top = max(abs(lo), abs(hi))
    scale, prefix = si_scale(top)
    ax.xaxis.set_major_locator(MaxNLocator(nbins=9, steps=[1, 2, 2.5, 5, 10]))
    span = hi - lo
    if not (span > 0 and top > 0) or span / 9.0 >= top * 2e-5:
        ax.xaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v / scale:g}"))
        return f"Frequency ({prefix}Hz, linear scale)"
    q = 10.0 ** math.floor(math.log10(span))
    centre = round(0.5 * (lo + hi) / q) * q
    oscale, oprefix = si_scale(max(abs(lo - centre), abs(hi - centre)))
    digits = max(0, math.ceil(-math.log10(q / scale) - 1e-9))
    ax.xaxis.set_major_formatter(FuncFormatter(
        lambda v, _: "0" if abs(v - centre) < 1e-6 * oscale
        else f"{(v - centre) / oscale:+g}".replace("-", "−")))
    return (f"Frequency offset from {centre / scale:.{digits}f} {prefix}Hz ({oprefix}Hz, "
            "linear scale)")


def frequency_axis(ax: Any, span: tuple[float, float], log: bool = False) -> str:
    """Frequency ticks over ``span`` (Hz); returns the axis label.

    Log scale when ``log`` is set or the span is wider than 3 : 1, linear otherwise.
    """
    if log or span[1] / span[0] > 3.0:
        hz_log_axis(ax, *span)
        return "Frequency (log scale)"
    return hz_linear_axis(ax, *span)


def si_scale(mag: float) -> tuple[float, str]:
    """(scale, SI prefix) for values of magnitude ``mag``: ``(1e3, "k")`` for 38e3.

    Examples
    --------
    >>> si_scale(38e3), si_scale(4.7e-9), si_scale(0.0)
    ((1000.0, 'k'), (1e-09, 'n'), (1e-12, 'p'))
    """
    for s, p in ((1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m"), (1e-6, "µ"),
                 (1e-9, "n"), (1e-12, "p")):
        if mag >= s:
            return s, p
    return 1e-12, "p"


def legend_above(ax: Any, ncol: int = 2) -> None:
    """The axes' legend in the margin above them, right-aligned, so it hides no data."""
    handles, labels = ax.get_legend_handles_labels()
    if not handles:
        return
    order = sorted(range(len(labels)), key=lambda i: not labels[i].startswith("nominal"))
    handles, labels = [handles[i] for i in order], [labels[i] for i in order]
    ax.legend(handles, labels, loc="lower right", bbox_to_anchor=(1.0, 1.0), ncol=ncol,
              frameon=False, fontsize=FONT_PT, borderaxespad=0.25, handlelength=2.6,
              columnspacing=1.6, handletextpad=0.6, labelcolor=PALETTE["ink"])


def mark_zoom(ax: Any, zoom: tuple[float, float]) -> None:
    """A dashed box over the frequency span (Hz) that the next figure shows in detail."""
    ax.axvspan(*zoom, facecolor="none", edgecolor=PALETTE["guide"], linewidth=0.7,
               linestyle=(0, (3, 2)), zorder=3)
    ax.annotate("zoom", (math.sqrt(zoom[0] * zoom[1]), ax.get_ylim()[0]), xytext=(0, 3),
                textcoords="offset points", ha="center", va="bottom",
                fontsize=FONT_PT - 0.5, color=PALETTE["guide"], zorder=9)


def figure_keys(drawn: list[Tag]) -> tuple[Tag, ...]:
    """Drawn tags, each once, in limit-number order (bands without a limit last).

    A limit's band and its worst point share a tag: the key gives them one row, the
    band's text and then the worst value's, with the worse of the two statuses.
    """
    merged: dict[str, Tag] = {}
    for t in drawn:
        seen = merged.get(t.tag)
        if seen is None:
            merged[t.tag] = t
        elif t.text not in seen.text.split("; "):
            status = max(seen.status, t.status, key=lambda s: s.rank)
            merged[t.tag] = Tag(seen.tag, seen.name, f"{seen.text}; {t.text}", status,
                                seen.number)
    return tuple(sorted(merged.values(), key=lambda t: (t.number is None, t.number or 0,
                                                        t.tag)))
