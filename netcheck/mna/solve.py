"""MNA system × frequencies → Response: exact transfer, derivative and full solution.

Three engines share one interface. ``DenseEngine`` solves (G + sC)x = b batched
over frequency with LAPACK LU; ``SparseEngine`` factorises each frequency with
SuperLU for large systems (memory ∝ non-zeros); ``PoleZeroEngine`` evaluates the
transfer function in pole–zero product form from generalized eigenvalues of the
MNA pencil [2]_, which is fast for many points and keeps full relative accuracy
deep in a stop-band (no cancellation), but is trusted only where it agrees with
direct solves: it is verified at check points and every point whose error
estimate is too large is solved directly.

References
----------
.. [1] C.-W. Ho, A. E. Ruehli and P. A. Brennan, "The modified nodal approach to
   network analysis", IEEE Trans. Circuits and Systems 22(6), 504-509, 1975.
.. [2] C. B. Moler and G. W. Stewart, "An algorithm for generalized matrix
   eigenvalue problems", SIAM J. Numer. Anal. 10(2), 241-256, 1973.
.. [3] A. J. Laub, "Efficient multivariable frequency response computations",
   IEEE Trans. Automatic Control 26(2), 407-408, 1981.
.. [4] D. Ruiz, "A scaling algorithm to equilibrate both rows and columns norms in
   matrices", Rutherford Appleton Laboratory report RAL-TR-2001-034, 2001.
.. [5] N. J. Higham, "FORTRAN codes for estimating the one-norm of a real or complex
   matrix, with applications to condition estimation", ACM Trans. Math. Software
   14(4), 381-396, 1988.
"""

from __future__ import annotations

import logging
import math
import warnings
from dataclasses import dataclass, field
from typing import Protocol

import numpy as np
import scipy.linalg as sla
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from .sparse_poles import sparse_poles
from .assemble import System, element_entries
from ..netlist.elaborate import VALUE_MAX, VALUE_MIN
from ..exceptions import NetcheckWarning, SingularCircuitError
from ..netlist.source import printable

__all__ = ["Response", "solve", "make_engine", "DenseEngine", "SparseEngine",
           "PoleZeroEngine", "DENSE_MAX", "CHECK_TOL", "sparse_poles"]

log = logging.getLogger(__name__)

#: largest system solved with dense LAPACK (larger ones take the sparse path)
DENSE_MAX = 300
#: fewest points for which the pole–zero engine is worth building
PZ_MIN_POINTS = 40
#: complex relative error allowed between the pole–zero form and direct solves;
#: 1e-8 keeps magnitude within 1e-7 dB and phase within 6e-7 degrees
CHECK_TOL = 1e-8
#: per-point error estimate above which a point is solved directly instead
POINT_TOL = 1e-10
#: memory for one batch of dense matrices
CHUNK_BYTES = 64 * 2**20
#: most sweeps of :func:`_equilibrate` (each about halves the spread of the row and
#: column maxima in log scale, so a dozen cover the whole double range; the rest is room)
EQUILIBRATE_SWEEPS = 64
#: the dense engine equilibrates once per 1/8 decade of frequency and keeps the scaling
#: (any scaling is exact and valid; within 1/16 decade of its centre, 2πf·C entries
#: differ from the ones it was made for by less than a factor 1.16)
SCALE_BINS_PER_DECADE = 8
#: a matrix is singular to working precision, and refused (NC300), when, equilibrated, it
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
_TWO_PI = 2.0 * np.pi


def _readonly(a: np.ndarray) -> np.ndarray:
    a = np.asarray(a)
    a.flags.writeable = False
    return a


def validate_frequencies(freqs: object) -> np.ndarray:
    """Return ``freqs`` as a 1-D float array of finite positive Hz, or raise ValueError."""
    f = np.atleast_1d(np.asarray(freqs, dtype=float))
    if f.ndim != 1 or f.size == 0:
        raise ValueError("freqs: expected a non-empty 1-D array of frequencies in Hz")
    if not np.isfinite(f).all() or (f <= 0).any():
        raise ValueError("freqs: every frequency must be finite and > 0 Hz")
    return f


class Engine(Protocol):
    """What every solver engine provides."""

    method: str

    def transfer(self, f: np.ndarray, derivative: bool = True
                 ) -> tuple[np.ndarray, np.ndarray | None]:
        """H(f) and dH/df (per Hz; None unless ``derivative``) at the frequencies ``f``."""
        ...


def _pow2_rsqrt(m: np.ndarray) -> np.ndarray:
    """1/√m rounded to a power of two (so that scaling by it is exact); 1 where m is 0
    or not finite, and where m already lies in [1/2, 2)."""
    m = np.where((m > 0) & np.isfinite(m), m, 1.0)
    _, e = np.frexp(m)  # m = q·2^e, 1/2 ≤ q < 1
    return np.ldexp(1.0, -(e // 2))


class _Pattern:
    """The non-zero positions (rows, cols) of an n × n pencil G + sC, grouped by row
    and by column, for the row and column maxima of :func:`_equilibrate`."""

    def __init__(self, rows: np.ndarray, cols: np.ndarray, n: int) -> None:
        self.rows, self.cols, self.n = rows, cols, n
        self.groups = []
        for idx in (rows, cols):
            order = np.argsort(idx, kind="stable")
            counts = np.bincount(idx, minlength=n)
            used = counts > 0
            starts = np.concatenate([[0], np.cumsum(counts)[:-1]])[used]
            self.groups.append((order, starts, used))

    def maxima(self, vals: np.ndarray, axis: int) -> np.ndarray:
        """Largest of ``vals`` (F × non-zeros) in each row (axis 0) or column (axis 1)."""
        order, starts, used = self.groups[axis]
        out = np.zeros((vals.shape[0], self.n))
        if vals.shape[1]:
            out[:, used] = np.maximum.reduceat(vals[:, order], starts, axis=1)
        return out


def _equilibrate(pattern: _Pattern, mag: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Row and column scale factors r, c (F × n, powers of two) for the entry magnitudes
    ``mag`` (F × non-zeros of ``pattern``) of F matrices, by Ruiz's iteration [4]_: every
    row and every column is divided by the square root of its largest entry, again,
    until each largest entry of diag(r)·|A|·diag(c) lies in [1/2, 2) (or
    :data:`EQUILIBRATE_SWEEPS` sweeps). Each sweep costs O(F · non-zeros).

    Solving and judging regularity on the scaled matrix diag(r)·A·diag(c) makes both
    (close to) independent of the units of the unknowns and equations: scaling every
    impedance of a circuit, or putting a 1 fΩ resistor beside 1 kΩ ones, changes the
    scaling of MNA rows and columns, not whether the circuit can be solved.
    """
    rows, cols = pattern.rows, pattern.cols
    r = np.ones((mag.shape[0], pattern.n))
    c = np.ones((mag.shape[0], pattern.n))
    for _ in range(EQUILIBRATE_SWEEPS):
        m = mag * r[:, rows] * c[:, cols]
        dr = _pow2_rsqrt(pattern.maxima(m, 0))
        dc = _pow2_rsqrt(pattern.maxima(m, 1))
        if (dr == 1.0).all() and (dc == 1.0).all():
            break
        r *= dr
        c *= dc
    return r, c


def _inverse_one_norm(solve, solve_h, n: int) -> float:
    """A lower bound, usually exact, of ‖A⁻¹‖₁ from a few solves with A and Aᴴ (Hager's
    estimator with Higham's refinements [5]_, as LAPACK's xLACN2; deterministic)."""
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


def _singular_error(system: System, a: np.ndarray, f_hz: float) -> SingularCircuitError:
    """NC300 for a dense ``a`` = G + j2πfC, equilibrated (:func:`_equilibrate`): its null
    vector names the unknowns involved. It is taken on the equilibrated matrix, where
    every unknown counts at its own scale, so a part that is only far from the others
    in size (a 1e200 F capacitor) is named rather than whatever has the largest units."""
    try:
        u, sv, vh = np.linalg.svd(a)
    except np.linalg.LinAlgError:
        return _singular(system, f_hz, np.zeros(a.shape[0]),
                         "its singular values could not be computed")
    rcond = sv[-1] / sv[0] if sv[0] > 0 else 0.0
    # the right null vector names the unknowns left undetermined, the left one the
    # equations (a node's KCL, an element's branch equation: the same index as the
    # unknowns) that depend on the others: an equation that reads 0 = 0 (a follower
    # wired to itself) shows only in the left one
    return _singular(system, f_hz, np.abs(vh[-1]), f"reciprocal condition {rcond:.1e}",
                     np.abs(u[:, -1]))


def _nonfinite_error(system: System, f_hz: float, solution: bool = False
                     ) -> SingularCircuitError:
    """NC303: G + j2πfC (or, with ``solution``, the solution at ``f_hz``) is not finite.

    Names the parts whose own entries overflow at ``f_hz``; when none does alone (two
    huge entries summed, or the solve overflowed), the parts with the most extreme
    entries (farthest from 1, touching an entry that is not finite where there is one).
    """
    w = _TWO_PI * f_hz
    with np.errstate(all="ignore"):
        sizes = [(e, max(g, w * c), where) for e, g, c, where in
                 element_entries(system.circuit)]
        blamed = [e for e, size, _ in sizes if not np.isfinite(size)]
        if not blamed:
            bad: set[int] = set()
            if not solution:
                a = (system.G + (1j * w) * system.C).tocoo()
                off = ~np.isfinite(a.data)
                bad = set(a.row[off].tolist()) | set(a.col[off].tolist())
            ranked = sorted(((-abs(float(np.log(size))), k, e) for k, (e, size, where)
                             in enumerate(sizes) if size > 0 and (not bad or where & bad)),
                            key=lambda t: t[:2])
            blamed = [e for _, _, e in ranked[:4]]
    span = blamed[0].span if blamed else None
    parts = []
    for e in blamed[:4]:
        unit = f" {printable(e.unit, 8)}" if e.unit else ""
        place = ("line " if e.span.path == span.path else f"{printable(e.span.path, 100)}:") + \
            str(e.span.line)
        parts.append(f"{printable(e.name, 60)} = {e.value:g}{unit} at {place}")
    if len(blamed) > 4:
        parts.append(f"{len(blamed) - 4:,} more")
    named = "; ".join(parts) or "the parts could not be told apart"
    what = ("the solution of the circuit equations overflowed" if solution else
            "the circuit matrix is not finite")
    sources = system.circuit.sources
    path = sources[0].path if span is None and sources else None
    return SingularCircuitError(
        f"{what} at {f_hz:.6g} Hz: part values out of range ({named}); 1/R, 2πf·L, "
        "2πf·C and the gains must stay within floating-point range (a netlist value is "
        f"accepted from {VALUE_MIN:g} to {VALUE_MAX:g} in magnitude)", span, code="NC303",
        path=path)


def _check_finite(system: System, grid: np.ndarray) -> None:
    """NC303 unless G + j2πfC is finite at every frequency of ``grid``.

    G must be finite; 2πf·C is largest at the top frequency, so the largest |C| entry
    tells the first frequency where an entry overflows.
    """
    if not np.isfinite(system.G.data).all():
        raise _nonfinite_error(system, float(grid.min()))
    cmax = float(np.abs(system.C.data).max(initial=0.0))
    if not np.isfinite(cmax):
        raise _nonfinite_error(system, float(grid.min()))
    with np.errstate(over="ignore"):
        bad = ~np.isfinite((_TWO_PI * grid) * cmax)
    if bad.any():
        raise _nonfinite_error(system, float(grid[bad].min()))


def _sparse_singular_error(system: System, a: sp.csc_matrix, f_hz: float,
                           detail: str) -> SingularCircuitError:
    """NC300 for a sparse ``a`` that SuperLU found singular.

    The unknowns involved come from two steps of inverse iteration on ``a`` shifted by
    1e-10 of its largest entry: one more factorisation, only on this error path.
    """
    n = a.shape[0]
    weights = None
    scale = float(abs(a).max()) if a.nnz else 1.0
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            lu = spla.splu((a + sp.identity(n, format="csc") * (1e-10 * (scale or 1.0))).tocsc(),
                           permc_spec="COLAMD")
            x = lu.solve(np.exp(2j * np.pi * ((np.arange(1, n + 1) * 0.6180339887) % 1.0)))
            x = lu.solve(x / np.abs(x).max())
        if np.isfinite(x).all() and np.abs(x).max() > 0:
            weights = np.abs(x) / np.abs(x).max()
    except (RuntimeError, ValueError):
        pass
    if weights is None:  # at least the rows and columns with no entries at all
        empty = np.asarray((abs(a).sum(axis=0) == 0)).ravel() | \
            np.asarray((abs(a).sum(axis=1) == 0)).ravel()
        weights = empty.astype(float)
    return _singular(system, f_hz, weights, printable(detail, 80))


def _singular(system: System, f_hz: float, weights: np.ndarray, detail: str,
              equations: np.ndarray | None = None) -> SingularCircuitError:
    """The error naming the unknowns with the largest ``weights`` (a null vector) and
    the elements touching them, placed at the element most involved; with
    ``equations`` (a left null vector), also the elements whose own branch equations
    it singles out (at least half its largest entry) when not named already."""
    order = [int(i) for i in np.argsort(weights)[::-1][:4] if weights[i] > 1e-3]
    unknowns = ", ".join(printable(system.unknowns[i], 60) for i in order) or "not known"
    touched = _elements_involved(system, weights)
    span = touched[0].span if touched else None

    def where(e) -> str:
        return f"{printable(e.name, 60)} (" + ("line " if span is None or e.span.path ==
                                               span.path else f"{printable(e.span.path, 100)}:"
                                               ) + f"{e.span.line})"

    parts = ", ".join(where(e) for e in touched)
    elements = f"; the elements touching them most are {parts}" if parts else ""
    if equations is not None and equations.size and equations.max() > 0:
        rows = np.flatnonzero(equations >= 0.5 * equations.max())
        by_row = {i: name for name, i in system.branch_index.items()}
        own = [system.circuit.element(by_row[int(i)]) for i in rows if int(i) in by_row]
        own = [e for e in own if e not in touched][:2]
        if own and len(rows) <= 2:
            elements += ("; the branch equation that depends on the others is that of "
                         + ", ".join(where(e) for e in own))
            span = own[0].span  # the part whose own equation says nothing: the place to look
    sources = system.circuit.sources
    path = sources[0].path if span is None and sources else None
    return SingularCircuitError(
        f"the circuit equations are singular at {f_hz:.6g} Hz ({detail}); the unknowns most "
        f"involved are {unknowns}{elements}. Look for parts that leave these nodes "
        "undetermined (open loops, ideal sources in conflict) or a part value many decades "
        "away from the others.", span, path=path)


def _elements_involved(system: System, weights: np.ndarray, most: int = 4) -> list:
    """Up to ``most`` elements by the summed weight of the unknowns they touch (their
    nodes and their own branch current), largest first, netlist order between equals."""
    scored = []
    for k, e in enumerate(system.circuit.elements):
        rows = {system.node_index[n] for n in e.nodes if n in system.node_index}
        if e.name in system.branch_index:
            rows.add(system.branch_index[e.name])
        score = float(sum(weights[r] for r in rows))
        if score > 1e-3:
            scored.append((-score, k, e))
    return [e for _, _, e in sorted(scored, key=lambda t: t[:2])[:most]]


class DenseEngine:
    """Direct solves batched over frequency (the accuracy reference for small systems)."""

    method = "dense"

    def __init__(self, system: System) -> None:
        self.system = system
        self.G = system.G.toarray()
        self.C = system.C.toarray()
        self.n = system.size
        rows, cols = np.nonzero((self.G != 0) | (self.C != 0))
        self._pattern = _Pattern(rows, cols, self.n)
        self._gv, self._cv = self.G[rows, cols], self.C[rows, cols]
        self._scales: dict[int, tuple[np.ndarray, np.ndarray]] = {}
        self._roots: dict[tuple, tuple[np.ndarray, np.ndarray, bool]] = {}
        self.chunk = max(1, CHUNK_BYTES // (16 * 4 * max(self.n, 1) ** 2))

    def _scaling(self, f: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Row and column scalings (F × n each) for the frequencies ``f``: those of
        :func:`_equilibrate` at the centre of each one's 1/:data:`SCALE_BINS_PER_DECADE`
        decade, made once per bin and kept (a refinement solving one point at a time
        near the same frequency pays for it once)."""
        key = np.floor(np.log10(f) * SCALE_BINS_PER_DECADE + 0.5).astype(np.int64)
        if key.size == 1 and int(key[0]) in self._scales:  # one point: no grouping
            r, c = self._scales[int(key[0])]
            return r[None, :], c[None, :]
        bins, where = np.unique(key, return_inverse=True)
        new = [int(k) for k in bins if int(k) not in self._scales]
        if new:
            w = _TWO_PI * 10.0 ** (np.array(new, dtype=float) / SCALE_BINS_PER_DECADE)
            r, c = _equilibrate(self._pattern, np.abs(self._gv)[None, :] +
                                w[:, None] * np.abs(self._cv)[None, :])
            for i, k in enumerate(new):
                self._scales[k] = (r[i], c[i])
        r = np.stack([self._scales[int(k)][0] for k in bins])
        c = np.stack([self._scales[int(k)][1] for k in bins])
        return r[where.ravel()], c[where.ravel()]

    def _scaled(self, f: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(diag(r)·(G + j2πfC)·diag(c), r, c) for each frequency of ``f`` (F × n × n,
        F × n, F × n), equilibrated by :func:`_equilibrate`; NC303 if not finite."""
        pat = self._pattern
        with np.errstate(over="ignore", invalid="ignore"):
            vals = self._gv + np.multiply.outer(1j * _TWO_PI * f, self._cv)
        finite = np.isfinite(vals).all(axis=1)
        if not finite.all():
            raise _nonfinite_error(self.system, float(f[np.argmin(finite)]))
        r, c = self._scaling(f)
        vals *= r[:, pat.rows]
        vals *= c[:, pat.cols]
        a = np.zeros((f.size, self.n, self.n), dtype=complex)
        a[:, pat.rows, pat.cols] = vals
        return a, r, c

    def check_regular(self, f_hz: np.ndarray) -> None:
        """Raise SingularCircuitError if (G + sC) is numerically singular at any ``f_hz``
        (NC303 if it is not finite).

        The test is on the equilibrated matrix S (:func:`_equilibrate`), so it does not
        depend on the scaling of rows and columns, only on the circuit, and it does not
        grow with the number of unknowns: S is refused when it is singular to working
        precision, σmin(S) ≤ :data:`RCOND_TOL`·√(‖S‖₁‖S‖∞).
        """
        for f in np.atleast_1d(np.asarray(f_hz, dtype=float)):
            a = self._scaled(np.array([f]))[0][0]
            try:
                sv = np.linalg.svd(a, compute_uv=False)
            except np.linalg.LinAlgError:  # not decided by the SVD: LU says
                if _is_singular(a):
                    raise _singular_error(self.system, a, f) from None
                continue
            size = math.sqrt(np.abs(a).sum(axis=0).max() * np.abs(a).sum(axis=1).max())
            if sv[0] == 0 or not sv[-1] > RCOND_TOL * size:
                raise _singular_error(self.system, a, f)

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
                raise _singular_error(self.system, s[bad], fc[bad]) from None
            with np.errstate(all="ignore"):
                x = back * z
            finite = np.isfinite(x).all(axis=1)
            if not finite.all():
                raise _nonfinite_error(self.system, float(fc[np.argmin(finite)]),
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
        (:func:`_pencil_roots`, scaled at the sweep's geometric centre); the flag says
        the sets are complete. Made once per selector and sweep, then kept.

        Empty arrays (and the flag False) if QZ fails: the seeds are then missing, not
        wrong; the solves themselves do not depend on this.
        """
        l = self.system.l if l is None else np.asarray(l, dtype=float)
        w = _TWO_PI * float(np.sqrt(f_lo * f_hi))
        key = (l.tobytes(), w)
        if key not in self._roots:
            with np.errstate(all="ignore"):
                try:
                    poles, zeros = _pencil_roots(self.G, self.C, self.system.b, l, w)
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
        return h, (1j * _TWO_PI) * dh_ds


def _is_singular(a: np.ndarray) -> bool:
    try:
        with np.errstate(all="ignore"):
            np.linalg.solve(a, np.ones(a.shape[0]))
    except np.linalg.LinAlgError:
        return True
    return False


class SparseEngine:
    """One SuperLU factorisation per frequency: memory ∝ non-zeros, for large systems."""

    method = "sparse"

    def __init__(self, system: System) -> None:
        self.system = system
        self.G = system.G.astype(complex).tocsc()
        self.C = system.C.astype(complex).tocsc()
        rows, cols = (abs(system.G) + abs(system.C)).nonzero()
        self._pattern = _Pattern(rows, cols, system.size)
        self._gv = np.asarray(system.G.tocsr()[rows, cols]).ravel()
        self._cv = np.asarray(system.C.tocsr()[rows, cols]).ravel()
        self._roots: dict = {}

    def _scaled(self, f: float) -> tuple[sp.csc_matrix, np.ndarray, np.ndarray]:
        """(diag(r)·(G + j2πfC)·diag(c), r, c), equilibrated as the dense engine does
        (:func:`_equilibrate`); NC303 if not finite."""
        w = _TWO_PI * f
        pat, gv, cv = self._pattern, self._gv, self._cv
        with np.errstate(over="ignore", invalid="ignore"):
            vals = gv + (1j * w) * cv
        if not np.isfinite(vals).all():
            raise _nonfinite_error(self.system, float(f))
        r, c = (x[0] for x in _equilibrate(pat, (np.abs(gv) + w * np.abs(cv))[None, :]))
        n = self.system.size
        a = sp.csc_matrix((vals * r[pat.rows] * c[pat.cols], (pat.rows, pat.cols)),
                          shape=(n, n))
        return a, r, c

    def _factor(self, f: float, scaled: tuple | None = None):
        """(SuperLU of the equilibrated G + j2πfC, r, c); NC303 if not finite, NC300 if
        SuperLU finds it singular."""
        a, r, c = scaled or self._scaled(f)
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("error", sp.SparseEfficiencyWarning)
                return spla.splu(a, permc_spec="COLAMD"), r, c
        except (RuntimeError, ValueError) as err:
            raise _sparse_singular_error(self.system, a, f, str(err)) from None

    def check_regular(self, f_hz: np.ndarray) -> None:
        """Raise SingularCircuitError if (G + sC) is numerically singular at any ``f_hz``
        (NC303 if it is not finite), judged on the equilibrated matrix S like the dense
        engine, from an estimate of its 1-norm condition κ₁ = ‖S‖₁‖S⁻¹‖₁.

        1/‖S⁻¹‖₁ is the distance, in the 1-norm, from S to the nearest singular matrix;
        S is refused when that is at most :data:`RCOND_TOL`·‖S‖₁ (κ₁ ≥ 1/RCOND_TOL), the
        dense test in the 1-norm. The estimate of ‖S⁻¹‖₁ is a lower bound, so nothing
        regular to working precision is refused.
        """
        n = self.system.size
        for f in np.atleast_1d(np.asarray(f_hz, dtype=float)):
            scaled = self._scaled(f)
            lu = self._factor(f, scaled)[0]
            with np.errstate(all="ignore"):
                inv = _inverse_one_norm(lu.solve, lambda v: lu.solve(v, trans="H"), n)
                kappa = float(abs(scaled[0]).sum(axis=0).max()) * inv
            if not kappa < 1.0 / RCOND_TOL:
                raise _sparse_singular_error(
                    self.system, scaled[0], f,
                    f"estimated reciprocal condition {1.0 / kappa:.1e}")

    def roots(self, f_lo: float, f_hi: float, l: np.ndarray | None = None
              ) -> tuple[np.ndarray, np.ndarray, bool]:
        """Poles and zeros (Hz, complex s/2π) of l·(G + sC)⁻¹b near the sweep: every
        lightly damped one of [f_lo, f_hi] (Q > 1/√2), with others met on the way, by
        :func:`sparse_poles` on the pencil and on the pencil bordered with b and l (whose
        eigenvalues are the zeros). Duplicates are merged and conjugates completed; the
        flag is False: heavily damped and far roots may be missing. Kept once made.
        """
        l = self.system.l if l is None else np.asarray(l, dtype=float)
        key = (l.tobytes(), float(f_lo), float(f_hi))
        if key not in self._roots:
            span = ("poles", float(f_lo), float(f_hi))
            if span not in self._roots:  # the same for every selector
                self._roots[span] = _merge_roots(sparse_poles(self.G, self.C, f_lo, f_hi))
            gb = sp.bmat([[self.G, sp.csc_matrix(self.system.b.astype(complex)[:, None])],
                          [sp.csc_matrix(l.astype(complex)[None, :]), None]], format="csc")
            cb = sp.bmat([[self.C, None], [None, sp.csc_matrix((1, 1), dtype=complex)]],
                         format="csc")
            zeros = _merge_roots(sparse_poles(gb, cb, f_lo, f_hi))
            self._roots[key] = (self._roots[span], zeros, False)
        return self._roots[key]

    def _finite(self, scale: np.ndarray, z: np.ndarray, f: float) -> np.ndarray:
        """``scale``·``z`` back in the circuit's units; NC303 if it overflowed."""
        with np.errstate(all="ignore"):
            x = scale * z
        if not np.isfinite(x).all():
            raise _nonfinite_error(self.system, float(f), solution=True)
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
        return h, ((1j * _TWO_PI) * dh if derivative else None)


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

        NC303 (:class:`SingularCircuitError`) if G + j2πfC is not finite on ``grid``."""
        system = direct.system
        _check_finite(system, grid)
        w = _TWO_PI * float(np.sqrt(grid.min() * grid.max()))
        poles, zeros = _pencil_roots(direct.G, direct.C, system.b, system.l, w)
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
        dh = h * dlog * (1j * _TWO_PI / self.w_scale) if derivative else None
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
        selector ``l``, those of the direct engine (:meth:`DenseEngine.roots`)."""
        if l is None or np.array_equal(l, self.direct.system.l):
            scale = self.w_scale / _TWO_PI
            return self.poles * scale, self.zeros * scale, True
        return self.direct.roots(f_lo, f_hi, l)


def _finite_eigs(a: np.ndarray, b: np.ndarray) -> np.ndarray | None:
    """Finite generalized eigenvalues λ of a·v = λ·b·v (QZ), or None on failure.

    LAPACK xGGEV returns a complex-conjugate pair of a real pencil as consecutive
    entries, the first with positive imaginary part; that order is kept, so
    :func:`_group_roots` can recognise the pairs.
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


def _pencil_roots(g: np.ndarray, c: np.ndarray, b: np.ndarray, l: np.ndarray, w: float
                  ) -> tuple[np.ndarray | None, np.ndarray | None]:
    """Finite poles and zeros of H(s) = l·(G + sC)⁻¹b, divided by ``w`` (rad/s), by QZ [2]_.

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
    poles = _finite_eigs(gs, -cs)
    n = g.shape[0]
    gb = np.zeros((n + 1, n + 1))
    cb = np.zeros((n + 1, n + 1))
    gb[:n, :n], cb[:n, :n] = gs, -cs
    gb[:n, n] = b * r
    gb[n, :n] = l * col
    return poles, _finite_eigs(gb, cb)


def _merge_roots(roots: np.ndarray, rtol: float = 1e-8) -> np.ndarray:
    """``roots`` with near-duplicates (within ``rtol`` of their size) merged and the
    conjugate of every complex one present (the roots of a real pencil come in pairs;
    :func:`sparse_poles` finds one of each pair, some twice)."""
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


def _check_indices(grid: np.ndarray) -> np.ndarray:
    """Up to 8 grid indices spread evenly, both ends included (points where a root sits
    near the axis are solved directly anyway, by the per-point error estimate)."""
    n = grid.size
    k = min(n, 8)
    return np.unique((np.arange(k) * (n - 1)) // max(k - 1, 1))


def make_engine(system: System, grid: np.ndarray) -> DenseEngine | SparseEngine | PoleZeroEngine:
    """Pick the engine for ``system`` and a sweep ``grid`` (Hz), checking regularity.

    NC303 first if G + j2πfC is not finite somewhere on the grid (an overflowing 1/R or
    2πf·C): no engine is built on a matrix that is not finite.
    """
    _check_finite(system, grid)
    probe = np.unique(np.array([grid.min(), np.sqrt(grid.min() * grid.max()), grid.max()]))
    if system.size > DENSE_MAX:
        sparse = SparseEngine(system)
        sparse.check_regular(probe)
        return sparse
    direct = DenseEngine(system)
    if grid.size >= PZ_MIN_POINTS:
        try:
            with np.errstate(all="ignore"):
                pz = PoleZeroEngine.build(direct, grid)
        except (np.linalg.LinAlgError, ValueError, FloatingPointError) as err:
            warnings.warn(f"pole-zero form unavailable ({err}); using direct solves",
                          NetcheckWarning, stacklevel=2)
            pz = None
        if pz is not None:
            return pz  # a regular pencil whose form matched direct solves
    direct.check_regular(probe)
    return direct


@dataclass(frozen=True, slots=True, eq=False)
class Response:
    """Frequency response of one output to one stimulus.

    Attributes
    ----------
    frequency_hz : ndarray
        Sweep frequencies, Hz (read-only).
    transfer : ndarray
        Complex V(node) − V(ref) per unit stimulus (V/V or V/A).
    dtransfer : ndarray
        Exact derivative dH/df, per Hz (from one adjoint solve, not differences; computed
        when first asked for).
    """

    frequency_hz: np.ndarray
    transfer: np.ndarray
    system: System
    engine: object = field(repr=False)
    _dtransfer: np.ndarray | None = field(default=None, repr=False)

    @property
    def dtransfer(self) -> np.ndarray:
        """Exact dH/df per Hz (one adjoint solve per point, made on first use)."""
        if self._dtransfer is None:
            _, dh = self.engine.transfer(self.frequency_hz, derivative=True)
            object.__setattr__(self, "_dtransfer", _readonly(dh))
        return self._dtransfer

    @property
    def method(self) -> str:
        """Engine used: ``pole-zero``, ``dense`` or ``sparse``."""
        return self.engine.method

    @property
    def magnitude_db(self) -> np.ndarray:
        """20·log10|H| in dB (−inf where H is exactly 0)."""
        with np.errstate(divide="ignore"):
            return _readonly(20.0 * np.log10(np.abs(self.transfer)))

    @property
    def phase_deg(self) -> np.ndarray:
        """Phase of H in degrees, unwrapped along frequency."""
        return _readonly(np.degrees(np.unwrap(np.angle(self.transfer))))

    @property
    def group_delay_s(self) -> np.ndarray:
        """Group delay −dφ/dω in seconds, from the exact derivative."""
        with np.errstate(all="ignore"):
            return _readonly(-np.imag(self.dtransfer / self.transfer) / _TWO_PI)

    def roots_hz(self, l: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray, bool]:
        """Poles and zeros of the response (or of l·x for another selector ``l``) as
        complex frequencies s/2π (Hz), and whether the sets are complete.

        On the dense paths (dense and pole–zero engines) every finite pole and zero,
        from QZ of the MNA pencil and of the pencil bordered with b and l [2]_,
        whatever the number of sweep points (complete: True). On the sparse path every
        lightly damped pole and zero (Q > 1/√2) of the sweep, found by adaptive
        shift-invert Arnoldi (:func:`sparse_poles`), with others met on the way
        (complete: False). They seed the measurements: narrow features and every
        extreme between grid points are found from them (:mod:`netcheck.measure`).
        """
        f = self.frequency_hz
        eng = self.engine
        if not hasattr(eng, "roots"):
            empty = np.zeros(0, dtype=complex)
            return _readonly(empty), _readonly(empty.copy()), False
        poles, zeros, complete = eng.roots(float(f.min()), float(f.max()), l)
        return _readonly(np.array(poles)), _readonly(np.array(zeros)), complete

    @property
    def poles_hz(self) -> np.ndarray:
        """Poles as complex frequencies s/2π (Hz) (see :meth:`roots_hz`)."""
        return self.roots_hz()[0]

    @property
    def zeros_hz(self) -> np.ndarray:
        """Zeros as complex frequencies s/2π (Hz) (see :meth:`roots_hz`)."""
        return self.roots_hz()[1]

    def at(self, f_hz: object, derivative: bool = True
           ) -> tuple[np.ndarray, np.ndarray | None]:
        """H and dH/df (None unless ``derivative``) at other frequencies, same engine."""
        return self.engine.transfer(validate_frequencies(f_hz), derivative=derivative)

    def solution(self, f_hz: object | None = None) -> np.ndarray:
        """Every node voltage and branch current (F × n, columns ``system.unknowns``)."""
        f = self.frequency_hz if f_hz is None else validate_frequencies(f_hz)
        return _readonly(self.engine.solution(f))

    def direct(self) -> DenseEngine | SparseEngine:
        """A direct-solve engine on the same system (for other outputs and checks)."""
        eng = self.engine
        if isinstance(eng, PoleZeroEngine):
            return eng.direct
        return eng


def solve(system: System, freqs: object) -> Response:
    """Solve ``system`` at ``freqs`` (Hz) and return the :class:`Response`.

    Examples
    --------
    >>> from netcheck import read_netlist
    >>> ckt = read_netlist("rc\\nV1 in 0 AC 1\\nR1 in out 1k\\nC1 out 0 159.15494n\\n")
    >>> r = ckt.ac("V1", "out", freqs=[1000.0])
    >>> round(float(r.magnitude_db[0]), 4)   # RC low-pass at its corner: -3.0103 dB
    -3.0103
    """
    f = validate_frequencies(freqs)
    engine = make_engine(system, f)
    h, _ = engine.transfer(f, derivative=False)
    return Response(_readonly(f), _readonly(h), system, engine)
