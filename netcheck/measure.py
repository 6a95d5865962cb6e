"""Precise measurements (extremes, crossings, resonance, corner, ripple) on a complex frequency response."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Callable, Literal, Protocol, runtime_checkable

import numpy as np
from scipy.optimize import brentq, minimize_scalar

__all__ = [
    "HALF_POWER_DB", "Curve", "Extremum", "FunctionCurve", "MeasurementFailure", "Resonance", "band_extremes",
    "corner", "crossing", "gain_db", "group_delay_s", "peak", "phase_deg", "resonance", "ripple",
]

Quantity = Literal["gain_db", "phase_deg", "group_delay_s"]
Direction = Literal["up", "down"]
Side = Literal["auto", "low", "high"]

#: Drop of the half-power point below the peak, dB: exactly 10*log10(2).
HALF_POWER_DB: float = 10.0 * math.log10(2.0)

_QUANTITIES: tuple[str, ...] = ("gain_db", "phase_deg", "group_delay_s")
_DB_PER_NEPER: float = 20.0 / math.log(10.0)
_TWO_PI: float = 2.0 * math.pi
# Relative offsets of the probe points placed on both sides of every seed.
_SEED_OFFSETS: np.ndarray = np.logspace(-9.0, -1.0, 17)
_RTOL: float = 4.0 * float(np.finfo(float).eps)
_XTOL_REL: float = 2.0 * float(np.finfo(float).eps)
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
    """

    grid_hz: np.ndarray
    transfer_fn: Callable[[np.ndarray], np.ndarray]
    dtransfer_fn: Callable[[np.ndarray], np.ndarray]
    seeds_hz: np.ndarray = field(default_factory=lambda: np.empty(0))

    def __post_init__(self) -> None:
        object.__setattr__(self, "grid_hz", _checked_grid(self.grid_hz))
        object.__setattr__(self, "seeds_hz", _checked_seeds(self.seeds_hz))

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


def band_extremes(curve: Curve, quantity: Quantity, lo_hz: float, hi_hz: float) -> tuple[Extremum, Extremum]:
    """True minimum and maximum of a real quantity over the closed band [lo_hz, hi_hz].

    Samples the grid points inside the band, both band ends, the seeds and a geometric
    cluster of probe points around each seed, in one batch.  Every sign change of the
    exact derivative between neighbouring samples is refined by Brent root-finding
    (gain and phase); group delay, which has no exact derivative here, is refined by
    bounded Brent minimisation on log-frequency around each sampled local extremum.

    Parameters
    ----------
    curve : Curve
        Response to measure.
    quantity : {"gain_db", "phase_deg", "group_delay_s"}
        Gain (dB), unwrapped phase (degrees, see :func:`phase_deg`) or group delay (s).
    lo_hz, hi_hz : float
        Band ends, Hz, inside the sweep, ``lo_hz < hi_hz``.

    Returns
    -------
    tuple of Extremum
        ``(minimum, maximum)``; frequencies in Hz, values in the unit of ``quantity``.

    Raises
    ------
    ValueError
        If ``quantity`` is unknown or the band is invalid.

    References
    ----------
    R. P. Brent, "Algorithms for Minimization without Derivatives", Prentice-Hall, 1973
    (ch. 4 zero finding, ch. 5 bounded one-dimensional minimisation).
    """
    if quantity not in _QUANTITIES:
        raise ValueError(f"quantity must be one of {', '.join(_QUANTITIES)}; got {quantity!r}")
    grid, lo, hi = _band(curve, _number("lo_hz", lo_hz), _number("hi_hz", hi_hz))
    f = _sample_points(curve, grid, lo, hi)
    h, dh = _evaluate(curve, f)
    track = _phase_track(curve, grid) if quantity == "phase_deg" else None
    v, d = _values(quantity, f, h, dh, track)
    return _best(curve, quantity, f, v, d, track, "min"), _best(curve, quantity, f, v, d, track, "max")


def peak(curve: Curve, lo_hz: float | None = None, hi_hz: float | None = None) -> Extremum:
    """Maximum gain (dB) over the sweep or the band [lo_hz, hi_hz], located on the exact derivative.

    Parameters
    ----------
    curve : Curve
        Response to measure.
    lo_hz, hi_hz : float or None
        Band ends, Hz; ``None`` means the corresponding sweep end.

    Returns
    -------
    Extremum
        Peak frequency (Hz) and gain (dB).

    References
    ----------
    R. P. Brent, "Algorithms for Minimization without Derivatives", Prentice-Hall, 1973, ch. 4.
    """
    _, lo, hi = _band(curve, lo_hz, hi_hz)
    return band_extremes(curve, "gain_db", lo, hi)[1]


def ripple(curve: Curve, lo_hz: float, hi_hz: float) -> tuple[float, Extremum, Extremum]:
    """Pass-band ripple: maximum minus minimum gain over [lo_hz, hi_hz].

    Parameters
    ----------
    curve : Curve
        Response to measure.
    lo_hz, hi_hz : float
        Band ends, Hz.

    Returns
    -------
    tuple
        ``(ripple_db, minimum, maximum)``; ripple in dB, extrema as in :func:`band_extremes`.

    References
    ----------
    R. P. Brent, "Algorithms for Minimization without Derivatives", Prentice-Hall, 1973, ch. 4.
    """
    lowest, highest = band_extremes(curve, "gain_db", lo_hz, hi_hz)
    return highest.value - lowest.value, lowest, highest


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


def crossing(curve: Curve, level_db: float, start_hz: float, direction: Direction, limit_hz: float) -> float:
    """First frequency moving from ``start_hz`` towards ``limit_hz`` where gain crosses ``level_db``.

    Sign changes of (gain - level) between samples (grid, ends, seeds and seed probes)
    are solved by Brent root-finding on the exact gain; a dip or bump hidden between two
    samples on the same side of the level is detected from the exact derivative,
    located, and used to bracket the crossing.

    Parameters
    ----------
    curve : Curve
        Response to measure.
    level_db : float
        Absolute gain level, dB.
    start_hz, limit_hz : float
        Search start and end, Hz, inside the sweep.
    direction : {"up", "down"}
        Search direction; "up" needs ``limit_hz > start_hz``, "down" the opposite.

    Returns
    -------
    float
        Crossing frequency, Hz (``start_hz`` itself if the gain there equals the level).

    Raises
    ------
    ValueError
        On invalid arguments.  :class:`MeasurementFailure` if the level is not reached.

    References
    ----------
    R. P. Brent, "Algorithms for Minimization without Derivatives", Prentice-Hall, 1973, ch. 4.
    """
    grid = _checked_grid(curve.grid_hz)
    level = _number("level_db", level_db)
    start = _in_sweep("start_hz", start_hz, grid)
    limit = _in_sweep("limit_hz", limit_hz, grid)
    if direction not in ("up", "down"):
        raise ValueError(f"direction must be 'up' or 'down', got {direction!r}")
    if (direction == "up") != (limit > start) or limit == start:
        rel = "above" if direction == "up" else "below"
        raise ValueError(f"limit_hz ({_hz(limit)}) must lie {rel} start_hz ({_hz(start)}) for direction {direction!r}")
    x = _find_crossing(curve, grid, level, start, limit)
    if x is None:
        where = "above" if direction == "up" else "below"
        raise MeasurementFailure(
            f"gain never crosses {level:.4g} dB {where} {_hz(start)} within the sweep (stop {_hz(limit)})"
        )
    return x


# ----------------------------------------------------------------------------- resonance and corner


def resonance(
    curve: Curve, level_db: float | None = None, lo_hz: float | None = None, hi_hz: float | None = None
) -> Resonance:
    """Peak, edges, bandwidth, geometric centre and Q of a resonance.

    The peak is searched in [lo_hz, hi_hz] (default: the sweep); the edges are the
    nearest crossings of (peak gain - drop) below and above the peak, searched over the
    whole sweep.

    Parameters
    ----------
    curve : Curve
        Response to measure.
    level_db : float or None
        Drop below the peak defining the edges, dB (positive); ``None`` means half-power,
        exactly 10*log10(2) dB (|H| = |H_peak| / sqrt(2)).
    lo_hz, hi_hz : float or None
        Band in which to look for the peak, Hz.

    Returns
    -------
    Resonance
        Frequencies in Hz, gains in dB, Q dimensionless.

    Raises
    ------
    ValueError
        On invalid arguments.  :class:`MeasurementFailure` if the highest gain sits at an
        end of the band (no peak inside it) or an edge lies outside the sweep.

    References
    ----------
    R. P. Brent, "Algorithms for Minimization without Derivatives", Prentice-Hall, 1973, ch. 4.
    """
    drop = _drop(level_db)
    grid, lo, hi = _band(curve, lo_hz, hi_hz)
    top = band_extremes(curve, "gain_db", lo, hi)[1]
    fp = top.frequency_hz
    if fp in (lo, hi):
        span = "sweep" if (lo, hi) == (grid[0], grid[-1]) else "band"
        raise MeasurementFailure(
            f"the highest gain in the {span} {_hz(lo)} to {_hz(hi)} is at its end {_hz(fp)}, "
            "so there is no resonance peak inside it; widen or move the band"
        )
    target = top.value - drop
    edges: list[float] = []
    for limit, where in ((float(grid[0]), "below"), (float(grid[-1]), "above")):
        x = _find_crossing(curve, grid, target, fp, limit)
        if x is None:
            raise MeasurementFailure(
                f"gain never falls {drop:.4g} dB below the peak ({top.value:.4g} dB at {_hz(fp)}) "
                f"{where} {_hz(fp)} within the sweep (stop {_hz(limit)})"
            )
        edges.append(x)
    f_low, f_high = edges
    bw = f_high - f_low
    centre = math.sqrt(f_low * f_high)
    return Resonance(fp, top.value, f_low, f_high, bw, centre, centre / bw, drop)


def corner(
    curve: Curve, level_db: float | None = None, reference_db: float | None = None, side: Side = "auto"
) -> float:
    """Edge frequency of a low-pass or high-pass response.

    The edge is the first frequency, moving away from the pass-band peak (the maximum
    gain over the sweep), where the gain falls ``level_db`` below ``reference_db``.

    Parameters
    ----------
    curve : Curve
        Response to measure.
    level_db : float or None
        Drop below the reference, dB (positive); ``None`` means half-power, 10*log10(2) dB.
    reference_db : float or None
        Pass-band reference gain, dB; ``None`` means the peak gain over the sweep.
    side : {"auto", "low", "high"}
        "high": edge above the pass-band (low-pass corner); "low": edge below it
        (high-pass corner); "auto": whichever of the two exists within the sweep.

    Returns
    -------
    float
        Corner frequency, Hz.

    Raises
    ------
    ValueError
        On invalid arguments.  :class:`MeasurementFailure` if the requested edge does not
        exist within the sweep, or with ``side="auto"`` if both or neither exist.

    References
    ----------
    R. P. Brent, "Algorithms for Minimization without Derivatives", Prentice-Hall, 1973, ch. 4.
    """
    if side not in ("auto", "low", "high"):
        raise ValueError(f"side must be 'auto', 'low' or 'high', got {side!r}")
    drop = _drop(level_db)
    ref = None if reference_db is None else _number("reference_db", reference_db)
    grid = _checked_grid(curve.grid_hz)
    top = peak(curve)
    ref = top.value if ref is None else ref
    target = ref - drop
    fp = top.frequency_hz
    if top.value <= target:
        raise MeasurementFailure(
            f"the pass-band peak ({top.value:.4g} dB at {_hz(fp)}) is not above the corner level "
            f"{target:.4g} dB ({drop:.4g} dB below the reference {ref:.4g} dB)"
        )
    low = _find_crossing(curve, grid, target, fp, float(grid[0])) if side != "high" else None
    high = _find_crossing(curve, grid, target, fp, float(grid[-1])) if side != "low" else None
    if low is not None and high is not None:
        raise MeasurementFailure(
            f"the gain falls {drop:.4g} dB below the reference on both sides of the pass-band (at {_hz(low)} and "
            f"{_hz(high)}); choose side='low' for the lower edge (high-pass corner) or side='high' for the upper "
            "edge (low-pass corner)"
        )
    edge = low if low is not None else high
    if edge is None:
        where = {"auto": "on either side of", "low": "below", "high": "above"}[side]
        raise MeasurementFailure(
            f"gain never falls {drop:.4g} dB below the reference ({ref:.4g} dB) {where} the pass-band peak at "
            f"{_hz(fp)} within the sweep {_hz(grid[0])} to {_hz(grid[-1])}"
        )
    return edge


# ----------------------------------------------------------------------------- point helpers


def gain_db(curve: Curve, f_hz: np.ndarray | float) -> np.ndarray:
    """Gain 20*log10|H|, dB, at ``f_hz`` (Hz, any shape); -inf where H = 0."""
    f = _query(f_hz)
    if f.size == 0:
        return np.empty(f.shape)
    h, _ = _evaluate(curve, f.ravel(), derivative=False)
    return _gain_from(h).reshape(f.shape)


def phase_deg(curve: Curve, f_hz: np.ndarray | float) -> np.ndarray:
    """Unwrapped phase of H, degrees, at ``f_hz`` (Hz, any shape).

    The phase is unwrapped along the sweep grid merged with the seed probe points,
    starting at the lowest grid point (taken in (-180, 180]); each query takes the
    360-degree branch nearest to that track interpolated at its frequency (the end
    values are used outside the sweep).

    References
    ----------
    Phase unwrapping by removing jumps larger than 180 degrees between neighbouring
    samples: common practice, no source.
    """
    f = _query(f_hz)
    if f.size == 0:
        return np.empty(f.shape)
    track = _phase_track(curve, _checked_grid(curve.grid_hz))
    flat = f.ravel()
    h, _ = _evaluate(curve, flat, derivative=False)
    return np.degrees(track.branch(flat, np.angle(h))).reshape(f.shape)


def group_delay_s(curve: Curve, f_hz: np.ndarray | float) -> np.ndarray:
    """Group delay -(1/(2 pi)) * Im(H'/H), s, at ``f_hz`` (Hz, any shape), H' = dH/df.

    References
    ----------
    Group delay as the negative derivative of phase with respect to angular frequency:
    common practice, no source.
    """
    f = _query(f_hz)
    if f.size == 0:
        return np.empty(f.shape)
    h, dh = _evaluate(curve, f.ravel())
    return (-_log_derivative(h, dh).imag / _TWO_PI).reshape(f.shape)
