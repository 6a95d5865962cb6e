"""Deviation from linear phase: the unwrapped phase minus its best straight line in f.

The line a + b·f is the least-squares fit to the phase over the whole band (the integral
of the squared difference over f is least), computed by composite Gauss–Legendre
quadrature on the pieces between the sweep points inside the band (and the seeds, where
a narrow feature may sit). The deviation d(f) = φ(f) − a − b·f is then searched for its
extremes exactly: the band ends, and every zero of its exact derivative
d′(f) = dφ/df − b (dφ/df from the exact dH/df) between the quadrature nodes, located by
Brent's root-finding.

References
----------
.. [1] P. J. Davis and P. Rabinowitz, *Methods of Numerical Integration*, 2nd ed.,
   Academic Press, 1984, §2.7 (Gauss–Legendre quadrature).
.. [2] R. P. Brent, *Algorithms for Minimization without Derivatives*, Prentice-Hall,
   1973, ch. 4.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .curve import Curve, Extremum, MeasurementFailure, _band
from .measurements import phase_deg
from .refine import _evaluate, _log_derivative, _root

__all__ = ["LinearPhase", "linear_phase", "quadrature", "line_fit", "GAUSS_NODES"]

#: Gauss–Legendre nodes per piece between neighbouring sweep points
GAUSS_NODES = 6


@dataclass(frozen=True, slots=True)
class LinearPhase:
    """A band's phase against its least-squares line: the line (degrees, degrees per Hz),
    the lowest and highest deviation from it, and the quadrature it was fitted on."""

    intercept_deg: float
    slope_deg_per_hz: float
    lowest: Extremum
    highest: Extremum
    nodes_hz: np.ndarray
    weights: np.ndarray

    @property
    def worst(self) -> Extremum:
        """The largest |deviation| (its value unsigned) and where it lies."""
        if -self.lowest.value > self.highest.value:
            return Extremum(self.lowest.frequency_hz, -self.lowest.value)
        return self.highest


def quadrature(breaks: np.ndarray, lo: float, hi: float) -> tuple[np.ndarray, np.ndarray]:
    """Composite Gauss–Legendre nodes and weights over [lo, hi], one rule of
    :data:`GAUSS_NODES` points on each piece between the ``breaks`` inside the band."""
    inner = np.asarray(breaks, float)
    inner = inner[(inner > lo) & (inner < hi)]
    edges = np.unique(np.concatenate([[lo], inner, [hi]]))
    x, w = np.polynomial.legendre.leggauss(GAUSS_NODES)
    a, b = edges[:-1, None], edges[1:, None]
    nodes = (0.5 * (b - a) * x[None, :] + 0.5 * (a + b)).ravel()
    weights = (0.5 * (b - a) * w[None, :]).ravel()
    return nodes, weights


def line_fit(nodes: np.ndarray, weights: np.ndarray, phase: np.ndarray
             ) -> tuple[np.ndarray, np.ndarray]:
    """Least-squares line a + b·f through ``phase`` (..., N) at the ``nodes`` (N,) with
    quadrature ``weights``: (a, b), each of shape (...). Centred on the weighted mean
    frequency, so the two normal equations decouple."""
    total = weights.sum()
    fm = float(weights @ nodes) / total
    u = nodes - fm
    b = (phase @ (weights * u)) / float(weights @ (u * u))
    a = (phase @ weights) / total - b * fm
    return a, b


def fit_map(nodes: np.ndarray, weights: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The rows (c_a, c_b) with a = c_a·φ and b = c_b·φ of :func:`line_fit`: the fit is
    linear in the phase, so a change of φ at the nodes changes the line by these."""
    total = weights.sum()
    fm = float(weights @ nodes) / total
    u = nodes - fm
    c_b = weights * u / float(weights @ (u * u))
    c_a = weights / total - c_b * fm
    return c_a, c_b


def linear_phase(curve: Curve, lo_hz: float, hi_hz: float) -> LinearPhase:
    """The deviation of the unwrapped phase (degrees, as :func:`phase_deg`) from its
    least-squares straight line in f over [lo_hz, hi_hz]: the line and the true lowest
    and highest deviation (see the module notes)."""
    grid, lo, hi = _band(curve, lo_hz, hi_hz)
    nodes, weights = quadrature(np.concatenate([grid, np.asarray(curve.seeds_hz, float)]),
                                lo, hi)
    a, b = line_fit(nodes, weights, phase_deg(curve, nodes))
    a, b = float(a), float(b)

    def slope(f: np.ndarray) -> np.ndarray:  # d′(f), degrees per Hz
        h, dh = _evaluate(curve, np.atleast_1d(np.asarray(f, float)))
        return np.degrees(_log_derivative(h, dh).imag) - b

    pts = np.concatenate([[lo], nodes, [hi]])
    d1 = slope(pts)
    cands = [lo, hi]
    for k in np.flatnonzero(np.sign(d1[:-1]) * np.sign(d1[1:]) < 0):
        x = _root(lambda f: float(slope(np.array([f]))[0]), float(pts[k]), float(pts[k + 1]))
        if x is not None:
            cands.append(x)
    cands += [float(p) for p in pts[1:-1][d1[1:-1] == 0.0]]
    f = np.array(cands)
    dev = phase_deg(curve, f) - a - b * f
    dev = np.where(np.isfinite(dev), dev, np.nan)
    if np.all(np.isnan(dev)):
        raise MeasurementFailure("the phase is not defined over the band (no transmission)")
    i, j = int(np.nanargmin(dev)), int(np.nanargmax(dev))
    return LinearPhase(a, b, Extremum(float(f[i]), float(dev[i])),
                       Extremum(float(f[j]), float(dev[j])), nodes, weights)
