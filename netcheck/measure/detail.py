"""Where the report's curves are drawn through: the sweep grid, and exact points off it.

A line drawn through the sweep grid alone lies wherever the grid is coarse against a
feature: a crystal's peak (Q ≈ 50 000) between two points of a 40-per-decade grid comes
out as a triangle through its refined top, and a notch between two grid points is not
drawn at all. :func:`detail_points` chooses where else the exact response is evaluated,
so that straight segments through the grid and those points are the curve to a fraction
of a dB:

* every frequency a measurement was taken at (refined extrema, half-power edges, where
  each limit was decided);
* around every lightly damped pole and zero in the sweep (Q above 1/√2), at
  f0·(1 ± k/(2Q)) for k = ¼, ½, 1, 2, 4 … out to the grid's own spacing, and at f0 and
  at the root's imaginary part, highest Q first;
* then, adaptively, the middle (in log frequency) of every segment whose true middle lies
  more than :data:`TOL_DB` off the straight segment (or :data:`TOL_DEG` in phase), worst
  first, halving until every segment is straight to the tolerance or
  :data:`MAX_POINTS` evaluations are spent. Where the derivative dH/df is known at both
  ends, a segment whose cubic (Hermite) estimate of the middle lies well within the
  tolerance is not evaluated at all, so smooth responses cost next to nothing.

It evaluates through a callable (``Response.at``), so it runs where the response is
solved (``netcheck.analyses.nominal``) and its points are kept with the curves
(``Curves.detail_hz`` and ``detail_gain_db``/``detail_phase_deg``/``detail_group_delay_s``,
see :func:`detail_curves`); the plots merge them with the grid through
:func:`curve_points` and draw the grid alone when a result has none.
"""

from __future__ import annotations

import heapq
import itertools
import math
from collections.abc import Callable, Iterable
from typing import Any

import numpy as np

from ..exceptions import NetcheckError

__all__ = ["TOL_DB", "TOL_DEG", "MAX_POINTS", "DETAIL_FIELDS", "detail_points",
           "detail_curves", "curve_points"]

#: largest distance, dB, between a drawn straight segment and the true gain at its middle
TOL_DB = 0.05
#: the same for phase, degrees
TOL_DEG = 0.5
#: most exact evaluations :func:`detail_points` makes for one response
MAX_POINTS = 2000
#: Curves attribute of each drawn quantity → attribute holding its detail points
DETAIL_FIELDS = {"gain_db": "detail_gain_db", "phase_deg": "detail_phase_deg",
                 "group_delay_s": "detail_group_delay_s"}

#: a root without damping is resolved as if its Q were this
_Q_CAP = 1e9
#: narrowest segment split, relative to its frequency (rounding below this)
_MIN_REL = 1e-12
#: a segment is evaluated when its Hermite estimate is off by this share of the tolerance
_SCREEN = 0.25
#: segments split per batch of evaluations
_BATCH = 64
_DB_PER_NEPER = 20.0 / math.log(10.0)

Transfer = Callable[[np.ndarray], "tuple[np.ndarray, np.ndarray | None]"]


def _wrap_deg(d: np.ndarray) -> np.ndarray:
    return (d + 180.0) % 360.0 - 180.0


def _gain_phase(h: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    with np.errstate(divide="ignore", invalid="ignore"):
        return 20.0 * np.log10(np.abs(h)), np.degrees(np.angle(h))


def _root_seeds(roots_hz: Any, grid: np.ndarray, budget: int) -> list[float]:
    """Frequencies around the lightly damped roots in the sweep, highest Q first."""
    r = np.asarray(roots_hz if roots_hz is not None else (), dtype=complex).ravel()
    r = r[np.isfinite(r) & (r.imag > 0) & (np.abs(r.imag) > np.abs(r.real))]
    f0 = np.abs(r)
    keep = (f0 > grid[0]) & (f0 < grid[-1])
    r, f0 = r[keep], f0[keep]
    with np.errstate(divide="ignore"):
        q = np.minimum(f0 / (2.0 * np.abs(r.real)), _Q_CAP)
    out: list[float] = []
    for i in np.lexsort((f0, -q)):
        j = int(np.searchsorted(grid, f0[i]))
        step = grid[j] / grid[j - 1] - 1.0
        pts = [float(f0[i]), float(r[i].imag)]
        k = 0.25
        while k / (2.0 * q[i]) < step:
            rel = k / (2.0 * q[i])
            pts += [float(f0[i] * (1.0 - rel)), float(f0[i] * (1.0 + rel))]
            k *= 2.0
        if out and len(out) + len(pts) > budget:
            break
        out += pts
    return out


class _Points:
    """Every exact evaluation made, and the batch evaluator that records them."""

    def __init__(self, at: Transfer) -> None:
        self.at = at
        self.f: list[np.ndarray] = []
        self.h: list[np.ndarray] = []
        self.dh: list[np.ndarray] = []
        self.count = 0

    def __call__(self, f: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """H and dH/df at ``f``; NaN at a frequency where the circuit cannot be solved
        (exactly on an undamped pole, say), so a drawing point never fails a check."""
        self.count += f.size
        try:
            return self._at(f)
        except NetcheckError:
            h, dh = np.full(f.shape, np.nan + 0j), np.full(f.shape, np.nan + 0j)
            for i in range(f.size):
                try:
                    h[i:i + 1], dh[i:i + 1] = self._at(f[i:i + 1])
                except NetcheckError:
                    pass
            return h, dh

    def _at(self, f: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        h, dh = self.at(f)
        h = np.asarray(h, dtype=complex).reshape(f.shape)
        dh = (np.full(f.shape, np.nan + 0j) if dh is None
              else np.asarray(dh, dtype=complex).reshape(f.shape))
        return h, dh

    def keep(self, f: np.ndarray, h: np.ndarray, dh: np.ndarray) -> None:
        self.f.append(f)
        self.h.append(h)
        self.dh.append(dh)


def _score(a: np.ndarray, b: np.ndarray, ha: np.ndarray, hb: np.ndarray, hm: np.ndarray,
           tol_db: float, tol_deg: float) -> np.ndarray:
    """How far (in tolerances) the true middle lies from the straight segment a–b."""
    ga, pa = _gain_phase(ha)
    gb, pb = _gain_phase(hb)
    gm, pm = _gain_phase(hm)
    with np.errstate(invalid="ignore"):
        dev = np.maximum(np.abs(gm - 0.5 * (ga + gb)) / tol_db,
                         np.abs(_wrap_deg(pm - pa - 0.5 * _wrap_deg(pb - pa))) / tol_deg)
    bad = ~(np.isfinite(ga) & np.isfinite(gb) & np.isfinite(gm))
    dev = np.where(bad | ~np.isfinite(dev), 1e6, dev)
    return np.where(b > a * (1.0 + _MIN_REL), dev, 0.0)


def _hermite(a: np.ndarray, b: np.ndarray, ha: np.ndarray, hb: np.ndarray, dha: np.ndarray,
             dhb: np.ndarray, tol_db: float, tol_deg: float) -> np.ndarray:
    """The cubic estimate of :func:`_score` from the ends' dH/df (inf where unknown).

    On L = ln H against x = ln f, the Hermite cubic's middle lies (x_b − x_a)/8 ·
    (L'_a − L'_b) from the chord, with L' = f·H'/H.
    """
    with np.errstate(all="ignore"):
        d = np.log(b / a) / 8.0 * (a * dha / ha - b * dhb / hb)
        est = np.maximum(np.abs(d.real) * _DB_PER_NEPER / tol_db,
                         np.abs(np.degrees(d.imag)) / tol_deg)
    return np.where(np.isfinite(est), est, np.inf)


def detail_points(at: Transfer, grid_hz: Any, grid_h: Any, marks_hz: Iterable[float] = (),
                  roots_hz: Any = None, grid_dh: Any = None, *, tol_db: float = TOL_DB,
                  tol_deg: float = TOL_DEG, max_points: int = MAX_POINTS
                  ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Exact points off the grid that a drawn line needs, as (f Hz, H, dH/df), sorted.

    ``at(f)`` returns H and dH/df (or None) at the frequencies ``f`` (``Response.at``);
    ``grid_h`` (and ``grid_dh``, optional) are H (and dH/df) on the sweep grid ``grid_hz``;
    ``marks_hz`` the frequencies measurements were taken at; ``roots_hz`` the poles and
    zeros as complex frequencies s/2π. At most ``max_points`` evaluations are made; the
    points returned are those that change the drawn line (seeds, and the middles of
    segments that were not straight to the tolerance).
    """
    f = np.asarray(grid_hz, dtype=float)
    h = np.asarray(grid_h, dtype=complex)
    empty = (np.zeros(0), np.zeros(0, complex), np.zeros(0, complex))
    if f.size < 2 or max_points <= 0:
        return empty
    dh = (np.full(f.shape, np.nan + 0j) if grid_dh is None
          else np.asarray(grid_dh, dtype=complex))
    pts = _Points(at)
    marks = sorted({float(m) for m in marks_hz if m is not None and math.isfinite(m)
                    and f[0] < m < f[-1]})[: max_points // 4]
    seeds = np.unique(np.array(marks + _root_seeds(roots_hz, f, max_points // 2), float))
    seeds = seeds[(seeds > f[0]) & (seeds < f[-1]) & ~np.isin(seeds, f)]
    if seeds.size:
        hs, dhs = pts(seeds)
        solved = np.isfinite(hs)
        seeds, hs, dhs = seeds[solved], hs[solved], dhs[solved]
        pts.keep(seeds, hs, dhs)
        order = np.argsort(np.concatenate([f, seeds]), kind="stable")
        f = np.concatenate([f, seeds])[order]
        h = np.concatenate([h, hs])[order]
        dh = np.concatenate([dh, dhs])[order]
    a, b, ha, hb = f[:-1], f[1:], h[:-1], h[1:]
    est = _hermite(a, b, ha, hb, dh[:-1], dh[1:], tol_db, tol_deg)
    wide = b > a * (1.0 + _MIN_REL)
    cand = np.flatnonzero(wide & (est > _SCREEN))
    room = max_points - pts.count
    if cand.size > room:  # worst estimates first (no derivative: largest steps first)
        ga, pa = _gain_phase(ha[cand])
        gb, pb = _gain_phase(hb[cand])
        with np.errstate(invalid="ignore"):
            step = np.abs(gb - ga) / tol_db + np.abs(_wrap_deg(pb - pa)) / tol_deg
        rank = np.where(np.isfinite(est[cand]), est[cand], np.nan_to_num(step, nan=1e6))
        cand = np.sort(cand[np.argsort(-rank, kind="stable")[:room]])
    #: (−score, ticket, a, b, H(a), H(b), middle, H(middle), dH/df(middle)) per segment
    heap: list[tuple[float, int, float, float, complex, complex, float, complex, complex]] = []
    ticket = itertools.count()

    def push(sa: np.ndarray, sb: np.ndarray, sha: np.ndarray, shb: np.ndarray) -> None:
        """Evaluate the middles of the segments a–b wide enough to split; queue the bent."""
        wide = sb > sa * (1.0 + _MIN_REL)
        sa, sb, sha, shb = sa[wide], sb[wide], sha[wide], shb[wide]
        if not sa.size:
            return
        m = np.sqrt(sa * sb)
        hm, dhm = pts(m)
        score = _score(sa, sb, sha, shb, hm, tol_db, tol_deg)
        for k in np.flatnonzero((score > 1.0) & np.isfinite(hm)):
            heapq.heappush(heap, (-float(score[k]), next(ticket), float(sa[k]),
                                  float(sb[k]), complex(sha[k]), complex(shb[k]), float(m[k]),
                                  complex(hm[k]), complex(dhm[k])))

    if cand.size:
        push(a[cand], b[cand], ha[cand], hb[cand])
    used: list[tuple[float, complex, complex]] = []
    while heap and max_points - pts.count >= 2:
        n = min(_BATCH, len(heap), (max_points - pts.count) // 2)
        batch = [heapq.heappop(heap) for _ in range(n)]
        used += [(m, hm, dhm) for *_, m, hm, dhm in batch]
        left = [(sa, m, sha, hm) for _, _, sa, _, sha, _, m, hm, _ in batch]
        right = [(m, sb, hm, shb) for _, _, _, sb, _, shb, m, hm, _ in batch]
        ca, cb, cha, chb = zip(*(left + right))
        push(np.array(ca), np.array(cb), np.array(cha, complex), np.array(chb, complex))
    used += [(m, hm, dhm) for *_, m, hm, dhm in heap]
    if used:
        pts.keep(np.array([u[0] for u in used]), np.array([u[1] for u in used], complex),
                 np.array([u[2] for u in used], complex))
    if not pts.f:
        return empty
    fx, hx, dhx = (np.concatenate(v) for v in (pts.f, pts.h, pts.dh))
    fx, first = np.unique(fx, return_index=True)
    return fx, hx[first], dhx[first]


def detail_curves(at: Transfer, grid_hz: Any, grid_h: Any, marks_hz: Iterable[float] = (),
                  roots_hz: Any = None, grid_dh: Any = None, **kw: Any) -> dict[str, np.ndarray]:
    """:func:`detail_points` as the Curves fields that carry them.

    ``detail_hz`` and, at those frequencies, ``detail_gain_db`` (20·log10|H|),
    ``detail_phase_deg`` (the angle of H in (−180°, 180°]; :func:`curve_points` puts each
    point on the branch of the grid's unwrapped phase) and ``detail_group_delay_s``
    (−Im(H'/H)/2π, NaN where dH/df is unknown).
    """
    fx, hx, dhx = detail_points(at, grid_hz, grid_h, marks_hz, roots_hz, grid_dh, **kw)
    g, p = _gain_phase(hx)
    with np.errstate(all="ignore"):
        tau = -np.imag(dhx / hx) / (2.0 * math.pi)
    return {"detail_hz": fx, "detail_gain_db": g, "detail_phase_deg": p,
            "detail_group_delay_s": tau}


def curve_points(curves: Any, quantity: str) -> tuple[np.ndarray, np.ndarray]:
    """(frequency Hz, values) of a curve to draw: the sweep grid and its detail points.

    ``quantity`` is a Curves attribute (``gain_db``, ``phase_deg``, ``group_delay_s``).
    The detail points are those a result carries in ``detail_hz`` and
    ``detail_<quantity>`` (:func:`detail_curves`), when it carries them; grid values
    are drawn as stored, and each detail phase is moved by whole turns onto the branch
    of the point drawn before it, so the line follows the grid's unwrapped phase.
    """
    f = np.asarray(curves.frequency_hz, dtype=float)
    y = np.asarray(getattr(curves, quantity), dtype=float)
    fx = getattr(curves, "detail_hz", None)
    yx = getattr(curves, DETAIL_FIELDS.get(quantity, ""), None)
    if fx is None or yx is None or len(fx) == 0 or len(fx) != len(yx):
        return f, y
    fx, yx = np.asarray(fx, dtype=float), np.asarray(yx, dtype=float)
    inside = (fx > f[0]) & (fx < f[-1]) & ~np.isnan(yx)  # NaN: not known there
    fx, yx = fx[inside], yx[inside]
    fa = np.concatenate([f, fx])
    order = np.argsort(fa, kind="stable")
    fa, ya = fa[order], np.concatenate([y, yx])[order]
    if quantity == "phase_deg":
        detail = order >= f.size
        prev = ya[0]
        for i in range(1, ya.size):
            if detail[i] and math.isfinite(ya[i]) and math.isfinite(prev):
                ya[i] -= 360.0 * round((ya[i] - prev) / 360.0)
            if math.isfinite(ya[i]):
                prev = ya[i]
    return fa, ya
