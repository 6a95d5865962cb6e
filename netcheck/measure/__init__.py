"""Curves and exact measurements: band extremes, crossings, peak, resonance, corner,
ripple, found exactly between grid points from the response's poles and zeros; and the
exactly evaluated points the report's plots draw through (:mod:`.detail`)."""

from __future__ import annotations

from .measurements import (HALF_POWER_DB, Curve, Extremum, FunctionCurve,  # noqa: F401
                           MeasurementFailure, Resonance, band_extremes, corner, crossing,
                           gain_db, group_delay_s, peak, phase_deg, resonance, ripple,
                           root_seeds, stationary_points)
from .measurements import __all__  # noqa: F401
