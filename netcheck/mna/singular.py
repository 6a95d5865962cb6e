"""Errors of circuit equations that cannot be solved, naming the parts involved.

analysis-300: G + sC is singular at a frequency; analysis-303: an entry of G + j2πfC, or the solution,
is out of floating-point range.
"""

from __future__ import annotations

import warnings

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from .assemble import System, element_entries
from ..netlist.elaborate import VALUE_MAX, VALUE_MIN
from ..exceptions import SingularCircuitError
from ..netlist.source import printable

__all__ = ["singular_error", "sparse_singular_error", "nonfinite_error", "check_finite"]

_TWO_PI = 2.0 * np.pi


def singular_error(system: System, a: np.ndarray, f_hz: float) -> SingularCircuitError:
    """analysis-300 for a dense ``a`` = G + j2πfC, equilibrated
    (:func:`~netcheck.mna.conditioning.equilibrate`): its null vector names the unknowns
    involved. It is taken on the equilibrated matrix, where
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


def nonfinite_error(system: System, f_hz: float, solution: bool = False
                     ) -> SingularCircuitError:
    """analysis-303: G + j2πfC (or, with ``solution``, the solution at ``f_hz``) is not finite.

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
                a = system.matrix(f_hz).tocoo()
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
        f"accepted from {VALUE_MIN:g} to {VALUE_MAX:g} in magnitude)", span, code="analysis-303",
        path=path)


def check_finite(system: System, grid: np.ndarray) -> None:
    """analysis-303 unless G + j2πfC is finite at every frequency of ``grid``.

    G must be finite; 2πf·C is largest at the top frequency, so the largest |C| entry
    tells the first frequency where an entry overflows.
    """
    if not np.isfinite(system.G.data).all():
        raise nonfinite_error(system, float(grid.min()))
    cmax = float(np.abs(system.C.data).max(initial=0.0))
    if not np.isfinite(cmax):
        raise nonfinite_error(system, float(grid.min()))
    with np.errstate(over="ignore"):
        bad = ~np.isfinite((_TWO_PI * grid) * cmax)
    if bad.any():
        raise nonfinite_error(system, float(grid[bad].min()))


def sparse_singular_error(system: System, a: sp.csc_matrix, f_hz: float,
                           detail: str) -> SingularCircuitError:
    """analysis-300 for a sparse ``a`` that SuperLU found singular.

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
        # a line's second port is the branch '<name> port2' of the element <name>
        by_row = {i: name.split(" ")[0] for name, i in system.branch_index.items()}
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
