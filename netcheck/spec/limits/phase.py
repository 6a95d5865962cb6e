"""The ``phase`` limit kind: phase over a band, unwrapped from the sweep start, and its
deviation from linear phase (the phase minus its best straight line in f)."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, ClassVar

import numpy as np

from .base import (Limit, Linearised, Probe, Rows, band_text,
                   judge_range, linearised_range, range_margin)
from ..reader import SpecReader, Sweep
from ...measure.linear_phase import fit_map, line_fit, linear_phase, quadrature
from ...measure.measurements import MeasurementFailure
from ...result import LimitResult, MaskBand, Status
from ...netlist.units import format_eng

if TYPE_CHECKING:  # pragma: no cover
    from ...analyses.sample_probe import BatchProbe
    from ...mna.sensitivity import AdjointSensitivity

__all__ = ["PhaseLimit"]


@dataclass(frozen=True, slots=True)
class PhaseLimit(Limit):
    """Phase over a band within [min, max] degrees (unwrapped from the sweep start), and
    at most ``max_linear_deviation_deg`` away from its best straight line in f."""

    band: tuple[float, float] = (0.0, 0.0)
    range_deg: tuple[float | None, float | None] | None = (None, None)
    max_linear_deviation: float | None = None

    kind: ClassVar[str] = "phase"
    SUMMARY: ClassVar[str] = "phase over a band within range_deg; deviation from linear phase"
    METHOD: ClassVar[str] = (
        "unwrapped phase; true band extremes by Brent's root-finding"
    )
    KEYS: ClassVar[dict[str, str]] = {
        "band": "[start, stop], Hz",
        "range_deg": "[min, max] phase, degrees",
        "max_linear_deviation_deg": "largest |phase − (a + b·f)| over the band, degrees, "
                                    "a + b·f the least-squares line through the phase in f",
    }

    @classmethod
    def from_table(cls, rd: SpecReader, sweep: Sweep, name: str | None, index: int,
                   line: int | None) -> PhaseLimit:
        band = rd.band("band", sweep)
        rng = rd.bounds("range_deg")
        dev = rd.number("max_linear_deviation_deg")
        if rng is None and dev is None:
            rd.fail("range_deg", "missing (required): give range_deg, "
                                 "max_linear_deviation_deg or both")
        if dev is not None and dev < 0:
            rd.fail("max_linear_deviation_deg", f"may not be negative, got {dev:g}",
                    code="spec-283")
        return cls(name or f"phase {band_text(band)}", index, line, band, rng, dev)

    def _deviation_name(self) -> str:
        return f"{self.name}: deviation from linear"

    def result_names(self) -> tuple[str, ...]:
        names = (self.name,) if self.range_deg is not None else ()
        return names + ((self._deviation_name(),) if self.max_linear_deviation is not None
                        else ())

    def judge(self, probe: Probe) -> tuple[LimitResult, ...]:
        out = []
        if self.range_deg is not None:
            try:
                vmin, vmax = probe.extremes("phase_deg", *self.band)
                out.append(judge_range(
                    self.name, self.kind, self.range_deg[0], self.range_deg[1], vmin, vmax,
                    "deg", f"phase over {band_text(self.band)}, unwrapped continuously from "
                    "the start of the sweep", self.METHOD, self.index, self.line))
            except MeasurementFailure as err:
                out.append(self.error(str(err), "deg"))
        if self.max_linear_deviation is not None:
            try:
                lp = linear_phase(probe.curve, *self.band)
            except MeasurementFailure as err:
                return (*out, self.error(str(err), "deg", "deviation from linear"))
            worst = lp.worst
            margin = self.max_linear_deviation - worst.value
            out.append(LimitResult(
                self._deviation_name(), self.kind, Status.PASS if margin >= 0 else Status.FAIL,
                worst.value, None, self.max_linear_deviation, margin, "deg", worst.frequency_hz,
                f"largest |phase − (a + b·f)| over {band_text(self.band)}, the line fitted by "
                f"least squares over the band: a = {lp.intercept_deg:.6g}°, b = "
                f"{format_eng(lp.slope_deg_per_hz * 1e3, '°/kHz')} (a delay of "
                f"{format_eng(-lp.slope_deg_per_hz / 360.0, 's')})",
                "least-squares line by Gauss–Legendre quadrature; extremes of the "
                "deviation by Brent's root-finding on its exact slope", "",
                self.index, self.line))
        return tuple(out)

    def mask(self) -> tuple[MaskBand, ...]:
        if self.range_deg is None:
            return ()
        return (MaskBand(self.name, self.band[0], self.band[1], self.range_deg[0],
                         self.range_deg[1], "phase_deg"),)

    def judge_batch(self, bp: BatchProbe) -> Rows:
        rows = []
        if self.range_deg is not None:
            vmin, vmax = bp.band_extremes("phase_deg", *self.band)
            rows.append((self.name, *range_margin(self.range_deg[0], self.range_deg[1],
                                                  vmin.value, vmax.value)))
        if self.max_linear_deviation is not None:
            dev = self._batch_deviation(bp)
            rows.append((self._deviation_name(), dev, self.max_linear_deviation - dev))
        return rows

    def _batch_deviation(self, bp: BatchProbe) -> np.ndarray:
        """Per-sample largest |phase − line|: the line fitted on the same quadrature as
        the nominal (the sweep points as breaks), the largest node refined by a
        golden-section search between its neighbours."""
        lo, hi = self.band
        nodes, weights = quadrature(bp.grid, lo, hi)
        phase = bp.values("phase_deg", nodes)
        a, b = line_fit(nodes, weights, phase)
        pts = np.concatenate([[lo], nodes, [hi]])
        ends = bp.values("phase_deg", np.array([lo, hi]))
        dev = np.abs(np.concatenate([ends[:, :1], phase, ends[:, 1:]], axis=1)
                     - a[:, None] - b[:, None] * pts[None, :])
        k = np.nanargmax(np.where(np.isnan(dev), -np.inf, dev), axis=1)
        left = pts[np.maximum(k - 1, 0)]
        right = pts[np.minimum(k + 1, pts.size - 1)]

        def score(f: np.ndarray) -> np.ndarray:
            return np.abs(bp.values("phase_deg", f[:, None])[:, 0] - a - b * f)

        f_best, v_best = bp.golden(score, left, right)
        base = dev[np.arange(k.size), k]
        return np.where(v_best >= base, v_best, base)

    def sensitivities(self, probe: Probe, adj: AdjointSensitivity) -> list[Linearised]:
        out = []
        if self.range_deg is not None:
            vmin, vmax = probe.extremes("phase_deg", *self.band)
            out.append(linearised_range(self.name, *self.range_deg, vmin.value,
                                        adj.extreme("phase_deg", vmin.frequency_hz),
                                        vmax.value,
                                        adj.extreme("phase_deg", vmax.frequency_hz)))
        if self.max_linear_deviation is not None:
            lp = linear_phase(probe.curve, *self.band)
            worst = lp.worst
            sign = 1.0 if lp.highest.value >= -lp.lowest.value else -1.0
            # the line is linear in the phase at the nodes: its change is the fit's map
            # of the phase's change there; the extreme itself moves to first order only
            # with the line and the phase at it (envelope theorem)
            c_a, c_b = fit_map(lp.nodes_hz, lp.weights)
            d_nodes = np.degrees(adj.log_derivatives(lp.nodes_hz).w_p.imag)  # (N, P)
            d_line = (c_a + c_b * worst.frequency_hz) @ d_nodes
            d = sign * (adj.extreme("phase_deg", worst.frequency_hz) - d_line)
            out.append(Linearised(self._deviation_name(), worst.value, d, worst.value, d))
        return out
