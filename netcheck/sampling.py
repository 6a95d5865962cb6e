"""Many parameter samples of one circuit at once: batched MNA, pole–zero forms, measurements.

Every array has the sample axis first, then frequency. Each sample's response is
put in pole–zero form from the eigenvalues of the shift-inverted pencil
M = (G + s₀C)⁻¹C (eigenvalue μ ↔ pole s₀ − 1/μ), which numpy evaluates for all
samples in one stacked call; zeros come from the same transform of the pencil
bordered with b and l. Each sample's form is checked against direct solves at a
few frequencies, and a sample that disagrees is solved directly instead.
Measurements refine the grid by golden-section search and bisection, vectorised
over samples.

References
----------
.. [1] C.-W. Ho, A. E. Ruehli and P. A. Brennan, "The modified nodal approach to
   network analysis", IEEE Trans. Circuits and Systems 22(6), 1975.
.. [2] J. Kiefer, "Sequential minimax search for a maximum", Proc. AMS 4, 1953
   (golden-section search).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Mapping

import numpy as np

from .assemble import System, assemble_batch
from .measure import HALF_POWER_DB

__all__ = ["SampleSet", "BatchProbe", "BatchExtremum"]

_TWO_PI = 2.0 * math.pi
_CHECK_TOL = 1e-7
_GOLDEN = (math.sqrt(5.0) - 1.0) / 2.0


@dataclass(frozen=True, slots=True)
class BatchExtremum:
    """Per-sample extremum: frequency (Hz) and value, each shape (S,)."""

    frequency_hz: np.ndarray
    value: np.ndarray


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
        self.system, self.S, self.grid = system, samples, np.asarray(grid, float)
        self.n = system.size
        self.G, self.C = assemble_batch(system, values, samples)
        self.b = np.asarray(system.b, float)
        self.l = np.asarray(system.l, float)
        self.w_scale = _TWO_PI * math.sqrt(self.grid[0] * self.grid[-1])
        self.memory_bytes = memory_bytes
        self.counts = _root_counts(system, self.grid)
        self._build_forms()

    # -- direct solves ------------------------------------------------------------
    def _chunk(self, per_sample_bytes: int) -> int:
        # a quarter of the budget per temporary: several live at once
        return max(1, int(self.memory_bytes // 4 // max(per_sample_bytes, 1)))

    def direct(self, f: np.ndarray, rows: np.ndarray | None = None,
               l: np.ndarray | None = None) -> np.ndarray:
        """y = l·x by direct solves; ``f`` is (R,) or (R, K) for the samples ``rows``."""
        rows = np.arange(self.S) if rows is None else rows
        f = np.asarray(f, float)
        flat = f.reshape(f.shape[0], -1)
        l = self.l if l is None else l
        out = np.empty(flat.shape, dtype=complex)
        k = flat.shape[1]
        step = self._chunk(k * self.n * self.n * 16 * 3)
        for i in range(0, rows.size, step):
            r = rows[i:i + step]
            s = 1j * _TWO_PI * flat[i:i + step]
            a = self.G[r][:, None] + s[..., None, None] * self.C[r][:, None]
            x = np.linalg.solve(a, np.broadcast_to(self.b, a.shape[:-1])[..., None])[..., 0]
            out[i:i + step] = x @ l
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
        """
        if count == 0:
            return np.zeros((g.shape[0], 0), dtype=complex)
        # a real shift (right half-plane, away from the poles of a stable circuit) keeps
        # the eigenproblem real, several times cheaper than a complex one
        s0 = 1.0
        k = g + s0 * c
        try:
            m = np.linalg.solve(k, c)
            mu = np.linalg.eigvals(m)
        except np.linalg.LinAlgError:
            return np.full((g.shape[0], count), np.nan, dtype=complex)
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
            self.direct_rows = np.arange(S)
            return
        n_poles, n_zeros = self.counts
        cn = self.C * self.w_scale
        poles = np.empty((S, n_poles), dtype=complex)
        zeros = np.empty((S, n_zeros), dtype=complex)
        step = self._chunk((n + 1) ** 2 * 16 * 6)
        gb = np.zeros((min(step, S), n + 1, n + 1))
        cb = np.zeros_like(gb)
        for i in range(0, S, step):
            j = min(S, i + step)
            poles[i:j] = self._roots(self.G[i:j], cn[i:j], n_poles)
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
        self.direct_rows = np.flatnonzero(~ok)

    def _shape(self, f: np.ndarray) -> np.ndarray:
        """Π(s − z)/Π(s − p) per sample at normalised s = j·2πf/w (f shape (S, K))."""
        return _shape_rows(self, f, slice(None))

    def transfer(self, f: np.ndarray) -> np.ndarray:
        """H per sample at per-sample frequencies ``f`` (shape (S,) or (S, K))."""
        f = np.asarray(f, float)
        flat = f.reshape(self.S, -1)
        h = self.gain[:, None] * self._shape(flat)
        if self.direct_rows.size:
            h[self.direct_rows] = self.direct(flat[self.direct_rows], self.direct_rows)
        return h.reshape(f.shape)

    def grid_transfer(self) -> np.ndarray:
        """H on the sweep grid, shape (S, F)."""
        out = np.empty((self.S, self.grid.size), dtype=complex)
        step = self._chunk(self.grid.size * (self.n + 2) * 16 * 2)
        for i in range(0, self.S, step):
            j = min(self.S, i + step)
            sub = np.broadcast_to(self.grid, (j - i, self.grid.size))
            out[i:j] = self.gain[i:j, None] * _shape_rows(self, sub, slice(i, j))
        if self.direct_rows.size:
            out[self.direct_rows] = self.direct(
                np.broadcast_to(self.grid, (self.direct_rows.size, self.grid.size)),
                self.direct_rows)
        return out

    def group_delay(self, f: np.ndarray, h: np.ndarray | None = None) -> np.ndarray:
        """Group delay −dφ/dω (s) per sample, by a symmetric complex-phase difference.

        The relative step is 1e-6 of the frequency; the error is O(step²) relative.
        """
        f = np.asarray(f, float)
        d = f * 1e-6
        hp, hm = self.transfer(f + d), self.transfer(f - d)
        with np.errstate(all="ignore"):
            return -np.angle(hp / hm) / (_TWO_PI * 2 * d)


def _shape_rows(ss: SampleSet, f: np.ndarray, rows: slice) -> np.ndarray:
    s = 1j * _TWO_PI * f / ss.w_scale
    num = np.ones(f.shape, dtype=complex)
    den = np.ones(f.shape, dtype=complex)
    with np.errstate(all="ignore"):
        for r in ss.zeros[rows].T:
            num *= s - r[:, None]
        for r in ss.poles[rows].T:
            den *= s - r[:, None]
    return num / den


def _root_counts(system: System, grid: np.ndarray) -> tuple[int, int] | None:
    """Numbers of finite poles and zeros of the nominal circuit (QZ), or None."""
    from .solve import DenseEngine, PoleZeroEngine

    try:
        with np.errstate(all="ignore"):
            eng = PoleZeroEngine.build(DenseEngine(system), grid)
    except (np.linalg.LinAlgError, ValueError):
        return None
    if eng is None:
        return None
    return int(eng.poles.size), int(eng.zeros.size)


def _db(h: np.ndarray) -> np.ndarray:
    with np.errstate(divide="ignore"):
        return 10.0 * np.log10(h.real * h.real + h.imag * h.imag)


class BatchProbe:
    """Vectorised counterparts of the nominal measurements, over a :class:`SampleSet`."""

    def __init__(self, ss: SampleSet) -> None:
        self.ss = ss
        self.grid = ss.grid
        self.h = ss.grid_transfer()
        self.gain = _db(self.h)
        self._cache: dict = {}

    # quantity evaluators at per-sample frequencies (S,) -------------------------
    def _value(self, quantity: str, f: np.ndarray) -> np.ndarray:
        if quantity == "gain_db":
            return _db(self.ss.transfer(f))
        if quantity == "group_delay_s":
            return self.ss.group_delay(f)
        if quantity == "impedance_db":
            return _db(self._impedance(f))
        if quantity == "phase_deg":
            ref = self._phase_ref(f)
            ph = np.degrees(np.angle(self.ss.transfer(f)))
            return ph + 360.0 * np.round((ref - ph) / 360.0)
        raise ValueError(quantity)

    def _phase_grid(self) -> np.ndarray:
        if "phase" not in self._cache:
            self._cache["phase"] = np.degrees(np.unwrap(np.angle(self.h), axis=1))
        return self._cache["phase"]

    def _phase_ref(self, f: np.ndarray) -> np.ndarray:
        grid = self._phase_grid()
        lf = np.log(self.grid)
        idx = np.clip(np.searchsorted(self.grid, f) - 1, 0, self.grid.size - 2)
        t = (np.log(f) - lf[idx]) / (lf[idx + 1] - lf[idx])
        rows = np.arange(self.ss.S).reshape((-1,) + (1,) * (np.ndim(f) - 1))
        return grid[rows, idx] * (1 - t) + grid[rows, idx + 1] * t

    def _impedance(self, f: np.ndarray) -> np.ndarray:
        system = self.ss.system
        flat = np.asarray(f, float).reshape(self.ss.S, -1)
        if system.circuit.element(system.source).letter == "V":
            i = self.ss.direct(flat, l=system.input_current_selector())
            with np.errstate(all="ignore"):
                z = 1.0 / i
        else:
            z = self.ss.direct(flat, l=system.input_voltage_selector())
        return z.reshape(np.shape(f))

    def _grid_values(self, quantity: str, cols: np.ndarray) -> np.ndarray:
        if quantity == "gain_db":
            return self.gain[:, cols]
        if quantity == "phase_deg":
            return self._phase_grid()[:, cols]
        f = np.broadcast_to(self.grid[cols], (self.ss.S, cols.size))
        if quantity == "group_delay_s":
            return self.ss.group_delay(np.ascontiguousarray(f))
        return _db(self._impedance(np.ascontiguousarray(f)))

    # measurements ---------------------------------------------------------------
    def band_extremes(self, quantity: str, lo: float, hi: float
                      ) -> tuple[BatchExtremum, BatchExtremum]:
        """True min and max of ``quantity`` over [lo, hi] per sample."""
        key = ("band", quantity, lo, hi)
        if key in self._cache:
            return self._cache[key]
        cols = np.flatnonzero((self.grid > lo) & (self.grid < hi))
        f_grid = np.concatenate([[lo], self.grid[cols], [hi]])
        S, M = self.ss.S, cols.size + 2
        ends = np.stack([self._value(quantity, np.full(S, lo)),
                         self._value(quantity, np.full(S, hi))], axis=1)
        inner = self._grid_values(quantity, cols) if cols.size else np.zeros((S, 0))
        # each sample's lightly damped poles, where a narrow peak may sit between grid
        # points, are candidates too (bracketed by a few of their half-widths)
        seeds, half = self._seeds(lo, hi)
        seed_v = (self._value(quantity, seeds) if seeds.shape[1] else np.zeros((S, 0)))
        v = np.concatenate([ends[:, :1], inner, ends[:, 1:], seed_v], axis=1)
        rows = np.arange(S)
        out = []
        for sign in (-1.0, 1.0):
            score = np.where(np.isnan(v), -np.inf, sign * v)
            k = np.argmax(score, axis=1)
            on_grid = k < M
            kg = np.minimum(k, M - 1)
            ks = np.clip(k - M, 0, max(seeds.shape[1] - 1, 0))
            f_at = np.where(on_grid, f_grid[kg], seeds[rows, ks] if seeds.shape[1] else 0.0)
            a = np.where(on_grid, f_grid[np.maximum(kg - 1, 0)],
                         np.maximum(lo, f_at * (1 - half[rows, ks])) if seeds.shape[1] else lo)
            b = np.where(on_grid, f_grid[np.minimum(kg + 1, M - 1)],
                         np.minimum(hi, f_at * (1 + half[rows, ks])) if seeds.shape[1] else hi)
            f_best, v_best = self._golden(quantity, a, b, sign)
            base = v[rows, k]
            better = sign * v_best > sign * base
            out.append(BatchExtremum(np.where(better, f_best, f_at),
                                     np.where(better, v_best, base)))
        self._cache[key] = (out[0], out[1])
        return out[0], out[1]

    def _seeds(self, lo: float, hi: float) -> tuple[np.ndarray, np.ndarray]:
        """Per-sample pole frequencies (Hz) inside [lo, hi] with Q above 2, and their
        relative half-widths; NaN-free (out-of-band entries are moved to ``lo``)."""
        key = ("seeds", lo, hi)
        if key in self._cache:
            return self._cache[key]
        p = self.ss.poles
        if p.shape[1] == 0:
            empty = np.zeros((self.ss.S, 0))
            return empty, empty
        nu = np.abs(p.imag) * self.ss.w_scale / _TWO_PI
        with np.errstate(all="ignore"):
            rel = np.abs(p.real) / np.abs(p.imag)
        keep = (nu > lo) & (nu < hi) & (rel < 0.25) & np.isfinite(nu)
        if not keep.any():
            empty = np.zeros((self.ss.S, 0))
            self._cache[key] = (empty, empty)
            return empty, empty
        cols = np.flatnonzero(keep.any(axis=0))
        seeds = np.where(keep[:, cols], nu[:, cols], lo)
        half = np.where(keep[:, cols], np.clip(4.0 * rel[:, cols], 1e-9, 0.5), 1e-9)
        self._cache[key] = (seeds, half)
        return seeds, half

    def _golden(self, quantity: str, a: np.ndarray, b: np.ndarray, sign: float,
                iterations: int = 32) -> tuple[np.ndarray, np.ndarray]:
        """Golden-section search for the max of sign·value on [a, b] (log f), per sample.

        32 steps shrink a bracket of two grid steps by 0.618³² ≈ 2e-7; the value at a
        smooth extremum is then exact to rounding (its error is second order).
        """
        la, lb = np.log(a), np.log(b)
        x1 = lb - _GOLDEN * (lb - la)
        x2 = la + _GOLDEN * (lb - la)
        f1 = sign * self._value(quantity, np.exp(x1))
        f2 = sign * self._value(quantity, np.exp(x2))
        for _ in range(iterations):
            left = f1 > f2  # the max is in [la, x2]
            lb = np.where(left, x2, lb)
            la = np.where(left, la, x1)
            nx1 = lb - _GOLDEN * (lb - la)
            nx2 = la + _GOLDEN * (lb - la)
            x_new = np.where(left, nx1, nx2)
            f_new = sign * self._value(quantity, np.exp(x_new))
            f2, f1 = np.where(left, f1, f_new), np.where(left, f_new, f2)
            x2, x1 = np.where(left, x1, nx2), np.where(left, nx1, x2)
        best = np.where(f1 > f2, x1, x2)
        f = np.exp(best)
        return f, self._value(quantity, f)

    def peak(self, lo: float | None = None, hi: float | None = None) -> BatchExtremum:
        """True peak gain per sample (over the sweep, or [lo, hi])."""
        lo = self.grid[0] if lo is None else lo
        hi = self.grid[-1] if hi is None else hi
        return self.band_extremes("gain_db", lo, hi)[1]

    def _bisect(self, a: np.ndarray, b: np.ndarray, level: np.ndarray,
                iterations: int = 40) -> np.ndarray:
        """Crossing of gain through ``level`` between a and b (log f), per sample.

        40 halvings of a one-grid-step bracket locate the crossing to ~1e-14 relative.
        """
        la, lb = np.log(a), np.log(b)
        ga = self._value("gain_db", a) - level
        for _ in range(iterations):
            mid = 0.5 * (la + lb)
            gm = self._value("gain_db", np.exp(mid)) - level
            same = np.sign(gm) == np.sign(ga)
            la = np.where(same, mid, la)
            ga = np.where(same, gm, ga)
            lb = np.where(same, lb, mid)
        return np.exp(0.5 * (la + lb))

    def _edge(self, start_f: np.ndarray, level: np.ndarray, direction: str) -> np.ndarray:
        """First crossing of ``level`` moving from ``start_f`` up or down; NaN if none."""
        below = self.gain < level[:, None]
        f = self.grid
        if direction == "up":
            mask = below & (f[None, :] > start_f[:, None])
            idx = np.argmax(mask, axis=1)
            found = mask[np.arange(self.ss.S), idx]
            a = np.where(idx > 0, f[np.maximum(idx - 1, 0)], f[0])
            a = np.maximum(a, start_f)
            b = f[idx]
        else:
            mask = below & (f[None, :] < start_f[:, None])
            rev = mask[:, ::-1]
            idx = f.size - 1 - np.argmax(rev, axis=1)
            found = mask[np.arange(self.ss.S), idx]
            a = f[idx]
            b = np.where(idx < f.size - 1, f[np.minimum(idx + 1, f.size - 1)], f[-1])
            b = np.minimum(b, start_f)
        a = np.where(found, a, f[0])
        b = np.where(found, b, f[-1])
        out = self._bisect(a, b, level)
        return np.where(found, out, np.nan)

    def resonance(self, level_db: float | None, band: tuple[float, float] | None
                  ) -> dict[str, np.ndarray]:
        """Per-sample f_peak, peak gain, edges, bandwidth, f_center and Q (NaN if absent)."""
        key = ("res", level_db, band)
        if key in self._cache:
            return self._cache[key]
        pk = self.peak(*(band or (None, None)))
        level = pk.value - (HALF_POWER_DB if level_db is None else level_db)
        lo_edge = self._edge(pk.frequency_hz, level, "down")
        hi_edge = self._edge(pk.frequency_hz, level, "up")
        bw = hi_edge - lo_edge
        fc = np.sqrt(lo_edge * hi_edge)
        out = {"f_peak_hz": pk.frequency_hz, "peak_gain_db": pk.value, "f_low_hz": lo_edge,
               "f_high_hz": hi_edge, "bandwidth_hz": bw, "f_center_hz": fc, "q": fc / bw}
        self._cache[key] = out
        return out

    def corner(self, level_db: float | None, reference_db: float | None, side: str
               ) -> np.ndarray:
        """Per-sample corner frequency (NaN where none or ambiguous)."""
        pk = self.peak()
        ref = pk.value if reference_db is None else np.full(self.ss.S, reference_db)
        level = ref - (HALF_POWER_DB if level_db is None else level_db)
        up = self._edge(pk.frequency_hz, level, "up")
        down = self._edge(pk.frequency_hz, level, "down")
        if side == "high":
            return up
        if side == "low":
            return down
        return np.where(np.isnan(up), down, np.where(np.isnan(down), up, np.nan))

    def ripple(self, lo: float, hi: float) -> np.ndarray:
        """Per-sample max − min gain over [lo, hi], dB."""
        vmin, vmax = self.band_extremes("gain_db", lo, hi)
        return vmax.value - vmin.value
