"""Circuit → MNA system: sparse real G and C, stimulus b and output selector l."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Mapping

import numpy as np
import scipy.sparse as sp

from ..netlist.elaborate import GROUND, Circuit
from ..netlist.elements import CurrentSource, VoltageSource
from ..exceptions import ElaborationError, MeasurementError
from ..netlist.source import printable, quoted

__all__ = ["System", "Stamper", "assemble", "assemble_batch", "unknown_names",
           "element_entries", "Delays", "delay_seeds", "DELAY_SEEDS_MAX"]

#: the most seeds :func:`delay_seeds` gives one sweep
DELAY_SEEDS_MAX = 4000


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


def delay_seeds(system: "System", f_lo: float, f_hi: float) -> np.ndarray:
    """Frequencies in [f_lo, f_hi] where a delay of the circuit is a whole number of
    quarter periods, f = n/(4τ) (where a line is n quarter wavelengths long: the
    centres, notches and band edges of a line or stub filter sit there [1]_), at most
    :data:`DELAY_SEEDS_MAX` (the first ones from f_lo on). Empty without delays.

    .. [1] P. I. Richards, "Resistor-transmission-line circuits", Proc. IRE 36(2),
       217-220, 1948 (cited from memory).
    """
    d = system.delays
    if d is None:
        return np.zeros(0)
    out = []
    for tau in np.unique(d.tau):
        q = 1.0 / (4.0 * float(tau))
        first = max(1, int(np.ceil(f_lo / q)))
        last = min(int(np.floor(f_hi / q)), first + DELAY_SEEDS_MAX)
        out.append(q * np.arange(first, last + 1, dtype=float))
    seeds = np.unique(np.concatenate(out)) if out else np.zeros(0)
    return seeds[:DELAY_SEEDS_MAX]


@dataclass(frozen=True, slots=True, eq=False)
class System:
    """The MNA equations (G + sC) x = b for a unit stimulus, and y = l·x.

    Attributes
    ----------
    G, C : scipy.sparse.csc_matrix
        Real n×n conductance-like and capacitance-like matrices (do not mutate).
    b : ndarray
        Stimulus vector for a unit AC value of ``source``.
    l : ndarray
        Output selector: y = V(node) − V(ref).
    unknowns : tuple of str
        ``V(node)`` or ``I(element)`` for each row.
    """

    circuit: Circuit
    source: str
    node: str
    ref: str
    G: sp.csc_matrix
    C: sp.csc_matrix
    b: np.ndarray
    l: np.ndarray
    unknowns: tuple[str, ...]
    node_index: Mapping[str, int]
    branch_index: Mapping[str, int]
    #: entries with a delay (transmission lines), None for a rational circuit
    delays: Delays | None = None

    @property
    def size(self) -> int:
        """Number of unknowns."""
        return len(self.unknowns)

    def matrix(self, f_hz: float) -> sp.csc_matrix:
        """The complex circuit matrix A = G + j2πfC (+ the delayed entries) at ``f_hz``."""
        a = (self.G + (2j * np.pi * f_hz) * self.C).tocsc()
        d = self.delays
        if d is not None:
            a = a + sp.csc_matrix((d.values(np.array([f_hz]))[0], (d.rows, d.cols)),
                                  shape=a.shape)
        return a.tocsc()

    def input_current_selector(self) -> np.ndarray:
        """Selector giving the current the stimulus delivers into the circuit (A per unit)."""
        sel = np.zeros(self.size)
        src = self.circuit.element(self.source)
        if isinstance(src, VoltageSource):
            sel[self.branch_index[src.name]] = -1.0
        return sel

    def input_voltage_selector(self) -> np.ndarray:
        """Selector of the voltage across the stimulus, in its delivering sense."""
        src = self.circuit.element(self.source)
        sel = np.zeros(self.size)
        a, b = src.nodes
        sign = 1.0 if isinstance(src, VoltageSource) else -1.0
        if a != GROUND:
            sel[self.node_index[a]] += sign
        if b != GROUND:
            sel[self.node_index[b]] -= sign
        return sel


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
    """Collects matrix entries from element stamps (values may be per-sample arrays)."""

    def __init__(self, circuit: Circuit, values: Mapping[str, Any] | None = None) -> None:
        self.circuit = circuit
        self.nodes, self.branches = unknown_names(circuit)
        self.n = len(self.nodes) + len(self.branches)
        self.values = values or {}
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

    def _row(self, node: str) -> int | None:
        return None if node == GROUND else self.nodes[node]

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


def _stimulus_and_output(circuit: Circuit, source: str, node: str, ref: str,
                         st: Stamper) -> np.ndarray:
    if not circuit.has_element(source):
        names = [printable(e.name, 60) for e in circuit.elements if e.letter in "VI"]
        known = (", ".join(names[:10]) + (f" and {len(names) - 10:,} more"
                                          if len(names) > 10 else "")) or "none"
        if not names:
            raise ElaborationError(
                f"stimulus source {quoted(source)} is not in the netlist, which has no "
                "independent source at all (a subcircuit-only file?): add a source card "
                "that drives its input, e.g. 'V1 in 0 AC 1', or a test-bench netlist that "
                ".include-s this file, instantiates the subcircuit (X1 ...) and drives it; "
                "then name that source", code="netlist-107")
        raise ElaborationError(f"stimulus source {quoted(source)} is not in the netlist "
                               f"(independent sources: {known})", code="netlist-107")
    src = circuit.element(source)
    if not isinstance(src, (VoltageSource, CurrentSource)):
        raise ElaborationError(f"stimulus {printable(src.name)} is not an independent V or I "
                               "source",
                               src.span, code="netlist-107")
    src.excite(st)
    sel = np.zeros(st.n)
    for name, sign in ((node, 1.0), (ref, -1.0)):
        key = name.lower()
        key = GROUND if key == "gnd" else key
        if key == GROUND:
            continue
        if key not in st.nodes:
            raise ElaborationError(f"output node {quoted(name)} is not in the netlist",
                                   code="netlist-115")
        sel[st.nodes[key]] += sign
    return sel


def assemble(circuit: Circuit, source: str, node: str, ref: str = GROUND) -> System:
    """Stamp every element into sparse G and C (Ho, Ruehli & Brennan 1975).

    Parameters
    ----------
    circuit : Circuit
    source : str
        Independent source giving the unit stimulus (other independent sources are zeroed).
    node, ref : str
        Output is V(node) − V(ref).
    """
    st = Stamper(circuit)
    st.stamp_all()
    sel = _stimulus_and_output(circuit, source, node, ref, st)
    nodes, branches = st.nodes, st.branches
    unknowns = tuple([f"V({n})" for n in nodes] + [f"I({b})" for b in branches])
    b = st.rhs.copy()
    for arr in (b, sel):
        arr.flags.writeable = False
    src = circuit.element(source)
    return System(circuit, src.name, node.lower(), ref.lower(), st.sparse("G"), st.sparse("C"),
                  b, sel, unknowns, nodes, branches, st.delay_table())


def assemble_batch(system: System, values: Mapping[str, np.ndarray], samples: int,
                   dtype: Any = float) -> tuple[np.ndarray, np.ndarray]:
    """Dense (samples, n, n) G and C with element values replaced per sample.

    Refused (analysis-305) for a circuit with a transmission line: its delayed entries
    are not in G and C.
    """
    refuse_delays(system, "sampled part values (Monte Carlo, worst case, stress)")
    st = Stamper(system.circuit, values)
    st.stamp_all()
    return st.dense_batch("G", samples, dtype), st.dense_batch("C", samples, dtype)


def element_entries(circuit: Circuit) -> list[tuple[Any, float, float, frozenset[int]]]:
    """Each element's share of the matrices: (element, largest |G| entry it stamps,
    largest |C| entry it stamps, the rows and columns it touches).

    For naming the parts behind a circuit matrix that is not finite; the sizes are
    computed with overflow allowed (inf for a conductance 1/R that overflows).
    """
    st = Stamper(circuit)
    out = []
    with np.errstate(all="ignore"):
        for e in circuit.elements:
            start = {m: len(st.entries[m][2]) for m in ("G", "C")}
            try:
                e.stamp(st, st.value_of(e.name))
            except (ArithmeticError, ValueError, KeyError):
                out.append((e, np.inf, 0.0, frozenset()))
                continue
            sizes, where = [], set()
            for m in ("G", "C"):
                rows, cols, vals = st.entries[m]
                new = vals[start[m]:]
                sizes.append(max((abs(float(v)) for v in new), default=0.0))
                where.update(rows[start[m]:])
                where.update(cols[start[m]:])
            out.append((e, sizes[0], sizes[1], frozenset(where)))
    return out


def refuse_delays(system: System, what: str) -> None:
    """analysis-305 if ``system`` has delayed entries: ``what`` needs a rational circuit."""
    if system.delays is None:
        return
    lines = [e for e in system.circuit.elements if e.extra_branches]
    first = lines[0] if lines else None
    raise MeasurementError(
        f"{what} not available for a circuit with a transmission line "
        f"({printable(first.name) if first else 'T'}): its response is not a rational "
        "function of frequency; the nominal check is exact", first.span if first else None,
        code="analysis-305")
