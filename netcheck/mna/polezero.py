"""Pole–zero engine: H(s) = k·Π(s − zᵢ)/Π(s − pⱼ) from the QZ roots of the MNA pencil [1]_.

It is fast for many points and keeps full relative accuracy deep in a stop-band (no
cancellation), but is trusted only where it agrees with direct solves: it is verified
at check points, and every point whose error estimate is too large is solved directly.

References
----------
.. [1] C. B. Moler and G. W. Stewart, "An algorithm for generalized matrix
   eigenvalue problems", SIAM J. Numer. Anal. 10(2), 241-256, 1973.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass, field

import numpy as np

from .dense import DenseEngine
from .pencil import pencil_roots
from .singular import check_finite

__all__ = ["PoleZeroEngine", "CHECK_TOL", "POINT_TOL"]

log = logging.getLogger(__name__)

#: complex relative error allowed between the pole–zero form and direct solves;
#: 1e-8 keeps magnitude within 1e-7 dB and phase within 6e-7 degrees
CHECK_TOL = 1e-8
#: per-point error estimate above which a point is solved directly instead
POINT_TOL = 1e-10
_TWO_PI = 2.0 * np.pi


@dataclass
class PoleZeroEngine:
    """H(s) = k·Π(s − zᵢ)/Π(s − pⱼ) from the generalized eigenvalues of the MNA pencil.

    Poles are the finite eigenvalues of (G, −C); zeros those of the pencil bordered
    with b and l, whose determinant is −H(s)·det(G + sC). Frequencies are scaled by
    ``w_scale`` and the pencil is equilibrated before the QZ step. Points whose error
    estimate Σ δᵣ/|s − r| exceeds :data:`POINT_TOL` are solved directly.
    """

    direct: DenseEngine
    w_scale: float
    poles: np.ndarray
    zeros: np.ndarray
    gain: complex
    delta_p: np.ndarray
    delta_z: np.ndarray
    method: str = "pole-zero"
    fallback_points: int = field(default=0)
    _grid: tuple | None = field(default=None, repr=False)

    @classmethod
    def build(cls, direct: DenseEngine, grid: np.ndarray) -> "PoleZeroEngine | None":
        """Build from the system and verify at check points; None when not trustworthy.

        analysis-303 (:class:`~netcheck.exceptions.SingularCircuitError`) if G + j2πfC is not
        finite on ``grid``."""
        system = direct.system
        check_finite(system, grid)
        w = _TWO_PI * float(np.sqrt(grid.min() * grid.max()))
        poles, zeros = pencil_roots(direct.G, direct.C, system.b, system.l, w)
        if poles is None or zeros is None:
            return None
        checks = _check_indices(grid)
        h_ref = direct.values(grid[checks])
        if not (np.abs(h_ref) > 0).any():
            return None
        rel = np.finfo(float).eps * 256
        eng = cls(direct, w, poles, zeros, 1.0 + 0j,
                  rel * np.maximum(np.abs(poles), 1.0), rel * np.maximum(np.abs(zeros), 1.0))
        # one evaluation of the form on the whole grid serves the gain, the check and the
        # sweep itself (the check points are grid points)
        shape, _, est = eng._evaluate(grid, derivative=False)
        k = int(np.argmax(np.abs(h_ref)))
        eng.gain = h_ref[k] / shape[checks[k]]
        h, dh = eng.gain * shape, None
        trusted = est[checks] <= POINT_TOL
        err = np.abs(h[checks] - h_ref) / np.maximum(np.abs(h_ref), 1e-300)
        if (err[trusted] > CHECK_TOL).any() or not np.isfinite(eng.gain):
            log.info("pole-zero form disagrees with direct solves (max rel err %.2e); "
                     "using direct solves", float(np.max(err[trusted], initial=0.0)))
            return None
        eng._grid = (grid, h, dh, est)
        return eng

    def __post_init__(self) -> None:
        self._groups = (_group_roots(self.zeros, self.delta_z),
                        _group_roots(self.poles, self.delta_p))

    def _evaluate_w(self, w: np.ndarray, derivative: bool = True
                    ) -> tuple[np.ndarray, np.ndarray | None, np.ndarray]:
        """H, d(ln H)/ds (None unless ``derivative``) and an error estimate at s = jw.

        ``w`` is the normalised (real) angular frequency.

        A conjugate pair is taken as the real quadratic s² − 2σs + |r|²; all roots of a
        kind are handled in one (frequency × roots) array operation.
        """
        w = w[None, :]
        w2 = w * w
        jw = 1j * w
        out = []
        est = np.zeros(w.shape[1])
        with np.errstate(all="ignore"):
            for sigma, mod2, singles, risky, deltas in self._groups:
                prod = np.ones(w.shape[1], dtype=complex)
                dlog = np.zeros(w.shape[1], dtype=complex) if derivative else None
                if sigma.size:
                    fac = (mod2[:, None] - w2) - 2j * (sigma[:, None] * w)
                    if derivative:
                        dlog = ((2.0 * jw - 2.0 * sigma[:, None]) / fac).sum(axis=0)
                    prod = fac.prod(axis=0)
                if singles.size:
                    d = jw - singles[:, None]
                    prod = prod * d.prod(axis=0)
                    if derivative:
                        dlog = dlog + (1.0 / d).sum(axis=0)
                if risky.size:
                    est += (deltas[:, None] / np.abs(jw - risky[:, None])).sum(axis=0)
                out.append((prod, dlog))
            (num, dnum), (den, dden) = out
            h = self.gain * (num / den)
        return h, (dnum - dden if derivative else None), est

    def _evaluate(self, f: np.ndarray, derivative: bool = True
                  ) -> tuple[np.ndarray, np.ndarray | None, np.ndarray]:
        w = (_TWO_PI / self.w_scale) * f
        h, dlog, est = self._evaluate_w(w, derivative)
        est[~np.isfinite(h) | ~np.isfinite(est)] = np.inf
        if not derivative:
            return h, None, est
        with np.errstate(invalid="ignore"):  # 0·∞ exactly on a zero: H' = 0·(1/0)
            dh = h * dlog * (1j * _TWO_PI / self.w_scale)
        est[~np.isfinite(dh)] = np.inf  # such a point is solved directly instead
        return h, dh, est

    def transfer(self, f: np.ndarray, derivative: bool = True
                 ) -> tuple[np.ndarray, np.ndarray | None]:
        """H and dH/df; points the error estimate does not trust are solved directly."""
        cached = self._grid
        if (cached is not None and (cached[2] is not None or not derivative)
                and f.shape == cached[0].shape and np.array_equal(f, cached[0])):
            h, est = cached[1].copy(), cached[3]
            dh = None if cached[2] is None or not derivative else cached[2].copy()
        else:
            h, dh, est = self._evaluate(f, derivative)
        redo = est > POINT_TOL
        if redo.any():
            self.fallback_points += int(redo.sum())
            h_d, dh_d = self.direct.transfer(f[redo], derivative=derivative)
            h[redo] = h_d
            if derivative:
                dh[redo] = dh_d
        return h, dh

    def solution(self, f: np.ndarray) -> np.ndarray:
        """Full solution by direct solves."""
        return self.direct.solution(f)

    def roots(self, f_lo: float, f_hi: float, l: np.ndarray | None = None
              ) -> tuple[np.ndarray, np.ndarray, bool]:
        """The form's own poles and zeros (Hz, complete) for the output; for another
        selector ``l``, those of the direct engine
        (:meth:`~netcheck.mna.dense.DenseEngine.roots`)."""
        if l is None or np.array_equal(l, self.direct.system.l):
            scale = self.w_scale / _TWO_PI
            return self.poles * scale, self.zeros * scale, True
        return self.direct.roots(f_lo, f_hi, l)


def _group_roots(roots: np.ndarray, deltas: np.ndarray) -> tuple[np.ndarray, ...]:
    """Split roots for :meth:`PoleZeroEngine._evaluate_w`.

    Returns (pair σ, pair |r|², single roots, risky roots, their deltas). A pair (r, r*)
    is two consecutive entries with Im r > 0 (LAPACK order). A root is risky when its
    error estimate can matter somewhere on the jω axis: δ/|Re r| above the point
    tolerance; only risky roots get a per-point error estimate.
    """
    pairs, singles = [], []
    i = 0
    while i < roots.size:
        r = complex(roots[i])
        nxt = complex(roots[i + 1]) if i + 1 < roots.size else None
        # LAPACK returns a conjugate pair as consecutive entries (Im > 0 first); its two
        # betas may differ slightly, so the partner is matched to rounding, then taken exact
        if (r.imag > 0 and nxt is not None
                and abs(nxt - r.conjugate()) <= 1e-10 * max(abs(r), 1e-300)):
            pairs.append(complex(0.5 * (r.real + nxt.real), 0.5 * (r.imag - nxt.imag)))
            i += 2
        else:
            singles.append(r)
            i += 1
    p = np.array(pairs, dtype=complex)
    n = max(roots.size, 1)
    risky = deltas > POINT_TOL / (4 * n) * np.abs(roots.real)
    return (p.real.copy(), (p.real ** 2 + p.imag ** 2), np.array(singles, dtype=complex),
            roots[risky], deltas[risky])


def _check_indices(grid: np.ndarray) -> np.ndarray:
    """Up to 8 grid indices spread evenly, both ends included (points where a root sits
    near the axis are solved directly anyway, by the per-point error estimate)."""
    n = grid.size
    k = min(n, 8)
    # strictly increasing already: the step (n − 1)/(k − 1) is at least 1
    return (np.arange(k) * (n - 1)) // max(k - 1, 1)
