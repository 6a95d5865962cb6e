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
"""

from __future__ import annotations

import logging
import warnings
from dataclasses import dataclass, field
from typing import Protocol

import numpy as np
import scipy.linalg as sla
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from ._sparse_poles import sparse_poles
from .assemble import System
from .exceptions import NetcheckWarning, SingularCircuitError
from .source import printable

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


def _singular_error(system: System, a: np.ndarray, f_hz: float) -> SingularCircuitError:
    """NC300 for a dense ``a`` = G + j2πfC: its null vector names the unknowns involved."""
    _, sv, vh = np.linalg.svd(a)
    rcond = sv[-1] / sv[0] if sv[0] > 0 else 0.0
    return _singular(system, f_hz, np.abs(vh[-1]), f"reciprocal condition {rcond:.1e}")


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


def _singular(system: System, f_hz: float, weights: np.ndarray, detail: str
              ) -> SingularCircuitError:
    """The error naming the unknowns with the largest ``weights`` (a null vector) and
    the elements touching them, placed at the element most involved."""
    order = [int(i) for i in np.argsort(weights)[::-1][:4] if weights[i] > 1e-3]
    unknowns = ", ".join(printable(system.unknowns[i], 60) for i in order) or "not known"
    touched = _elements_involved(system, weights)
    span = touched[0].span if touched else None
    parts = ", ".join(f"{printable(e.name, 60)} (" + ("line " if e.span.path == span.path else
                      f"{printable(e.span.path, 100)}:") + f"{e.span.line})" for e in touched)
    elements = f"; the elements touching them most are {parts}" if parts else ""
    sources = system.circuit.sources
    path = sources[0].path if span is None and sources else None
    return SingularCircuitError(
        f"the circuit equations are singular at {f_hz:.6g} Hz ({detail}); the unknowns most "
        f"involved are {unknowns}{elements}. Look for parts that leave these nodes "
        "undetermined (open loops, ideal sources in conflict).", span, path=path)


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
        self.chunk = max(1, CHUNK_BYTES // (16 * 3 * max(self.n, 1) ** 2))

    def check_regular(self, f_hz: np.ndarray) -> None:
        """Raise SingularCircuitError if (G + sC) is numerically singular at any ``f_hz``."""
        for f in f_hz:
            a = self.G + (1j * _TWO_PI * f) * self.C
            scale = np.abs(a).max(axis=1)
            scale[scale == 0] = 1.0
            a = a / scale[:, None]
            sv = np.linalg.svd(a, compute_uv=False)
            if sv[0] == 0 or sv[-1] / sv[0] < 1e3 * self.n * np.finfo(float).eps:
                raise _singular_error(self.system, a, f)

    def _solve(self, f: np.ndarray, rhs: np.ndarray, transpose: bool = False) -> np.ndarray:
        out = np.empty((f.size, self.n), dtype=complex)
        for i in range(0, f.size, self.chunk):
            s = 1j * _TWO_PI * f[i:i + self.chunk]
            a = self.G[None, :, :] + s[:, None, None] * self.C[None, :, :]
            if transpose:
                a = np.swapaxes(a, -1, -2)
            r = np.broadcast_to(rhs, (s.size, self.n))[..., None]
            try:
                out[i:i + self.chunk] = np.linalg.solve(a, r)[..., 0]
            except np.linalg.LinAlgError:
                bad = next(k for k in range(s.size) if _is_singular(a[k]))
                raise _singular_error(self.system, a[bad], f[i + bad]) from None
        return out

    def solution(self, f: np.ndarray) -> np.ndarray:
        """Full solution x (F × n): every node voltage and branch current per unit stimulus."""
        return self._solve(f, self.system.b)

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

    def _factor(self, f: float):
        a = (self.G + (1j * _TWO_PI * f) * self.C).tocsc()
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("error", sp.SparseEfficiencyWarning)
                return spla.splu(a, permc_spec="COLAMD")
        except RuntimeError as err:
            raise _sparse_singular_error(self.system, a, f, str(err)) from None

    def solution(self, f: np.ndarray) -> np.ndarray:
        """Full solution x (F × n)."""
        out = np.empty((f.size, self.system.size), dtype=complex)
        b = self.system.b.astype(complex)
        # One factorisation per frequency is the work itself; this loop only calls SuperLU.
        for i, fi in enumerate(f):
            out[i] = self._factor(fi).solve(b)
        return out

    def transfer(self, f: np.ndarray, l: np.ndarray | None = None, derivative: bool = True
                 ) -> tuple[np.ndarray, np.ndarray | None]:
        """y = l·x and dy/df from one factorisation per frequency (adjoint solve)."""
        l = (self.system.l if l is None else l).astype(complex)
        b = self.system.b.astype(complex)
        h = np.empty(f.size, dtype=complex)
        dh = np.empty(f.size, dtype=complex)
        for i, fi in enumerate(f):
            lu = self._factor(fi)
            x = lu.solve(b)
            h[i] = l @ x
            if derivative:
                y = lu.solve(l, trans="T")
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
        """Build from the system and verify at check points; None when not trustworthy."""
        system = direct.system
        w = _TWO_PI * float(np.sqrt(grid.min() * grid.max()))
        g, c = direct.G, direct.C * w
        mag = np.abs(g) + np.abs(c)
        r = mag.max(axis=1)
        r[r == 0] = 1.0
        r = 1.0 / r
        col = (mag * r[:, None]).max(axis=0)
        col[col == 0] = 1.0
        col = 1.0 / col
        gs, cs = g * r[:, None] * col[None, :], c * r[:, None] * col[None, :]
        poles = _finite_eigs(gs, -cs)
        n = system.size
        gb = np.zeros((n + 1, n + 1))
        cb = np.zeros((n + 1, n + 1))
        gb[:n, :n], cb[:n, :n] = gs, -cs
        gb[:n, n] = system.b * r
        gb[n, :n] = system.l * col
        zeros = _finite_eigs(gb, cb)
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


def _check_indices(grid: np.ndarray) -> np.ndarray:
    """Up to 8 grid indices spread evenly, both ends included (points where a root sits
    near the axis are solved directly anyway, by the per-point error estimate)."""
    n = grid.size
    k = min(n, 8)
    return np.unique((np.arange(k) * (n - 1)) // max(k - 1, 1))


def make_engine(system: System, grid: np.ndarray) -> DenseEngine | SparseEngine | PoleZeroEngine:
    """Pick the engine for ``system`` and a sweep ``grid`` (Hz), checking regularity."""
    if system.size > DENSE_MAX:
        return SparseEngine(system)
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
    probe = np.unique(np.array([grid.min(), np.sqrt(grid.min() * grid.max()), grid.max()]))
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

    @property
    def poles_hz(self) -> np.ndarray:
        """Poles as complex frequencies s/2π (Hz): all of them from the pencil on the
        dense paths; on the sparse path every lightly damped one (Q > 1/√2) of the
        sweep, found by adaptive shift-invert Arnoldi (:func:`sparse_poles`), with others
        met on the way — what the seeds need."""
        if isinstance(self.engine, PoleZeroEngine):
            return _readonly(self.engine.poles * self.engine.w_scale / _TWO_PI)
        if isinstance(self.engine, DenseEngine):
            g, c = self.engine.G, self.engine.C
            w = _TWO_PI * float(np.sqrt(self.frequency_hz.min() * self.frequency_hz.max()))
            p = _finite_eigs(g, -c * w)
            if p is not None:
                return _readonly(p * w / _TWO_PI)
        if isinstance(self.engine, SparseEngine):
            return _readonly(sparse_poles(self.engine.G, self.engine.C,
                                          float(self.frequency_hz.min()),
                                          float(self.frequency_hz.max())))
        return _readonly(np.zeros(0, dtype=complex))

    @property
    def zeros_hz(self) -> np.ndarray:
        """Zeros as complex frequencies s/2π (Hz), when the pole–zero engine was used."""
        if isinstance(self.engine, PoleZeroEngine):
            return _readonly(self.engine.zeros * self.engine.w_scale / _TWO_PI)
        return _readonly(np.zeros(0, dtype=complex))

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
