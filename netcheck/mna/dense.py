"""Dense engine: (G + sC)x = b batched over frequency by LAPACK LU, equilibrated.

Regularity is judged from the smallest singular value of the equilibrated matrix.
"""

from __future__ import annotations

import math

import numpy as np

from .assemble import System
from .conditioning import RCOND_TOL, Pattern, equilibrate
from .pencil import pencil_roots
from .singular import nonfinite_error, singular_error

__all__ = ["DenseEngine", "CHUNK_BYTES", "SCALE_BINS_PER_DECADE"]

#: memory for one batch of dense matrices
CHUNK_BYTES = 64 * 2**20
#: the dense engine equilibrates once per 1/8 decade of frequency and keeps the scaling
#: (any scaling is exact and valid; within 1/16 decade of its centre, 2πf·C entries
#: differ from the ones it was made for by less than a factor 1.16)
SCALE_BINS_PER_DECADE = 8
_TWO_PI = 2.0 * np.pi


class DenseEngine:
    """Direct solves batched over frequency (the accuracy reference for small systems)."""

    method = "dense"

    def __init__(self, system: System) -> None:
        self.system = system
        self.G = system.G.toarray()
        self.C = system.C.toarray()
        self.n = system.size
        mask = (self.G != 0) | (self.C != 0)
        d = system.delays
        if d is not None:  # a transmission line's entries (exp(-sτ), not in G or C)
            mask[d.rows, d.cols] = True
        rows, cols = np.nonzero(mask)
        self._pattern = Pattern(rows, cols, self.n)
        self._gv, self._cv = self.G[rows, cols], self.C[rows, cols]
        self._dmag = np.zeros(rows.size)
        if d is not None:
            where = np.zeros((self.n, self.n), dtype=np.int64)
            where[rows, cols] = np.arange(rows.size)
            self._didx = where[d.rows, d.cols]
            np.add.at(self._dmag, self._didx, np.abs(d.coef))
        self._scales: dict[int, tuple[np.ndarray, np.ndarray]] = {}
        self._roots: dict[tuple, tuple[np.ndarray, np.ndarray, bool]] = {}
        self.chunk = max(1, CHUNK_BYTES // (16 * 4 * max(self.n, 1) ** 2))

    def _scaling(self, f: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Row and column scalings (F × n each) for the frequencies ``f``: those of
        :func:`~netcheck.mna.conditioning.equilibrate` at the centre of each one's
        1/:data:`SCALE_BINS_PER_DECADE` decade, made once per bin and kept (a refinement
        solving one point at a time near the same frequency pays for it once)."""
        key = np.floor(np.log10(f) * SCALE_BINS_PER_DECADE + 0.5).astype(np.int64)
        if key.size == 1 and int(key[0]) in self._scales:  # one point: no grouping
            r, c = self._scales[int(key[0])]
            return r[None, :], c[None, :]
        bins, where = np.unique(key, return_inverse=True)
        new = [int(k) for k in bins if int(k) not in self._scales]
        if new:
            w = _TWO_PI * 10.0 ** (np.array(new, dtype=float) / SCALE_BINS_PER_DECADE)
            r, c = equilibrate(self._pattern, (np.abs(self._gv) + self._dmag)[None, :] +
                               w[:, None] * np.abs(self._cv)[None, :])
            for i, k in enumerate(new):
                self._scales[k] = (r[i], c[i])
        r = np.stack([self._scales[int(k)][0] for k in bins])
        c = np.stack([self._scales[int(k)][1] for k in bins])
        return r[where.ravel()], c[where.ravel()]

    def _scaled(self, f: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(diag(r)·(G + j2πfC)·diag(c), r, c) for each frequency of ``f`` (F × n × n,
        F × n, F × n), equilibrated by :func:`~netcheck.mna.conditioning.equilibrate`;
        analysis-303 if not finite."""
        pat = self._pattern
        with np.errstate(over="ignore", invalid="ignore"):
            vals = self._gv + np.multiply.outer(1j * _TWO_PI * f, self._cv)
            d = self.system.delays
            if d is not None:
                vals = vals.copy()
                np.add.at(vals, (slice(None), self._didx), d.values(f))
        finite = np.isfinite(vals).all(axis=1)
        if not finite.all():
            raise nonfinite_error(self.system, float(f[np.argmin(finite)]))
        r, c = self._scaling(f)
        vals *= r[:, pat.rows]
        vals *= c[:, pat.cols]
        a = np.zeros((f.size, self.n, self.n), dtype=complex)
        a[:, pat.rows, pat.cols] = vals
        return a, r, c

    def check_regular(self, f_hz: np.ndarray) -> None:
        """Raise SingularCircuitError if (G + sC) is numerically singular at any ``f_hz``
        (analysis-303 if it is not finite).

        The test is on the equilibrated matrix S
        (:func:`~netcheck.mna.conditioning.equilibrate`), so it does not depend on the
        scaling of rows and columns, only on the circuit, and it does not grow with the
        number of unknowns: S is refused when it is singular to working precision,
        σmin(S) ≤ :data:`~netcheck.mna.conditioning.RCOND_TOL`·√(‖S‖₁‖S‖∞).
        """
        for f in np.atleast_1d(np.asarray(f_hz, dtype=float)):
            a = self._scaled(np.array([f]))[0][0]
            try:
                sv = np.linalg.svd(a, compute_uv=False)
            except np.linalg.LinAlgError:  # not decided by the SVD: LU says
                if _is_singular(a):
                    raise singular_error(self.system, a, f) from None
                continue
            size = math.sqrt(np.abs(a).sum(axis=0).max() * np.abs(a).sum(axis=1).max())
            if sv[0] == 0 or not sv[-1] > RCOND_TOL * size:
                raise singular_error(self.system, a, f)

    def _solve(self, f: np.ndarray, rhs: np.ndarray, transpose: bool = False) -> np.ndarray:
        """x with (G + sC)x = rhs (or its transpose) at each frequency, solved on the
        equilibrated matrix: A = R⁻¹·S·C⁻¹ gives x = C·S⁻¹(R·rhs) and
        Aᵀ⁻¹rhs = R·S⁻ᵀ(C·rhs) (R, C diagonal powers of two: the scaling is exact)."""
        out = np.empty((f.size, self.n), dtype=complex)
        for i in range(0, f.size, self.chunk):
            fc = f[i:i + self.chunk]
            s, r, c = self._scaled(fc)
            a = np.swapaxes(s, -1, -2) if transpose else s
            into, back = (c, r) if transpose else (r, c)
            try:
                z = np.linalg.solve(a, (into * rhs)[..., None])[..., 0]
            except np.linalg.LinAlgError:
                bad = next((k for k in range(fc.size) if _is_singular(s[k])), 0)
                raise singular_error(self.system, s[bad], fc[bad]) from None
            with np.errstate(all="ignore"):
                x = back * z
            finite = np.isfinite(x).all(axis=1)
            if not finite.all():
                raise nonfinite_error(self.system, float(fc[np.argmin(finite)]),
                                       solution=True)
            out[i:i + self.chunk] = x
        return out

    def solution(self, f: np.ndarray) -> np.ndarray:
        """Full solution x (F × n): every node voltage and branch current per unit stimulus."""
        return self._solve(f, self.system.b)

    def roots(self, f_lo: float, f_hi: float, l: np.ndarray | None = None
              ) -> tuple[np.ndarray, np.ndarray, bool]:
        """Every finite pole and zero of l·(G + sC)⁻¹b (default l: the output), as complex
        frequencies s/2π in Hz, by QZ of the pencil and of the bordered pencil
        (:func:`~netcheck.mna.pencil.pencil_roots`, scaled at the sweep's geometric
        centre); the flag says the sets are complete. Made once per selector and sweep, then kept.

        Empty arrays (and the flag False) if QZ fails: the seeds are then missing, not
        wrong; the solves themselves do not depend on this.
        """
        l = self.system.l if l is None else np.asarray(l, dtype=float)
        w = _TWO_PI * float(np.sqrt(f_lo * f_hi))
        key = (l.tobytes(), w)
        if self.system.delays is not None:  # not rational: no finite set of roots
            empty = np.zeros(0, dtype=complex)
            return empty, empty.copy(), False
        if key not in self._roots:
            with np.errstate(all="ignore"):
                try:
                    poles, zeros = pencil_roots(self.G, self.C, self.system.b, l, w)
                except (np.linalg.LinAlgError, ValueError):
                    poles = zeros = None
            if poles is None or zeros is None:
                empty = np.zeros(0, dtype=complex)
                self._roots[key] = (empty, empty, False)
            else:
                self._roots[key] = (poles * (w / _TWO_PI), zeros * (w / _TWO_PI), True)
        return self._roots[key]

    def values(self, f: np.ndarray) -> np.ndarray:
        """y = l·x only (no derivative)."""
        return self._solve(f, self.system.b) @ self.system.l

    def transfer(self, f: np.ndarray, l: np.ndarray | None = None, derivative: bool = True
                 ) -> tuple[np.ndarray, np.ndarray | None]:
        """y = l·x and dy/df by the adjoint: dy/ds = −(A⁻ᵀl)ᵀ C (A⁻¹b)."""
        l = self.system.l if l is None else l
        x = self._solve(f, self.system.b)
        if not derivative:
            return x @ l, None
        y = self._solve(f, l, transpose=True)
        h = x @ l
        dh_ds = -np.einsum("fi,fi->f", y, x @ self.C.T)
        d = self.system.delays
        if d is not None:  # dA/ds also has the delayed entries' −τ·coef·exp(−sτ)
            dh_ds -= np.einsum("fk,fk->f", y[:, d.rows] * d.derivative(f), x[:, d.cols])
        return h, (1j * _TWO_PI) * dh_ds


def _is_singular(a: np.ndarray) -> bool:
    try:
        with np.errstate(all="ignore"):
            np.linalg.solve(a, np.ones(a.shape[0]))
    except np.linalg.LinAlgError:
        return True
    return False
