"""Exact evaluation on a Curve, probe points around seeds and Brent refinement behind netcheck.measure."""

from __future__ import annotations

import logging
import math
from collections import OrderedDict
from dataclasses import dataclass
from typing import Callable

import numpy as np
from scipy.optimize import brentq, minimize_scalar

from .curve import Curve, Extremum, _checked_seeds

log = logging.getLogger(__name__)

# Nothing here is public API: :mod:`netcheck.measure` imports the helpers it needs by name.
__all__: list[str] = []

_DB_PER_NEPER: float = 20.0 / math.log(10.0)
_TWO_PI: float = 2.0 * math.pi
# Relative offsets of the probe points placed on both sides of every seed.
_SEED_OFFSETS: np.ndarray = np.logspace(-9.0, -1.0, 17)
_RTOL: float = 4.0 * float(np.finfo(float).eps)
_XTOL_REL: float = 2.0 * float(np.finfo(float).eps)
# Values (dB or degrees) equal to within this many ε of their size plus 20 dB or 180°
# are equal to rounding (see :func:`_best`).
_TIE_EPS: float = 64.0 * float(np.finfo(float).eps)


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


def _probes(seeds: np.ndarray, offsets: np.ndarray = _SEED_OFFSETS) -> np.ndarray:
    """Seeds plus geometric probe points on both sides of each positive seed, Hz."""
    seeds = seeds[seeds > 0.0]
    offsets = np.concatenate([-offsets, offsets])
    return np.concatenate([seeds, (seeds[:, None] * (1.0 + offsets[None, :])).ravel()])


def _sample_points(curve: Curve, grid: np.ndarray, lo: float, hi: float,
                   quantity: str | None = "gain_db") -> np.ndarray:
    """Sorted sample frequencies in [lo, hi]: grid points, both ends, seeds and seed probes,
    and, for a curve that knows its poles and zeros (:func:`_curve_roots`), the seeds
    they give and every stationary point of ``quantity`` in [lo, hi] with its probes."""
    seeds = _checked_seeds(curve.seeds_hz)
    parts = [grid, [lo, hi]]
    roots = _curve_roots(curve)
    if roots is not None:
        poles, zeros, complete = roots
        seeds = np.concatenate([seeds, root_seeds(poles, lo, hi), root_seeds(zeros, lo, hi)])
        if quantity is not None:
            # located from the roots to 1e-6 when they are complete; only approximately
            # from a partial set (sparse path): probed as far out as a seed then
            stat = _sweep_stationary(poles, zeros, float(grid[0]), float(grid[-1]), quantity)
            parts.append(_probes(stat, _STATIONARY_OFFSETS if complete else _SEED_OFFSETS))
    parts.append(_probes(seeds))
    pts = np.concatenate(parts)
    return np.unique(pts[(pts >= lo) & (pts <= hi)])


_STATIONARY_CACHE: "OrderedDict[tuple, np.ndarray]" = OrderedDict()
_STATIONARY_CACHE_SIZE = 32


def _sweep_stationary(poles: np.ndarray, zeros: np.ndarray, lo: float, hi: float,
                      quantity: str) -> np.ndarray:
    """:func:`stationary_points` over a whole sweep, kept for the last few root sets
    (every band and crossing search of one response reads the same ones)."""
    key = (poles.tobytes(), zeros.tobytes(), lo, hi, quantity)
    hit = _STATIONARY_CACHE.get(key)
    if hit is None:
        hit = stationary_points(poles, zeros, lo, hi, quantity)
        hit.flags.writeable = False
        _STATIONARY_CACHE[key] = hit
        while len(_STATIONARY_CACHE) > _STATIONARY_CACHE_SIZE:
            _STATIONARY_CACHE.popitem(last=False)
    else:
        _STATIONARY_CACHE.move_to_end(key)
    return hit


def _curve_roots(curve: Curve) -> tuple[np.ndarray, np.ndarray, bool] | None:
    """(poles, zeros, complete) in Hz when ``curve`` carries them (attributes
    ``poles_hz`` and ``zeros_hz``, optional ``roots_complete``, default True), else None."""
    poles = getattr(curve, "poles_hz", None)
    zeros = getattr(curve, "zeros_hz", None)
    if poles is None or zeros is None:
        return None
    poles = np.asarray(poles, dtype=complex).ravel()
    zeros = np.asarray(zeros, dtype=complex).ravel()
    if poles.size + zeros.size == 0:
        return None
    return poles, zeros, bool(getattr(curve, "roots_complete", True))


def root_seeds(roots_hz: np.ndarray, lo: float, hi: float) -> np.ndarray:
    """Frequencies (Hz) where lightly damped roots (poles or zeros) put narrow features.

    For a root s/2π = σ + jν the feature sits near |ν| (and |s|/2π); only roots with
    |ν| > |σ| (Q above 1/√2, zeros on the jω axis included) inside [lo, hi] are kept.
    """
    roots_hz = np.asarray(roots_hz, dtype=complex).ravel()
    r = roots_hz[np.isfinite(roots_hz) & (roots_hz.imag > 0)]
    r = r[np.abs(r.imag) > np.abs(r.real)]
    cand = np.concatenate([np.abs(r.imag), np.abs(r)])
    return np.unique(cand[(cand >= lo) & (cand <= hi)])


# ----------------------------------------------------------------------------- stationary points

# Relative offsets of the probe points around a stationary point located from complete roots.
_STATIONARY_OFFSETS: np.ndarray = np.logspace(-6.0, -3.0, 4)
#: Taylor terms kept for a root far from an interval (distance ≥ twice its half-width)
_TAYLOR_TERMS = 10
#: an interval still holding a possible stationary point is split until its width is
#: below this fraction of its upper end; it then gives a candidate
_ISOLATE_RTOL = 1e-6
#: change of ln|H| (nepers) or of the phase (rad) over an interval below which it is not
#: split further (about 1e-12 dB; for the group delay, this fraction of the phase′ the
#: roots make): it gives one candidate, as a narrow piece does
_FLAT = 1e-13
#: candidates closer than this (relative) are one (the probes around it reach both)
_MERGE_RTOL = 1e-6
#: the first intervals are at most this many to a decade (see ``_pieces``)
_PIECES_PER_DECADE = 1.0
#: most intervals kept at one level (a bound on the work; never reached in practice)
_MAX_INTERVALS = 20000
#: most numbers (intervals × roots) handled in one array operation
_CHUNK = 1 << 20

# For each quantity: the derivative whose sign changes at its extremes, written with
# the roots r = α + jβ (Hz) of H as part(coef·Σ ±(f − c)^(−p)), c = β − jα (zeros +,
# poles −): d ln H/df = Σ ±1/(f − c), so ln|H|′ is its real part, the phase′ (rad/Hz)
# its imaginary part and the phase″ (−2π × the group delay′) the imaginary part of
# −Σ ±(f − c)^(−2). The last entry: offsets κ (times |α|, from β) where a single term
# turns, so that a term is monotone between them.
_KINDS: dict[str, tuple[bool, int, float, tuple[float, ...]]] = {
    "gain_db": (True, 1, 1.0, (0.0, 1.0, -1.0)),
    "phase_deg": (False, 1, 1.0, (0.0,)),
    "group_delay_s": (False, 2, -1.0, (1.0 / math.sqrt(3.0), -1.0 / math.sqrt(3.0))),
}


def stationary_points(poles_hz: np.ndarray, zeros_hz: np.ndarray, lo: float, hi: float,
                      quantity: str = "gain_db") -> np.ndarray:
    """Every stationary point of ``quantity`` of H in [lo, hi] (Hz), from its roots.

    H(jf) = k·Π(jf − zᵢ)/Π(jf − pⱼ) with the roots in Hz (s/2π). The derivative of
    ln|H|, of the phase or of the group delay is a sum of one simple term per root
    (see ``_KINDS``); its sign changes are isolated by bisection of [lo, hi] with a
    bound of its range on each interval, made of

    * for a root near the interval (closer than its width), the exact range of the
      root's own term, monotone between its turning points;
    * for the others together, their Taylor series about the interval's centre to
      :data:`_TAYLOR_TERMS` terms, its remainder bound and a rounding bound (the sums
      are formed before the bound is taken, so terms that cancel, as in a maximally
      flat pass-band, cancel in the bound too).

    The band is first cut where a root's term turns and into pieces of at most one
    decade. An interval whose bound excludes 0 holds no stationary point and is
    dropped; one over which ln|H| or the phase cannot change by :data:`_FLAT` (a flat
    pass-band, or the last halvings at a turning point) gives a candidate at its middle
    and is not split further; the others are halved until narrower than
    :data:`_ISOLATE_RTOL` of their frequency and give a candidate. A run of candidates
    each within :data:`_MERGE_RTOL` of the next is given by its middle and, when wider,
    its ends. So every stationary point of the function the roots define lies within
    1e-6 (relative) of a candidate or inside such a run, however far apart the sweep
    points are; the caller samples around them and refines on the exact response.

    Parameters
    ----------
    poles_hz, zeros_hz : array_like of complex
        Poles and zeros, Hz (s/2π). 1-D for one response, or 2-D (samples × roots, NaN
        where a sample has fewer) for many at once.
    lo, hi : float or array_like
        Band, Hz, 0 ≤ lo < hi (per sample for 2-D roots).
    quantity : {"gain_db", "phase_deg", "group_delay_s"}
        Whose stationary points: the gain's, the phase's or the group delay's.

    Returns
    -------
    ndarray
        1-D roots: sorted candidate frequencies, Hz. 2-D roots: an array (samples × k)
        of them, NaN-padded.

    References
    ----------
    R. E. Moore, R. B. Kearfott and M. J. Cloud, *Introduction to Interval Analysis*,
    SIAM, 2009, ch. 6 (range enclosure by mean-value and Taylor forms, and root
    exclusion by bisection).
    """
    if quantity not in _KINDS:
        raise ValueError(f"quantity must be one of {', '.join(_KINDS)}; got {quantity!r}")
    poles = np.asarray(poles_hz, dtype=complex)
    zeros = np.asarray(zeros_hz, dtype=complex)
    batch = poles.ndim == 2 or zeros.ndim == 2
    poles, zeros = np.atleast_2d(poles), np.atleast_2d(zeros)
    S = max(poles.shape[0], zeros.shape[0])
    if poles.shape[1] == 0:
        poles = np.zeros((S, 0), dtype=complex)
    if zeros.shape[1] == 0:
        zeros = np.zeros((S, 0), dtype=complex)
    roots = np.concatenate([np.broadcast_to(zeros, (S, zeros.shape[1])),
                            np.broadcast_to(poles, (S, poles.shape[1]))], axis=1)
    sign = np.concatenate([np.ones(zeros.shape[1]), -np.ones(poles.shape[1])])
    sign = np.where(np.isfinite(roots), sign[None, :], 0.0)
    lo_s = np.broadcast_to(np.asarray(lo, dtype=float), (S,)).copy()
    hi_s = np.broadcast_to(np.asarray(hi, dtype=float), (S,)).copy()
    rows, freqs = _isolate(roots, sign, lo_s, hi_s, quantity)
    if not batch:
        return np.unique(freqs)
    counts = np.bincount(rows, minlength=S)
    out = np.full((S, int(counts.max(initial=0))), np.nan)
    order = np.lexsort((freqs, rows))
    rows, freqs = rows[order], freqs[order]
    starts = np.concatenate([[0], np.cumsum(counts)[:-1]])
    out[rows, np.arange(rows.size) - starts[rows]] = freqs
    return out


def _isolate(roots: np.ndarray, sign: np.ndarray, lo: np.ndarray, hi: np.ndarray,
             quantity: str) -> tuple[np.ndarray, np.ndarray]:
    """(rows, frequencies) of the candidates of :func:`stationary_points`."""
    real, _, _, _ = _KINDS[quantity]
    alpha = np.where(sign != 0, roots.real, 0.0)
    beta = np.where(sign != 0, roots.imag, 0.0)
    if not real:  # a root on the jω axis adds nothing to the phase′ or phase″ off it
        sign = np.where(alpha == 0.0, 0.0, sign)
    ok = (hi > lo) & np.isfinite(lo) & np.isfinite(hi) & (lo >= 0)
    row, a, b = _pieces(alpha, beta, sign, lo, hi, np.flatnonzero(ok))
    out_rows, out_f = [], []
    for _ in range(200):  # each level halves every interval; 200 is never reached
        if row.size == 0:
            break
        lower, upper, scale = _bounds(alpha, beta, sign, row, a, b, quantity)
        with np.errstate(invalid="ignore", over="ignore"):
            live = ~((lower > 0) | (upper < 0))  # 0 not excluded: a stationary point may lie here
            flat = np.maximum(np.abs(lower), np.abs(upper)) * (b - a) <= _FLAT * scale
        done = live & (flat | ((b - a) <= _ISOLATE_RTOL * b))
        split = live & ~done
        if np.count_nonzero(split) > _MAX_INTERVALS:  # give up isolating (a bound on the
            log.debug("stationary_points: %d intervals left unresolved", int(split.sum()))
            done |= split  # work, never met in practice): each interval gives a candidate
            split[:] = False
        if done.any():
            out_rows.append(row[done])
            out_f.append(_midpoint(a[done], b[done]))
        row, a, b = row[split], a[split], b[split]
        m = _midpoint(a, b)
        row = np.concatenate([row, row])
        a, b = np.concatenate([a, m]), np.concatenate([m, b])
    if not out_rows:
        return np.zeros(0, dtype=np.intp), np.zeros(0)
    rows, f = np.concatenate(out_rows), np.concatenate(out_f)
    # a run of candidates closer than _MERGE_RTOL to each other (an isolated stationary
    # point leaves a few) becomes its middle, and its ends when it is wider than that
    order = np.lexsort((f, rows))
    rows, f = rows[order], f[order]
    start = np.ones(f.size, dtype=bool)
    start[1:] = (rows[1:] != rows[:-1]) | (f[1:] - f[:-1] > _MERGE_RTOL * f[1:])
    first = np.flatnonzero(start)
    last = np.concatenate([first[1:], [f.size]]) - 1
    mid = _midpoint(f[first], f[last])
    wide = f[last] - f[first] > _MERGE_RTOL * f[last]
    out_r = np.concatenate([rows[first], rows[first][wide], rows[last][wide]])
    out_f = np.concatenate([mid, f[first][wide], f[last][wide]])
    return out_r, out_f


def _pieces(alpha: np.ndarray, beta: np.ndarray, sign: np.ndarray, lo: np.ndarray,
            hi: np.ndarray, rows: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The first intervals (rows, a, b): each band [lo, hi] cut where a root's gain term
    turns (β and β ± |α|) and into pieces of at most :data:`_PIECES_PER_DECADE`⁻¹
    decade. Finer pieces make the first bounds tighter but cost more than the halvings
    they save (measured on 10,000 samples of a 7-pole response: 1/8 decade 1.6 s,
    one decade 0.27 s)."""
    if rows.size == 0:
        return rows, lo[rows], hi[rows]
    cut = (beta[:, :, None] + np.array([0.0, 1.0, -1.0]) * np.abs(alpha)[:, :, None])
    cut = np.where((sign != 0)[:, :, None], cut, np.nan).reshape(cut.shape[0], -1)[rows]
    with np.errstate(invalid="ignore"):
        inside = (cut > lo[rows, None]) & (cut < hi[rows, None])
    r_in, k_in = np.nonzero(inside)
    parts_r, parts_v = [rows, rows, rows[r_in]], [lo[rows], hi[rows], cut[r_in, k_in]]
    # at most 1/_PIECES_PER_DECADE decade apart (a band from 0 Hz starts its log steps
    # at hi/1e6)
    start = np.maximum(lo[rows], hi[rows] * 1e-6)
    steps = np.ceil(_PIECES_PER_DECADE * np.log10(hi[rows] / start)).astype(int)
    inner = np.maximum(steps - 1, 0)  # cuts inside each band: start·(hi/start)^(j/k)
    if inner.sum():
        idx = np.repeat(np.arange(rows.size), inner)
        j = np.arange(idx.size) - np.repeat(np.cumsum(inner) - inner, inner) + 1
        ratio = np.log(hi[rows] / start)
        parts_r.append(rows[idx])
        parts_v.append(start[idx] * np.exp(ratio[idx] * j / steps[idx]))
    r_all, v_all = np.concatenate(parts_r), np.concatenate(parts_v)
    order = np.lexsort((v_all, r_all))
    r_all, v_all = r_all[order], v_all[order]
    pair = (r_all[1:] == r_all[:-1]) & (v_all[1:] > v_all[:-1])
    return r_all[:-1][pair], v_all[:-1][pair], v_all[1:][pair]


def _midpoint(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Geometric midpoint of [a, b] (arithmetic where a is 0), strictly inside when possible."""
    with np.errstate(invalid="ignore"):
        m = np.where(a > 0, np.sqrt(a * b), 0.5 * (a + b))
    return np.clip(m, a, b)


def _term(quantity: str, u: np.ndarray, alpha: np.ndarray, side: np.ndarray | float
          ) -> np.ndarray:
    """One root's term of the derivative at u = f − β (``side`` ±1: the limit from
    above or below where a root on the jω axis makes the gain's term infinite)."""
    q = u * u + alpha * alpha
    with np.errstate(divide="ignore", invalid="ignore"):
        if quantity == "gain_db":
            t = u / q
            return np.where(q == 0, np.copysign(np.inf, side), t)
        if quantity == "phase_deg":
            return np.where(q == 0, 0.0, -alpha / q)
        return np.where(q == 0, 0.0, 2.0 * u * alpha / (q * q))


def _bounds(alpha: np.ndarray, beta: np.ndarray, sign: np.ndarray, row: np.ndarray,
            a: np.ndarray, b: np.ndarray, quantity: str
            ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Lower and upper bounds of the derivative over each interval [a, b] (see
    :func:`stationary_points`), and the scale its flatness is judged against (1 for
    the gain and the phase; for the group delay, Σ|α|/|f − c|², a bound of the phase′
    the roots make), in chunks of :data:`_CHUNK` numbers."""
    m = alpha.shape[1]
    lower, upper, scale = np.empty(row.size), np.empty(row.size), np.empty(row.size)
    step = max(1, _CHUNK // max(m, 1))
    for i in range(0, row.size, step):
        sl = slice(i, i + step)
        lower[sl], upper[sl], scale[sl] = _bounds_chunk(
            alpha[row[sl]], beta[row[sl]], sign[row[sl]], a[sl], b[sl], quantity)
    return lower, upper, scale


def _bounds_chunk(alpha: np.ndarray, beta: np.ndarray, sign: np.ndarray, a: np.ndarray,
                  b: np.ndarray, quantity: str) -> tuple[np.ndarray, np.ndarray]:
    real, p, coef, turns = _KINDS[quantity]
    eps = float(np.finfo(float).eps)
    m = alpha.shape[1]
    f0, h = 0.5 * (a + b), 0.5 * (b - a)
    a_, b_, f0_, h_ = a[:, None], b[:, None], f0[:, None], h[:, None]
    w = f0_ - beta  # f0 − c = w + jα
    d = np.hypot(w, alpha)
    near = (d < 2.0 * h_) & (sign != 0)
    far = ~near & (sign != 0)
    with np.errstate(all="ignore"):
        # near roots: exact range of each term over [a, b] (at both ends and at the
        # turning points inside)
        ta = _term(quantity, a_ - beta, alpha, 1.0)
        tb = _term(quantity, b_ - beta, alpha, -1.0)
        lo_t, hi_t = np.minimum(ta, tb), np.maximum(ta, tb)
        for kappa in turns:
            x = beta + kappa * np.abs(alpha)
            inside = (x > a_) & (x < b_)
            if not inside.any():
                continue
            if kappa == 0.0 and real:  # a root on the jω axis inside: unbounded
                hit = inside & (alpha == 0)
                lo_t = np.where(hit, -np.inf, lo_t)
                hi_t = np.where(hit, np.inf, hi_t)
                inside &= alpha != 0
            tx = _term(quantity, x - beta, alpha, 1.0)
            lo_t = np.where(inside, np.minimum(lo_t, tx), lo_t)
            hi_t = np.where(inside, np.maximum(hi_t, tx), hi_t)
        s_near = np.where(near, sign, 0.0)
        lo_near = np.where(s_near > 0, lo_t, -hi_t)
        hi_near = np.where(s_near > 0, hi_t, -lo_t)
        lo_sum = np.where(near, lo_near, 0.0).sum(axis=1)
        hi_sum = np.where(near, hi_near, 0.0).sum(axis=1)
        size_near = np.where(near, np.maximum(np.abs(lo_t), np.abs(hi_t)), 0.0).sum(axis=1)
        # far roots: Taylor series about f0 of coef·Σ ±(f − c)^(−p), e = f − f0:
        # (f0 − c + e)^(−p) = Σ_j binom(−p, j)·e^j·(f0 − c)^(−p−j)
        z = np.where(far, 1.0 / (w + 1j * alpha), 0.0)  # 1/(f0 − c)
        zs = np.where(far, sign, 0.0) * z ** p
        rho = np.where(far, h_ / np.where(far, d, 1.0), 0.0)  # ≤ 1/2
        centre = coef * zs.sum(axis=1)
        spread = np.zeros(a.size)
        hj = np.ones(a.size)
        for j in range(1, _TAYLOR_TERMS + 1):
            zs = zs * z
            hj = hj * h
            binom = (j + 1) if p == 2 else 1
            moment = zs.sum(axis=1)  # e is real: only the real (imaginary) part counts
            spread += binom * np.abs(moment.real if real else moment.imag) * hj
        big = (_TAYLOR_TERMS + 2) ** (p - 1) / (1.0 - rho) ** 2
        inv_d = np.where(far, 1.0 / np.where(far, d, 1.0) ** p, 0.0)
        tail = (inv_d * big * rho ** (_TAYLOR_TERMS + 1)).sum(axis=1)
        size_far = (inv_d * big).sum(axis=1)
        value = centre.real if real else centre.imag
        err = 4.0 * (m + 4) * eps * (size_far + size_near)
        lower = value - spread - tail + lo_sum - err
        upper = value + spread + tail + hi_sum + err
        if quantity == "group_delay_s":
            scale = (np.abs(alpha) / (w * w + alpha * alpha)).sum(axis=1, where=sign != 0)
        else:
            scale = np.ones(a.size)
    return lower, upper, scale


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
    seeds = _checked_seeds(curve.seeds_hz)
    roots = _curve_roots(curve)
    if roots is not None:  # the notches of a curve that knows its zeros, too
        seeds = np.concatenate([seeds, root_seeds(roots[0], grid[0], grid[-1]),
                                root_seeds(roots[1], grid[0], grid[-1])])
    probes = _probes(np.unique(seeds))
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
        # a stationary point found by root-finding on the exact derivative wins over a
        # plain sample whose value it equals to rounding (at a flat top, samples a little
        # off the stationary point read the same value, or a hair more)
        tie = _TIE_EPS * (abs(best_score) + (20.0 if quantity == "gain_db" else 180.0))
        refined = False
        for i in np.flatnonzero((sd[:-1] > 0.0) & (sd[1:] < 0.0)):
            x = _root(lambda y: _at(curve, quantity, y, track)[1], float(f[i]), float(f[i + 1]))
            if x is not None:
                s = sgn * _at(curve, quantity, x, track)[0]
                if s > best_score if refined else s >= best_score - tie:
                    best_f, best_score, refined = x, s, True
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
