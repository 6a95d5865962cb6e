"""Precise measurements (extremes, crossings, resonance, corner, ripple) on a complex frequency response."""

from __future__ import annotations

import math
from typing import Literal

import numpy as np

from .curve import (HALF_POWER_DB, Curve, Extremum, FunctionCurve, MeasurementFailure, Resonance, _band,
                     _checked_grid, _drop, _hz, _in_sweep, _number, _query)
from .refine import (_TWO_PI, _best, _evaluate, _find_crossing, _gain_from, _log_derivative, _phase_track,
                      _sample_points, _values, root_seeds, stationary_points)

__all__ = [
    "HALF_POWER_DB", "Curve", "Extremum", "FunctionCurve", "MeasurementFailure", "Resonance", "band_extremes",
    "corner", "crossing", "crossover", "gain_db", "group_delay_s", "peak", "phase_deg", "resonance", "ripple", "root_seeds",
    "stationary_points",
]

Quantity = Literal["gain_db", "phase_deg", "group_delay_s"]
Direction = Literal["up", "down"]
Side = Literal["auto", "low", "high"]

_QUANTITIES: tuple[str, ...] = ("gain_db", "phase_deg", "group_delay_s")


# ----------------------------------------------------------------------------- extremes


def band_extremes(curve: Curve, quantity: Quantity, lo_hz: float, hi_hz: float) -> tuple[Extremum, Extremum]:
    """True minimum and maximum of a real quantity over the closed band [lo_hz, hi_hz].

    Samples the grid points inside the band, both band ends, the seeds and a geometric
    cluster of probe points around each seed, in one batch.  A curve that carries its
    poles and zeros (``poles_hz`` and ``zeros_hz``, as the responses netcheck solves
    do) adds the seeds they give and every stationary point of ``quantity`` inside the
    band, located from them whatever the grid density (:func:`stationary_points`),
    with probe points around each.  Every sign change of the
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
    f = _sample_points(curve, grid, lo, hi, quantity)
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


def crossover(a: Curve, b: Curve, lo_hz: float, hi_hz: float) -> tuple[float, float]:
    """The lowest frequency in [lo_hz, hi_hz] where the gains of ``a`` and ``b`` are equal,
    and the gain there (dB).

    It is the crossing of 0 dB by the gain of the ratio Ha/Hb, found as
    :func:`crossing` finds any crossing (sign changes over grid, ends and the seeds of
    both curves, hidden dips from the exact derivative of the ratio, Brent's root on
    the exact gains), so it is as exact as the two responses. Both curves share the grid.

    Raises
    ------
    MeasurementFailure
        When the gains are not equal anywhere in the band.
    """
    def ratio(f: np.ndarray) -> np.ndarray:
        with np.errstate(all="ignore"):
            return a.transfer(f) / b.transfer(f)

    def dratio(f: np.ndarray) -> np.ndarray:
        ha, hb = a.transfer(f), b.transfer(f)
        with np.errstate(all="ignore"):
            return (a.dtransfer(f) * hb - ha * b.dtransfer(f)) / (hb * hb)

    grid = _checked_grid(a.grid_hz)
    seeds = np.unique(np.concatenate([np.asarray(a.seeds_hz, float),
                                      np.asarray(b.seeds_hz, float)]))
    curve = FunctionCurve(grid, ratio, dratio, seeds, roots_complete=False)
    try:
        f = crossing(curve, 0.0, lo_hz, "up", hi_hz)
    except MeasurementFailure:
        raise MeasurementFailure(f"the two gains are not equal anywhere from {_hz(lo_hz)} to "
                                 f"{_hz(hi_hz)}") from None
    return f, float(gain_db(a, f))


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
    if not bw > 0.0:  # a lossless section: the edges meet at the pole
        raise MeasurementFailure(
            f"the peak at {_hz(fp)} ({top.value:.4g} dB) is narrower than working precision: "
            "its half-power edges coincide, so its bandwidth and Q cannot be measured (a "
            "resonance with no loss: give its parts their resistance)"
        )
    centre = math.sqrt(f_low * f_high)
    return Resonance(fp, top.value, f_low, f_high, bw, centre, centre / bw, drop)


def corner(
    curve: Curve, level_db: float | None = None, reference_db: float | None = None, side: Side = "auto",
    top: Extremum | None = None,
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
    top : Extremum or None
        ``peak(curve)`` when the caller has it already (it is measured otherwise).

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
    top = peak(curve) if top is None else top
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
