"""Poles and zeros of directly solved samples, followed from the nominal circuit's.

A sample whose pole–zero form is not trusted is solved directly, so it has no roots of
its own; its lightly damped poles and zeros, the seeds of its measurements, are found by
following the nominal ones into it by Rayleigh-quotient iteration [1]_ (see
:meth:`netcheck.mna.sampling.SampleSet.direct_seeds`).

References
----------
.. [1] Y. Saad, *Numerical Methods for Large Eigenvalue Problems*, 2nd ed., SIAM, 2011
   (inverse iteration and Rayleigh-quotient iteration).
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from .dense import DenseEngine
from .sparse import SparseEngine

if TYPE_CHECKING:
    from .sampling import SampleSet

__all__ = ["followed_roots", "SEED_POLES_MAX", "SEED_STEPS"]

_TWO_PI = 2.0 * math.pi
#: nominal poles followed into each directly solved sample (the least damped), steps
#: per pole and sample, and the damping |Re p|/|Im p| below which one is followed
SEED_POLES_MAX = 24
SEED_STEPS = 4
_SEED_REL = 0.3
_SEED_CONVERGED = 1e-4  # a pole moving by less than this of its damping |Re p| stops
_LAST_SEEDS: tuple | None = None  # ((system, f_lo, f_hi), (nominal seed poles, zeros))


def followed_roots(ss: SampleSet) -> tuple[np.ndarray, np.ndarray]:
    """The poles and zeros (each S × count, normalised like ``ss.poles``, NaN outside
    ``ss.direct_rows``) of the directly solved samples of ``ss``, followed from the
    nominal ones (:meth:`~netcheck.mna.sampling.SampleSet.direct_seeds`)."""
    rows = ss.direct_rows
    roots = _nominal_seed_roots(ss) if rows.size else (np.zeros(0, complex),) * 2
    return tuple(_follow(ss, s0, rows, bordered)  # type: ignore[return-value]
                 for s0, bordered in zip(roots, (False, True)))


def _follow(ss: SampleSet, s0: np.ndarray, rows: np.ndarray, bordered: bool) -> np.ndarray:
    """The nominal roots ``s0`` (rad/s) followed into the samples ``rows`` of ``ss`` (see
    :meth:`~netcheck.mna.sampling.SampleSet.direct_seeds`), normalised, NaN in the other
    rows."""
    P = s0.size
    out = np.full((ss.S, P), np.nan, dtype=complex)
    if P == 0:
        return out
    x0, flat = _nominal_vectors(ss, s0, bordered), np.empty(rows.size * P, dtype=complex)
    block = ss.rows_per_chunk((ss.n + 1) * 128)
    for i in range(0, flat.size, block):  # (sample, root) pairs, memory-bounded
        k = np.arange(i, min(flat.size, i + block))
        r, s, x, act = rows[k // P], s0[k % P], x0[k % P], np.arange(k.size)
        for _ in range(SEED_STEPS):
            if act.size:
                w = _pair_solve(ss, r[act], s[act], x[act], bordered)
                s[act], x[act], more = _rq_update(s[act], x[act], w)
                act = act[more]
        flat[k] = s
    out[rows] = flat.reshape(rows.size, P) / ss.w_scale
    return out


def _nominal_seed_roots(ss: SampleSet) -> tuple[np.ndarray, np.ndarray]:
    """The nominal poles and zeros (rad/s) that are followed into the samples (the last
    system's are kept: Monte Carlo builds a set per chunk of samples of one system)."""
    global _LAST_SEEDS
    key, last = (ss.system, float(ss.grid[0]), float(ss.grid[-1])), _LAST_SEEDS
    if last is not None and last[0] == key:  # one read: safe if threads share it
        return last[1][0].copy(), last[1][1].copy()
    lo, hi = float(ss.grid[0]), float(ss.grid[-1])
    try:
        eng = (DenseEngine if ss.sparse is None else SparseEngine)(ss.system)
        poles, zeros, _ = eng.roots(lo, hi)
    except (np.linalg.LinAlgError, ValueError, RuntimeError, ArithmeticError):
        poles = zeros = np.zeros(0, complex)
    out = (_least_damped(_TWO_PI * np.asarray(poles, complex), ss.grid),
           _least_damped(_TWO_PI * np.asarray(zeros, complex), ss.grid))
    _LAST_SEEDS = (key, (out[0].copy(), out[1].copy()))
    return out


def _least_damped(s: np.ndarray, grid: np.ndarray) -> np.ndarray:
    """Of the roots ``s`` (rad/s): Im s > 0, |Re s|/|Im s| < 0.3 and |Im s|/2π within a
    factor 1.5 of the sweep ``grid``, least damped first, at most :data:`SEED_POLES_MAX`,
    each once (a sparse search may find a root twice)."""
    s = s[np.isfinite(s) & (s.imag > 0)]
    nu, rel = s.imag / _TWO_PI, np.abs(s.real) / s.imag
    keep = (rel < _SEED_REL) & (nu > grid[0] / 1.5) & (nu < grid[-1] * 1.5)
    kept: list[complex] = []
    for p in s[keep][np.argsort(rel[keep], kind="stable")]:
        if len(kept) < SEED_POLES_MAX and all(abs(p - q) > 1e-6 * abs(p) for q in kept):
            kept.append(complex(p))
    return np.array(kept, dtype=complex)


def _bordered(ss: SampleSet, g: sp.spmatrix, c: sp.spmatrix
              ) -> tuple[sp.csc_matrix, sp.csc_matrix]:
    """The pencil (G, C) bordered with b and l: its finite eigenvalues are the zeros."""
    b = sp.csc_matrix(ss.b.astype(complex)[:, None])
    l = sp.csc_matrix(ss.l.astype(complex)[None, :])
    gb = sp.bmat([[g, b], [l, None]], format="csc")
    cb = sp.bmat([[c, None], [None, sp.csc_matrix((1, 1), dtype=complex)]], format="csc")
    return gb, cb


def _nominal_vectors(ss: SampleSet, s0: np.ndarray, bordered: bool = False) -> np.ndarray:
    """Nominal eigenvectors at the roots ``s0``: two inverse-iteration steps each."""
    g, c = ss.system.G.tocsc(), ss.system.C.tocsc()
    if bordered:
        g, c = _bordered(ss, g, c)
    m = g.shape[0]
    rng = np.random.default_rng(12345)  # fixed start vectors: reproducible runs
    x = _unit(rng.standard_normal((s0.size, m)) + 1j * rng.standard_normal((s0.size, m)))
    for k in range(s0.size):
        try:
            lu = spla.splu((g + s0[k] * c).tocsc(), permc_spec="COLAMD")
        except RuntimeError:
            continue  # exactly singular there: keep the start vector
        for _ in range(2):
            x[k] = _unit(lu.solve(c @ x[k]))
    return np.nan_to_num(x)


def _pair_solve(ss: SampleSet, rows: np.ndarray, s: np.ndarray, x: np.ndarray,
                bordered: bool = False) -> np.ndarray:
    """w = (G + sC)⁻¹Cx with each sample ``rows[i]``'s matrices at s[i], for x[i]
    (bordered with b and l when ``bordered``); NaN where singular."""
    n = ss.n
    if ss.sparse is not None:
        w = np.full(x.shape, np.nan, dtype=complex)
        for i, r in enumerate(rows):
            g = sp.csc_matrix((ss.sparse.g[r], ss.sparse.indices, ss.sparse.indptr),
                              shape=(n, n))
            c = sp.csc_matrix((ss.sparse.c[r], ss.sparse.indices, ss.sparse.indptr),
                              shape=(n, n))
            if bordered:
                g, c = _bordered(ss, g, c)
            try:
                lu = spla.splu((g + complex(s[i]) * c).tocsc(), permc_spec="COLAMD")
                w[i] = lu.solve(c @ x[i])
            except RuntimeError:
                pass
        return w
    w = np.empty(x.shape, dtype=complex)
    m = n + 1 if bordered else n
    step = ss.rows_per_chunk(m * m * 48)
    for i in range(0, rows.size, step):
        sel = rows[i:i + step]
        c = np.zeros((sel.size, m, m))
        c[:, :n, :n] = ss.C[sel]
        a = np.zeros((sel.size, m, m), dtype=complex)
        a[:, :n, :n] = ss.G[sel] + s[i:i + step, None, None] * ss.C[sel]
        if bordered:
            a[:, :n, n], a[:, n, :n] = ss.b, ss.l
        try:
            w[i:i + step] = np.linalg.solve(
                a, np.einsum("mij,mj->mi", c, x[i:i + step])[..., None])[..., 0]
        except np.linalg.LinAlgError:  # a root hit exactly: these shifts stay
            w[i:i + step] = np.nan
    return w


def _unit(x: np.ndarray) -> np.ndarray:
    return x / np.linalg.norm(x, axis=-1, keepdims=True)


def _rq_update(s: np.ndarray, x: np.ndarray, w: np.ndarray
               ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """One Rayleigh-quotient step from w = (G + sC)⁻¹Cx: the new shifts and unit
    vectors, and which are still moving (a failed step keeps s and stops)."""
    with np.errstate(all="ignore"):
        mu = np.einsum("mi,mi->m", x.conj(), w) / np.einsum("mi,mi->m", x.conj(), x)
        ds = -1.0 / mu
        ok = np.isfinite(ds) & np.isfinite(w).all(axis=1)
        s_new = np.where(ok, s + ds, s)
        x_new = np.where(ok[:, None], _unit(w), x)
    more = ok & (np.abs(ds) > _SEED_CONVERGED * np.abs(s_new.real) + 1e-12 * np.abs(s_new))
    return s_new, x_new, more
