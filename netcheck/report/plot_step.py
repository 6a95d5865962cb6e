"""The step-response figure of a spec with step limits: the exact response to a unit step
of the stimulus (the result's ``step`` block), its final value, the settling band, and
the points the limits measured (the overshoot's peak, the rise time's crossings, the
delay, the settling time)."""

from __future__ import annotations

from typing import Any

import numpy as np

from ..result import SpecResult
from .plot_base import FONT_PT, PALETTE, new_figure, si_scale, style_axes

__all__ = ["step_figure"]


def step_figure(spec: SpecResult) -> tuple[str, str, Any] | None:
    """(title, caption, matplotlib Figure) of ``spec``'s step response; None without one."""
    block = spec.extra_value("step")
    if not isinstance(block, dict) or not block.get("t"):
        return None
    t, y = np.asarray(block["t"]), np.asarray(block["y"])
    final = float(block["final"])
    ts, tp = si_scale(float(t[-1]))
    fig = new_figure(2.3)
    ax = fig.add_axes((0.08, 0.18, 0.885, 0.74))
    style_axes(ax)
    ax.plot(np.r_[0.0, t] / ts, np.r_[0.0, y], color=PALETTE["ink"], linewidth=1.2, zorder=5)
    ax.axhline(final, color=PALETTE["slate"], linewidth=0.6, linestyle="--", zorder=3)
    for mask in block.get("masks", ()):  # a mask's lines, in units of the final value
        for key in ("min_points", "max_points"):
            pts = np.asarray(mask[key], float)
            if pts.size:
                ax.plot(pts[:, 0] / ts, pts[:, 1] * final, color=PALETTE["hatch"],
                        linewidth=0.9, zorder=4)
    for m in block["marks"]:
        if "band" in m:  # the settling band around the final value
            half = m["band"] * abs(final)
            ax.axhspan(final - half, final + half, color=PALETTE["allowed"], zorder=1)
        ax.plot([m["t"] / ts], [m["y"]], marker="o", markersize=3.5, color=PALETTE["ink"],
                zorder=6)
        ax.annotate(m["what"], (m["t"] / ts, m["y"]), xytext=(4, 4),
                    textcoords="offset points", fontsize=FONT_PT, color=PALETTE["ink"])
    ax.set_xlim(0.0, float(t[-1]) / ts)
    ax.set_xlabel(f"Time ({tp}s)", fontsize=FONT_PT + 0.5, color=PALETTE["ink"])
    ax.set_ylabel("Output per unit step", fontsize=FONT_PT + 0.5, color=PALETTE["ink"])
    which = f"output {block['output']}" if block.get("output") else "output"
    caption = (f"The {which}'s response to a unit step of the stimulus ({block['method']}), "
               f"its final value {final:.6g} (dashed) and the points the step limits "
               "measured; a settling band is tinted, a mask's lines drawn in umber.")
    return "Step response", caption, fig
