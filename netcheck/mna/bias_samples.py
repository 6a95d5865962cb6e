"""Samples of part values on a circuit with devices: each sample at its own operating point.

A resistor's tolerance moves the bias, and the bias sets every device's small-signal
conductances and capacitances (and every nonlinear source's gains), so a sample of part
values cannot reuse the nominal linearisation. :func:`sampled_small_signal` solves the
DC equations of :mod:`netcheck.mna.bias` again for every sample and returns each
linearised element's tables per sample, which :class:`~netcheck.mna.stamp.Stamper`
stamps beside the sampled part values (``Stamper(circuit, values, small_signal=...)``).

Each sample's Newton starts from the nominal operating point (a continuation: part
values a few per cent off move the solution little, so it converges in a few
iterations), on dense matrices whose linear part is stamped for every sample at once.
A sample whose Newton does not converge from there is solved from zero with the full
homotopy of :func:`netcheck.mna.bias.linearised`. The convergence test is the nominal
solve's. Cost: one DC Newton (a few dense solves of the circuit's size, and one
evaluation of every device per iteration, in Python) plus one small-signal evaluation
of every device per sample; it grows with the number of devices times the number of
samples (benchmarks/bench_montecarlo.py measures it).

:func:`bias_sensitivities` gives the change of the tables with each part, p·∂T/∂p, for
the adjoint sensitivities of the worst case. The device equations are real functions
(no complex step through them), so it is a central difference of two re-solved operating
points at p(1 ± h), h = 10⁻⁵: truncation error O(h²) ≈ 10⁻¹⁰ relative, rounding about
10⁻¹⁶/h ≈ 10⁻¹¹ (the Newton solutions themselves converge far below that).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Mapping

import numpy as np

from ..exceptions import OperatingPointError
from ..netlist.circuit import Circuit
from ..netlist.gradients import NoValue
from ..netlist.source import printable
from .bias import (ABSTOL, MAX_ITERATIONS, RELTOL, VNTOL, _DcSystem, _no_value,
                   _small_signal, _solve_dc, _SourceCompanion, stamp_linear_part)
from .stamp import Stamper

__all__ = ["SampledBias", "sampled_small_signal", "bias_sensitivities", "SENSITIVITY_STEP"]

#: relative step of the central difference in :func:`bias_sensitivities`
SENSITIVITY_STEP = 1e-5


@dataclass(frozen=True, slots=True, eq=False)
class SampledBias:
    """Every sample's small-signal tables and device regions.

    ``tables``: linearised element name → ``{"G": (S, k, k), "C": (S, k, k)}`` for a
    device, ``{"gains": (S, m)}`` for a nonlinear source; ``regions``: device name →
    (S,) region names; ``restarted``: samples whose Newton from the nominal operating
    point did not converge and were solved from zero; ``solutions``: (S, n) each sample's
    DC solution, node voltages then branch currents in the order of the nominal
    operating point's ``voltages`` and ``currents``.
    """

    tables: dict[str, dict[str, np.ndarray]]
    regions: dict[str, np.ndarray]
    restarted: int
    solutions: np.ndarray | None = None


def _linear_batch(large: Circuit, values: Mapping[str, np.ndarray], samples: int
                  ) -> np.ndarray:
    """The linear part of the DC equations for every sample: (S, n, n)."""
    st = stamp_linear_part(large, values)
    g = st.dense_batch("G", samples)
    for r, c, coef, _ in zip(*st.delays):  # exp(−s·tau) = 1 at DC
        g[:, r, c] += coef
    return g


class _Scatter:
    """Where one companion's currents and Jacobian go in the dense DC system."""

    def __init__(self, rows: list[int | None], cols: list[int | None]) -> None:
        self.rsel = np.array([i for i, r in enumerate(rows) if r is not None], int)
        self.csel = np.array([i for i, c in enumerate(cols) if c is not None], int)
        self.rows = np.array([rows[i] for i in self.rsel], int)
        self.cols = np.array([cols[i] for i in self.csel], int)
        self.block = (self.rows[:, None], self.cols[None, :])


def _newton(system: _DcSystem, scatter: list[_Scatter], g: np.ndarray, b: np.ndarray,
            x: np.ndarray, floor: np.ndarray) -> np.ndarray | None:
    """Newton on the dense DC system ``g`` from ``x``: the solution, or None."""
    comps = system.companions
    for c in comps:
        c.start(c.voltages(x))
    for _ in range(MAX_ITERATIONS):
        a = g.copy()
        rhs = b.copy()
        held = False
        try:
            for c, sc in zip(comps, scatter):
                v = c.voltages(x)
                i0, jac = c.evaluate(v)
                held |= c.held
                np.subtract.at(rhs, sc.rows, (i0 - jac @ v)[sc.rsel])
                np.add.at(a, sc.block, jac[np.ix_(sc.rsel, sc.csel)])
            new = np.linalg.solve(a, rhs)
        except (OverflowError, NoValue, np.linalg.LinAlgError):
            return None
        if not np.all(np.isfinite(new)):
            return None
        step = np.abs(new - x)
        x = new
        if not held and np.all(step <= RELTOL * np.abs(x) + floor):
            return x
    return None


def sampled_small_signal(circuit: Circuit, values: Mapping[str, np.ndarray], samples: int
                         ) -> SampledBias | None:
    """Each sample's operating point and small-signal tables for linearised ``circuit``
    (None for a circuit without devices or nonlinear sources: nothing to re-solve).

    analysis-311 names the first sample whose operating point cannot be found.
    """
    large, op = circuit.large_signal, circuit.operating_point
    if large is None or op is None:
        return None
    values = {k: np.broadcast_to(np.asarray(v, float), (samples,)) for k, v in values.items()}
    system = _DcSystem(large, op.temp_c)
    system.set_junction_gmin(op.junction_gmin)  # as the nominal solution needed
    g = _linear_batch(large, values, samples)
    x0 = np.array([v for _, v in op.voltages] + [i for _, i in op.currents], float)
    floor = np.r_[np.full(system.n_nodes, VNTOL), np.full(system.n - system.n_nodes, ABSTOL)]
    scatter = [_Scatter(c.rows, c.cols) for c in system.companions]
    tables: dict[str, dict[str, np.ndarray]] = {}
    regions: dict[str, np.ndarray] = {}
    restarted = 0
    solutions = np.empty((samples, x0.size))
    for c in system.companions:
        k = len(c.cols) if isinstance(c, _SourceCompanion) else len(c.device.nodes)
        name = c.device.name
        if isinstance(c, _SourceCompanion):
            tables[name] = {"gains": np.zeros((samples, len(c.device.inputs)))}
        else:
            tables[name] = {"G": np.zeros((samples, k, k)), "C": np.zeros((samples, k, k))}
            regions[name] = np.empty(samples, dtype=object)
    for s in range(samples):
        x = _newton(system, scatter, g[s], system.b, x0, floor)
        if x is None:
            restarted += 1
            x = _restart(large, op.temp_c, values, s)
        solutions[s] = x
        for c in system.companions:
            name = c.device.name
            if isinstance(c, _SourceCompanion):
                try:
                    tables[name]["gains"][s] = c.small_signal(x).gains
                except NoValue as err:
                    raise _no_value(err, f"at the operating point of sample {s + 1}") from None
                continue
            small, point = _small_signal(c.device, c.voltages(x), op.temp_c,
                                         op.junction_gmin)
            tables[name]["G"][s] = small.g
            tables[name]["C"][s] = small.c
            regions[name][s] = point.region
    return SampledBias(tables, regions, restarted, solutions)


def _restart(large: Circuit, temp_c: float, values: Mapping[str, np.ndarray], s: int
             ) -> np.ndarray:
    """Sample ``s`` solved from zero with the full homotopy (analysis-311 if it fails)."""
    here = {k: float(v[s]) for k, v in values.items()}
    try:
        return _solve_dc(_DcSystem(large, temp_c, here))[0]
    except OperatingPointError as err:
        parts = ", ".join(f"{printable(k, 40)} = {v:.6g}" for k, v in list(here.items())[:6])
        more = f" and {len(here) - 6} more" if len(here) > 6 else ""
        raise OperatingPointError(
            f"the DC operating point of sample {s + 1} ({parts}{more}) could not be found, "
            f"so its small-signal response is unknown: {err.message}", err.span,
            code="analysis-311") from None


def bias_sensitivities(circuit: Circuit, parts: list[tuple[str, float]]
                       ) -> list[dict[str, dict[str, np.ndarray]]] | None:
    """For each part (name, nominal value): the tables at p(1 + h) and p(1 − h) as two
    samples (``{name: {"G": (2, k, k), ...}}``), whose difference over 2h is p·∂T/∂p
    (see the module's note); None for a circuit without devices."""
    if circuit.large_signal is None or not parts:
        return None
    h = SENSITIVITY_STEP
    count = 2 * len(parts)
    values: dict[str, np.ndarray] = {}
    for k, (name, nominal) in enumerate(parts):
        column = values.setdefault(name, np.full(count, float(nominal)))
        column[2 * k] = nominal * (1.0 + h)
        column[2 * k + 1] = nominal * (1.0 - h)
    got = sampled_small_signal(circuit, values, count)
    assert got is not None
    return [{e: {m: t[2 * k:2 * k + 2] for m, t in tabs.items()}
             for e, tabs in got.tables.items()} for k in range(len(parts))]


def stamp_sampled(circuit: Circuit, values: Mapping[str, Any], samples: int,
                  bias: SampledBias | None = None) -> Stamper:
    """A Stamper with every element stamped for ``samples`` samples of ``values``, the
    linearised elements at each sample's own operating point (``bias``, solved here when
    not given)."""
    if bias is None and values:
        bias = sampled_small_signal(circuit, values, samples)
    st = Stamper(circuit, values, small_signal={} if bias is None else bias.tables)
    st.stamp_all()
    return st
