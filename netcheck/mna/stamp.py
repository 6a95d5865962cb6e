"""The stamps' target: Stamper collects the entries of G, C (and delayed entries) that
each element adds, over the unknowns :func:`unknown_names` numbers."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Mapping

import numpy as np
import scipy.sparse as sp

from ..netlist.circuit import GROUND, Circuit

__all__ = ["Delays", "Stamper", "unknown_names"]


@dataclass(frozen=True, slots=True, eq=False)
class Delays:
    """The entries of the circuit matrix that carry a delay: A(s) = G + sC + D(s) with
    D(s)[rows[k], cols[k]] += coef[k]·exp(−s·tau[k]) (transmission lines; duplicates add).
    """

    rows: np.ndarray
    cols: np.ndarray
    coef: np.ndarray
    tau: np.ndarray

    def values(self, f: np.ndarray) -> np.ndarray:
        """coef·exp(−j2πf·tau) for each frequency of ``f`` (F × k)."""
        return self.coef * np.exp(np.multiply.outer(-2j * np.pi * np.asarray(f, float),
                                                    self.tau))

    def derivative(self, f: np.ndarray) -> np.ndarray:
        """d/ds of :meth:`values`: −tau·coef·exp(−s·tau) (F × k)."""
        return -self.tau * self.values(f)



def unknown_names(circuit: Circuit) -> tuple[dict[str, int], dict[str, int]]:
    """Index maps: non-ground node → row, branch element → row (after the nodes)."""
    nodes = {n: i for i, n in enumerate(circuit.nodes)}
    branches: dict[str, int] = {}
    for e in circuit.elements:
        if e.has_branch:
            branches[e.name] = len(nodes) + len(branches)
            for suffix in e.extra_branches:
                branches[f"{e.name} {suffix}"] = len(nodes) + len(branches)
    return nodes, branches


class Stamper:
    """Collects matrix entries from element stamps (values may be per-sample arrays).

    ``small_signal`` gives the small-signal tables of a linearised circuit's devices and
    nonlinear sources for the same samples as ``values`` (name → tables, see
    :mod:`netcheck.mna.bias_samples`); an empty mapping says the nominal tables hold
    (a complex-step perturbation, whose bias move is added apart).
    """

    def __init__(self, circuit: Circuit, values: Mapping[str, Any] | None = None,
                 small_signal: Mapping[str, Any] | None = None) -> None:
        self.circuit = circuit
        self.nodes, self.branches = unknown_names(circuit)
        self.n = len(self.nodes) + len(self.branches)
        self.values = values or {}
        self.small_signal = small_signal
        self.entries: dict[str, tuple[list[int], list[int], list[Any]]] = {
            "G": ([], [], []), "C": ([], [], [])}
        #: delayed entries: rows, columns, coefficients, delays (s)
        self.delays: tuple[list[int], list[int], list[Any], list[float]] = ([], [], [], [])
        self.rhs = np.zeros(self.n)

    def value_of(self, name: str) -> Any:
        """Value of element ``name`` (the override if one is given)."""
        if name in self.values:
            return self.values[name]
        return self.circuit.element(name).value

    def sampled(self, name: str) -> Any:
        """The per-sample small-signal tables of linearised element ``name``, or None when
        its nominal tables hold. Part values given without tables would pair the samples
        with the nominal operating point, which they do not have: refused."""
        if self.small_signal is None:
            if self.values:
                raise AssertionError(f"{name}: sampled part values need each sample's "
                                     "operating point (netcheck.mna.bias_samples)")
            return None
        return self.small_signal.get(name)

    def _row(self, node: str) -> int | None:
        return None if node == GROUND else self.nodes[node]

    def row_of(self, node: str) -> int | None:
        """The row (and column) of ``node``'s voltage; None for ground."""
        return self._row(node)

    def branch(self, name: str) -> int:
        """Row of element ``name``'s branch current."""
        return self.branches[name]

    def add(self, mat: str, row: int | None, col: int | None, value: Any) -> None:
        """Add ``value`` at (row, col) of ``mat`` ('G' or 'C'); ground rows are dropped."""
        if row is None or col is None:
            return
        rows, cols, vals = self.entries[mat]
        rows.append(row)
        cols.append(col)
        vals.append(value)

    def delayed(self, row: int | None, col: int | None, coef: Any, tau: float) -> None:
        """Add coef·exp(−s·tau) at (row, col) of the circuit matrix; ground is dropped."""
        if row is None or col is None:
            return
        for lst, v in zip(self.delays, (row, col, coef, tau)):
            lst.append(v)

    def delayed_node(self, row: int, node: str, coef: Any, tau: float) -> None:
        """:meth:`delayed` at (row, column of ``node``)."""
        self.delayed(row, self._row(node), coef, tau)

    def delay_table(self) -> Delays | None:
        """The delayed entries collected (None if there are none)."""
        rows, cols, coef, tau = self.delays
        if not rows:
            return None
        return Delays(np.asarray(rows, int), np.asarray(cols, int),
                      np.asarray(coef, dtype=float), np.asarray(tau, dtype=float))

    def add_node_col(self, mat: str, row: int, node: str, value: Any) -> None:
        """Add at (row, column of ``node``)."""
        self.add(mat, row, self._row(node), value)

    def add_node_row(self, mat: str, node: str, col: int, value: Any) -> None:
        """Add at (row of ``node``, col)."""
        self.add(mat, self._row(node), col, value)

    def admittance(self, mat: str, a: str, b: str, y: Any) -> None:
        """Two-terminal admittance ``y`` between nodes a and b."""
        ra, rb = self._row(a), self._row(b)
        self.add(mat, ra, ra, y)
        self.add(mat, rb, rb, y)
        self.add(mat, ra, rb, -y)
        self.add(mat, rb, ra, -y)

    def transadmittance(self, p: str, n: str, cp: str, cn: str, g: Any) -> None:
        """Current g·(v_cp − v_cn) from p through the element to n."""
        rp, rn, rcp, rcn = (self._row(x) for x in (p, n, cp, cn))
        self.add("G", rp, rcp, g)
        self.add("G", rp, rcn, -g)
        self.add("G", rn, rcp, -g)
        self.add("G", rn, rcn, g)

    def incidence(self, a: str, b: str, k: int) -> None:
        """Branch k leaves node a and enters node b; its equation reads v_a − v_b."""
        ra, rb = self._row(a), self._row(b)
        self.add("G", ra, k, 1.0)
        self.add("G", rb, k, -1.0)
        self.add("G", k, ra, 1.0)
        self.add("G", k, rb, -1.0)

    def rhs_branch(self, name: str, value: float) -> None:
        """Set the right-hand side of a branch equation."""
        self.rhs[self.branches[name]] += value

    def rhs_node(self, node: str, value: float) -> None:
        """Add a current injected into ``node``."""
        row = self._row(node)
        if row is not None:
            self.rhs[row] += value

    def stamp_all(self) -> None:
        """Stamp every element with its (possibly overridden) value."""
        for e in self.circuit.elements:
            e.stamp(self, self.value_of(e.name))

    def sparse(self, mat: str) -> sp.csc_matrix:
        """The collected entries of ``mat`` as a real CSC matrix (duplicates summed)."""
        rows, cols, vals = self.entries[mat]
        data = np.asarray(vals, dtype=float) if vals else np.zeros(0)
        return sp.csc_matrix((data, (np.asarray(rows, int), np.asarray(cols, int))),
                             shape=(self.n, self.n))

    def batch_entries(self, mat: str, samples: int, dtype: Any = float
                      ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """The entries of ``mat``: rows (k,), columns (k,) and values (samples, k).

        Repeated (row, column) pairs are kept; they add up when the matrix is formed.
        """
        rows, cols, vals = self.entries[mat]
        if not vals:
            return np.zeros(0, int), np.zeros(0, int), np.zeros((samples, 0), dtype=dtype)
        v = np.stack([np.broadcast_to(np.asarray(x, dtype=dtype), (samples,)) for x in vals],
                     axis=1)
        return np.asarray(rows, int), np.asarray(cols, int), v

    def dense_batch(self, mat: str, samples: int, dtype: Any = float) -> np.ndarray:
        """The entries of ``mat`` as a dense (samples, n, n) array."""
        out = np.zeros((samples, self.n, self.n), dtype=dtype)
        rows, cols, v = self.batch_entries(mat, samples, dtype)
        if rows.size:
            np.add.at(out, (slice(None), rows, cols), v)
        return out
