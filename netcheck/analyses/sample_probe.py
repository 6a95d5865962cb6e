"""Measurements over many samples at once: the vectorised twins of the nominal ones.

A :class:`BatchProbe` works on a :class:`~netcheck.mna.sampling.SampleSet`: grid values
first, plus each sample's lightly damped pole and zero frequencies as candidates (for
a sample solved directly, the nominal poles followed into it), then refinement of the
best candidate inside the bracket of its neighbours. An edge is bracketed from the
first grid point past the start below the level, or from an earlier seed below it (a
narrow dip between grid points), as the nominal search does. For gain on
samples with a pole–zero form, extremes and crossings are refined by Newton steps on
the exact derivatives of the form, safeguarded by bisection; other quantities, and
samples solved directly, use golden-section search and bisection. Every result that
more than one limit needs (extremes over a band, edges below the peak) is computed
once per probe.

References
----------
.. [1] J. Kiefer, "Sequential minimax search for a maximum", Proc. AMS 4, 1953
   (golden-section search).
.. [2] W. H. Press, S. A. Teukolsky, W. T. Vetterling and B. P. Flannery,
   *Numerical Recipes*, 3rd ed., Cambridge University Press, 2007, §9.4
   (Newton–Raphson safeguarded by bisection).
"""

from __future__ import annotations

from typing import Any

import math
from dataclasses import dataclass

import numpy as np

from ..measure.measurements import HALF_POWER_DB, stationary_points
from ..mna.sampling import _TWO_PI, SampleSet, _db, _select

__all__ = ["BatchProbe", "BatchExtremum"]

_GOLDEN = (math.sqrt(5.0) - 1.0) / 2.0
_NEWTON_STEPS = 60  # cap; bisection alone would shrink a bracket by 2⁻⁶⁰
_XTOL = 4.0 * float(np.finfo(float).eps)  # relative step in ln f that ends a search
_END_TOL = 1e-12  # a peak this close (relative) to a band end is at the end
#: quantities whose stationary points the complete roots of a sample's form locate
_STATIONARY = ("gain_db", "phase_deg", "group_delay_s")
#: relative half-width of the bracket around such a point (it lies within 1e-6 of it)
_STATIONARY_HALF = 2e-6
#: the same for a point located from a partial set of roots (a sample solved directly)
_PARTIAL_HALF = 0.02


@dataclass(frozen=True, slots=True)
class BatchExtremum:
    """Per-sample extremum: frequency (Hz) and value, each shape (S,)."""

    frequency_hz: np.ndarray
    value: np.ndarray


class BatchProbe:
    """Vectorised counterparts of the nominal measurements, over a :class:`SampleSet`."""

    def __init__(self, ss: SampleSet, ports: Any = None) -> None:
        self.ss = ss
        #: the spec's ports (netcheck.netlist.ports.PortSpec), for the port quantities
        self.ports = ports
        self.grid = ss.grid
        self.gain = ss.grid_gain_db()
        self._h: np.ndarray | None = None
        self._cache: dict = {}
        #: every named output's probe by name (``[outputs]``; a crossover compares two)
        self.siblings: dict[str, "BatchProbe"] = {}

    def each_sample(self) -> Any:
        """Each sample as a circuit of its own (:func:`.noise_probe.each_sample`)."""
        from .noise_probe import each_sample
        return each_sample(self)

    @property
    def h(self) -> np.ndarray:
        """Complex H on the grid, shape (S, F); built on first use (phase limits)."""
        if self._h is None:
            self._h = self.ss.grid_transfer()
        return self._h

    # quantity evaluators at per-sample frequencies (R,) for the samples ``rows`` -------
    def _value(self, quantity: str, f: np.ndarray, rows: np.ndarray | None = None
               ) -> np.ndarray:
        if quantity == "gain_db":
            return self.ss.gain_db(f, rows)
        if quantity == "group_delay_s":
            return self.ss.group_delay(f, rows=rows)
        if quantity in ("impedance_db", "input_z_db", "input_gamma_db"):
            return _db(self._port(quantity, self._impedance(f, rows)))
        if quantity == "phase_deg":
            ref = self._phase_ref(f, rows)
            ph = np.degrees(np.angle(self.ss.transfer(f, rows)))
            return ph + 360.0 * np.round((ref - ph) / 360.0)
        raise ValueError(quantity)

    def _phase_grid(self) -> np.ndarray:
        if "phase" not in self._cache:
            self._cache["phase"] = np.degrees(np.unwrap(np.angle(self.h), axis=1))
        return self._cache["phase"]

    def _phase_ref(self, f: np.ndarray, rows: np.ndarray | None = None) -> np.ndarray:
        grid = self._phase_grid()
        lf = np.log(self.grid)
        idx = np.clip(np.searchsorted(self.grid, f) - 1, 0, self.grid.size - 2)
        t = (np.log(f) - lf[idx]) / (lf[idx + 1] - lf[idx])
        r = _select(self.ss.S, rows)[1].reshape((-1,) + (1,) * (np.ndim(f) - 1))
        return grid[r, idx] * (1 - t) + grid[r, idx + 1] * t

    def _impedance(self, f: np.ndarray, rows: np.ndarray | None = None) -> np.ndarray:
        system = self.ss.system
        idx = _select(self.ss.S, rows)[1]
        flat = np.asarray(f, float).reshape(idx.size, -1)
        if system.circuit.element(system.source).letter == "V":
            i = self.ss.direct(flat, idx, l=system.input_current_selector())
            with np.errstate(all="ignore"):
                z = 1.0 / i
        else:
            z = self.ss.direct(flat, idx, l=system.input_voltage_selector())
        return z.reshape(np.shape(f))

    def _grid_values(self, quantity: str, cols: slice) -> np.ndarray:
        if quantity == "gain_db":
            return self.gain[:, cols]
        if quantity == "phase_deg":
            return self._phase_grid()[:, cols]
        f = np.ascontiguousarray(np.broadcast_to(self.grid[cols],
                                                 (self.ss.S, cols.stop - cols.start)))
        if quantity == "group_delay_s":
            return self.ss.group_delay(f)
        return _db(self._port(quantity, self._impedance(f)))

    def _port(self, quantity: str, z: np.ndarray) -> np.ndarray:
        """Z_E seen by the stimulus as ``quantity``: itself ('impedance_db'), the input
        port's Z_in = Z_E − Rs ('input_z_db') or Γ_in = 1 − 2Rs/Z_E ('input_gamma_db')
        (netcheck.analyses.port_probe)."""
        if quantity == "impedance_db":
            return z
        rs = self.ports.source_ohms
        if quantity == "input_z_db":
            return z - rs
        with np.errstate(all="ignore"):
            return 1.0 - 2.0 * rs / z

    # measurements ---------------------------------------------------------------
    def band_extremes(self, quantity: str, lo: float, hi: float
                      ) -> tuple[BatchExtremum, BatchExtremum]:
        """True min and max of ``quantity`` over [lo, hi] per sample."""
        return self._extreme(quantity, lo, hi, -1.0), self._extreme(quantity, lo, hi, 1.0)

    def _candidates(self, quantity: str, lo: float, hi: float) -> tuple[np.ndarray, ...]:
        """Band ends, grid values inside (a view where possible) and pole seeds with
        their values and half-widths: what each extreme over [lo, hi] starts from."""
        key = ("cand", quantity, lo, hi)
        if key not in self._cache:
            inside = np.flatnonzero((self.grid > lo) & (self.grid < hi))
            cols = slice(int(inside[0]), int(inside[-1]) + 1) if inside.size else slice(0, 0)
            f_grid = np.concatenate([[lo], self.grid[cols], [hi]])
            S = self.ss.S
            ends = self._value(quantity, np.repeat([[lo, hi]], S, axis=0))
            inner = self._grid_values(quantity, cols) if inside.size else np.zeros((S, 0))
            # each sample's lightly damped poles, where a narrow peak may sit between grid
            # points, are candidates too (bracketed by a few of their half-widths)
            seeds, half = self._seeds(quantity, lo, hi)
            seed_v = self._value(quantity, seeds) if seeds.shape[1] else np.zeros((S, 0))
            self._cache[key] = (f_grid, ends, inner, seeds, half, seed_v)
        return self._cache[key]

    def _extreme(self, quantity: str, lo: float, hi: float, sign: float) -> BatchExtremum:
        """Max of sign·quantity over [lo, hi] per sample (cached): the best candidate,
        refined inside the bracket of its neighbours."""
        key = ("ext", quantity, lo, hi, sign)
        if key in self._cache:
            return self._cache[key]
        f_grid, ends, inner, seeds, half, seed_v = self._candidates(quantity, lo, hi)
        S, M, ns = self.ss.S, f_grid.size, seeds.shape[1]
        rows = np.arange(S)
        # the first best candidate in the order lo, grid..., hi, seeds; NaN never wins
        cand = [ends[:, :1]]
        if inner.shape[1]:
            k_in = np.argmax(inner, axis=1) if sign > 0 else np.argmin(inner, axis=1)
            best_in = inner[rows, k_in]
            nan = np.flatnonzero(np.isnan(best_in))  # argmax/argmin stop at a NaN
            if nan.size:
                sub = inner[nan]
                k_in[nan] = np.argmax(np.where(np.isnan(sub), -np.inf, sign * sub), axis=1)
                best_in[nan] = sub[np.arange(nan.size), k_in[nan]]
            cand.append(best_in[:, None])
        cand += [ends[:, 1:], seed_v]
        v = np.concatenate(cand, axis=1)
        j = np.argmax(np.where(np.isnan(v), -np.inf, sign * v), axis=1)
        base = v[rows, j]
        n_in = len(cand) - 3  # 1 with grid points inside the band, else 0
        k = np.where(j == 0, 0, np.where(j <= n_in, k_in + 1 if n_in else 0,
                                         np.where(j == n_in + 1, M - 1, M + j - n_in - 2)))
        on_grid = k < M
        kg = np.minimum(k, M - 1)
        ks = np.clip(k - M, 0, max(ns - 1, 0))
        f_at = np.where(on_grid, f_grid[kg], seeds[rows, ks] if ns else 0.0)
        a = np.where(on_grid, f_grid[np.maximum(kg - 1, 0)],
                     np.maximum(lo, f_at * (1 - half[rows, ks])) if ns else lo)
        b = np.where(on_grid, f_grid[np.minimum(kg + 1, M - 1)],
                     np.minimum(hi, f_at * (1 + half[rows, ks])) if ns else hi)
        f_best, v_best = self._refine(quantity, a, b, f_at, sign)
        better = sign * v_best >= sign * base  # equal: the refined point is the turning point
        out = BatchExtremum(np.where(better, f_best, f_at), np.where(better, v_best, base))
        self._cache[key] = out
        return out

    def _refine(self, quantity: str, a: np.ndarray, b: np.ndarray, f0: np.ndarray,
                sign: float) -> tuple[np.ndarray, np.ndarray]:
        """Max of sign·value in [a, b] per sample: Newton on the form's exact derivatives
        for gain, golden-section search otherwise and for samples solved directly."""
        if quantity != "gain_db":
            return self._golden(quantity, a, b, sign)
        f, v = np.empty_like(f0), np.empty_like(f0)
        form, fall = self.ss.form_rows, self.ss.direct_rows
        if form.size:
            f[form] = self._newton_max(a[form], b[form], f0[form], sign, form)
            v[form] = self._value(quantity, f[form], form)
        if fall.size:
            f[fall], v[fall] = self._golden(quantity, a[fall], b[fall], sign, fall)
        return f, v

    def _seeds(self, quantity: str, lo: float, hi: float) -> tuple[np.ndarray, np.ndarray]:
        """Per-sample candidate frequencies (Hz) inside [lo, hi] and their relative
        half-widths; NaN-free (unused entries are moved to ``lo``). Cached per band.

        * Lightly damped poles and zeros (|Re| < |Im|, Q above 1/√2) at |Im| and |s|,
          half-width 4·|Re|/|Im| (at least 1e-9, at most 0.5): where a narrow peak or
          dip sits between grid points.
        * For gain, phase and group delay: the stationary points of the quantity in the
          band (:meth:`_stationary`); on the samples with a pole–zero form every one,
          so that an extreme between grid points (a stop-band lobe between two notches)
          is found whatever the grid density, as the nominal measurement finds it.
        """
        key = ("seeds", quantity, lo, hi)
        if key in self._cache:
            return self._cache[key]
        S = self.ss.S
        cols_f: list[np.ndarray] = []
        cols_h: list[np.ndarray] = []
        # the poles and zeros of the samples with a form (a zero near the axis is a
        # narrow dip even between heavily damped poles); the nominal poles followed
        # into each sample solved directly (:meth:`SampleSet.direct_seeds`)
        p = np.concatenate([self.ss.poles, self.ss.zeros, self.ss.direct_seeds()], axis=1)
        if p.shape[1]:
            p = p * (self.ss.w_scale / _TWO_PI)  # Hz
            with np.errstate(all="ignore"):
                rel = np.abs(p.real) / np.abs(p.imag)
            light = (p.imag > 0) & (rel < 1.0) & np.isfinite(p)
            half = np.clip(4.0 * rel, 1e-9, 0.5)
            for nu in (p.imag, np.abs(p)):
                keep = light & (nu > lo) & (nu < hi)
                cols = np.flatnonzero(keep.any(axis=0))
                cols_f.append(np.where(keep[:, cols], nu[:, cols], lo))
                cols_h.append(np.where(keep[:, cols], half[:, cols], 1e-9))
        found = self._stationary(quantity)
        if found is not None:
            st, st_half = found
            with np.errstate(invalid="ignore"):
                ok = (st > lo) & (st < hi)
            cols = np.flatnonzero(ok.any(axis=0))
            if cols.size:
                cols_f.append(np.where(ok[:, cols], st[:, cols], lo))
                cols_h.append(np.where(ok[:, cols], st_half[:, cols], 1e-9))
        if cols_f:
            out = np.concatenate(cols_f, axis=1), np.concatenate(cols_h, axis=1)
        else:
            out = np.zeros((S, 0)), np.zeros((S, 0))
        self._cache[key] = out
        return out

    def _stationary(self, quantity: str) -> tuple[np.ndarray, np.ndarray] | None:
        """Stationary points of ``quantity`` over the whole sweep (S, k), NaN-padded, and
        the half-widths of their brackets; None when there are none. Computed once per
        quantity: each band takes the ones inside it.

        Samples with a form: from their complete roots, every one (within 1e-6),
        half-width :data:`_STATIONARY_HALF`. Samples solved directly: from the poles and
        zeros followed into them (:meth:`SampleSet.direct_roots`), a partial set, so the
        points are only near the true ones: half-width :data:`_PARTIAL_HALF` (the
        nominal measurement on the sparse path probes as far).
        """
        key = ("stationary", quantity)
        if key not in self._cache:
            ss, parts = self.ss, []
            if quantity in _STATIONARY:
                scale = ss.w_scale / _TWO_PI
                lo, hi = float(self.grid[0]), float(self.grid[-1])
                form, direct = ss.form_rows, ss.direct_rows
                if form.size and ss.poles.shape[1] + ss.zeros.shape[1]:
                    parts.append((form, stationary_points(
                        ss.poles[form] * scale, ss.zeros[form] * scale, lo, hi, quantity),
                        _STATIONARY_HALF))
                if direct.size:
                    poles, zeros = ss.direct_roots()
                    if poles.shape[1] + zeros.shape[1]:
                        parts.append((direct, stationary_points(
                            poles[direct] * scale, zeros[direct] * scale, lo, hi, quantity),
                            _PARTIAL_HALF))
            k = max((st.shape[1] for _, st, _ in parts), default=0)
            out = None
            if k:
                f, half = np.full((ss.S, k), np.nan), np.full((ss.S, k), 1e-9)
                for rows, st, h in parts:
                    f[rows, :st.shape[1]] = st
                    half[rows, :st.shape[1]] = h
                out = (f, half)
            self._cache[key] = out
        return self._cache[key]

    def _golden(self, quantity: str, a: np.ndarray, b: np.ndarray, sign: float,
                rows: np.ndarray | None = None, iterations: int = 32
                ) -> tuple[np.ndarray, np.ndarray]:
        """Golden-section search for the max of sign·value on [a, b] (log f), per sample.

        32 steps shrink a bracket of two grid steps by 0.618³² ≈ 2e-7; the value at a
        smooth extremum is then exact to rounding (its error is second order).
        """
        f, best = self.golden(lambda x: sign * self._value(quantity, x, rows), a, b,
                              iterations)
        return f, sign * best

    @staticmethod
    def golden(score, a: np.ndarray, b: np.ndarray, iterations: int = 32
               ) -> tuple[np.ndarray, np.ndarray]:
        """Golden-section search [1]_ for the max of ``score`` (per-sample frequencies
        (R,) → values (R,)) on [a, b] in log f, per sample: (frequency, score there)."""
        la, lb = np.log(a), np.log(b)
        x1 = lb - _GOLDEN * (lb - la)
        x2 = la + _GOLDEN * (lb - la)
        f1, f2 = score(np.exp(x1)), score(np.exp(x2))
        for _ in range(iterations):
            left = f1 > f2  # the max is in [la, x2]
            lb = np.where(left, x2, lb)
            la = np.where(left, la, x1)
            nx1 = lb - _GOLDEN * (lb - la)
            nx2 = la + _GOLDEN * (lb - la)
            x_new = np.where(left, nx1, nx2)
            f_new = score(np.exp(x_new))
            f2, f1 = np.where(left, f1, f_new), np.where(left, f_new, f2)
            x2, x1 = np.where(left, x1, nx2), np.where(left, nx1, x2)
        best = np.where(f1 > f2, x1, x2)
        f = np.exp(best)
        return f, score(f)

    def _newton_max(self, a: np.ndarray, b: np.ndarray, f0: np.ndarray, sign: float,
                    rows: np.ndarray) -> np.ndarray:
        """Stationary point of sign·gain in [a, b] from f0, per sample (rows with a form).

        The sign of the exact slope at f0 picks the half of the bracket that rises;
        Newton steps x − g′/g″ (x = ln f) follow while they stay inside the shrinking
        bracket and the curvature is that of a maximum, bisection otherwise [2]_.
        Converges quadratically: a few steps reach the rounding level of ln f.
        """
        lo, hi, x = np.log(a), np.log(b), np.log(f0)
        act, xa = np.arange(rows.size), x.copy()
        dx, dxo = hi - lo, hi - lo  # the last two step lengths
        for _ in range(_NEWTON_STEPS):
            _, d1, d2, err = self.ss.gain_slopes(np.exp(xa), rows[act])
            d1, d2 = sign * d1, sign * d2
            up = d1 > 0
            la, lb = np.where(up, xa, lo[act]), np.where(up, hi[act], xa)
            lo[act], hi[act] = la, lb
            with np.errstate(all="ignore"):
                step = -d1 / d2
            xn = xa + step
            # Newton while inside the bracket, at a maximum's curvature and at least
            # halving the step before last (no two-point cycles at the rounding level)
            newton = (d2 < 0) & (xn >= la) & (xn <= lb) & (np.abs(step) <= 0.5 * dxo[act])
            xn = np.where(newton, xn, 0.5 * (la + lb))
            dxo[act], dx[act] = dx[act], np.abs(xn - xa)
            tol = _XTOL * np.abs(xa)
            # a slope within its rounding error is zero: xa is the stationary point
            flat = np.abs(d1) <= err
            xn = np.where(flat, xa, xn)
            live = (dx[act] > tol) & (lb - la > tol) & np.isfinite(d1) & ~flat
            x[act] = xn
            act, xa = act[live], xn[live]
            if not act.size:
                break
        return np.exp(x)

    def peak(self, lo: float | None = None, hi: float | None = None) -> BatchExtremum:
        """True peak gain per sample (over the sweep, or [lo, hi])."""
        lo = self.grid[0] if lo is None else lo
        hi = self.grid[-1] if hi is None else hi
        return self._extreme("gain_db", lo, hi, 1.0)

    def _bisect(self, a: np.ndarray, b: np.ndarray, level: np.ndarray,
                rows: np.ndarray | None = None, iterations: int = 40) -> np.ndarray:
        """Crossing of gain through ``level`` between a and b (log f), per sample.

        40 halvings of a one-grid-step bracket locate the crossing to ~1e-14 relative.
        """
        la, lb = np.log(a), np.log(b)
        ga = self._value("gain_db", a, rows) - level
        for _ in range(iterations):
            mid = 0.5 * (la + lb)
            gm = self._value("gain_db", np.exp(mid), rows) - level
            same = np.sign(gm) == np.sign(ga)
            la = np.where(same, mid, la)
            ga = np.where(same, gm, ga)
            lb = np.where(same, lb, mid)
        return np.exp(0.5 * (la + lb))

    def _newton_cross(self, a: np.ndarray, b: np.ndarray, level: np.ndarray,
                      rows: np.ndarray) -> np.ndarray:
        """Crossing of gain through ``level`` in [a, b] (log f), per sample with a form.

        Starts from the secant between the ends; Newton steps on the exact slope while
        they stay inside the bracket, bisection otherwise [2]_.
        """
        la, lb = np.log(a), np.log(b)
        ga = self.ss.gain_slopes(a, rows, False)[0] - level
        gb = self.ss.gain_slopes(b, rows, False)[0] - level
        with np.errstate(all="ignore"):
            x = la + (lb - la) * ga / (ga - gb)
        x = np.where((x > la) & (x < lb), x, 0.5 * (la + lb))
        act, xa = np.arange(rows.size), x.copy()
        dx, dxo = lb - la, lb - la  # the last two step lengths
        for _ in range(_NEWTON_STEPS):
            g, d1, _, _ = self.ss.gain_slopes(np.exp(xa), rows[act], False)
            g -= level[act]
            same = np.sign(g) == np.sign(ga[act])
            l0, l1 = np.where(same, xa, la[act]), np.where(same, lb[act], xa)
            la[act], lb[act], ga[act] = l0, l1, np.where(same, g, ga[act])
            with np.errstate(all="ignore"):
                step = -g / d1
            xn = xa + step
            newton = (xn >= l0) & (xn <= l1) & (np.abs(step) <= 0.5 * dxo[act])
            xn = np.where(newton, xn, 0.5 * (l0 + l1))
            dxo[act], dx[act] = dx[act], np.abs(xn - xa)
            tol = _XTOL * np.abs(xa)
            live = (dx[act] > tol) & (l1 - l0 > tol) & (g != 0) & np.isfinite(g)
            x[act] = xn
            act, xa = act[live], xn[live]
            if not act.size:
                break
        return np.exp(x)

    def _edge(self, start_f: np.ndarray, level: np.ndarray, direction: str) -> np.ndarray:
        """First crossing of ``level`` moving from ``start_f`` up or down; NaN if none.

        Bracketed by the grid (:meth:`_hidden_dips` adds dips between grid points)."""
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
        self._hidden_dips(start_f, level, direction == "up", found, a, b)
        return self._cross(found, a, b, level)

    def _cross(self, found: np.ndarray, a: np.ndarray, b: np.ndarray, level: np.ndarray
               ) -> np.ndarray:
        """The crossing of ``level`` in each bracket [a, b] where ``found`` (NaN elsewhere):
        Newton on the form, bisection for the samples solved directly."""
        out = np.full(self.ss.S, np.nan)
        form = np.flatnonzero(found & ~self.ss.fallback)
        fall = np.flatnonzero(found & self.ss.fallback)
        if form.size:
            out[form] = self._newton_cross(a[form], b[form], level[form], form)
        if fall.size:
            out[fall] = self._bisect(a[fall], b[fall], level[fall], fall)
        return out

    def _hidden_dips(self, start_f: np.ndarray, level: np.ndarray, up: bool,
                     found: np.ndarray, a: np.ndarray, b: np.ndarray) -> None:
        """Move the brackets (a, b) of :meth:`_edge` to a crossing hidden between grid
        points, in place.

        A narrow dip (a trap, a notch) can fall below the level between two grid points
        that are both above it; the nominal search finds it from the seeds and the
        exact slope. Here each sample's seeds between the start and its first grid
        point below the level (the end of the sweep if none) are tried: at the first
        one below the level, moving away from the start, the crossing is bracketed by
        the grid point (or the start) before it and the seed itself.
        """
        seeds, seed_g = self._sweep_seeds()
        if not seeds.shape[1]:
            return
        f = self.grid
        if up:
            stop = np.where(found, b, f[-1])
            inside = (seeds > start_f[:, None]) & (seeds < stop[:, None])
        else:
            stop = np.where(found, a, f[0])
            inside = (seeds < start_f[:, None]) & (seeds > stop[:, None])
        hit = inside & (seed_g < level[:, None])
        rows = np.flatnonzero(hit.any(axis=1))
        if not rows.size:
            return
        key = np.where(hit[rows], seeds[rows], np.inf if up else -np.inf)
        fs = key.min(axis=1) if up else key.max(axis=1)
        if up:  # the grid points between the start and the seed are above the level
            k = np.searchsorted(f, fs) - 1
            a[rows] = np.where(k >= 0, np.maximum(f[np.maximum(k, 0)], start_f[rows]),
                               start_f[rows])
            b[rows] = fs
        else:
            k = np.searchsorted(f, fs, side="right")
            a[rows] = fs
            b[rows] = np.where(k < f.size, np.minimum(f[np.minimum(k, f.size - 1)],
                                                      start_f[rows]), start_f[rows])
        found[rows] = True

    def _sweep_seeds(self) -> tuple[np.ndarray, np.ndarray]:
        """Each sample's seeds over the whole sweep and the gain there (cached)."""
        lo, hi = float(self.grid[0]), float(self.grid[-1])
        _, _, _, seeds, _, seed_g = self._candidates("gain_db", lo, hi)
        return seeds, seed_g

    def _peak_edge(self, band: tuple[float, float] | None,
                   reference_db: float | np.ndarray | None,
                   level_db: float | None, direction: str) -> np.ndarray:
        """Edge ``level_db`` below the reference (the peak over ``band`` when None; a
        number, or one per sample), moving ``direction`` from the peak; cached, as
        corner and resonance share it."""
        ref_key = reference_db.tobytes() if isinstance(reference_db, np.ndarray) \
            else reference_db
        key = ("edge", band, ref_key, level_db, direction)
        if key not in self._cache:
            pk = self.peak(*(band or (None, None)))
            ref = pk.value if reference_db is None else \
                np.broadcast_to(np.asarray(reference_db, float), (self.ss.S,)).copy()
            level = ref - (HALF_POWER_DB if level_db is None else level_db)
            edge = self._edge(pk.frequency_hz, level, direction)
            # as in the nominal corner: a peak not above the level has no edge (a fixed
            # reference above the pass-band), not the first grid point past the peak
            edge[~(pk.value > level)] = np.nan
            self._cache[key] = edge
        return self._cache[key]

    def resonance(self, level_db: float | None, band: tuple[float, float] | None
                  ) -> dict[str, np.ndarray]:
        """Per-sample f_peak, peak gain, edges, bandwidth, f_center and Q (NaN if absent)."""
        key = ("res", level_db, band)
        if key in self._cache:
            return self._cache[key]
        pk = self.peak(*(band or (None, None)))
        lo_edge = self._peak_edge(band, None, level_db, "down")
        hi_edge = self._peak_edge(band, None, level_db, "up")
        bw = hi_edge - lo_edge
        fc = np.sqrt(lo_edge * hi_edge)
        out = {"f_peak_hz": pk.frequency_hz, "peak_gain_db": pk.value, "f_low_hz": lo_edge,
               "f_high_hz": hi_edge, "bandwidth_hz": bw, "f_center_hz": fc, "q": fc / bw}
        # as in the nominal measurement, a highest gain at an end of the band is no
        # resonance peak: nothing of it can be measured for that sample
        lo, hi = band or (float(self.grid[0]), float(self.grid[-1]))
        at_end = ((pk.frequency_hz <= lo * (1 + _END_TOL)) | (pk.frequency_hz >= hi * (1 - _END_TOL)))
        if at_end.any():
            out = {k: np.where(at_end, np.nan, v) for k, v in out.items()}
        self._cache[key] = out
        return out

    def corner(self, level_db: float | None, reference_db: float | np.ndarray | None,
               side: str) -> np.ndarray:
        """Per-sample corner frequency (NaN where none or ambiguous); ``reference_db``
        a number or one per sample (a measured pass-band level), None for the peak."""
        if side in ("high", "low"):  # only the edge asked for is searched
            way = "up" if side == "high" else "down"
            return self._peak_edge(None, reference_db, level_db, way)
        up = self._peak_edge(None, reference_db, level_db, "up")
        down = self._peak_edge(None, reference_db, level_db, "down")
        return np.where(np.isnan(up), down, np.where(np.isnan(down), up, np.nan))

    def at(self, quantity: str, f_hz: float) -> np.ndarray:
        """Per-sample ``quantity`` at one frequency (Hz), shape (S,)."""
        return self._value(quantity, np.full((self.ss.S, 1), float(f_hz)))[:, 0]

    def values(self, quantity: str, f_hz: np.ndarray) -> np.ndarray:
        """Per-sample ``quantity`` at frequencies (Hz): ``f_hz`` of shape (k,), the same
        for every sample, or (S, k), each sample's own; shape (S, k)."""
        f = np.asarray(f_hz, float)
        f = np.broadcast_to(f, (self.ss.S, f.shape[-1]))
        return self._value(quantity, np.ascontiguousarray(f))

    def rise(self, start_f: np.ndarray, level: np.ndarray, direction: str) -> np.ndarray:
        """First frequency moving ``direction`` ('up', 'down') from ``start_f`` (where the
        gain is below ``level``: a notch) at which the gain is back up to ``level``; NaN
        if it never is within the sweep. Bracketed by the grid, refined as :meth:`_edge`."""
        above = self.gain >= level[:, None]
        f, S = self.grid, self.ss.S
        if direction == "up":
            mask = above & (f[None, :] > start_f[:, None])
            idx = np.argmax(mask, axis=1)
            a = np.maximum(f[np.maximum(idx - 1, 0)], start_f)
            b = f[idx]
        else:
            mask = above & (f[None, :] < start_f[:, None])
            idx = f.size - 1 - np.argmax(mask[:, ::-1], axis=1)
            a = f[idx]
            b = np.minimum(f[np.minimum(idx + 1, f.size - 1)], start_f)
        return self._cross(mask[np.arange(S), idx] & np.isfinite(start_f), a, b, level)

    def ripple(self, lo: float, hi: float) -> np.ndarray:
        """Per-sample max − min gain over [lo, hi], dB."""
        vmin, vmax = self.band_extremes("gain_db", lo, hi)
        return vmax.value - vmin.value
