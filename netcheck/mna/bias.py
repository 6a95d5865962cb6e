"""The DC operating point of a circuit with devices, and its small-signal equivalent.

The DC equations are the circuit's modified nodal equations at s = 0 (capacitors open,
inductors shorted, every independent source at its DC value) plus the device currents
of :mod:`netcheck.mna.devices`:

    G·x + i_dev(x) = b_dc.

They are solved by Newton–Raphson from x = 0. Each iteration replaces every device by
its companion model at a bias point: the current it carries there plus its conductances
(the exact partial derivatives) times the departure from it. A junction voltage that
would rise too far in one step is held back (:func:`~netcheck.mna.devices.bounded_junction_voltage`),
so the exponential of a junction cannot overflow and the step in its current stays
bounded. When plain Newton does not converge, two homotopies take over, each starting
from the zero solution:

* conductance stepping: a conductance from every node to ground, 10 mS, is made ten
  times smaller at each step down to 1 pS, each step solved from the last, then removed;
* source stepping: every independent source scaled by λ, from 0 (where x = 0 solves the
  equations: no device carries current at zero bias) to 1, in steps that grow while
  Newton converges and shrink where it does not.

Newton has converged when a step changes no node voltage by more than 1e-10 of its
value (plus 1 pV) and no branch current by more than 1e-10 of its value (plus 1 fA),
with every junction voltage taken as proposed (no step held back). A circuit with
several DC solutions (a latch) gets the one Newton reaches from zero, or the first
homotopy that converges reaches; the operating point records which method found it.

:func:`linearised` then replaces each device by a :class:`~netcheck.netlist.elements.devices.Linearised`
element: its small-signal conductances and capacitances at the operating point, so every
engine, measurement, tolerance and worst-case path solves the circuit unchanged.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from typing import Any

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from ..exceptions import OperatingPointError
from ..netlist.circuit import GROUND, Circuit
from ..netlist.device_models import TemperatureRangeError, at_temperature, temperature_refusal
from ..netlist.elements import Element
from ..netlist.elements.controlled import LinearisedSource
from ..netlist.gradients import NoValue
from ..netlist.elements.devices import Bjt, Device, Diode, Jfet, Linearised, Mosfet
from ..netlist.elements.sources import CurrentSource, VoltageSource
from ..netlist.source import printable
from . import devices as eq
from .dc_states import (across, bjt_terminals, diode_terminals, jfet_terminals,
                        junction_pairs, mos_terminals, unstable_poles)
from .stamp import Stamper

__all__ = ["DevicePoint", "OperatingPoint", "operating_point", "linearised",
           "NOMINAL_TEMP_C"]

NOMINAL_TEMP_C = eq.NOMINAL_TEMP_C
#: Newton's convergence test: relative change and the absolute floors (V, A)
RELTOL, VNTOL, ABSTOL = 1e-10, 1e-12, 1e-15
#: most Newton iterations in one solve
MAX_ITERATIONS = 200
#: conductance stepping: first and last conductance to ground, S
GMIN_START, GMIN_END = 1e-2, 1e-12
#: the conductance put across every junction when no method converges without it, S
JUNCTION_GMIN = 1e-12
#: a junction voltage beyond this (V) is no operating point, whatever the equations say
JUNCTION_VOLTAGE_MAX = 1e6


@dataclass(frozen=True, slots=True)
class DevicePoint:
    """One device at the operating point: its kind (``diode``, ``npn``, ``pmos``...),
    region, and the quantities a report shows, (name, value, unit) in order."""

    name: str
    kind: str
    region: str
    quantities: tuple[tuple[str, float, str], ...]


@dataclass(frozen=True, slots=True)
class OperatingPoint:
    """The DC solution: node voltages (V), source branch currents (A), the devices, the
    temperature and how it was found (``Newton``, ``conductance stepping``,
    ``source stepping``) in how many Newton iterations in all."""

    voltages: tuple[tuple[str, float], ...]
    currents: tuple[tuple[str, float], ...]
    devices: tuple[DevicePoint, ...]
    temp_c: float
    method: str
    iterations: int
    #: the conductance across each junction the solution needed (S), 0 for none
    junction_gmin: float = 0.0

    def voltage(self, node: str) -> float:
        """The voltage of ``node`` (0 for ground)."""
        key = node.lower()
        if key in (GROUND, "gnd"):
            return 0.0
        return dict(self.voltages)[key]


# ------------------------------------------------------------------ device companions

class _Companion:
    """One device in the Newton iteration: its terminal rows and, at each iterate, the
    currents into its terminals and their Jacobian at the (limited) bias point."""

    def __init__(self, device: Device, rows: list[int | None], temp_c: float) -> None:
        self.device, self.rows, self.temp_c = device, rows, temp_c
        self.cols = rows  # a device's currents depend on its own terminal voltages
        self.vt = eq.thermal_voltage(temp_c)
        try:  # the parameters at temp_c: the saturation current the steps are limited by
            self.model = at_temperature(device.model, temp_c)
        except TemperatureRangeError as err:
            # a temperature other than the netlist's (which reading it checked)
            raise OperatingPointError(temperature_refusal(device, err), device.span,
                                      code="netlist-166") from None
        self.junctions: list[float] = []   # the last junction voltages used (device frame)
        self.held = False                  # a junction step was held back this iteration
        self.gmin = 0.0                    # a conductance across each junction, S
        self.pairs = junction_pairs(device)

    def voltages(self, x: np.ndarray) -> np.ndarray:
        return np.array([0.0 if r is None else x[r] for r in self.cols])

    def start(self, v: np.ndarray) -> None:
        """Take the junction voltages at terminal voltages ``v`` as the last ones used:
        a solve continued from a solution limits its first step from there, not from 0."""
        d = self.device
        if isinstance(d, Diode):
            self.junctions = [float(v[0] - v[1])]
        elif isinstance(d, (Bjt, Jfet)):  # base/gate to emitter/source, to collector/drain
            p = d.model.polarity
            self.junctions = [float(p * (v[1] - v[2])), float(p * (v[1] - v[0]))]
        else:
            self.junctions = []

    def _limit(self, k: int, v: float, n: float, is_: float) -> float:
        """Junction k's voltage ``v`` (device frame) after limiting against the last."""
        if len(self.junctions) <= k:
            self.junctions.append(0.0)
        nvt = n * self.vt
        crit = nvt * math.log(nvt / (math.sqrt(2.0) * is_))
        got = eq.bounded_junction_voltage(v, self.junctions[k], nvt, crit)
        if got != v:
            self.held = True
        self.junctions[k] = got
        return got

    def evaluate(self, v: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(currents into the terminals, their Jacobian) at terminal voltages ``v``,
        linearised at the limited bias point: i(v) ≈ i0 + J·(v − v0); with ``gmin``, a
        conductance across each junction besides (linear: exact at any v)."""
        i, jac = self._evaluate(v)
        if self.gmin:
            extra = across(self.pairs, len(v), self.gmin)
            return i + extra @ v, jac + extra
        return i, jac

    def _evaluate(self, v: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        self.held = False
        d = self.device
        if isinstance(d, Diode):
            m = d.model
            vd = self._limit(0, v[0] - v[1], m.N, self.model.IS)
            i, jac = diode_terminals(eq.diode(m, vd, self.temp_c))
            return i + jac @ v - jac @ np.array([vd, 0.0]), jac
        if isinstance(d, Bjt):
            m = d.model
            p = m.polarity
            vbe = p * self._limit(0, p * (v[1] - v[2]), m.NF, self.model.IS)
            vbc = p * self._limit(1, p * (v[1] - v[0]), m.NR, self.model.IS)
            i, jac = bjt_terminals(eq.bjt(m, vbe, vbc, self.temp_c))
            at = np.array([v[1] - vbc, v[1], v[1] - vbe])  # terminal voltages of the bias point
            return i + jac @ (v - at), jac
        if isinstance(d, Mosfet):
            m = d.model
            return mos_terminals(eq.mos1(m, v[1] - v[2], v[0] - v[2], v[3] - v[2], d.w, d.l,
                                          self.temp_c))
        if isinstance(d, Jfet):
            m = d.model
            p = m.polarity
            # the gate junctions are limited like a bipolar transistor's
            vgs = p * self._limit(0, p * (v[1] - v[2]), m.N, self.model.IS)
            vgd = p * self._limit(1, p * (v[1] - v[0]), m.N, self.model.IS)
            i, jac = jfet_terminals(eq.jfet(m, vgs, vgs - vgd, self.temp_c))
            at = np.array([v[1] - vgd, v[1], v[1] - vgs])  # terminal voltages of the bias point
            return i + jac @ (v - at), jac
        raise AssertionError(f"no equations for {type(d).__name__}")


class _SourceCompanion:
    """A nonlinear source (POLY or behavioural) in the Newton iteration: output = F(controls).
    Its rows are the output equation's (the branch row of a voltage output, the two
    output nodes of a current output); its columns the unknowns its controls read (node
    voltages, branch currents). F and its exact gradient come from the source's
    ``output``."""

    def __init__(self, source: Any, st: Stamper) -> None:
        self.device, self.held = source, False
        cols: dict[int | None, int] = {}
        self.inputs = []  # per control: [(column position, sign)]
        for control in source.inputs:
            where = ([(st.row_of(control[1]), 1.0), (st.row_of(control[2]), -1.0)]
                     if control[0] == "v" else [(st.branch(control[1]), 1.0)])
            self.inputs.append([(cols.setdefault(r, len(cols)), s) for r, s in where])
        self.cols = list(cols)
        self.voltage = source.has_branch
        self.rows = ([st.branch(source.name)] if self.voltage else
                     [st.row_of(source.nodes[0]), st.row_of(source.nodes[1])])
        m = np.zeros((len(self.inputs), len(self.cols)))
        for k, where in enumerate(self.inputs):
            for pos, s in where:
                m[k, pos] += s
        self.m = m  # d(controls)/d(unknowns read)

    def voltages(self, x: np.ndarray) -> np.ndarray:
        return np.array([0.0 if r is None else x[r] for r in self.cols])

    def start(self, v: np.ndarray) -> None:
        """Nothing to remember between solves: no junction to limit."""

    def output(self, v: np.ndarray) -> tuple[float, np.ndarray]:
        """F and dF/d(controls) at unknowns ``v`` (NoValue where F has none)."""
        value, grad = self.device.output(list(self.m @ v))
        return float(value), np.asarray(grad, dtype=float)

    def evaluate(self, v: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        f, grad = self.output(v)
        g = grad @ self.m
        if self.voltage:  # row k: v+ − v− − F = 0
            return np.array([-f]), -g[None, :]
        return np.array([f, -f]), np.array([g, -g])

    def small_signal(self, x: np.ndarray) -> LinearisedSource:
        _, grad = self.output(self.voltages(x))
        s = self.device
        return LinearisedSource(s.name, s.nodes[:2], s.span, "v" if self.voltage else "i",
                                s.inputs, tuple(float(g) for g in grad))


# ------------------------------------------------------------------ the DC system

def stamp_linear_part(circuit: Circuit, values: Any = None) -> Stamper:
    """A Stamper holding the linear part of the DC equations of ``circuit`` (part values
    from ``values``, scalars or per-sample arrays): every linear element, and the output
    branch of each nonlinear source; the devices stamp nothing here."""
    st = Stamper(circuit, values)
    for e in circuit.elements:
        if e.nonlinear:
            if not isinstance(e, Device):
                e.stamp_linear(st)
        else:
            e.stamp(st, st.value_of(e.name))
    return st


class _DcSystem:
    """The linear part of the DC equations and the devices' companions."""

    def __init__(self, circuit: Circuit, temp_c: float,
                 values: dict[str, float] | None = None) -> None:
        st = stamp_linear_part(circuit, values)
        for e in circuit.elements:
            if isinstance(e, VoltageSource):
                st.rhs_branch(e.name, e.dc)
            elif isinstance(e, CurrentSource):
                st.rhs_node(e.nodes[0], -e.dc)
                st.rhs_node(e.nodes[1], e.dc)
        self.st = st
        g = st.sparse("G").tocsc()
        delays = st.delay_table()
        if delays is not None:  # exp(−s·τ) = 1 at DC
            g = g + sp.csc_matrix((delays.coef, (delays.rows, delays.cols)), shape=g.shape)
        self.g = g
        self.b = st.rhs.copy()
        self.n = st.n
        self.n_nodes = len(st.nodes)
        self.companions: list[Any] = [
            _Companion(e, [st.row_of(n) for n in e.nodes], temp_c) if isinstance(e, Device)
            else _SourceCompanion(e, st)
            for e in circuit.elements if e.nonlinear]
        #: the last behavioural expression found with no value at an iterate
        self.no_value: NoValue | None = None
        #: the conductance across each junction (S): 0 unless nothing converges without
        self.junction_gmin = 0.0

    def set_junction_gmin(self, g: float) -> None:
        """Put a conductance ``g`` across every junction of every device (0: none)."""
        self.junction_gmin = g
        for c in self.companions:
            if isinstance(c, _Companion):
                c.gmin = g

    def largest_junction_voltage(self, x: np.ndarray) -> float:
        """The largest |voltage| across any junction at solution ``x``, V."""
        out = 0.0
        for c in self.companions:
            if isinstance(c, _Companion) and c.pairs:
                v = c.voltages(x)
                out = max(out, max(abs(v[a] - v[b]) for a, b in c.pairs))
        return out

    def linear_start(self) -> np.ndarray | None:
        """The solution with every nonlinear element's output at zero (devices and sources
        off): a start where an expression that has no value at x = 0 may have one."""
        try:
            x = _solve(self.g.tocsc(), self.b)
        except (RuntimeError, ValueError, np.linalg.LinAlgError):
            return None
        return x if np.all(np.isfinite(x)) else None

    def newton(self, x: np.ndarray, scale: float = 1.0, gmin: float = 0.0
               ) -> tuple[np.ndarray, int] | None:
        """Newton from ``x`` with the sources scaled by ``scale`` and ``gmin`` from every
        node to ground: (solution, iterations), or None if it does not converge."""
        diag = sp.diags(np.r_[np.full(self.n_nodes, gmin), np.zeros(self.n - self.n_nodes)])
        base = (self.g + diag).tolil() if gmin else self.g.tolil()
        for c in self.companions:
            c.start(c.voltages(x))
        b = scale * self.b
        for it in range(1, MAX_ITERATIONS + 1):
            a = base.copy()
            rhs = b.copy()
            held = False
            try:
                for c in self.companions:
                    v = c.voltages(x)
                    i0, jac = c.evaluate(v)
                    held |= c.held
                    for r, ii, row in zip(c.rows, i0 - jac @ v, jac):
                        if r is None:
                            continue
                        rhs[r] -= ii
                        for k, jj in zip(c.cols, row):
                            if k is not None and jj:
                                a[r, k] += jj
            except OverflowError:
                return None
            except NoValue as err:  # a behavioural expression out of its domain here
                self.no_value = err
                return None
            try:
                new = _solve(a.tocsc(), rhs)
            except (RuntimeError, ValueError, np.linalg.LinAlgError):
                return None
            if not np.all(np.isfinite(new)):
                return None
            step = np.abs(new - x)
            floor = np.r_[np.full(self.n_nodes, VNTOL), np.full(self.n - self.n_nodes, ABSTOL)]
            x = new
            if not held and np.all(step <= RELTOL * np.abs(x) + floor):
                return x, it
        return None


def _solve(a: sp.csc_matrix, rhs: np.ndarray) -> np.ndarray:
    if a.shape[0] <= 200:
        return np.linalg.solve(a.toarray(), rhs)
    return spla.splu(a).solve(rhs)


def _solve_dc(system: _DcSystem) -> tuple[np.ndarray, str, int]:
    """Newton from zero, then the homotopies; when all fail for a circuit with junctions,
    all again with :data:`JUNCTION_GMIN` across every junction (common practice in
    circuit simulators, no source: it ties a node held only by reverse-biased junctions,
    whose conductance can fall below what a double resolves next to its neighbours')."""
    try:
        return _solve_chain(system)
    except OperatingPointError as err:
        if err.code != "analysis-306" or not any(
                isinstance(c, _Companion) and c.pairs for c in system.companions):
            raise
        system.set_junction_gmin(JUNCTION_GMIN)
        try:
            x, method, iterations = _solve_chain(system)
        except OperatingPointError:
            system.set_junction_gmin(0.0)
            raise err from None
        if system.largest_junction_voltage(x) > JUNCTION_VOLTAGE_MAX:
            # a current forced backwards through a junction: only the 1 pS carries it
            system.set_junction_gmin(0.0)
            raise err from None
        return x, f"{method}, with {JUNCTION_GMIN:g} S across each junction", iterations


def source_stepping(system: _DcSystem, step: float = 0.1, most: float = 0.5
                    ) -> tuple[np.ndarray, int] | None:
    """Every independent source scaled by λ from 0 (x = 0 solves that) to 1, each step
    solved from the last; ``step`` grows twofold while Newton converges, up to ``most``,
    and shrinks fourfold where it does not. (solution, iterations) or None."""
    x, lam, total = np.zeros(system.n), 0.0, 0
    while lam < 1.0:
        target = min(1.0, lam + step)
        got = system.newton(x, scale=target)
        if got is None:
            step /= 4.0
            if step < 1e-6:
                return None
            continue
        x, lam, total = got[0], target, total + got[1]
        step = min(step * 2.0, most)
    return x, total


def _solve_chain(system: _DcSystem) -> tuple[np.ndarray, str, int]:
    zero = np.zeros(system.n)
    got = system.newton(zero)
    if got is not None:
        return got[0], "Newton", got[1]
    total = MAX_ITERATIONS
    if system.no_value is not None:  # an expression with no value at zero: start elsewhere
        start = system.linear_start()
        got = None if start is None else system.newton(start)
        if got is not None:
            return got[0], "Newton", total + got[1]
        total += MAX_ITERATIONS
    # conductance stepping
    x, gmin, ok = zero, GMIN_START, True
    while gmin >= GMIN_END:
        got = system.newton(x, gmin=gmin)
        if got is None:
            ok = False
            break
        x, total = got[0], total + got[1]
        gmin /= 10.0
    if ok:
        got = system.newton(x)
        if got is not None:
            return got[0], "conductance stepping", total + got[1]
    got = source_stepping(system)
    if got is not None:
        return got[0], "source stepping", total + got[1]
    if system.no_value is not None:
        raise _no_value(system.no_value, "where the DC solve went (from zero, from the "
                        "linear solution and with both homotopies)")
    first = system.companions[0].device.span if system.companions else None
    raise OperatingPointError(_failure(system), first)  # at the first device's card


def _no_value(err: NoValue, where: str) -> OperatingPointError:
    """analysis-310 at the operator or function of a behavioural expression that has no value."""
    return OperatingPointError(
        f"a behavioural expression has no value {where}: {err.message}; keep its "
        "arguments inside their domain at the operating point (a divisor away from zero, "
        "a logarithm's argument positive)", err.span, code="analysis-310")


def _failure(system: _DcSystem) -> str:
    names = ", ".join(printable(c.device.name, 60) for c in system.companions[:8])
    more = f" and {len(system.companions) - 8} more" if len(system.companions) > 8 else ""
    what = ("devices" if all(isinstance(c, _Companion) for c in system.companions) else
            "nonlinear parts")
    return ("the DC operating point did not converge: Newton from zero, conductance "
            f"stepping and source stepping all failed for the {what} "
            f"{names}{more}; check the bias network (a node with no DC path, a supply "
            "missing, a model parameter far off)")


# ------------------------------------------------------------------ results

def operating_point(circuit: Circuit, temp_c: float | None = None) -> OperatingPoint:
    """The DC operating point of ``circuit`` with its devices at ``temp_c`` °C (the
    circuit's temperature, its ``.temp``, when not given): the device parameters scaled
    from their ``TNOM`` and the thermal voltage there (docs/devices.md). analysis-306 if
    it cannot be found, netlist-166 if a model cannot be taken to that temperature."""
    return linearised(circuit, temp_c)[1]


def linearised(circuit: Circuit, temp_c: float | None = None
               ) -> tuple[Circuit, OperatingPoint]:
    """``circuit`` with every device replaced by its small-signal equivalent at the
    operating point, and the operating point (see :func:`operating_point`).

    A solution whose small-signal circuit has a pole in the right half-plane (the middle
    state of a latch) is not one the circuit stays in: source stepping in small steps
    (0.01, at most 0.05 of the supplies) looks for a stable one, which is kept if found
    (:mod:`netcheck.mna.dc_states`)."""
    if temp_c is None:
        temp_c = circuit.temp_c
    system = _DcSystem(circuit, temp_c)
    x, method, iterations = _solve_dc(system)
    small, op = _at(circuit, system, x, temp_c, method, iterations)
    unstable = unstable_poles(small)
    if unstable is not None and unstable.size and method != "source stepping":
        got = source_stepping(system, step=0.01, most=0.05)
        if got is not None:
            again = _at(circuit, system, got[0], temp_c, "source stepping in small steps "
                        f"(the {method} solution is unstable)", iterations + got[1])
            left = unstable_poles(again[0])
            if left is not None and not left.size:
                return again
    return small, op


def _at(circuit: Circuit, system: _DcSystem, x: np.ndarray, temp_c: float, method: str,
        iterations: int) -> tuple[Circuit, OperatingPoint]:
    """``circuit`` linearised at DC solution ``x``, and that operating point."""
    points: list[DevicePoint] = []
    replaced: dict[str, Element] = {}
    for c in system.companions:
        if isinstance(c, _SourceCompanion):
            try:
                replaced[c.device.name] = c.small_signal(x)
            except NoValue as err:
                raise _no_value(err, "at the DC operating point") from None
            continue
        small, point = _small_signal(c.device, c.voltages(x), temp_c, system.junction_gmin)
        replaced[c.device.name] = small
        points.append(point)
    st = system.st
    op = OperatingPoint(tuple((n, float(x[i])) for n, i in st.nodes.items()),
                        tuple((b, float(x[i])) for b, i in st.branches.items()),
                        tuple(points), temp_c, method, iterations, system.junction_gmin)
    elements = tuple(replaced.get(e.name, e) for e in circuit.elements)
    return dataclasses.replace(circuit, elements=elements, operating_point=op,
                               large_signal=circuit, _index=None), op


def _small_signal(d: Device, v: np.ndarray, temp_c: float, gmin: float = 0.0
                  ) -> tuple[Linearised, DevicePoint]:
    """The small-signal element and the report of device ``d`` at terminal voltages ``v``
    (with ``gmin`` across each junction when the operating point needed it)."""
    k = len(d.nodes)
    g = np.zeros((k, k))
    cap = np.zeros((k, k))
    kind = d.MODEL_LETTER.lower()
    if isinstance(d, Diode):
        j = eq.diode(d.model, v[0] - v[1], temp_c)
        g[:] = diode_terminals(j)[1]
        _between(cap, ((0, 1, j.c),))
        region = "forward" if v[0] - v[1] > 0 else "reverse"
        quantities = (("Vd", v[0] - v[1], "V"), ("Id", j.i, "A"), ("gd", j.g, "S"),
                      ("Cd", j.c, "F"))
        kind = "diode"
    elif isinstance(d, Bjt):
        m = d.model
        vbe, vbc = v[1] - v[2], v[1] - v[0]
        q = eq.bjt(m, vbe, vbc, temp_c)
        g[:] = bjt_terminals(q)[1]
        # charges: qbe between base and emitter (depends on vbe and vbc), qbc base-collector
        dqbe = np.array([-q.cbe_bc, q.cbe + q.cbe_bc, -q.cbe])
        dqbc = np.array([-q.cbc, q.cbc, 0.0])
        cap[:] = [-dqbc, dqbe + dqbc, -dqbe]
        region = q.region
        kind = "npn" if m.polarity > 0 else "pnp"
        quantities = (("Vbe", vbe, "V"), ("Vce", v[0] - v[2], "V"), ("Ic", q.ic, "A"),
                      ("Ib", q.ib, "A"), ("gm", q.dic_dvbe, "S"),
                      ("rpi", _inverse(q.dib_dvbe), "Ω"), ("ro", _inverse(-q.dic_dvbc), "Ω"),
                      ("Cpi", q.cbe, "F"), ("Cmu", q.cbc, "F"))
    elif isinstance(d, Mosfet):
        m = d.model
        vgs, vds, vbs = v[1] - v[2], v[0] - v[2], v[3] - v[2]
        q = eq.mos1(m, vgs, vds, vbs, d.w, d.l, temp_c)
        g[:] = mos_terminals(q)[1]
        caps = eq.mos1_capacitances(m, vgs, vds, vbs, d.w, d.l, temp_c)
        _between(cap, ((1, 2, caps.cgs), (1, 0, caps.cgd), (1, 3, caps.cgb)))
        region = q.region
        kind = "nmos" if m.polarity > 0 else "pmos"
        quantities = (("Vgs", vgs, "V"), ("Vds", vds, "V"), ("Vbs", vbs, "V"),
                      ("Id", q.id, "A"), ("Vth", q.vth, "V"), ("gm", q.gm, "S"),
                      ("gds", q.gds, "S"), ("gmbs", q.gmbs, "S"), ("Cgs", caps.cgs, "F"),
                      ("Cgd", caps.cgd, "F"))
    else:
        assert isinstance(d, Jfet)
        m = d.model
        vgs, vds = v[1] - v[2], v[0] - v[2]
        q = eq.jfet(m, vgs, vds, temp_c)
        gs, gd = q.gate_source, q.gate_drain
        g[:] = jfet_terminals(q)[1]
        _between(cap, ((1, 2, gs.c), (1, 0, gd.c)))
        region = q.region
        kind = "njf" if m.polarity > 0 else "pjf"
        quantities = (("Vgs", vgs, "V"), ("Vds", vds, "V"), ("Id", q.id, "A"),
                      ("gm", q.gm, "S"), ("gds", q.gds, "S"), ("Cgs", gs.c, "F"),
                      ("Cgd", gd.c, "F"))
    quantities = tuple((n, float(val), unit) for n, val, unit in quantities)
    if gmin:
        g += across(junction_pairs(d), k, gmin)
    small = Linearised(d.name, d.nodes, d.span, _rows(g), _rows(cap), kind, region,
                       tuple((n, val) for n, val, _ in quantities))
    return small, DevicePoint(d.name, kind, region, quantities)


def _between(cap: np.ndarray, pairs: tuple[tuple[int, int, float], ...]) -> None:
    """Add to ``cap`` a capacitance c between terminals a and b for each (a, b, c)."""
    for a, b, c in pairs:
        cap[a, a] += c
        cap[b, b] += c
        cap[a, b] -= c
        cap[b, a] -= c


def _rows(m: np.ndarray) -> tuple[tuple[float, ...], ...]:
    return tuple(tuple(float(x) for x in row) for row in m)


def _inverse(g: float) -> float:
    return 1.0 / g if g else math.inf

