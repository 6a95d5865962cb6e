"""Plots for the PDF report: matplotlib ``Figure`` objects rendered to deterministic inline SVG.

The public plotting API, gathered from the modules that draw each kind of figure:

* ``plot_base``: palette, :class:`Tag` and :class:`Plot`, SVG output, axes and legend;
* ``plot_points``: where curves are drawn through: the sweep grid and the exact points off
  it that a result carries (refined extrema, around lightly damped poles and zeros, and
  wherever a straight segment would stray from the curve), chosen where the response is
  solved (:func:`~netcheck.measure.detail.detail_curves`);
* ``plot_gain``: the gain axis shared by spec and family figures (mask and failure tags,
  ``#n`` after the limit's number in the report's limit table; zoom window, allowed and
  forbidden regions, failure marks);
* ``plot_response``: one spec's gain overview, zoom, phase and group-delay panels;
* ``plot_tolerance``: the Monte Carlo envelope and histogram;
* ``plot_family``: the overlay of a family's variants.

matplotlib is imported inside the drawing functions only (never pyplot), so importing
these modules costs nothing. The palette is colour-blind safe and reads in greyscale:
the response is near-black, allowed regions a pale tint, forbidden regions a hatched
sand tint, and every failure is also spelled out in words (``FAIL``) next to its marker.
"""

from __future__ import annotations

from .plot_base import FIG_WIDTH_IN, PALETTE, Plot, Tag
from .plot_family import VARIANT_STYLES, family_plots, variant_style, variant_tag
from .plot_gain import (drawn_gain, limit_number, limit_tag, tags_for, zoom_is_resonance,
                        zoom_window)
from ..measure.detail import curve_points, detail_curves
from .plot_response import spec_figures, spec_plots
from .plot_tolerance import histogram_plot

__all__ = ["PALETTE", "Tag", "Plot", "tags_for", "zoom_window", "zoom_is_resonance",
           "spec_plots", "spec_figures", "FIG_WIDTH_IN", "histogram_plot", "family_plots",
           "variant_style", "variant_tag", "VARIANT_STYLES", "curve_points", "detail_curves",
           "drawn_gain", "limit_number", "limit_tag"]
