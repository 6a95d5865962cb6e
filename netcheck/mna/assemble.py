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
from .bias import linearised
from .bias_samples import stamp_sampled
from .stamp import Delays, Stamper, unknown_names

__all__ = ["System", "Stamper", "assemble", "assemble_batch", "unknown_names",
           "element_entries", "Delays", "delay_seeds", "DELAY_SEEDS_MAX", "with_output"]

#: the most seeds :func:`delay_seeds` gives one sweep
DELAY_SEEDS_MAX = 4000


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
    return _output_selector(st.nodes, st.n, node, ref)


def _output_selector(nodes: Mapping[str, int], n: int, node: str, ref: str) -> np.ndarray:
    """The selector of V(node) − V(ref) over ``n`` unknowns (netlist-115 for a node not
    in ``nodes``; ``gnd`` is ground)."""
    sel = np.zeros(n)
    for name, sign in ((node, 1.0), (ref, -1.0)):
        key = name.lower()
        key = GROUND if key == "gnd" else key
        if key == GROUND:
            continue
        if key not in nodes:
            raise ElaborationError(f"output node {quoted(name)} is not in the netlist",
                                   code="netlist-115")
        sel[nodes[key]] += sign
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
    if any(e.nonlinear for e in circuit.elements):  # at its operating point
        circuit = linearised(circuit, circuit.temp_c)[0]
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


def with_output(system: System, node: str, ref: str = GROUND) -> System:
    """``system`` with the output V(node) − V(ref): the same matrices and stimulus, only
    the selector changed (one circuit, several outputs).

    Raises
    ------
    ElaborationError
        netlist-115 when a node is not in the circuit.
    """
    import dataclasses

    sel = _output_selector(system.node_index, system.size, node, ref)
    sel.flags.writeable = False
    return dataclasses.replace(system, node=node.lower(), ref=ref.lower(), l=sel)


def assemble_batch(system: System, values: Mapping[str, np.ndarray], samples: int,
                   dtype: Any = float, bias: Any = None) -> tuple[np.ndarray, np.ndarray]:
    """Dense (samples, n, n) G and C with element values replaced per sample (a circuit
    with devices: each sample linearised at its own operating point, ``bias`` when the
    caller has solved them, a :class:`~netcheck.mna.bias_samples.SampledBias`).

    Refused (analysis-305) for a circuit with a transmission line: its delayed entries
    are not in G and C.
    """
    refuse_delays(system, "sampled part values (Monte Carlo, worst case, stress)")
    st = stamp_sampled(system.circuit, values, samples, bias)
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
