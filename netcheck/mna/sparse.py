"""Sparse engine: one SuperLU factorisation of the equilibrated G + sC per frequency.

Memory grows with the non-zeros: the path for systems too large for dense LAPACK.
"""

from __future__ import annotations

import warnings

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from .assemble import System
from .conditioning import RCOND_TOL, Pattern, equilibrate, inverse_one_norm
from .pencil import merge_roots
from .singular import nonfinite_error, sparse_singular_error
from .sparse_poles import sparse_poles

__all__ = ["SparseEngine"]

_TWO_PI = 2.0 * np.pi


class SparseEngine:
    """One SuperLU factorisation per frequency: memory ∝ non-zeros, for large systems."""

    method = "sparse"

    def __init__(self, system: System) -> None:
        self.system = system
        self.G = system.G.astype(complex).tocsc()
        self.C = system.C.astype(complex).tocsc()
        mags = abs(system.G) + abs(system.C)
        d = system.delays
        if d is not None:  # a transmission line's entries (exp(-sτ), not in G or C)
            mags = mags + sp.csc_matrix((np.abs(d.coef) + 1.0, (d.rows, d.cols)),
                                        shape=mags.shape)
        rows, cols = mags.nonzero()
        self._pattern = Pattern(rows, cols, system.size)
        self._gv = np.asarray(system.G.tocsr()[rows, cols]).ravel()
        self._cv = np.asarray(system.C.tocsr()[rows, cols]).ravel()
        self._dmag = np.zeros(rows.size)
        if d is not None:
            where = {(int(r), int(c)): i for i, (r, c) in enumerate(zip(rows, cols))}
            self._didx = np.array([where[(int(r), int(c))] for r, c in zip(d.rows, d.cols)],
                                  dtype=np.int64)
            np.add.at(self._dmag, self._didx, np.abs(d.coef))
        self._roots: dict = {}

    def _scaled(self, f: float) -> tuple[sp.csc_matrix, np.ndarray, np.ndarray]:
        """(diag(r)·(G + j2πfC)·diag(c), r, c), equilibrated as the dense engine does
        (:func:`~netcheck.mna.conditioning.equilibrate`); analysis-303 if not finite."""
        w = _TWO_PI * f
        pat, gv, cv = self._pattern, self._gv, self._cv
        with np.errstate(over="ignore", invalid="ignore"):
            vals = gv + (1j * w) * cv
            d = self.system.delays
            if d is not None:
                np.add.at(vals, self._didx, d.values(np.array([f]))[0])
        if not np.isfinite(vals).all():
            raise nonfinite_error(self.system, float(f))
        r, c = (x[0] for x in equilibrate(pat, (np.abs(gv) + self._dmag +
                                                 w * np.abs(cv))[None, :]))
        n = self.system.size
        a = sp.csc_matrix((vals * r[pat.rows] * c[pat.cols], (pat.rows, pat.cols)),
                          shape=(n, n))
        return a, r, c

    def _factor(self, f: float, scaled: tuple | None = None):
        """(SuperLU of the equilibrated G + j2πfC, r, c); analysis-303 if not finite, analysis-300 if
        SuperLU finds it singular."""
        a, r, c = scaled or self._scaled(f)
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("error", sp.SparseEfficiencyWarning)
                return spla.splu(a, permc_spec="COLAMD"), r, c
        except (RuntimeError, ValueError) as err:
            raise sparse_singular_error(self.system, a, f, str(err)) from None

    def check_regular(self, f_hz: np.ndarray) -> None:
        """Raise SingularCircuitError if (G + sC) is numerically singular at any ``f_hz``
        (analysis-303 if it is not finite), judged on the equilibrated matrix S like the dense
        engine, from an estimate of its 1-norm condition κ₁ = ‖S‖₁‖S⁻¹‖₁.

        1/‖S⁻¹‖₁ is the distance, in the 1-norm, from S to the nearest singular matrix;
        S is refused when that is at most
        :data:`~netcheck.mna.conditioning.RCOND_TOL`·‖S‖₁ (κ₁ ≥ 1/RCOND_TOL), the dense
        test in the 1-norm. The estimate of ‖S⁻¹‖₁ is a lower bound, so nothing
        regular to working precision is refused.
        """
        n = self.system.size
        for f in np.atleast_1d(np.asarray(f_hz, dtype=float)):
            scaled = self._scaled(f)
            lu = self._factor(f, scaled)[0]
            with np.errstate(all="ignore"):
                inv = inverse_one_norm(lu.solve, lambda v: lu.solve(v, trans="H"), n)
                kappa = float(abs(scaled[0]).sum(axis=0).max()) * inv
            if not kappa < 1.0 / RCOND_TOL:
                raise sparse_singular_error(
                    self.system, scaled[0], f,
                    f"estimated reciprocal condition {1.0 / kappa:.1e}")

    def roots(self, f_lo: float, f_hi: float, l: np.ndarray | None = None
              ) -> tuple[np.ndarray, np.ndarray, bool]:
        """Poles and zeros (Hz, complex s/2π) of l·(G + sC)⁻¹b near the sweep: every
        lightly damped one of [f_lo, f_hi] (Q > 1/√2), with others met on the way, by
        :func:`~netcheck.mna.sparse_poles.sparse_poles` on the pencil and on the pencil
        bordered with b and l (whose eigenvalues are the zeros). Duplicates are merged
        and conjugates completed; the flag is False: heavily damped and far roots may be
        missing. Kept once made.
        """
        l = self.system.l if l is None else np.asarray(l, dtype=float)
        key = (l.tobytes(), float(f_lo), float(f_hi))
        if self.system.delays is not None:  # not rational: no finite set of roots
            empty = np.zeros(0, dtype=complex)
            return empty, empty.copy(), False
        if key not in self._roots:
            span = ("poles", float(f_lo), float(f_hi))
            if span not in self._roots:  # the same for every selector
                self._roots[span] = merge_roots(sparse_poles(self.G, self.C, f_lo, f_hi))
            gb = sp.bmat([[self.G, sp.csc_matrix(self.system.b.astype(complex)[:, None])],
                          [sp.csc_matrix(l.astype(complex)[None, :]), None]], format="csc")
            cb = sp.bmat([[self.C, None], [None, sp.csc_matrix((1, 1), dtype=complex)]],
                         format="csc")
            zeros = merge_roots(sparse_poles(gb, cb, f_lo, f_hi))
            self._roots[key] = (self._roots[span], zeros, False)
        return self._roots[key]

    def _finite(self, scale: np.ndarray, z: np.ndarray, f: float) -> np.ndarray:
        """``scale``·``z`` back in the circuit's units; analysis-303 if it overflowed."""
        with np.errstate(all="ignore"):
            x = scale * z
        if not np.isfinite(x).all():
            raise nonfinite_error(self.system, float(f), solution=True)
        return x

    def solution(self, f: np.ndarray) -> np.ndarray:
        """Full solution x (F × n)."""
        out = np.empty((f.size, self.system.size), dtype=complex)
        b = self.system.b.astype(complex)
        # One factorisation per frequency is the work itself; this loop only calls SuperLU.
        for i, fi in enumerate(f):
            lu, r, c = self._factor(fi)
            out[i] = self._finite(c, lu.solve(r * b), fi)
        return out

    def transfer(self, f: np.ndarray, l: np.ndarray | None = None, derivative: bool = True
                 ) -> tuple[np.ndarray, np.ndarray | None]:
        """y = l·x and dy/df from one factorisation per frequency (adjoint solve)."""
        l = (self.system.l if l is None else l).astype(complex)
        b = self.system.b.astype(complex)
        h = np.empty(f.size, dtype=complex)
        dh = np.empty(f.size, dtype=complex)
        for i, fi in enumerate(f):
            lu, r, c = self._factor(fi)
            x = self._finite(c, lu.solve(r * b), fi)
            h[i] = l @ x
            if derivative:
                y = self._finite(r, lu.solve(c * l, trans="T"), fi)
                dh[i] = -(y @ (self.C @ x))
                d = self.system.delays
                if d is not None:  # dA/ds also has −τ·coef·exp(−sτ)
                    dh[i] -= np.sum(y[d.rows] * d.derivative(np.array([fi]))[0] * x[d.cols])
        return h, ((1j * _TWO_PI) * dh if derivative else None)
