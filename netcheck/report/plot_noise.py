"""The noise figure of a spec with noise limits: the output noise density over the
sweep (the result's ``noise`` block), with the bounds of its density limits drawn over
their bands."""

from __future__ import annotations

from typing import Any

import numpy as np

from ..result import SpecResult
from .plot_base import FONT_PT, PALETTE, frequency_axis, new_figure, si_scale, style_axes

__all__ = ["noise_figure"]


def noise_figure(spec: SpecResult) -> tuple[str, str, Any] | None:
    """(title, caption, matplotlib Figure) of ``spec``'s output noise density; None
    without noise limits."""
    block = spec.extra_value("noise")
    if not isinstance(block, list) or not block or "curve" not in block[0]:
        return None
    fig = new_figure(2.3)
    ax = fig.add_axes((0.08, 0.18, 0.885, 0.74))
    style_axes(ax)
    curves = []
    for entry in block:  # one curve per distinct density (an output at a temperature)
        d = np.asarray(entry["curve"]["density"])
        if not any(np.array_equal(d, c) for _, c in curves):
            curves.append((np.asarray(entry["curve"]["f_hz"]), d))
    top = max(float(np.nanmax(d)) for _, d in curves)
    scale, prefix = si_scale(top)
    f_all = np.concatenate([f for f, _ in curves])
    xlabel = frequency_axis(ax, (float(f_all.min()), float(f_all.max())), log=True)
    for f, d in curves:
        ax.plot(f, d / scale, color=PALETTE["ink"], linewidth=1.2, zorder=5)
    for entry in block:
        if entry["quantity"] != "output_density":
            continue
        lo, hi = entry["limit_band_hz"]
        for bound in entry["bounds"]:
            if bound is not None:
                ax.plot([lo, hi], [bound / scale] * 2, color=PALETTE["hatch"], linewidth=1.0,
                        zorder=4)
    ax.set_ylim(bottom=0.0)
    ax.set_xlabel(xlabel, fontsize=FONT_PT + 0.5, color=PALETTE["ink"])
    ax.set_ylabel(f"Noise density ({prefix}V/√Hz)", fontsize=FONT_PT + 0.5,
                  color=PALETTE["ink"])
    caption = ("The output noise density against frequency (every resistance's thermal "
               "noise and the devices' shot and channel noise), with the bounds of the "
               "density limits drawn in umber over their bands.")
    return "Output noise density", caption, fig
