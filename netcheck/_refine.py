"""Exact evaluation on a Curve, probe points around seeds and Brent refinement behind netcheck.measure."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np
from scipy.optimize import brentq, minimize_scalar

from ._curve import Curve, Extremum, _checked_seeds

# Nothing here is public API: :mod:`netcheck.measure` imports the helpers it needs by name.
__all__: list[str] = []

_DB_PER_NEPER: float = 20.0 / math.log(10.0)
_TWO_PI: float = 2.0 * math.pi
# Relative offsets of the probe points placed on both sides of every seed.
_SEED_OFFSETS: np.ndarray = np.logspace(-9.0, -1.0, 17)
_RTOL: float = 4.0 * float(np.finfo(float).eps)
_XTOL_REL: float = 2.0 * float(np.finfo(float).eps)


# ----------------------------------------------------------------------------- evaluation


def _evaluate(curve: Curve, f: np.ndarray, derivative: bool = True) -> tuple[np.ndarray, np.ndarray]:
    """H and dH/df at the 1-D array ``f`` in one batch each (dH is NaN when not requested)."""
    h = np.asarray(curve.transfer(f), dtype=complex)
    if h.shape != f.shape:
        raise ValueError(f"curve.transfer returned shape {h.shape} for {f.shape} frequencies")
    if not derivative:
        return h, np.full(f.shape, np.nan + 0j)
    dh = np.asarray(curve.dtransfer(f), dtype=complex)
    if dh.shape != f.shape:
        raise ValueError(f"curve.dtransfer returned shape {dh.shape} for {f.shape} frequencies")
    return h, dh


def _gain_from(h: np.ndarray) -> np.ndarray:
    with np.errstate(divide="ignore"):
        return 20.0 * np.log10(np.abs(h))


def _log_derivative(h: np.ndarray, dh: np.ndarray) -> np.ndarray:
    with np.errstate(divide="ignore", invalid="ignore"):
        return dh / h


def _probes(seeds: np.ndarray) -> np.ndarray:
    """Seeds plus geometric probe points on both sides of each positive seed, Hz."""
    seeds = seeds[seeds > 0.0]
    offsets = np.concatenate([-_SEED_OFFSETS, _SEED_OFFSETS])
    return np.concatenate([seeds, (seeds[:, None] * (1.0 + offsets[None, :])).ravel()])


def _sample_points(curve: Curve, grid: np.ndarray, lo: float, hi: float) -> np.ndarray:
    """Sorted sample frequencies in [lo, hi]: grid points, both ends, seeds and seed probes."""
    pts = np.concatenate([grid, [lo, hi], _probes(_checked_seeds(curve.seeds_hz))])
    return np.unique(pts[(pts >= lo) & (pts <= hi)])


@dataclass(frozen=True, slots=True)
class _PhaseTrack:
    """Unwrapped phase (rad) along the grid merged with the seed probes."""

    f_hz: np.ndarray
    rad: np.ndarray

    def branch(self, f: np.ndarray, wrapped: np.ndarray) -> np.ndarray:
        """Shift ``wrapped`` (rad) by the multiple of 2 pi closest to the interpolated track."""
        ref = np.interp(f, self.f_hz, self.rad)
        return wrapped + _TWO_PI * np.round((ref - wrapped) / _TWO_PI)


def _phase_track(curve: Curve, grid: np.ndarray) -> _PhaseTrack:
    probes = _probes(_checked_seeds(curve.seeds_hz))
    pts = np.unique(np.concatenate([grid, probes[(probes >= grid[0]) & (probes <= grid[-1])]]))
    h, _ = _evaluate(curve, pts, derivative=False)
    return _PhaseTrack(pts, np.unwrap(np.angle(h)))


def _values(
    quantity: str, f: np.ndarray, h: np.ndarray, dh: np.ndarray, track: _PhaseTrack | None
) -> tuple[np.ndarray, np.ndarray | None]:
    """Quantity values and, where exact, their derivative with respect to frequency (per Hz)."""
    r = _log_derivative(h, dh)
    if quantity == "gain_db":
        return _gain_from(h), _DB_PER_NEPER * r.real
    if quantity == "phase_deg":
        assert track is not None
        return np.degrees(track.branch(f, np.angle(h))), np.degrees(r.imag)
    return -r.imag / _TWO_PI, None


def _at(curve: Curve, quantity: str, f: float, track: _PhaseTrack | None) -> tuple[float, float]:
    """Value and derivative (NaN if none) of ``quantity`` at one frequency."""
    x = np.array([f])
    h, dh = _evaluate(curve, x)
    v, d = _values(quantity, x, h, dh, track)
    return float(v[0]), (math.nan if d is None else float(d[0]))


def _root(fun: Callable[[float], float], a: float, b: float) -> float | None:
    """Brent root of ``fun`` in [a, b] to near machine precision; None if not bracketed."""

    def safe(x: float) -> float:
        y = fun(x)
        return 0.0 if math.isnan(y) else y

    try:
        return float(brentq(safe, a, b, xtol=max(_XTOL_REL * max(abs(a), abs(b)), 1e-300), rtol=_RTOL, maxiter=200))
    except (ValueError, RuntimeError):
        return None


# ----------------------------------------------------------------------------- extremes


def _best(curve: Curve, quantity: str, f: np.ndarray, v: np.ndarray, d: np.ndarray | None,
          track: _PhaseTrack | None, kind: str) -> Extremum:
    """Refined global minimum or maximum of sampled ``v`` over the samples' span."""
    sgn = 1.0 if kind == "max" else -1.0
    score = np.where(np.isnan(v), -np.inf, sgn * v)
    i0 = int(np.argmax(score))
    best_f, best_score = float(f[i0]), float(score[i0])
    if d is not None:
        sd = sgn * d
        for i in np.flatnonzero((sd[:-1] > 0.0) & (sd[1:] < 0.0)):
            x = _root(lambda y: _at(curve, quantity, y, track)[1], float(f[i]), float(f[i + 1]))
            if x is not None:
                s = sgn * _at(curve, quantity, x, track)[0]
                if s > best_score:
                    best_f, best_score = x, s
    else:
        n = f.size
        rises = np.concatenate([[True], score[1:] > score[:-1]])
        holds = np.concatenate([score[:-1] >= score[1:], [True]])
        for i in np.flatnonzero(rises & holds):
            a, b = float(f[max(i - 1, 0)]), float(f[min(i + 1, n - 1)])
            x, s = _bounded_max(lambda y: sgn * _at(curve, quantity, y, track)[0], a, b)
            if s > best_score:
                best_f, best_score = x, s
    return Extremum(best_f, sgn * best_score)


def _bounded_max(score: Callable[[float], float], a: float, b: float) -> tuple[float, float]:
    """Brent bounded maximisation of ``score`` over [a, b] in log-frequency (linear if a == 0)."""
    la, lb = (math.log(a), math.log(b)) if a > 0.0 else (a, b)

    def freq(t: float) -> float:
        x = la + t * (lb - la)
        return math.exp(x) if a > 0.0 else x

    def cost(t: float) -> float:
        s = score(freq(t))
        return math.inf if math.isnan(s) else -s

    res = minimize_scalar(cost, bounds=(0.0, 1.0), method="bounded", options={"xatol": 1e-12, "maxiter": 500})
    x = min(max(freq(float(res.x)), a), b)
    return x, score(x)


# ----------------------------------------------------------------------------- crossings


def _find_crossing(curve: Curve, grid: np.ndarray, level: float, start: float, limit: float) -> float | None:
    """First frequency from ``start`` towards ``limit`` where gain equals ``level`` dB, or None."""
    if start == limit:
        return None
    up = limit > start
    f = _sample_points(curve, grid, min(start, limit), max(start, limit))
    h, dh = _evaluate(curve, f)
    g = _gain_from(h) - level
    d = _DB_PER_NEPER * _log_derivative(h, dh).real
    sg = np.sign(g)

    def excess(x: float) -> float:
        return float(_gain_from(_evaluate(curve, np.array([x]), derivative=False)[0])[0]) - level

    def slope(x: float) -> float:
        return _at(curve, "gain_db", x, None)[1]

    near = sg[:-1] if up else sg[1:]
    change = sg[:-1] * sg[1:] < 0.0
    hidden = (sg[:-1] == sg[1:]) & (
        ((sg[:-1] > 0.0) & (d[:-1] < 0.0) & (d[1:] > 0.0)) | ((sg[:-1] < 0.0) & (d[:-1] > 0.0) & (d[1:] < 0.0))
    )
    order = np.flatnonzero((near == 0.0) | change | hidden)
    for i in order if up else order[::-1]:
        a, b = float(f[i]), float(f[i + 1])
        if near[i] == 0.0:
            return a if up else b
        if change[i]:
            x = _root(excess, a, b)
            return x if x is not None else (a if abs(g[i]) < abs(g[i + 1]) else b)
        turn = _root(slope, a, b)
        if turn is None:
            continue
        e = excess(turn)
        if e == 0.0:
            return turn
        if math.copysign(1.0, e) != sg[i]:
            x = _root(excess, a, turn) if up else _root(excess, turn, b)
            if x is not None:
                return x
    far = sg[-1] if up else sg[0]
    return (float(f[-1]) if up else float(f[0])) if far == 0.0 else None
