"""Adjoint sensitivities of the response, and of every measured quantity, to part values.

For A(s) = G + sC, x = A⁻¹b, y = A⁻ᵀl and Q = lᵀx (the output, or the input current or
voltage for impedance), the change of Q with a part value p is

    ∂Q/∂p = −yᵀ (∂G/∂p + s ∂C/∂p) x                                    (Director & Rohrer [1])

so one transposed solve per frequency serves every part. The frequency derivatives come
from the same factorisation: x_f = −A⁻¹A_f x with A_f = j2πC, y_f = −A⁻ᵀA_fᵀy, which give
∂Q/∂f, ∂²Q/∂f² and the mixed ∂²Q/∂f∂p — two more solves per frequency, none per part.
∂G/∂p and ∂C/∂p are read off the element stamps by complex-step differentiation [2].

A measured quantity M is then linearised through its definition (all derivatives taken
per unit log of the part, p ∂/∂p, so they multiply a relative tolerance directly):

* a band extreme of gain, phase, group delay or |Z| at f*: dM = ∂M/∂p at f* (envelope
  theorem: the first-order move of f* does not change an interior extremum, and an
  extremum at a band end stays there);
* the peak frequency, where ∂g/∂f = 0: df* = −(∂²g/∂f∂p) / (∂²g/∂f²) (implicit functions);
* an edge where g(f_e) = level: df_e = −(∂g/∂p(f_e) − d level) / (∂g/∂f(f_e)), with the
  level's own change (the peak gain's, when it is set relative to the peak);
* bandwidth, centre √(f_low f_high) and Q = f_center / bandwidth from the edges.

References
----------
.. [1] S. W. Director and R. A. Rohrer, "The generalized adjoint network and network
   sensitivities", IEEE Trans. Circuit Theory 16(3), 318–323, 1969.
.. [2] J. N. Lyness and C. B. Moler, "Numerical differentiation of analytic functions",
   SIAM J. Numer. Anal. 4(2), 202–210, 1967 (complex-step derivative).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
import numpy as np
import scipy.linalg as la
import scipy.sparse.linalg as spla

from .assemble import Stamper, System, refuse_delays
from .bias_samples import SENSITIVITY_STEP, bias_sensitivities
from ..measure.measurements import Resonance

__all__ = ["AdjointSensitivity", "LogDerivatives", "adjoint_sensitivities", "DENSE_LIMIT"]

_TWO_PI = 2.0 * math.pi
_DB = 20.0 / math.log(10.0)
#: systems up to this many unknowns are factored densely, larger ones by SuperLU
DENSE_LIMIT = 300


@dataclass(frozen=True, slots=True)
class LogDerivatives:
    """Derivatives of w = ln Q at frequencies f (Q = H, or Z for impedance).

    Attributes
    ----------
    q : (F,) complex
        The value Q(f).
    w_f, w_ff : (F,) complex
        ∂w/∂f (1/Hz) and ∂²w/∂f² (1/Hz²).
    w_p, w_fp : (F, P) complex
        p ∂w/∂p and p ∂²w/∂f∂p for every part p.
    """

    q: np.ndarray
    w_f: np.ndarray
    w_ff: np.ndarray
    w_p: np.ndarray
    w_fp: np.ndarray


def _central(v: list) -> np.ndarray:
    """p·∂T/∂p from tables at p(1 + h) and p(1 − h) (entries of two samples each)."""
    if not v:
        return np.zeros(0)
    two = np.stack([np.broadcast_to(np.asarray(x, float), (2,)) for x in v])
    return (two[:, 0] - two[:, 1]) / (2.0 * SENSITIVITY_STEP)


class _PartStamps:
    """p ∂G/∂p and p ∂C/∂p of every part as one list of entries tagged by part."""

    def __init__(self, system: System, parts: list[tuple[str, float, float]]) -> None:
        tags: dict[str, list[np.ndarray]] = {"G": [], "C": []}
        rows: dict[str, list[np.ndarray]] = {"G": [], "C": []}
        cols: dict[str, list[np.ndarray]] = {"G": [], "C": []}
        vals: dict[str, list[np.ndarray]] = {"G": [], "C": []}
        circuit = system.circuit
        # a circuit with devices: the bias moves with each part too (bias_samples)
        moved = bias_sensitivities(circuit, [(name, nominal) for name, nominal, _ in parts])
        biased = [e for e in circuit.elements if moved and e.name in moved[0]]
        for k, (name, nominal, _) in enumerate(parts):
            step = 1e-20 * abs(nominal)
            # the linear stamps by complex step; linearised elements keep their nominal
            # tables there (real: no imaginary part) and add their move apart
            st = Stamper(circuit, {name: nominal + 1j * step}, small_signal={})
            st.stamp_all()
            found = [(m, st.entries[m], np.imag(np.asarray(st.entries[m][2], complex))
                      / step * nominal) for m in ("G", "C")]
            if moved:
                sb = Stamper(circuit, {}, small_signal=moved[k])
                for e in biased:
                    e.stamp(sb, None)
                found += [(m, sb.entries[m], _central(sb.entries[m][2])) for m in ("G", "C")]
            for mat, (r, c, _), v in found:
                keep = v != 0.0
                rows[mat].append(np.asarray(r, int)[keep])
                cols[mat].append(np.asarray(c, int)[keep])
                vals[mat].append(v[keep])
                tags[mat].append(np.full(int(keep.sum()), k))
        self.count = len(parts)
        self.entries = {m: (np.concatenate(rows[m] or [np.zeros(0, int)]).astype(int),
                            np.concatenate(cols[m] or [np.zeros(0, int)]).astype(int),
                            np.concatenate(vals[m] or [np.zeros(0)]),
                            np.concatenate(tags[m] or [np.zeros(0, int)]).astype(int))
                        for m in ("G", "C")}

    def form(self, mat: str, u: np.ndarray, v: np.ndarray) -> np.ndarray:
        """uᵀ (p ∂M/∂p) v for every part: (P,) complex."""
        r, c, val, tag = self.entries[mat]
        terms = u[r] * val * v[c]
        return (np.bincount(tag, terms.real, self.count)
                + 1j * np.bincount(tag, terms.imag, self.count))


class AdjointSensitivity:
    """Sensitivities of the nominal response to every toleranced part.

    Parameters
    ----------
    system : System
        The nominal MNA system.
    parts : list of (name, nominal value, tolerance)
        The toleranced parts, in the order of the returned (P,) arrays.
    """

    def __init__(self, system: System, parts: list[tuple[str, float, float]]) -> None:
        refuse_delays(system, "worst-case sensitivities")
        self.system = system
        self.parts = parts
        self._stamps = _PartStamps(system, parts)
        self._g = system.G.tocsc()
        self._c = system.C.tocsc()
        self._dense = system.size <= DENSE_LIMIT
        if self._dense:
            self._gd, self._cd = self._g.toarray(), self._c.toarray()
        self._cache: dict[tuple[str, float], tuple] = {}
        src = system.circuit.element(system.source)
        self._z_inverted = src.letter == "V"
        self._z_selector = (system.input_current_selector() if self._z_inverted
                            else system.input_voltage_selector())

    # ------------------------------------------------------------------ raw derivatives

    def _point(self, f: float, which: str) -> tuple:
        """(Q, Q_f, Q_ff, Q_p, Q_fp) at one frequency for selector ``which``."""
        key = (which, f)
        if key in self._cache:
            return self._cache[key]
        sel = self.system.l if which == "output" else self._z_selector
        s = 1j * _TWO_PI * f
        b = self.system.b.astype(complex)
        if self._dense:
            lu = la.lu_factor(self._gd + s * self._cd, check_finite=False)

            def solve(rhs: np.ndarray, trans: int) -> np.ndarray:
                return la.lu_solve(lu, rhs, trans=trans, check_finite=False)
            c_dot = lambda v: self._cd @ v  # noqa: E731
            ct_dot = lambda v: self._cd.T @ v  # noqa: E731
        else:
            try:
                lu_s = spla.splu((self._g + s * self._c).tocsc().astype(complex))
            except RuntimeError:  # singular here: nothing to linearise (callers fall back)
                nan = np.full(len(self.parts), np.nan, dtype=complex)
                out = (complex(np.nan), complex(np.nan), complex(np.nan), nan, nan)
                self._cache[key] = out
                return out

            def solve(rhs: np.ndarray, trans: int) -> np.ndarray:
                return lu_s.solve(rhs, trans="T" if trans else "N")
            c_dot = lambda v: self._c @ v  # noqa: E731
            ct_dot = lambda v: self._c.T @ v  # noqa: E731
        jw = 1j * _TWO_PI
        x = solve(b, 0)
        y = solve(sel.astype(complex), 1)
        x_f = -solve(jw * c_dot(x), 0)
        y_f = -solve(jw * ct_dot(y), 1)
        q = sel @ x
        q_f = sel @ x_f
        q_ff = -2.0 * (y @ (jw * c_dot(x_f)))
        st = self._stamps
        q_p = -(st.form("G", y, x) + s * st.form("C", y, x))
        q_fp = -(st.form("G", y_f, x) + s * st.form("C", y_f, x)
                 + st.form("G", y, x_f) + s * st.form("C", y, x_f)
                 + jw * st.form("C", y, x))
        out = (q, q_f, q_ff, q_p, q_fp)
        self._cache[key] = out
        return out

    def log_derivatives(self, f_hz: np.ndarray | float, which: str = "output") -> LogDerivatives:
        """Derivatives of w = ln Q at ``f_hz``; ``which`` is 'output' (H) or 'impedance' (Z)."""
        f = np.atleast_1d(np.asarray(f_hz, float))
        pts = [self._point(float(fi), which) for fi in f]
        q = np.array([p[0] for p in pts])
        q_f = np.array([p[1] for p in pts])
        q_ff = np.array([p[2] for p in pts])
        q_p = np.array([p[3] for p in pts]).reshape(f.size, len(self.parts))
        q_fp = np.array([p[4] for p in pts]).reshape(f.size, len(self.parts))
        with np.errstate(all="ignore"):
            w_f = q_f / q
            w_ff = q_ff / q - w_f ** 2
            w_p = q_p / q[:, None]
            w_fp = q_fp / q[:, None] - w_f[:, None] * w_p
        if which == "impedance" and self._z_inverted:  # Z = 1/I: ln Z = −ln I
            q, w_f, w_ff, w_p, w_fp = 1.0 / q, -w_f, -w_ff, -w_p, -w_fp
        return LogDerivatives(q, w_f, w_ff, w_p, w_fp)

    # ------------------------------------------------------------------ measured quantities

    def extreme(self, quantity: str, f_hz: float) -> np.ndarray:
        """∂M/∂ln p of a band extreme of ``quantity`` found at ``f_hz`` (envelope theorem).

        ``quantity``: 'gain_db' (dB), 'phase_deg' (degrees), 'group_delay_s' (s) or
        'impedance_ohm' (Ω).
        """
        if quantity == "impedance_ohm":
            d = self.log_derivatives(f_hz, "impedance")
            return np.abs(d.q[0]) * d.w_p[0].real
        d = self.log_derivatives(f_hz)
        if quantity == "gain_db":
            return _DB * d.w_p[0].real
        if quantity == "phase_deg":
            return np.degrees(d.w_p[0].imag)
        if quantity == "group_delay_s":  # τ = −(1/2π) ∂φ/∂f
            return -d.w_fp[0].imag / _TWO_PI
        raise ValueError(f"unknown quantity {quantity!r}")

    def peak_shift(self, f_hz: float, interior: bool = True) -> np.ndarray:
        """∂f*/∂ln p of a gain maximum at ``f_hz`` (zero when it sits at a band end)."""
        if not interior:
            return np.zeros(len(self.parts))
        d = self.log_derivatives(f_hz)
        with np.errstate(all="ignore"):
            return -d.w_fp[0].real / d.w_ff[0].real

    def crossing_shift(self, f_hz: float, d_level: np.ndarray | float) -> np.ndarray:
        """∂f_e/∂ln p of an edge where the gain equals a level that moves by ``d_level`` dB."""
        d = self.log_derivatives(f_hz)
        with np.errstate(all="ignore"):
            return -(_DB * d.w_p[0].real - d_level) / (_DB * d.w_f[0].real)

    def resonance(self, res: Resonance) -> dict[str, np.ndarray]:
        """∂/∂ln p of every figure of a measured resonance, keyed like its fields."""
        d_peak = self.extreme("gain_db", res.f_peak_hz)
        d_lo = self.crossing_shift(res.f_low_hz, d_peak)
        d_hi = self.crossing_shift(res.f_high_hz, d_peak)
        d_bw = d_hi - d_lo
        d_fc = res.f_center_hz * 0.5 * (d_lo / res.f_low_hz + d_hi / res.f_high_hz)
        d_q = res.q * (d_fc / res.f_center_hz - d_bw / res.bandwidth_hz)
        return {"f_peak_hz": self.peak_shift(res.f_peak_hz), "peak_gain_db": d_peak,
                "f_low_hz": d_lo, "f_high_hz": d_hi, "bandwidth_hz": d_bw,
                "f_center_hz": d_fc, "q": d_q}


def adjoint_sensitivities(system: System, parts: list[tuple[str, float, float]],
                          f_hz: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """H(f) and ∂H/∂p (not per log) for every part, by the adjoint method.

    Returns ``h`` (F,) and ``dh`` (F, P).
    """
    d = AdjointSensitivity(system, parts).log_derivatives(f_hz)
    values = np.array([v for _, v, _ in parts], float)
    return d.q, d.w_p * d.q[:, None] / values[None, :]
