"""Poles of a large sparse MNA pencil near the frequency axis: the seeds of the sparse path.

:func:`sparse_poles` covers the wedge of lightly damped poles over a sweep with discs
of shift-invert Arnoldi searches (ARPACK), growing the number of poles asked for, or
halving a sector, until every disc is known to hold all its poles.
"""

from __future__ import annotations

import cmath
import heapq
import logging
import math
import warnings

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

__all__ = ["sparse_poles", "SPARSE_POLES_PER_SHIFT", "SPARSE_POLES_MAX_PER_SHIFT",
           "SPARSE_POLES_MAX_SHIFTS", "SPARSE_POLES_MAX_RESTARTS"]

log = logging.getLogger(__name__)

_TWO_PI = 2.0 * np.pi
_GOLDEN = (math.sqrt(5.0) - 1.0) / 2.0  # start-vector phases: (i · golden) mod 1
#: poles asked for at each new shift on the sparse path (seeds for narrow features)
SPARSE_POLES_PER_SHIFT = 6
#: most poles asked for at one shift (k grows up to this while its sector is not covered)
SPARSE_POLES_MAX_PER_SHIFT = 48
#: most shifts (sparse LU factorisations) one :func:`sparse_poles` call makes
SPARSE_POLES_MAX_SHIFTS = 64
#: most implicit restarts of one ARPACK run (a run that has not converged by then
#: contributes the poles that did)
SPARSE_POLES_MAX_RESTARTS = 200


def sparse_poles(G: sp.csc_matrix, C: sp.csc_matrix, f_lo: float, f_hi: float,
                 per_shift: int = SPARSE_POLES_PER_SHIFT) -> np.ndarray:
    """Poles s/2π (Hz) of det(G + sC) = 0, including every lightly damped one of the band.

    Every pole with Im s > 0 and |Re s| < Im s (Q > 1/√2) whose frequency Im s/2π or
    |s|/2π lies in [f_lo, f_hi] — the poles
    :func:`netcheck.analyses.nominal.seeds_from_roots` keeps — is found, unless the shift cap
    below is reached; other poles met on the way are returned too (callers filter).

    Parameters
    ----------
    G, C : scipy.sparse.csc_matrix
        The MNA pencil, n × n.
    f_lo, f_hi : float
        The sweep, Hz (0 < f_lo ≤ f_hi).
    per_shift : int
        Fewest poles asked for at a shift (more when poles found at earlier shifts
        already lie within its reach; grown up to :data:`SPARSE_POLES_MAX_PER_SHIFT`).

    Returns
    -------
    ndarray
        Complex poles in Hz, in the order found; a pole found from two shifts appears
        twice (to rounding).

    Notes
    -----
    Shift-invert Arnoldi [1]_: at a shift σ, ARPACK finds the k eigenvalues μ of largest
    modulus of (G + σC)⁻¹C; each gives the pole s = σ − 1/μ, and the largest |μ| are
    the poles nearest σ (infinite poles, μ = 0, never qualify). When all k converged,
    no other pole lies nearer σ than the farthest of them, ρ = max |s − σ|: the disc
    |s − σ| < ρ has been searched completely (ρ = ∞ when a μ = 0 shows that every
    finite pole was found).

    The search covers the part of the cone π/4 ≤ arg s ≤ 3π/4 between the radii
    2π·f_lo and 2π·√2·f_hi, which holds every pole wanted above, with such discs. It
    starts from one annular sector per decade of radius, each the full width of the
    cone. A sector with radii r₁ < r₂ and half-angle h is searched from the shift on
    its bisector at |σ| = (r₁ + r₂)/(2 cos h), which puts all four corners — hence the
    whole sector — within d = √(|σ|² − r₁r₂) of σ, the least possible from the
    bisector. A sector is covered when one disc found so far, around its own shift or
    an earlier one, contains its four corners. At a shift, k starts at ``per_shift``
    (or, if more, m + m/4 + 2 for the m poles already found within d of σ) and grows
    while a converged run's poles reach less far than d: by (d/ρ)², between 2 and 4
    times (4 times after a run that did not converge), to at most
    :data:`SPARSE_POLES_MAX_PER_SHIFT`, re-using the factorisation. A sector still not
    covered is halved across its longer side (at the geometric mean of its radii, or
    its middle angle) and the halves are queued: sectors touching the jω axis first,
    then coarse before fine. Every sector so made has d ≤ 0.92·Im σ, so the disc it
    needs never reaches the real axis: real poles, such as the thousands of a long RC
    chain, never have to be found; they only fill the places beyond d.

    Cost is bounded: at most :data:`SPARSE_POLES_MAX_SHIFTS` shifts (one sparse LU
    each), at most four ARPACK runs at each (k at least doubling up to the cap), each
    at most :data:`SPARSE_POLES_MAX_RESTARTS` implicit restarts. When the shift cap is
    reached the search stops, and poles in the sectors not yet covered — the finest,
    or those farthest from the jω axis, as they are searched last — may be missing
    (a debug log message says so). Best effort: a shift where the matrix is singular
    or ARPACK fails contributes the poles that converged, or nothing, and its sector is
    halved. The start vector is fixed (phases 2π·frac(i·(√5 − 1)/2), i = 1 … n), so
    results repeat exactly.

    References
    ----------
    .. [1] R. B. Lehoucq, D. C. Sorensen and C. Yang, *ARPACK Users' Guide*, SIAM, 1998,
       §3.3 (shift-invert spectral transformation).
    """
    n = G.shape[0]
    k_cap = min(SPARSE_POLES_MAX_PER_SHIFT, n - 2)
    k_min = min(per_shift, k_cap)
    if k_min < 1 or not (0 < f_lo <= f_hi):
        return np.zeros(0, dtype=complex)
    if not (np.isfinite(G.data).all() and np.isfinite(C.data).all()):
        return np.zeros(0, dtype=complex)  # no pencil to search (the solve says why)
    r_lo, r_hi = _TWO_PI * f_lo, _TWO_PI * math.sqrt(2.0) * f_hi
    # start vector: fixed but generic (a constant one has no component along the
    # antisymmetric modes of a symmetric circuit, which then show only through rounding)
    v0 = np.exp(2j * np.pi * ((np.arange(1, n + 1) * _GOLDEN) % 1.0))
    bands = max(1, math.ceil(math.log10(r_hi / r_lo) - 1e-9))
    edges = np.geomspace(r_lo, r_hi, bands + 1)
    quarter = math.pi / 4
    # sectors to search: (angular distance from the jω axis, depth, r1, r2, phi1, phi2)
    todo = [(0.0, 0, float(a), float(b), quarter, 3 * quarter)
            for a, b in zip(edges[:-1], edges[1:])]
    heapq.heapify(todo)
    discs: list[tuple[complex, float]] = []
    found = np.zeros(0, dtype=complex)
    shifts = 0
    while todo:
        _, depth, r1, r2, p1, p2 = heapq.heappop(todo)
        corners = np.array([cmath.rect(r, p) for r in (r1, r2) for p in (p1, p2)])
        if any(np.abs(corners - s0).max() <= rho for s0, rho in discs):
            continue
        if shifts == SPARSE_POLES_MAX_SHIFTS:
            log.debug("sparse_poles: stopped at %d shifts with sectors left from %.4g Hz",
                      shifts, r1 / _TWO_PI)
            break
        shifts += 1
        sigma = cmath.rect((r1 + r2) / (2.0 * math.cos(0.5 * (p2 - p1))), 0.5 * (p1 + p2))
        need = float(np.abs(corners - sigma).max())
        # ask at once for somewhat more than the poles already known to lie within reach
        known = int(np.count_nonzero(np.abs(found - sigma) < need))
        k = min(k_cap, max(k_min, known + known // 4 + 2))
        poles, rho = _poles_near(G, C, sigma, need, k, k_cap, v0)
        found = np.concatenate([found, poles])
        if rho > 0:
            discs.append((sigma, rho))
        if rho >= need:
            continue
        if r2 - r1 >= math.sqrt(r1 * r2) * (p2 - p1):  # halve across the longer side
            rm = math.sqrt(r1 * r2)
            halves = [(r1, rm, p1, p2), (rm, r2, p1, p2)]
        else:
            pm = 0.5 * (p1 + p2)
            halves = [(r1, r2, p1, pm), (r1, r2, pm, p2)]
        for a, b, q1, q2 in halves:
            off = max(0.0, abs(0.5 * (q1 + q2 - math.pi)) - 0.5 * (q2 - q1))
            heapq.heappush(todo, (off, depth + 1, a, b, q1, q2))
    return found / _TWO_PI


def _poles_near(G: sp.csc_matrix, C: sp.csc_matrix, sigma: complex, need: float, k: int,
                k_cap: int, v0: np.ndarray) -> tuple[np.ndarray, float]:
    """The poles (rad/s) nearest the shift ``sigma``, from k of them up to ``k_cap``.

    Parameters
    ----------
    G, C : scipy.sparse.csc_matrix
        The MNA pencil.
    sigma : complex
        The shift, rad/s.
    need : float
        Radius around σ to be searched completely, rad/s.
    k, k_cap : int
        Poles asked for at first, and at most. While a converged run's poles reach
        less far than ``need``, k grows (at least doubled; by the ratio of areas
        (need/ρ)², at most fourfold) and ARPACK is run again.
    v0 : ndarray
        ARPACK's start vector.

    Returns
    -------
    poles : ndarray
        Poles found, rad/s.
    rho : float
        Every pole nearer σ than this is among ``poles``; 0 when nothing can be said
        (singular shift, no run converged).
    """
    n = G.shape[0]
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            lu = spla.splu((G + sigma * C).tocsc(), permc_spec="COLAMD")
    except (RuntimeError, ValueError):
        return np.zeros(0, dtype=complex), 0.0  # the shift is itself (numerically) a pole
    op = spla.LinearOperator((n, n), matvec=lambda v: lu.solve(C @ v), dtype=complex)
    kept: list[np.ndarray] = []
    rho = 0.0
    while True:
        complete = True
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                mu = spla.eigs(op, k=k, which="LM", return_eigenvectors=False, v0=v0,
                               maxiter=SPARSE_POLES_MAX_RESTARTS)
        except spla.ArpackNoConvergence as err:
            mu, complete = np.asarray(err.eigenvalues, dtype=complex), False
        except (spla.ArpackError, ValueError, FloatingPointError):
            mu, complete = np.zeros(0, dtype=complex), False
        mu = mu[np.isfinite(mu)]
        big = mu[np.abs(mu) > 0]
        complete = complete and mu.size == k
        if complete:
            kept = []  # a complete run holds the nearest poles any smaller run found
        kept.append(sigma - 1.0 / big)
        grow = 4.0  # not converged: the poles crowd here, so ask for many more
        if complete:
            # every pole nearer than the farthest found is among them (μ = 0: all are)
            far = math.inf if big.size < mu.size else float((1.0 / np.abs(big)).max())
            rho = max(rho, far * (1.0 - 1e-9))
            grow = min(4.0, max(2.0, (need / far) ** 2))
        if rho >= need or k >= k_cap:
            return np.concatenate(kept), rho
        k = min(k_cap, math.ceil(grow * k))
