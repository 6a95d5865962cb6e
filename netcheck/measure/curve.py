"""The Curve protocol, the measurement result types and the argument checks behind netcheck.measure."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Callable, Protocol, runtime_checkable

import numpy as np

__all__ = ["HALF_POWER_DB", "Curve", "Extremum", "FunctionCurve", "MeasurementFailure", "Resonance"]

#: Drop of the half-power point below the peak, dB: exactly 10*log10(2).
HALF_POWER_DB: float = 10.0 * math.log10(2.0)
_SWEEP_TOL_REL: float = 1e-12


class MeasurementFailure(ValueError):
    """A measurement cannot be made on this response (e.g. no crossing of a level within the sweep)."""


@runtime_checkable
class Curve(Protocol):
    """Complex frequency response that can be evaluated exactly at any frequency.

    Attributes
    ----------
    grid_hz, seeds_hz : numpy.ndarray
        Strictly increasing, non-negative 1-D sweep grid, Hz; extra frequencies, Hz, near
        which narrow features may hide (e.g. Im(pole) / 2 pi of lightly damped poles; may be empty).

    A curve may also carry ``poles_hz`` and ``zeros_hz`` (complex s/2π, Hz) and
    ``roots_complete`` (bool): the measurements then find every extreme from them.
    """

    @property
    def grid_hz(self) -> np.ndarray: ...

    @property
    def seeds_hz(self) -> np.ndarray: ...

    def transfer(self, f_hz: np.ndarray) -> np.ndarray:
        """Complex H at the 1-D array ``f_hz`` (Hz), same shape."""

    def dtransfer(self, f_hz: np.ndarray) -> np.ndarray:
        """Complex dH/df (per Hz) at the 1-D array ``f_hz`` (Hz), same shape."""


@dataclass(frozen=True, slots=True)
class FunctionCurve:
    """A :class:`Curve` built from two vectorised callables.

    Parameters
    ----------
    grid_hz : numpy.ndarray
        Sweep grid, Hz; strictly increasing, finite, non-negative, at least 2 points.
    transfer_fn, dtransfer_fn : callable
        Map a 1-D float array of frequencies (Hz) to complex H and to complex dH/df (per Hz).
    seeds_hz : numpy.ndarray, optional
        Frequencies (Hz) where narrow features may hide; empty by default.
    poles_hz, zeros_hz : numpy.ndarray or None, optional
        The poles and zeros of H as complex frequencies s/2π (Hz), when known: the
        measurements then seed from them and find every extreme between grid points
        (see :func:`netcheck.measure.stationary_points`). None (default): not known.
    roots_complete : bool, optional
        Whether ``poles_hz`` and ``zeros_hz`` hold every finite root (default True).
    """

    grid_hz: np.ndarray
    transfer_fn: Callable[[np.ndarray], np.ndarray]
    dtransfer_fn: Callable[[np.ndarray], np.ndarray]
    seeds_hz: np.ndarray = field(default_factory=lambda: np.empty(0))
    poles_hz: np.ndarray | None = None
    zeros_hz: np.ndarray | None = None
    roots_complete: bool = True

    def __post_init__(self) -> None:
        object.__setattr__(self, "grid_hz", _checked_grid(self.grid_hz))
        object.__setattr__(self, "seeds_hz", _checked_seeds(self.seeds_hz))
        for name in ("poles_hz", "zeros_hz"):
            roots = getattr(self, name)
            if roots is not None:
                roots = np.asarray(roots, dtype=complex).ravel()
                if not np.all(np.isfinite(roots)):
                    raise ValueError(f"{name} must hold finite complex frequencies in Hz")
                object.__setattr__(self, name, roots)

    def transfer(self, f_hz: np.ndarray) -> np.ndarray:
        """Complex H at ``f_hz`` (Hz)."""
        return np.asarray(self.transfer_fn(np.asarray(f_hz, dtype=float)), dtype=complex)

    def dtransfer(self, f_hz: np.ndarray) -> np.ndarray:
        """Complex dH/df (per Hz) at ``f_hz`` (Hz)."""
        return np.asarray(self.dtransfer_fn(np.asarray(f_hz, dtype=float)), dtype=complex)


@dataclass(frozen=True, slots=True)
class Extremum:
    """A located extreme value: ``value`` (dB, degrees or s) at ``frequency_hz`` (Hz)."""

    frequency_hz: float
    value: float


@dataclass(frozen=True, slots=True)
class Resonance:
    """Resonance peak with its two edges ``level_db`` below the peak.

    Attributes
    ----------
    f_peak_hz, peak_gain_db : float
        Location (Hz) and gain (dB) of the peak.
    f_low_hz, f_high_hz, bandwidth_hz, f_center_hz : float
        Nearest edges below and above the peak, their difference and geometric mean
        ``sqrt(f_low_hz * f_high_hz)``, all Hz.
    q, level_db : float
        ``f_center_hz / bandwidth_hz`` (dimensionless); drop used, dB (``HALF_POWER_DB`` for half-power).
    """

    f_peak_hz: float
    peak_gain_db: float
    f_low_hz: float
    f_high_hz: float
    bandwidth_hz: float
    f_center_hz: float
    q: float
    level_db: float


# ----------------------------------------------------------------------------- validation


def _hz(f: float) -> str:
    """Human-readable frequency, e.g. ``40.04 kHz``."""
    for scale, prefix in ((1e9, "G"), (1e6, "M"), (1e3, "k")):
        if abs(f) >= scale:
            return f"{f / scale:.4g} {prefix}Hz"
    return f"{f:.4g} Hz"


def _number(name: str, value: object) -> float:
    """Convert ``value`` to a finite float or raise ValueError naming ``name``."""
    try:
        x = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a real number, got {value!r}") from None
    if not math.isfinite(x):
        raise ValueError(f"{name} must be finite, got {x}")
    return x


def _checked_grid(grid_hz: object) -> np.ndarray:
    """Validated sweep grid as a float array."""
    grid = np.asarray(grid_hz, dtype=float)
    if grid.ndim != 1 or grid.size < 2:
        raise ValueError("grid_hz must be a 1-D array of at least 2 frequencies")
    if not np.all(np.isfinite(grid)) or grid[0] < 0.0:
        raise ValueError("grid_hz must hold finite, non-negative frequencies in Hz")
    if np.any(np.diff(grid) <= 0.0):
        raise ValueError("grid_hz must be strictly increasing")
    return grid


def _checked_seeds(seeds_hz: object) -> np.ndarray:
    """Validated seed frequencies as a 1-D float array."""
    seeds = np.asarray(seeds_hz, dtype=float).ravel()
    if not np.all(np.isfinite(seeds)):
        raise ValueError("seeds_hz must hold finite frequencies in Hz")
    return seeds


def _in_sweep(name: str, value: object, grid: np.ndarray) -> float:
    """A finite frequency inside the sweep range (tiny round-off is clipped), else ValueError."""
    f = _number(name, value)
    tol = _SWEEP_TOL_REL * grid[-1]
    if f < grid[0] - tol or f > grid[-1] + tol:
        raise ValueError(f"{name} = {_hz(f)} lies outside the sweep {_hz(grid[0])} to {_hz(grid[-1])}")
    return float(min(max(f, grid[0]), grid[-1]))


def _band(curve: Curve, lo_hz: object, hi_hz: object) -> tuple[np.ndarray, float, float]:
    """Grid and validated band; ``None`` ends default to the sweep ends."""
    grid = _checked_grid(curve.grid_hz)
    lo = float(grid[0]) if lo_hz is None else _in_sweep("lo_hz", lo_hz, grid)
    hi = float(grid[-1]) if hi_hz is None else _in_sweep("hi_hz", hi_hz, grid)
    if not lo < hi:
        raise ValueError(f"lo_hz ({_hz(lo)}) must be below hi_hz ({_hz(hi)})")
    return grid, lo, hi


def _drop(level_db: float | None) -> float:
    """Drop below the reference, dB: half-power for ``None``, else a positive finite number."""
    if level_db is None:
        return HALF_POWER_DB
    drop = _number("level_db", level_db)
    if drop <= 0.0:
        raise ValueError(f"level_db is a drop below the reference and must be positive, got {drop}")
    return drop


def _query(f_hz: object) -> np.ndarray:
    """Validated query frequencies (any shape)."""
    try:
        f = np.asarray(f_hz, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"f_hz must be real frequencies in Hz, got {f_hz!r}") from None
    if not np.all(np.isfinite(f)) or np.any(f < 0.0):
        raise ValueError("f_hz must hold finite, non-negative frequencies in Hz")
    return f
