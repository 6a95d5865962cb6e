"""Poles and zeros of the MNA pencil by QZ [1]_, and the merging of root sets.

Poles are the finite generalized eigenvalues of (G, −C), zeros those of the pencil
bordered with b and l; root sets found piecewise (by the sparse search) are merged.

References
----------
.. [1] C. B. Moler and G. W. Stewart, "An algorithm for generalized matrix
   eigenvalue problems", SIAM J. Numer. Anal. 10(2), 241-256, 1973.
"""

from __future__ import annotations

import numpy as np
import scipy.linalg as sla

__all__ = ["pencil_roots", "merge_roots"]


def _finite_eigs(a: np.ndarray, b: np.ndarray) -> np.ndarray | None:
    """Finite generalized eigenvalues λ of a·v = λ·b·v (QZ), or None on failure.

    LAPACK xGGEV returns a complex-conjugate pair of a real pencil as consecutive
    entries, the first with positive imaginary part; that order is kept, so
    :func:`netcheck.mna.polezero._group_roots` can recognise the pairs.
    """
    if a.shape[0] == 0:
        return np.zeros(0, dtype=complex)
    # G and C come from finite stamps (values are checked when evaluated), so no
    # finiteness check is made here
    # LAPACK xGGEV (QZ) without eigenvectors; scipy.linalg.eigvals adds only overhead here
    alphar, alphai, beta, _, _, _, info = sla.lapack.dggev(a, b, compute_vl=0, compute_vr=0)
    if info != 0:
        return None
    alpha = alphar + 1j * alphai
    scale_a = max(float(np.abs(a).max()), 1e-300)
    scale_b = max(float(np.abs(b).max()), 1e-300)
    tiny = 64 * np.finfo(float).eps * a.shape[0]
    if ((np.abs(alpha) < tiny * scale_a) & (np.abs(beta) < tiny * scale_b)).any():
        return None  # singular pencil (det(a - λb) ≡ 0): no regular transfer function
    finite = np.abs(beta) * 1e12 > np.abs(alpha)
    if alphai.size:  # keep or drop the two members of a pair together
        pair_first = np.flatnonzero(alphai[:-1] > 0)
        both = finite[pair_first] & finite[pair_first + 1]
        finite[pair_first], finite[pair_first + 1] = both, both
    return alpha[finite] / beta[finite]


def pencil_roots(g: np.ndarray, c: np.ndarray, b: np.ndarray, l: np.ndarray, w: float,
                 b_s: np.ndarray | None = None, poles: bool = True
                 ) -> tuple[np.ndarray | None, np.ndarray | None]:
    """Finite poles and zeros of H(s) = l·(G + sC)⁻¹b, divided by ``w`` (rad/s), by QZ [1]_.

    With ``b_s`` the right-hand side is b + s·b_s (a source that enters through a
    capacitance), bordered as such: its zeros come out the same way. ``poles=False``
    skips the poles (None), for a caller that has them.

    Poles are the finite eigenvalues of the pencil (G, −C); zeros those of the pencil
    bordered with b and l, whose determinant is −H(s)·det(G + sC) (a pole that l or b
    cannot see appears among the zeros too, and cancels). The frequency is scaled by
    ``w`` and the rows and columns of G + wC are scaled to unit maxima first. Either
    array is None where QZ failed or the pencil is singular (det ≡ 0).
    """
    c = c * w
    mag = np.abs(g) + np.abs(c)
    r = mag.max(axis=1) if mag.size else np.ones(0)
    r[r == 0] = 1.0
    r = 1.0 / r
    col = (mag * r[:, None]).max(axis=0) if mag.size else np.ones(0)
    col[col == 0] = 1.0
    col = 1.0 / col
    gs, cs = g * r[:, None] * col[None, :], c * r[:, None] * col[None, :]
    found = _finite_eigs(gs, -cs) if poles else None
    n = g.shape[0]
    gb = np.zeros((n + 1, n + 1))
    cb = np.zeros((n + 1, n + 1))
    gb[:n, :n], cb[:n, :n] = gs, -cs
    gb[:n, n] = b * r
    if b_s is not None:
        cb[:n, n] = -b_s * w * r
    gb[n, :n] = l * col
    return found, _finite_eigs(gb, cb)


def merge_roots(roots: np.ndarray, rtol: float = 1e-8) -> np.ndarray:
    """``roots`` with near-duplicates (within ``rtol`` of their size) merged and the
    conjugate of every complex one present (the roots of a real pencil come in pairs;
    :func:`~netcheck.mna.sparse_poles.sparse_poles` finds one of each pair, some twice)."""
    roots = np.asarray(roots, dtype=complex)
    roots = roots[np.isfinite(roots)]
    if roots.size == 0:
        return roots
    tiny = rtol * np.maximum(np.abs(roots), 1e-300)
    roots = np.where(np.abs(roots.imag) <= tiny, roots.real + 0j, roots)
    upper = np.where(roots.imag < 0, np.conj(roots), roots)
    upper = upper[np.argsort(np.abs(upper), kind="stable")]
    kept: list[complex] = []
    for r in upper:  # sorted by size: a duplicate is among the last few kept
        size = abs(r)
        k = len(kept) - 1
        while k >= 0 and abs(kept[k]) >= size * (1.0 - 2.0 * rtol):
            if abs(r - kept[k]) <= rtol * max(size, 1e-300):
                break
            k -= 1
        else:
            kept.append(complex(r))
    out = np.array(kept, dtype=complex)
    return np.concatenate([out, np.conj(out[out.imag > 0])])
