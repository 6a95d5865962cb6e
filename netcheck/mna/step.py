"""The step response of the output, exactly, from the response's pole–zero form; and a
numerical inverse Laplace transform that checks it and stands in where there is none.

For a rational H(s) = k·∏(s − z_i)/∏(s − p_j) with simple poles in the left half-plane
and no more zeros than poles, the response to a unit step is, by partial fractions of
H(s)/s (the residue theorem),

    y(t) = H(0) + Σ_j r_j e^{p_j t} / p_j,    r_j = k·∏_i (p_j − z_i) / ∏_{m≠j} (p_j − p_m)

(exact: a sum of exponentials, no time stepping). The poles and zeros come from QZ of
the MNA pencil (:meth:`netcheck.mna.response.Response.roots_hz`) and k from H at one
frequency.

Poles closer together than 1e-6 of their size (a repeated pole) make the residues
inaccurate: the same pole–zero form is then written as a state-space model
(``scipy.signal.zpk2ss``) and stepped exactly by the matrix exponential,
y(t) = C·A⁻¹(e^{At} − I)·B + D. The check of the residues,
and the method where no rational form exists (a transmission line's exp(−sτ), roots the
sparse path did not all find), is the fixed-Talbot inversion of H(s)/s (J. Abate and
P. P. Valkó, "Multi-precision Laplace transform inversion", Int. J. Numer. Meth. Eng.
60, 979–993, 2004): with M nodes on the contour s(θ) = rθ(cot θ + j), r = 2M/(5t),

    y(t) ≈ (r/M)·[½ e^{rt} F(r) + Σ_{k=1}^{M−1} Re(e^{t s(θ_k)} F(s(θ_k)) (1 + jσ(θ_k)))],
    θ_k = kπ/M,  σ(θ) = θ + (θ cot θ − 1) cot θ,

F(s) = H(s)/s solved directly at complex s, independently of the pole–zero form. The
contour encloses poles of size |p| only for t up to about 0.4·M/|p|: the check is made
at such times, and without a rational form the response is given up to 0.4·M/(2π f_top)
(f_top the top of the sweep) and NaN after. The result says which method it used.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import scipy.linalg as sla
import scipy.sparse as sp
import scipy.sparse.linalg as spla
from scipy import signal

from .assemble import System
from .solve import DENSE_MAX

__all__ = ["StepModel", "StepResponse", "step_response", "impulse_response", "talbot_step",
           "transfer_at"]

#: Talbot nodes: about 0.6·M significant digits in exact arithmetic, ~1e-10 in doubles
TALBOT_NODES = 32
#: residues are trusted when the pole–zero step agrees with Talbot this well at the
#: check times (relative to the final value or the peak)
CHECK_TOL = 1e-6
#: poles closer than this (relative) make the simple-pole residues inaccurate
CLOSE_POLES = 1e-6


@dataclass(frozen=True, slots=True, eq=False)
class StepResponse:
    """y(t) at ``t`` (s) for a unit step of the stimulus, its final value H(0), and the
    method (``pole-zero residues`` or ``fixed Talbot``; NaN where Talbot did not
    converge)."""

    t: np.ndarray
    y: np.ndarray
    final: float
    method: str


def transfer_at(system: System, s: np.ndarray) -> np.ndarray:
    """H(s) = lᵀ(G + sC + D(s))⁻¹b at complex ``s`` (rad/s), by direct solves (batched
    dense solves for a system of the dense size, SuperLU per point above it)."""
    s = np.atleast_1d(np.asarray(s, complex))
    d = system.delays
    b = np.asarray(system.b, complex)
    l = np.asarray(system.l, float)
    if system.size <= DENSE_MAX:
        a = system.G.toarray()[None] + s[:, None, None] * system.C.toarray()[None]
        if d is not None:
            np.add.at(a, (slice(None), d.rows, d.cols),
                      d.coef[None, :] * np.exp(-np.outer(s, d.tau)))
        return np.linalg.solve(a, np.broadcast_to(b, (s.size, b.size))[..., None])[..., 0] @ l
    out = np.empty(s.size, dtype=complex)
    g, c = system.G.tocsc(), system.C.tocsc()
    for i, si in enumerate(s):
        a = (g + si * c).tocsc()
        if d is not None:
            a = a + sp.csc_matrix((d.coef * np.exp(-si * d.tau), (d.rows, d.cols)),
                                  shape=a.shape)
        out[i] = l @ spla.splu(a.tocsc()).solve(b)
    return out


def talbot_step(system: System, t: np.ndarray, nodes: int = TALBOT_NODES,
                impulse: bool = False) -> np.ndarray:
    """The unit-step response (inverting H(s)/s) or, with ``impulse``, the impulse
    response (inverting H(s)) at times ``t`` (> 0) by the fixed-Talbot inversion."""
    t = np.atleast_1d(np.asarray(t, float))
    y = np.empty(t.size)
    k = np.arange(1, nodes)
    theta = k * math.pi / nodes
    cot = 1.0 / np.tan(theta)
    sigma = theta + (theta * cot - 1.0) * cot
    for i, ti in enumerate(t):
        r = 2.0 * nodes / (5.0 * ti)
        s = r * theta * (cot + 1j)
        f = transfer_at(system, np.r_[r, s])
        if not impulse:
            f = f / np.r_[r, s]
        total = 0.5 * math.exp(r * ti) * f[0].real
        total += np.sum((np.exp(ti * s) * f[1:] * (1.0 + 1j * sigma)).real)
        y[i] = r / nodes * total
    return y


def _residues(k: complex, poles: np.ndarray, zeros: np.ndarray) -> np.ndarray:
    """The residues r_j of H(s) = k·∏(s − z)/∏(s − p) at its simple poles."""
    return np.array([k * np.prod(p - zeros) / np.prod(p - np.delete(poles, j))
                     for j, p in enumerate(poles)])


class StepModel:
    """The unit-step response of a solved response's output as a function of time:
    ``y(t)``, the final value ``final`` = H(0), the ``method``, and ``settles_by``, a time
    by which every pole has decayed to e^−12 (None without a rational form)."""

    def __init__(self, response: object) -> None:
        system = self.system = response.system  # type: ignore[attr-defined]
        poles_hz, zeros_hz, complete = response.roots_hz()  # type: ignore[attr-defined]
        p, z = 2 * math.pi * np.asarray(poles_hz), 2 * math.pi * np.asarray(zeros_hz)
        self.p, self.z = p, z
        self.settles_by: float | None = None
        self._reach = math.inf
        rational = (system.delays is None and complete and z.size <= p.size and p.size > 0
                    and bool(np.all(p.real < 0)))
        if not rational:
            # no rational form: Talbot, up to where its contour encloses every pole the
            # sweep can show (poles up to the top of the sweep); later times are NaN
            f_top = float(response.frequency_hz[-1])  # type: ignore[attr-defined]
            self._reach = _talbot_reach(np.array([2 * math.pi * f_top]))
            try:
                self.final = float(transfer_at(system, np.array([1e-300 + 0j]))[0].real)
            except (RuntimeError, ValueError):
                self.final = math.nan
            self.method = "fixed Talbot"
            return
        self.k = _gain(system, p, z)
        self.final = float((self.k * np.prod(-z) / np.prod(-p)).real)
        self.settles_by = 12.0 / float(np.min(-p.real))
        gaps = np.where(np.eye(p.size, dtype=bool), np.inf, np.abs(p[:, None] - p[None, :]))
        if p.size == 1 or np.min(gaps) > CLOSE_POLES * np.max(np.abs(p)):
            self.r = _residues(self.k, p, z)
            self.method = "pole-zero residues"
            # the check: a few times early in the response, against Talbot. The contour
            # encloses the poles while r = 2M/(5t) is well above their size, so the
            # check times stay below 0.4·M/max|p| (the residues hold at every t alike);
            # two distinct times: every residue enters both
            probe = np.unique(np.minimum(np.array([0.05, 0.3]) * self.settles_by,
                                         _talbot_reach(p)))
            exact = self.y(probe)
            scale = max(abs(self.final), float(np.max(np.abs(exact))), 1e-300)
            if np.max(np.abs(exact - talbot_step(system, probe))) <= CHECK_TOL * scale:
                return
        # repeated (or nearly repeated) poles, or residues that fail the check: the same
        # form as a state-space model, stepped exactly by the matrix exponential
        a, b, c, d = signal.zpk2ss(z, p, self.k)
        self._ss = (a, np.linalg.solve(a, b), c, d)
        self.method = "pole-zero form, state space"

    def y(self, t: np.ndarray) -> np.ndarray:
        """The step response at times ``t`` (s, > 0)."""
        t = np.atleast_1d(np.asarray(t, float))
        if self.method == "pole-zero residues":
            return self.final + (np.exp(np.multiply.outer(t, self.p))
                                 * (self.r / self.p)).sum(axis=1).real
        if self.method == "fixed Talbot":
            out = np.full(t.size, np.nan)
            inside = t <= self._reach
            if inside.any():
                out[inside] = talbot_step(self.system, t[inside])
            return out
        # x' = Ax + B, x(0) = 0: y(t) = C·A⁻¹(e^{At} − I)·B + D (A is invertible: every
        # pole lies in the left half-plane)
        a, a_inv_b, c, d = self._ss
        return np.real(np.array([(c @ (sla.expm(a * ti) @ a_inv_b - a_inv_b)).item()
                                 + d.item() for ti in t]))


def impulse_response(response: object, t: np.ndarray) -> StepResponse:
    """The impulse response h(t) of ``response``'s output at times ``t`` (s, > 0): the
    derivative of the step response, from the same form — Σ r_j e^{p_j t} from the
    residues, C·e^{At}·B from the state space, or Talbot on H(s) — without the D·δ(t) of
    a response with a direct term (``final`` is H(0), as for the step)."""
    model = StepModel(response)
    t = np.atleast_1d(np.asarray(t, float))
    if model.method == "pole-zero residues":
        h = (np.exp(np.multiply.outer(t, model.p)) * model.r).sum(axis=1).real
    elif model.method == "fixed Talbot":
        h = np.full(t.size, np.nan)
        inside = t <= model._reach
        if inside.any():
            h[inside] = talbot_step(model.system, t[inside], impulse=True)
    else:
        a, a_inv_b, c, _ = model._ss
        b = a @ a_inv_b
        h = np.real(np.array([(c @ sla.expm(a * ti) @ b).item() for ti in t]))
    return StepResponse(t, h, model.final, model.method)


def step_response(response: object, t: np.ndarray) -> StepResponse:
    """The unit-step response of ``response``'s output at times ``t`` (s, > 0)."""
    model = StepModel(response)
    t = np.atleast_1d(np.asarray(t, float))
    return StepResponse(t, model.y(t), model.final, model.method)


def _talbot_reach(p: np.ndarray) -> float:
    """The latest time at which the fixed-Talbot contour encloses poles of size |p|."""
    return 0.4 * TALBOT_NODES / float(np.max(np.abs(p)))


def _gain(system: System, p: np.ndarray, z: np.ndarray) -> complex:
    """k of H(s) = k·∏(s − z)/∏(s − p), from H at one point."""
    s0 = complex(0.5 * np.max(np.abs(p)) + 1.0, 0.0)
    return transfer_at(system, np.array([s0]))[0] * np.prod(s0 - p) / np.prod(s0 - z)
