"""Many parameter samples of one circuit at once: batched MNA and pole–zero forms.

Every array has the sample axis first, then frequency. Each sample's response is
put in pole–zero form from the eigenvalues of the shift-inverted pencil
M = (G + s₀C)⁻¹C (eigenvalue μ ↔ pole s₀ − 1/μ), which numpy evaluates for all
samples in one stacked call; zeros come from the same transform of the pencil
bordered with b and l. Each sample's form is checked against direct solves at a
few frequencies, and a sample that disagrees is solved directly instead; such
samples get seeds by following the nominal poles and zeros
(:meth:`SampleSet.direct_seeds`, :mod:`netcheck.mna.sample_roots`). Systems too large
for dense arrays take the per-sample sparse path (:mod:`netcheck.mna.sparse_batch`).

Gain comes from the form in real arithmetic, |jω − r|² = (ω − Im r)² + (Re r)² per
root, without complex temporaries, in row chunks that stay in cache; the form also
gives the exact first and second derivatives of the gain in ln f. The complex
response is built only when a phase is asked for. The measurements over samples are
:class:`BatchProbe` (in :mod:`netcheck.analyses.sample_probe`).

References
----------
.. [1] C.-W. Ho, A. E. Ruehli and P. A. Brennan, "The modified nodal approach to
   network analysis", IEEE Trans. Circuits and Systems 22(6), 1975.
.. [2] Y. Saad, *Numerical Methods for Large Eigenvalue Problems*, 2nd ed., SIAM, 2011
   (inverse iteration and Rayleigh-quotient iteration).
"""

from __future__ import annotations

import math
from typing import Mapping

import numpy as np

from .assemble import System, assemble_batch, refuse_delays
from .bias_samples import sampled_small_signal
from .dense import DenseEngine
from .polezero import PoleZeroEngine
from .sample_roots import followed_roots
from .solve import DENSE_MAX
from .sparse_batch import SparseBatch

__all__ = ["SampleSet", "SparseBatch"]

_TWO_PI = 2.0 * math.pi
_CHECK_TOL = 1e-7
_DB = 10.0 / math.log(10.0)  # dB per neper of |H|²
_BLOCK = 1 << 16  # elements per row chunk of grid work: a few such arrays stay in cache
_GROUP = 8  # root factors per product block (numerator and denominator alternate)
_EPS = float(np.finfo(float).eps)
#: systems with more unknowns take the per-sample sparse path (see :class:`SparseBatch`),
#: as the nominal solve does
SPARSE_ABOVE = DENSE_MAX

Rows = slice | np.ndarray  # rows of the per-sample root arrays


class SampleSet:
    """The responses of S samples of a circuit's part values.

    Parameters
    ----------
    system : System
        The nominal MNA system (its stimulus and output are kept).
    values : mapping of element name → (S,) array
        Sampled values; elements not named keep their nominal value.
    grid : ndarray
        Sweep frequencies, Hz.
    memory_bytes : int
        Budget for temporary arrays; work is done in chunks of samples within it.
    """

    def __init__(self, system: System, values: Mapping[str, np.ndarray], samples: int,
                 grid: np.ndarray, memory_bytes: int = 2**30) -> None:
        refuse_delays(system, "sampled part values (Monte Carlo, worst case)")
        self.system, self.S, self.grid = system, samples, np.asarray(grid, float)
        #: the sampled part values (name → (S,)), for measurements that solve a sample
        #: as a circuit of its own
        self.values = values
        self.n = system.size
        self.b = np.asarray(system.b, float)
        self.l = np.asarray(system.l, float)
        self.w_scale = _TWO_PI * math.sqrt(self.grid[0] * self.grid[-1])
        self.memory_bytes = memory_bytes
        #: a circuit with devices: every sample's operating point, small-signal tables
        #: and device regions (:mod:`netcheck.mna.bias_samples`); None without devices
        self.bias = sampled_small_signal(system.circuit, values, samples) if values else None
        # large systems: one sparse pattern, every sample solved directly by SuperLU
        self.sparse = (SparseBatch(system, values, samples, self.bias)
                       if self.n > SPARSE_ABOVE else None)
        # counts of finite poles and zeros from the nominal QZ
        if self.sparse is None:
            self.G, self.C = assemble_batch(system, values, samples, bias=self.bias)
            self.counts = _nominal_form(system, self.grid)[0]
        else:
            self.G = self.C = self.counts = None
        self._build_forms()
        # real views of the roots for |jω − r|² = (ω − Im r)² + (Re r)²
        self._zi, self._zr2 = self.zeros.imag.copy(), self.zeros.real ** 2
        self._pi, self._pr2 = self.poles.imag.copy(), self.poles.real ** 2
        with np.errstate(all="ignore"):
            self._gain_db = 20.0 * np.log10(np.abs(self.gain))
            g2 = np.abs(self.gain) ** 2
        # |gain|² enters the product where it is comfortably representable, else in dB
        fits = np.isfinite(g2) & (g2 > 1e-150) & (g2 < 1e150)
        self._g2 = np.where(fits, g2, 1.0)
        self._gdb_rest = np.where(fits, 0.0, self._gain_db)
        self._g_rest = not fits.all()

    def solve_directly(self, rows: np.ndarray) -> None:
        """Solve the samples ``rows`` directly from now on (their form is not used).

        Sets ``direct_rows`` (sorted), ``form_rows`` (the others) and the mask
        ``fallback``; :meth:`_build_forms` calls it for the samples whose form failed.
        """
        self.fallback = np.zeros(self.S, bool)
        self.fallback[np.asarray(rows, int)] = True
        self.direct_rows = np.flatnonzero(self.fallback)
        self.form_rows = np.flatnonzero(~self.fallback)
        self._seed_cache: tuple[np.ndarray, np.ndarray] | None = None

    # -- direct solves ------------------------------------------------------------
    def rows_per_chunk(self, per_sample_bytes: int) -> int:
        """Samples (or rows) per chunk of work that needs ``per_sample_bytes`` each."""
        # a quarter of the budget per temporary: several live at once
        return max(1, int(self.memory_bytes // 4 // max(per_sample_bytes, 1)))

    def direct(self, f: np.ndarray, rows: np.ndarray | None = None,
               l: np.ndarray | None = None) -> np.ndarray:
        """y = l·x by direct solves; ``f`` is (R,) or (R, K) for the samples ``rows``."""
        f = np.asarray(f, float)
        flat = f.reshape(f.shape[0], -1)
        l = self.l if l is None else l
        if self.sparse is not None:
            idx = np.arange(flat.shape[0]) if rows is None else np.asarray(rows)
            return np.stack([self.sparse.solutions(int(r), flat[i]) @ l
                             for i, r in enumerate(idx)]).reshape(f.shape) if idx.size else \
                np.zeros(f.shape, dtype=complex)
        out = np.empty(flat.shape, dtype=complex)
        k, n = flat.shape[1], self.n
        step = self.rows_per_chunk(k * n * n * 16 * 2)
        for i in range(0, flat.shape[0], step):
            j = min(flat.shape[0], i + step)
            r = slice(i, j) if rows is None else rows[i:j]
            # A = G + jωC built in place: real part G, imaginary part ωC
            a = np.empty((j - i, k, n, n), dtype=complex)
            a.real[...] = self.G[r][:, None]
            np.multiply((_TWO_PI * flat[i:j])[..., None, None], self.C[r][:, None], out=a.imag)
            x = np.linalg.solve(a, np.broadcast_to(self.b, a.shape[:-1])[..., None])[..., 0]
            out[i:j] = x @ l
        return out.reshape(f.shape)

    # -- pole-zero forms ----------------------------------------------------------
    def _roots(self, g: np.ndarray, c: np.ndarray, count: int) -> np.ndarray:
        """The ``count`` finite roots s (normalised) of det(g + s c) = 0, per sample.

        Eigenvalues μ of (g + s₀c)⁻¹c (real s₀ = 1) map to roots s₀ − 1/μ; infinite
        roots are μ = 0.
        Infinite roots of higher index come out of a standard eigensolver as small but
        non-zero μ (of order ε^(1/k)), so a threshold cannot tell them from finite
        roots; the number of finite roots is taken from the nominal circuit's QZ
        decomposition instead, and the ``count`` eigenvalues of largest |μ| are kept.

        A column j of c that is zero in every sample (a node without capacitance, a
        source current) is a zero column of M as well, so M is block lower triangular
        after a permutation and its other eigenvalues are exactly those of M[J, J] over
        the remaining columns J: only that smaller matrix is formed and decomposed.
        """
        if count == 0:
            return np.zeros((g.shape[0], 0), dtype=complex)
        # a real shift (right half-plane, away from the poles of a stable circuit) keeps
        # the eigenproblem real, several times cheaper than a complex one
        s0 = 1.0
        k = g + s0 * c
        cols = np.flatnonzero(np.any(c != 0.0, axis=(0, 1)))
        if cols.size < count:
            cols = np.arange(c.shape[-1])
        try:
            m = np.linalg.solve(k, c[:, :, cols])[:, cols, :]
            mu = np.linalg.eigvals(m)
        except np.linalg.LinAlgError:
            return np.full((g.shape[0], count), np.nan, dtype=complex)
        if mu.shape[1] == count:
            kept = mu
        else:
            order = np.argsort(-np.abs(mu), axis=1)[:, :count]
            kept = np.take_along_axis(mu, order, axis=1)
        with np.errstate(all="ignore"):
            return s0 - 1.0 / kept

    def _build_forms(self) -> None:
        S, n = self.S, self.n
        if self.counts is None:  # the nominal form is not trustworthy: solve directly
            self.poles = np.zeros((S, 0), dtype=complex)
            self.zeros = np.zeros((S, 0), dtype=complex)
            self.gain = np.ones(S, dtype=complex)
            self.solve_directly(np.arange(S))
            return
        n_poles, n_zeros = self.counts
        cn = self.C * self.w_scale
        poles = np.empty((S, n_poles), dtype=complex)
        zeros = np.empty((S, n_zeros), dtype=complex)
        step = self.rows_per_chunk((n + 1) ** 2 * 16 * 6)
        gb = np.zeros((min(step, S), n + 1, n + 1))
        cb = np.zeros_like(gb)
        for i in range(0, S, step):
            j = min(S, i + step)
            poles[i:j] = self._roots(self.G[i:j], cn[i:j], n_poles)
            if n_zeros == 0:
                continue
            m = j - i
            gb[:m], cb[:m] = 0.0, 0.0
            gb[:m, :n, :n], cb[:m, :n, :n] = self.G[i:j], cn[i:j]
            gb[:m, :n, n], gb[:m, n, :n] = self.b, self.l
            zeros[i:j] = self._roots(gb[:m], cb[:m], n_zeros)
        self.poles, self.zeros = poles, zeros
        self.gain = np.ones(S, dtype=complex)
        # both ends and the middle of the sweep: the form's gain comes from the largest
        # of the three, and every one must agree with its direct solve
        checks = self.grid[np.unique(np.linspace(0, self.grid.size - 1, 3).astype(int))]
        ref = np.broadcast_to(checks, (S, checks.size))
        h_direct = self.direct(ref)
        shape = self._shape(ref)
        big = np.argmax(np.abs(h_direct), axis=1)
        pick = np.arange(S)
        with np.errstate(all="ignore"):
            self.gain = h_direct[pick, big] / shape[pick, big]
            err = np.abs(self.gain[:, None] * shape - h_direct) / np.abs(h_direct)
        ok = np.all(np.isfinite(err) & (err < _CHECK_TOL), axis=1)
        ok &= np.isfinite(self.poles).all(axis=1) & np.isfinite(self.zeros).all(axis=1)
        self.solve_directly(np.flatnonzero(~ok))

    def _shape(self, f: np.ndarray) -> np.ndarray:
        """Π(s − z)/Π(s − p) per sample at normalised s = j·2πf/w (f shape (S, K))."""
        return _shape_rows(self, f, slice(None))

    def transfer(self, f: np.ndarray, rows: np.ndarray | None = None) -> np.ndarray:
        """H per sample at per-sample frequencies ``f`` (shape (R,) or (R, K)) for the
        samples ``rows`` (default: all S)."""
        f = np.asarray(f, float)
        sel, idx = _select(self.S, rows)
        flat = f.reshape(idx.size, -1)
        h = self.gain[sel, None] * _shape_rows(self, flat, sel)
        fall = np.flatnonzero(self.fallback[idx])
        if fall.size:
            h[fall] = self.direct(flat[fall], idx[fall])
        return h.reshape(f.shape)

    def grid_transfer(self) -> np.ndarray:
        """H on the sweep grid, shape (S, F)."""
        out = np.empty((self.S, self.grid.size), dtype=complex)
        step = max(1, _BLOCK // 2 // self.grid.size)
        for i in range(0, self.S, step):
            j = min(self.S, i + step)
            out[i:j] = _shape_rows(self, self.grid, slice(i, j))
            out[i:j] *= self.gain[i:j, None]
        if self.direct_rows.size:
            out[self.direct_rows] = self.direct(
                np.broadcast_to(self.grid, (self.direct_rows.size, self.grid.size)),
                self.direct_rows)
        return out

    def grid_gain_db(self) -> np.ndarray:
        """Gain 10·log10|H|² (dB) on the sweep grid, shape (S, F), in real arithmetic."""
        F = self.grid.size
        out = np.empty((self.S, F))
        if self.form_rows.size:
            w = _TWO_PI * self.grid / self.w_scale
            step = max(1, _BLOCK // F)
            for i in range(0, self.S, step):
                j = min(self.S, i + step)
                self._form_db(w, slice(i, j), out[i:j])
        if self.direct_rows.size:
            out[self.direct_rows] = _db(self.direct(
                np.broadcast_to(self.grid, (self.direct_rows.size, F)), self.direct_rows))
        return out

    def gain_db(self, f: np.ndarray, rows: np.ndarray | None = None) -> np.ndarray:
        """Gain (dB) per sample at per-sample frequencies ``f`` ((R,) or (R, K))."""
        f = np.asarray(f, float)
        sel, idx = _select(self.S, rows)
        flat = f.reshape(idx.size, -1)
        out = np.empty(flat.shape)
        self._form_db(_TWO_PI * flat / self.w_scale, sel, out)
        fall = np.flatnonzero(self.fallback[idx])
        if fall.size:
            out[fall] = _db(self.direct(flat[fall], idx[fall]))
        return out.reshape(f.shape)

    def _form_db(self, w: np.ndarray, rows: Rows, out: np.ndarray) -> None:
        """Write 10·log10|H|² of the form at normalised ω (w: (K,) shared or (R, K)) to out.

        One logarithm per point: |gain|² times the ratio of the products of the factors
        |jω − r|² (so a gain near 0 dB keeps its relative accuracy), formed in blocks of
        ``_GROUP`` roots with numerator and denominator blocks alternating; a row that
        still over- or underflows is redone with one logarithm per factor.
        """
        num = _factor_blocks(w, self._zi[rows], self._zr2[rows], out.shape)
        den = _factor_blocks(w, self._pi[rows], self._pr2[rows], out.shape)
        g2 = self._g2[rows][:, None]
        with np.errstate(all="ignore"):
            if len(num) == 1 and len(den) == 1:
                np.divide(num[0], den[0], out=out)
                out *= g2
            elif not num and len(den) == 1:
                np.divide(g2, den[0], out=out)
            elif len(num) == 1 and not den:
                np.multiply(num[0], g2, out=out)
            else:  # many roots: numerator and denominator blocks alternate
                out[...] = g2
                for k in range(max(len(num), len(den))):
                    if k < len(num):
                        out *= num[k]
                    if k < len(den):
                        out /= den[k]
            np.log10(out, out=out)
            out *= 10.0
            if self._g_rest:
                out += self._gdb_rest[rows][:, None]
            bad = np.flatnonzero(~np.isfinite(out).all(axis=1))
            if bad.size:  # rare: one logarithm per factor
                wb = w if w.ndim == 1 else w[bad]
                acc = np.broadcast_to(self._gain_db[rows][bad, None], out[bad].shape).copy()
                for im, r2, sgn in ((self._zi[rows], self._zr2[rows], 10.0),
                                    (self._pi[rows], self._pr2[rows], -10.0)):
                    for k in range(im.shape[1]):
                        acc += sgn * np.log10((wb - im[bad, k, None]) ** 2 + r2[bad, k, None])
                out[bad] = acc

    def gain_slopes(self, f: np.ndarray, rows: np.ndarray, second: bool = True
                    ) -> tuple[np.ndarray, np.ndarray, np.ndarray | None, np.ndarray]:
        """Gain (dB), its first two derivatives with respect to ln f, and a bound on the
        rounding error of the first, from the form.

        For the samples ``rows`` (all with a trusted form) at frequencies ``f`` (R,):
        with q = (ω − Im r)² + (Re r)² per root, d ln q/dω = 2(ω − Im r)/q and
        d² ln q/dω² = 2((Re r)² − (ω − Im r)²)/q²; zeros count +, poles −, and
        d/d ln f = ω d/dω. The bound is a few ε times the sum of the absolute terms and
        of their sensitivity to the rounding of ω − Im r (large next to a sharp peak).
        """
        w = _TWO_PI * f / self.w_scale
        v, t1, s1 = np.zeros(f.shape), np.zeros(f.shape), np.zeros(f.shape)
        t2 = np.zeros(f.shape) if second else None
        with np.errstate(all="ignore"):
            for im, r2, sgn in ((self._zi, self._zr2, 1.0), (self._pi, self._pr2, -1.0)):
                if im.shape[1] == 0:
                    continue
                b = im[rows]
                d = w[:, None] - b
                a2 = r2[rows]
                q = d * d + a2
                v += sgn * np.log(q).sum(axis=1)
                u = 2.0 * d / q
                t1 += sgn * u.sum(axis=1)
                # |u| and its sensitivity to the rounding of d = ω − Im r
                s1 += (np.abs(u) + 2.0 * (w[:, None] + np.abs(b)) / q).sum(axis=1)
                if second:
                    t2 += sgn * (2.0 * (a2 - d * d) / (q * q)).sum(axis=1)
            g = _DB * v + self._gain_db[rows]
            d1 = _DB * w * t1
            d2 = _DB * w * (t1 + w * t2) if second else None
            err = (8 + self._pi.shape[1] + self._zi.shape[1]) * _EPS * _DB * w * s1
        return g, d1, d2, err

    def group_delay(self, f: np.ndarray, h: np.ndarray | None = None,
                    rows: np.ndarray | None = None) -> np.ndarray:
        """Group delay −dφ/dω (s) per sample, by a symmetric complex-phase difference.

        The relative step is 1e-6 of the frequency; the error is O(step²) relative.
        """
        f = np.asarray(f, float)
        d = f * 1e-6
        hp, hm = self.transfer(f + d, rows), self.transfer(f - d, rows)
        with np.errstate(all="ignore"):
            return -np.angle(hp / hm) / (_TWO_PI * 2 * d)

    # -- pole seeds of directly solved samples -------------------------------------
    def direct_seeds(self) -> np.ndarray:
        """Lightly damped poles and zeros (S, P + Z) of the samples in ``direct_rows``,
        normalised like ``poles``, NaN in the other rows: their seeds, as a form's roots
        are.

        The nominal circuit's least damped poles and zeros (Im s > 0, |Re s|/|Im s| < 0.3,
        |Im s|/2π within a factor 1.5 of the sweep; at most
        :data:`~netcheck.mna.sample_roots.SEED_POLES_MAX` of each) are followed into each
        direct sample by Rayleigh-quotient iteration [2]_ on the shift-inverted pencil,
        for the zeros the pencil bordered with b and l (whose finite eigenvalues are the
        zeros of l·(G + sC)⁻¹b): from the nominal root s and eigenvector x,
        w = (A + sB)⁻¹Bx, μ = xᴴw/xᴴx, s ← s − 1/μ, x ← w/‖w‖, at most
        :data:`~netcheck.mna.sample_roots.SEED_STEPS` times, until s moves by less than
        1e-4 of |Re s| (quadratic convergence: typically three steps); see
        :mod:`netcheck.mna.sample_roots`. A notch moves with its parts, and is found in
        each sample from its own zero.

        Cost, on first use: the nominal roots (the nominal engine's, kept for the next
        set of the same system), 2 factorisations per root for its eigenvector, and at
        most R·SEED_STEPS factorisations per root for R direct samples.
        """
        return np.concatenate(self.direct_roots(), axis=1)

    def direct_roots(self) -> tuple[np.ndarray, np.ndarray]:
        """The followed poles and zeros of :meth:`direct_seeds`, apart (cached)."""
        if self._seed_cache is None:
            self._seed_cache = followed_roots(self)
        return self._seed_cache


def _select(S: int, rows: np.ndarray | None) -> tuple[Rows, np.ndarray]:
    """An indexer for the root arrays (a slice when all rows) and the row numbers."""
    if rows is None:
        return slice(None), np.arange(S)
    rows = np.asarray(rows)
    return rows, rows


def _factor_blocks(w: np.ndarray, im: np.ndarray, r2: np.ndarray, shape: tuple[int, ...]
                   ) -> list[np.ndarray]:
    """Products Π (w − Im r)² + (Re r)² over groups of ``_GROUP`` roots, each ``shape``."""
    blocks = []
    tmp = np.empty(shape) if im.shape[1] > 1 else None
    for k0 in range(0, im.shape[1], _GROUP):
        acc = np.empty(shape)
        for k in range(k0, min(k0 + _GROUP, im.shape[1])):
            t = acc if k == k0 else tmp
            np.subtract(w, im[:, k, None], out=t)
            np.multiply(t, t, out=t)
            t += r2[:, k, None]
            if t is not acc:
                acc *= t
        blocks.append(acc)
    return blocks


def _shape_rows(ss: SampleSet, f: np.ndarray, rows: Rows) -> np.ndarray:
    s = 1j * _TWO_PI * f / ss.w_scale
    zeros, poles = ss.zeros[rows], ss.poles[rows]
    shape = (poles.shape[0], s.shape[-1])
    num = np.ones(shape, dtype=complex)
    den = np.ones(shape, dtype=complex)
    tmp = np.empty(shape, dtype=complex)
    with np.errstate(all="ignore"):
        for r in zeros.T:
            num *= np.subtract(s, r[:, None], out=tmp)
        for r in poles.T:
            den *= np.subtract(s, r[:, None], out=tmp)
        num /= den
    return num


def _nominal_form(system: System, grid: np.ndarray
                  ) -> tuple[tuple[int, int] | None, np.ndarray | None]:
    """Numbers of finite poles and zeros of the nominal circuit (QZ) and its poles
    (rad/s); (None, None) when its pole–zero form is not trusted."""
    try:
        with np.errstate(all="ignore"):
            eng = PoleZeroEngine.build(DenseEngine(system), grid)
    except (np.linalg.LinAlgError, ValueError):
        eng = None
    if eng is None:
        return None, None
    return (int(eng.poles.size), int(eng.zeros.size)), eng.poles * eng.w_scale


def _db(h: np.ndarray) -> np.ndarray:
    with np.errstate(divide="ignore"):
        return 10.0 * np.log10(h.real * h.real + h.imag * h.imag)

