"""Equilibration of G + sC and the estimate of its condition (dense and sparse engines).

References
----------
.. [1] D. Ruiz, "A scaling algorithm to equilibrate both rows and columns norms in
   matrices", Rutherford Appleton Laboratory report RAL-TR-2001-034, 2001.
.. [2] N. J. Higham, "FORTRAN codes for estimating the one-norm of a real or complex
   matrix, with applications to condition estimation", ACM Trans. Math. Software
   14(4), 381-396, 1988.
"""

from __future__ import annotations

from typing import Callable

import numpy as np

__all__ = ["Pattern", "equilibrate", "inverse_one_norm", "EQUILIBRATE_SWEEPS", "RCOND_TOL"]

#: most sweeps of :func:`equilibrate` (each about halves the spread of the row and
#: column maxima in log scale, so a dozen cover the whole double range; the rest is room)
EQUILIBRATE_SWEEPS = 64
#: a matrix is singular to working precision, and refused (analysis-300), when, equilibrated, it
#: lies within this fraction of the size of its entries of a singular matrix: σmin below
#: RCOND_TOL·√(‖S‖₁‖S‖∞) (dense; the square root bounds ‖|S|‖₂), or 1/‖S⁻¹‖₁ below
#: RCOND_TOL·‖S‖₁ (sparse). The rounding of the stamps (a few ε in each entry) and the
#: backward error of the SVD or LU (a small multiple of ε) could then make it singular:
#: an exactly singular circuit computes with a reciprocal condition of one to a few ε.
#: The test does not grow with the number of unknowns: the solve stays backward
#: stable at any size, and the condition a regular circuit may have rises with its
#: size, so a threshold of n·ε or more refused large regular circuits (a crystal
#: behind a long trace model, with a grid point on its resonance).
RCOND_TOL = 64.0 * np.finfo(float).eps
#: up to this many unknowns :func:`equilibrate` sweeps the dense F × n × n magnitudes (a
#: third of the array operations of the grouped maxima, the same maxima and scales)
DENSE_SWEEPS_MAX = 48


def _pow2_rsqrt(m: np.ndarray) -> np.ndarray:
    """1/√m rounded to a power of two (so that scaling by it is exact); 1 where m is 0
    or not finite, and where m already lies in [1/2, 2)."""
    m = np.where((m > 0) & np.isfinite(m), m, 1.0)
    _, e = np.frexp(m)  # m = q·2^e, 1/2 ≤ q < 1
    return np.ldexp(1.0, -(e // 2))


class Pattern:
    """The non-zero positions (rows, cols) of an n × n pencil G + sC, grouped by row
    and by column, for the row and column maxima of :func:`equilibrate`."""

    def __init__(self, rows: np.ndarray, cols: np.ndarray, n: int) -> None:
        self.rows, self.cols, self.n = rows, cols, n
        self._groups: list | None = None  # made at the first maxima (a small system has none)

    def maxima(self, vals: np.ndarray, axis: int) -> np.ndarray:
        """Largest of ``vals`` (F × non-zeros) in each row (axis 0) or column (axis 1)."""
        if self._groups is None:
            self._groups = []
            for idx in (self.rows, self.cols):
                order = np.argsort(idx, kind="stable")
                counts = np.bincount(idx, minlength=self.n)
                used = counts > 0
                starts = np.concatenate([[0], np.cumsum(counts)[:-1]])[used]
                self._groups.append((order, starts, used))
        order, starts, used = self._groups[axis]
        out = np.zeros((vals.shape[0], self.n))
        if vals.shape[1]:
            out[:, used] = np.maximum.reduceat(vals[:, order], starts, axis=1)
        return out


def equilibrate(pattern: Pattern, mag: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Row and column scale factors r, c (F × n, powers of two) for the entry magnitudes
    ``mag`` (F × non-zeros of ``pattern``) of F matrices, by Ruiz's iteration [1]_: every
    row and every column is divided by the square root of its largest entry, again,
    until each largest entry of diag(r)·|A|·diag(c) lies in [1/2, 2) (or
    :data:`EQUILIBRATE_SWEEPS` sweeps). Each sweep costs O(F · non-zeros).

    Solving and judging regularity on the scaled matrix diag(r)·A·diag(c) makes both
    (close to) independent of the units of the unknowns and equations: scaling every
    impedance of a circuit, or putting a 1 fΩ resistor beside 1 kΩ ones, changes the
    scaling of MNA rows and columns, not whether the circuit can be solved.
    """
    rows, cols = pattern.rows, pattern.cols
    n = pattern.n
    r = np.ones((mag.shape[0], n))
    c = np.ones((mag.shape[0], n))
    if n <= DENSE_SWEEPS_MAX:  # the same sweeps on the dense F × n × n magnitudes
        a = np.zeros((mag.shape[0], n, n))
        a[:, rows, cols] = mag
        for _ in range(EQUILIBRATE_SWEEPS):
            m = a * r[:, :, None] * c[:, None, :]
            d = _pow2_rsqrt(np.concatenate([m.max(axis=2), m.max(axis=1)], axis=1))
            if (d == 1.0).all():
                break
            r *= d[:, :n]
            c *= d[:, n:]
        return r, c
    for _ in range(EQUILIBRATE_SWEEPS):
        m = mag * r[:, rows] * c[:, cols]
        dr = _pow2_rsqrt(pattern.maxima(m, 0))
        dc = _pow2_rsqrt(pattern.maxima(m, 1))
        if (dr == 1.0).all() and (dc == 1.0).all():
            break
        r *= dr
        c *= dc
    return r, c


def inverse_one_norm(solve: Callable[[np.ndarray], np.ndarray],
                     solve_h: Callable[[np.ndarray], np.ndarray], n: int) -> float:
    """A lower bound, usually exact, of ‖A⁻¹‖₁ from a few solves with A and Aᴴ (Hager's
    estimator with Higham's refinements [2]_, as LAPACK's xLACN2; deterministic)."""
    x = np.full(n, 1.0 / n, dtype=complex)
    est, last = 0.0, -1
    for _ in range(5):
        y = solve(x)
        est_new = float(np.abs(y).sum())
        if not np.isfinite(est_new):
            return np.inf
        if last >= 0 and est_new <= est:
            break
        est = est_new
        size = np.abs(y)
        xi = np.where(size > 0, y / np.where(size > 0, size, 1.0), 1.0)
        z = solve_h(xi)
        j = int(np.argmax(np.abs(z)))
        if last >= 0 and (j == last or np.abs(z[j]) <= np.real(np.vdot(z, x))):
            break
        last = j
        x = np.zeros(n, dtype=complex)
        x[j] = 1.0
    alt = np.array([(-1.0) ** i * (1.0 + i / max(n - 1, 1)) for i in range(n)], dtype=complex)
    est_alt = 2.0 * float(np.abs(solve(alt)).sum()) / (3.0 * n)
    return max(est, est_alt)
