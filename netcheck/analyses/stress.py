"""Part stress: true peak voltage, current and power of each part over the sweep, judged against ratings.

The ``[[stress]]`` tables are parsed when the spec is loaded
(:mod:`netcheck.spec.stress`, ``Spec.stress``; the spec syntax and the amplitude
convention are described there); matching their globs against the circuit's parts and
judging the peaks are done here.

Which parts carry which quantity
--------------------------------
* ``max_voltage``: any two-terminal part (R, L, C, V, I, F, H); V(n+) − V(n−).
* ``max_current``: R (V/R), C (jωC·V), L, V and H (their MNA branch current),
  F (gain × the controlling branch current) and I (the stimulus itself, or 0).
* ``max_power``: resistors only.

A glob that matches nothing, or a matched part of the wrong kind for the
quantity, gives an ERROR result (never a silent pass).

DC bias
-------
In a circuit with devices, solved around its DC operating point, each peak includes
the part's DC bias: |V DC| or |I DC| added to the AC peak, the DC power V²/R added to
a resistor's average AC power (:mod:`netcheck.analyses.stress_bias`;
``StressResult.dc`` says how much). A linear circuit has no operating point and its
parts are judged on the AC stress alone.

Globs use :func:`fnmatch.fnmatchcase` on the upper-cased full hierarchical
name: ``*`` also crosses the dots, so ``C*`` matches top-level capacitors,
``X1.*`` everything inside instance X1, and ``*C3`` also matches ``X1.C3``.

Part models
-----------
An instance of a subcircuit the spec's ``part_models`` names (a quartz crystal
written as Rm, Lm, Cm in series, in parallel with C0) is one physical part: the
elements inside are model parameters, not parts, and no glob matches them. The
part itself is matched by its instance name (``X1``, ``X*``) and judged at its
ports: ``max_voltage`` on the voltage between each pair of ports (part
``X1 (a–b)``), ``max_current`` on the current into each port (part ``X1 (a)``, the
sum of the currents of the elements inside that the port reaches, so ports that
share a node are still told apart); ``max_power`` is not judged on a model. The
hazardous-voltage caution follows the results, so it comes from physical parts
and model ports, never from a node inside a model (the motional capacitor of a
crystal holds kilovolts that exist nowhere a probe could touch).

References
----------
.. [1] C.-W. Ho, A. E. Ruehli and P. A. Brennan, "The modified nodal approach to
   network analysis", IEEE Trans. Circuits and Systems 22(6), 504-509, 1975.
.. [2] R. P. Brent, "Algorithms for Minimization without Derivatives",
   Prentice-Hall, 1973, ch. 5 (the bounded scalar search used for refinement).
.. [3] C. K. Alexander and M. N. O. Sadiku, "Fundamentals of Electric Circuits",
   McGraw-Hill, ch. 11 (average power of a sinusoid, P = Vm·Im/2).
"""

from __future__ import annotations

import fnmatch
import math
from dataclasses import dataclass
from typing import Callable, Sequence

import numpy as np
import scipy.linalg as sla
from scipy.optimize import minimize_scalar

from ..mna.assemble import System, delay_seeds
from ..netlist.ports import PORT_ELEMENTS
from ..netlist.elaborate import PartModel
from ..netlist.elements import (CCCS, CCVS, VCCS, Capacitor, CurrentSource, Element, Inductor,
                       Resistor, VoltageSource)
from ..netlist.elements.devices import Linearised
from ..exceptions import SingularCircuitError
from ..result import STRESS_CAUTION_CODE, Caution, Status
from ..mna.solve import DENSE_MAX, Response
from ..spec.stress import StressLimit
from ..netlist.units import format_si
from .registry import Nominal, Outcome
from .stress_bias import dc_part, dc_solution
from .stress_result import StressResult, compact as _compact

__all__ = ["StressResult", "analyse", "judge_stress", "stress_cautions", "stress_probes", "HAZARD_VOLTAGE_PEAK",
           "REACTIVE_RATIO"]

#: peak volts above which a part's voltage is called out in a caution
HAZARD_VOLTAGE_PEAK = 50.0
#: a reactive part seeing more than this multiple of the stimulus is called out
REACTIVE_RATIO = 5.0
#: most grid local maxima, and most pole frequencies, refined per part
MAX_SEEDS = 6

_TWO_PI = 2.0 * math.pi
_VOLTAGE_KINDS = (Resistor, Capacitor, Inductor, VoltageSource, CurrentSource, CCCS, CCVS)
_CURRENT_KINDS = _VOLTAGE_KINDS
_POWER_KINDS = (Resistor,)
_KIND_TEXT = {
    "voltage": "two-terminal parts (R, L, C, V, I, F, H)",
    "current": "parts whose current is known: R, L, C, V, I, F, H",
    "power": "resistors",
}


@dataclass(frozen=True, slots=True, eq=False)
class _Probe:
    """One part's quantity as a linear function of the MNA solution x (per unit stimulus).

    q(f) = const + (j2πf if ``jw`` else 1) · (x(f) · sel) [+ j2πf · (x(f) · ``sel_jw``)],
    and the judged value is ``scale`` · |q|^``power``. That value is proportional to the
    part's own value raised to ``own`` (−1 for a resistor's current or power, +1 for a
    capacitor's current or a CCCS's, 0 otherwise) at a given solution x, so a sampled
    part value p scales it by (p / nominal)^``own``.
    """

    sel: np.ndarray
    jw: bool
    const: complex
    scale: float
    power: int
    own: int = 0
    #: a second selector multiplied by j2πf (the capacitors in a part model's port current)
    sel_jw: np.ndarray | None = None
    #: the DC current the current sources in a part model send into the port, A (the DC
    #: value of ``const``'s sources; :mod:`netcheck.analyses.stress_bias`)
    dc_const: float = 0.0

    def values(self, f: np.ndarray, x: np.ndarray) -> np.ndarray:
        """Judged values at frequencies ``f`` (Hz) from solutions ``x`` (F × n)."""
        q = x @ self.sel
        if self.jw:
            q = q * (1j * _TWO_PI * f)
        if self.sel_jw is not None:
            q = q + (x @ self.sel_jw) * (1j * _TWO_PI * f)
        return self.scale * np.abs(q + self.const) ** self.power


def _diff_selector(system: System, a: str, b: str) -> np.ndarray:
    sel = np.zeros(system.size)
    for node, sign in ((a, 1.0), (b, -1.0)):
        if node in system.node_index:
            sel[system.node_index[node]] += sign
    return sel


def _probe(system: System, e: Element, quantity: str, amp: float) -> _Probe | str:
    """The probe for ``quantity`` on element ``e``, or why there is none."""
    model = system.circuit.part_model_of(e.name)
    if model is not None:
        return (f"{e.name} is inside {model.name}, a model of one part ({model.subckt}, "
                f"part_models): the part is judged at its ports, as {model.name}")
    kinds = {"voltage": _VOLTAGE_KINDS, "current": _CURRENT_KINDS, "power": _POWER_KINDS}
    if not isinstance(e, kinds[quantity]):
        return (f"{quantity} is judged on {_KIND_TEXT[quantity]}; {e.name} is a "
                f"{type(e).__name__}: narrow the glob")
    v = _diff_selector(system, *e.terminals)
    n = system.size
    if quantity == "voltage":
        return _Probe(v, False, 0j, amp, 1)
    if quantity == "power":  # P = |V|²/(2R) for peak |V| [3]; a 0 Ω wire dissipates none
        return _Probe(v, False, 0j, amp * amp / (2.0 * e.value) if e.value else 0.0, 2, -1)
    if isinstance(e, Resistor) and e.value:
        return _Probe(v / e.value, False, 0j, amp, 1, -1)
    if isinstance(e, Capacitor) and not e.has_branch:
        return _Probe(v * e.value, True, 0j, amp, 1, 1)
    if isinstance(e, CCCS):
        sel = np.zeros(n)
        sel[system.branch_index[e.control]] = e.gain
        return _Probe(sel, False, 0j, amp, 1, 1)
    if isinstance(e, CurrentSource):
        active = 1.0 if e.name == system.source else 0.0  # other sources are zeroed
        return _Probe(np.zeros(n), False, complex(active), amp, 1)
    sel = np.zeros(n)
    # a branch current (L, C with Rser, 0 Ω R, sources); m parallel copies share it
    sel[system.branch_index[e.name]] = 1.0 / getattr(e, "m", 1.0)
    return _Probe(sel, False, 0j, amp, 1)


def _element_current(system: System, e: Element
                     ) -> tuple[np.ndarray, np.ndarray, complex] | None:
    """The current through ``e`` from its first node to its second, per unit stimulus:
    ``(sel, sel_jw, const)`` with I = x·sel + j2πf·(x·sel_jw) + const; None for K.
    The Rpar and Cpar of an L or C count: the current is the whole part's."""
    got = _own_current(system, e)
    if got is None or not (getattr(e, "rpar", 0.0) or getattr(e, "cpar", 0.0)):
        return got
    v = _diff_selector(system, *e.terminals) * e.m
    return (got[0] + (v / e.rpar if e.rpar else 0.0), got[1] + v * e.cpar, got[2])


def _own_current(system: System, e: Element
                 ) -> tuple[np.ndarray, np.ndarray, complex] | None:
    n = system.size
    zero = np.zeros(n)
    if isinstance(e, Resistor) and not e.has_branch:  # 0 Ω: its branch current, below
        return _diff_selector(system, *e.terminals) * (e.m / e.value), zero, 0j
    if isinstance(e, Capacitor) and not e.has_branch:  # with Rser: its branch current
        return zero, _diff_selector(system, *e.terminals) * (e.value * e.m), 0j
    if isinstance(e, VCCS):  # gm·(v_c+ − v_c−) flows n+ → n−
        return _diff_selector(system, e.nodes[2], e.nodes[3]) * e.gain, zero, 0j
    if isinstance(e, CCCS):
        sel = np.zeros(n)
        sel[system.branch_index[e.control]] = e.gain
        return sel, zero, 0j
    if isinstance(e, CurrentSource):
        return zero, zero, complex(1.0 if e.name == system.source else 0.0)
    if e.has_branch:  # L, V, E, H: the branch current leaves the first node [1]
        sel = np.zeros(n)
        sel[system.branch_index[e.name]] = 1.0
        return sel, zero, 0j
    return None


def _model_probes(system: System, model: PartModel, quantity: str, amp: float
                  ) -> list[tuple[tuple[str, ...], _Probe]] | str:
    """(ports, probe) for each quantity at the ports of a part model, or why there is none.

    Voltage: V(port i) − V(port j) for each pair i < j. Current: the current into port
    i, the sum over the element nodes reached through it of the current entering the
    element there (+I at its first node, −I at its second; the controlling nodes of E
    and G draw none).
    """
    if quantity == "power":
        return (f"power is judged on resistors; {model.name} is a model of one part "
                f"({model.subckt}, part_models): rate its port voltage or current")
    if quantity == "voltage":
        if len(model.ports) < 2:
            return (f"{model.name} ({model.subckt}, part_models) has one port: a voltage is "
                    "judged between two ports")
        return [((model.ports[i], model.ports[j]),
                 _Probe(_diff_selector(system, model.nodes[i], model.nodes[j]), False, 0j,
                        amp, 1))
                for i in range(len(model.ports)) for j in range(i + 1, len(model.ports))]
    circuit = system.circuit
    unknown = sorted({name for name, node, _ in model.through
                      if isinstance(circuit.element(name), Linearised) or node <= 1 and
                      _element_current(system, circuit.element(name)) is None})
    if unknown:
        return (f"the current into the ports of {model.name} ({model.subckt}, part_models) "
                f"is not judged: {', '.join(unknown[:4])} inside it carry currents its ports' "
                "sum does not take (semiconductor devices, behavioural current outputs); "
                "judge the current of a part in series with the port instead")
    out = []
    for i, port in enumerate(model.ports):
        sel, sel_jw, const, dc = np.zeros(system.size), np.zeros(system.size), 0j, 0.0
        for name, node, at in model.through:
            e = circuit.element(name)
            if at == i and e.extra_branches and node in (2, 3):  # a line's port 2 branch
                sel[system.branch_index[f"{name} {e.extra_branches[0]}"]] += 3 - 2 * node
            if at != i or node > 1:
                continue
            current = _element_current(system, e)
            if current is None:
                continue
            sign = 1.0 if node == 0 else -1.0
            sel += sign * current[0]
            sel_jw += sign * current[1]
            const += sign * current[2]
            if isinstance(e, CurrentSource):
                dc += sign * e.dc
        out.append(((port,), _Probe(sel, False, const, amp, 1, 0, sel_jw, dc)))
    return out


def _parts(circuit) -> list:
    """What a glob can match, in netlist order: each element outside the part models,
    and each part model (at the place of its first element)."""
    out: list = []
    seen: set[str] = set()
    for e in circuit.elements:
        model = circuit.part_model_of(e.name)
        if model is None:
            out.append(e)
        elif model.name not in seen:
            seen.add(model.name)
            out.append(model)
    out.extend(m for m in circuit.part_models if m.name not in seen)
    return out


def _targets(system: System, lim: StressLimit) -> list[tuple[str, str, dict, _Probe | str]]:
    """What ``lim`` judges: (result part name, element letter, extra StressResult fields,
    probe or why there is none) for every part its glob matches, in netlist order; a part
    model gives one entry per port pair (voltage) or port (current)."""
    out: list[tuple[str, str, dict, _Probe | str]] = []
    for p in _parts(system.circuit):
        if not _matches(lim.parts, p.name):
            continue
        if not isinstance(p, PartModel):
            out.append((p.name, p.letter, {}, _probe(system, p, lim.quantity, lim.amplitude)))
            continue
        probes = _model_probes(system, p, lim.quantity, lim.amplitude)
        if isinstance(probes, str):
            out.append((p.name, "X", dict(model=p.subckt), probes))
            continue
        out.extend((f"{p.name} ({'–'.join(ports)})", "X", dict(model=p.subckt, ports=ports),
                    probe) for ports, probe in probes)
    return out


def stress_probes(system: System, lim: StressLimit
                  ) -> list[tuple[str, Element | None, _Probe]]:
    """(result part name, element or None for a part model's port, probe) for every part
    ``lim`` judges that has a probe: the same parts and names as :func:`judge_stress`,
    for a screen over many samples (a port's probe may carry ``sel_jw``)."""
    circuit = system.circuit
    return [(name, None if letter == "X" else circuit.element(name), probe)
            for name, letter, _, probe in _targets(system, lim) if not isinstance(probe, str)]


def _pole_frequencies(response: Response) -> np.ndarray:
    """Frequencies (Hz) of lightly damped system poles inside the sweep.

    The poles of det(G + sC) are poles of every part's voltage and current, so a
    narrow peak of any part sits near one of them. They come from the response's
    pole–zero engine when it was used, else from the pencil (G, −C) directly.
    """
    f = response.frequency_hz
    if response.system.delays is not None:  # a transmission line: no finite poles
        return delay_seeds(response.system, float(f[0]), float(f[-1]))
    poles = np.asarray(response.poles_hz)
    if poles.size == 0 and response.system.size <= DENSE_MAX:
        g = response.system.G.toarray()
        c = response.system.C.toarray()
        try:
            with np.errstate(all="ignore"):
                lam = sla.eigvals(g, -c)
        except (np.linalg.LinAlgError, ValueError):
            lam = np.zeros(0, dtype=complex)
        poles = lam[np.isfinite(lam)] / _TWO_PI
    p = poles[(poles.imag > 0) & (np.abs(poles.imag) > np.abs(poles.real))]
    cand = np.concatenate([np.abs(p.imag), np.abs(p)])
    return np.unique(cand[(cand >= f[0]) & (cand <= f[-1])])


def _solve_at(engine, f: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Solutions at ``f`` (dropping frequencies where the system is singular)."""
    if f.size == 0:
        return f, np.zeros((0, 0), dtype=complex)
    try:
        return f, engine.solution(f)
    except SingularCircuitError:
        keep, rows = [], []
        for fi in f:  # rare: find the few singular candidates one by one
            try:
                rows.append(engine.solution(np.array([fi]))[0])
                keep.append(fi)
            except SingularCircuitError:
                continue
        return np.array(keep), np.array(rows).reshape(len(keep), -1)


def _refine(value_at: Callable[[float], float], lo: float, hi: float) -> tuple[float, float]:
    """Local maximum of ``value_at`` on [lo, hi] Hz by bounded Brent search on log f [2]_.

    The search variable is t ∈ [0, 1] across the bracket in log f, so its tolerance is
    relative to the bracket and not to the size of log f.
    """
    a, b = math.log(lo), math.log(hi)
    res = minimize_scalar(lambda t: -value_at(math.exp(a + t * (b - a))), bounds=(0.0, 1.0),
                          method="bounded", options={"xatol": 1e-12, "maxiter": 200})
    f = min(max(math.exp(a + float(res.x) * (b - a)), lo), hi)
    return f, -float(res.fun)


def _true_peak(probe: _Probe, grid: np.ndarray, xg: np.ndarray, cand: np.ndarray,
               xc: np.ndarray, engine) -> tuple[float, float]:
    """(peak value, frequency) of one part: grid, pole candidates, then refinement."""
    vg = probe.values(grid, xg)
    vc = probe.values(cand, xc) if cand.size else np.zeros(0)
    if not np.any(np.isfinite(vg)):
        return float("nan"), float("nan")
    n = grid.size
    # grid local maxima (a plateau counts once, at its start), with their neighbours
    pad = np.concatenate([[-np.inf], vg, [-np.inf]])
    top = np.flatnonzero((vg > pad[:-2]) & (vg >= pad[2:])) if n > 1 else np.zeros(0, int)
    top = top[np.argsort(-vg[top], kind="stable")][:MAX_SEEDS]
    seeds = [(grid[max(i - 1, 0)], grid[min(i + 1, n - 1)]) for i in top]
    # pole frequencies: the bracket spans the grid interval holding them and one more each side
    j = np.searchsorted(grid, cand)
    order = np.argsort(-vc, kind="stable")[:MAX_SEEDS]
    seeds += [(grid[max(j[k] - 2, 0)], grid[min(j[k] + 1, n - 1)]) for k in order]
    i = int(np.nanargmax(vg))
    best_v, best_f = float(vg[i]), float(grid[i])
    if vc.size and np.nanmax(vc) > best_v:
        k = int(np.nanargmax(vc))
        best_v, best_f = float(vc[k]), float(cand[k])

    def value_at(f: float) -> float:
        try:
            x = engine.solution(np.array([f]))
        except SingularCircuitError:
            return 0.0
        out = float(probe.values(np.array([f]), x)[0])
        return out if math.isfinite(out) else 0.0

    done = set()
    for lo, hi in seeds:
        if not lo < hi or (lo, hi) in done:
            continue
        done.add((lo, hi))
        f, val = _refine(value_at, lo, hi)
        if val > best_v:
            best_v, best_f = val, f
    return best_v, best_f


def _matches(pattern: str, name: str) -> bool:  # a port's termination is not a part
    return name not in PORT_ELEMENTS and fnmatch.fnmatchcase(name.upper(), pattern.upper())


def judge_stress(limits: Sequence[StressLimit], response: Response, index_offset: int = 0
                 ) -> tuple[StressResult, ...]:
    """Judge every stress limit on a solved response.

    Parameters
    ----------
    limits : sequence of StressLimit
        From :func:`netcheck.spec.stress.parse_stress` (``Spec.stress``).
    response : Response
        The solved sweep; its stimulus source is the one ``source_amplitude`` drives.
    index_offset : int
        Added to each limit's table index for :attr:`StressResult.index` (so stress rows
        can be numbered after the spec's other limits).

    Returns
    -------
    tuple of StressResult
        Per limit, one result per matching part in netlist order; an ERROR result for a
        glob that matches nothing and for each matched part of the wrong kind.

    Notes
    -----
    Each part's peak is the largest of: the full MNA solution on the sweep grid, the
    solution at the frequencies of lightly damped poles inside the sweep, and a bounded
    Brent search on log f around the largest grid local maxima and those pole
    frequencies. The result is never below the grid maximum, and a narrow resonance
    between grid points is found through its pole.

    Examples
    --------
    >>> from netcheck import read_netlist
    >>> ckt = read_netlist("demo\\nV1 in 0 AC 1\\nR1 in a 10\\nL1 a b 1m\\nC1 b 0 10n\\n")
    >>> resp = ckt.ac("V1", "b", freqs=[1e3, 1e4, 1e5, 1e6])
    >>> from netcheck.spec.stress import parse_stress
    >>> lims = parse_stress([{"source_amplitude": 1, "parts": "L1", "max_current": "0.2"}], "demo")
    >>> r = judge_stress(lims, resp)[0]   # series RLC: |I| peaks at V/R = 100 mA at f0
    >>> round(r.peak, 9), r.status.value, round(r.at_hz)
    (0.1, 'pass', 50329)
    """
    system = response.system
    circuit = system.circuit
    src = circuit.element(system.source)
    stim_unit = "V" if isinstance(src, VoltageSource) else "A"
    grid = np.asarray(response.frequency_hz, dtype=float)
    engine = response.direct()
    xg = cand = xc = None
    x_dc = dc_solution(system)  # None without an operating point
    out: list[StressResult] = []
    for lim in limits:
        base = dict(quantity=lim.quantity, rating=lim.rating, amplitude=lim.amplitude,
                    stimulus_unit=stim_unit, rms=lim.rms, pattern=lim.parts,
                    index=lim.index + index_offset, line=lim.line)
        targets = _targets(system, lim)
        if not targets:
            out.append(StressResult(part=lim.parts, peak=None, margin=None, at_hz=None,
                                    status=Status.ERROR, message=_no_match(lim.parts, circuit),
                                    **base))
            continue
        for name, letter, extra, probe in targets:
            if isinstance(probe, str):
                out.append(StressResult(part=name, peak=None, margin=None, at_hz=None,
                                        status=Status.ERROR, message=probe, element=letter,
                                        **extra, **base))
                continue
            if xg is None:
                xg = np.asarray(response.solution())
                cand, xc = _solve_at(engine, _pole_frequencies(response))
            peak, at = _true_peak(probe, grid, xg, cand, xc, engine)
            if not math.isfinite(peak):
                out.append(StressResult(part=name, peak=None, margin=None, at_hz=None,
                                        status=Status.ERROR, element=letter, message=(
                                            f"the {lim.quantity} of {name} is not finite "
                                            "on the sweep"), **extra, **base))
                continue
            dc = None if x_dc is None else float(dc_part(
                probe, lim.quantity, None if letter == "X" else circuit.element(name), x_dc))
            peak += dc or 0.0
            margin = lim.rating - peak
            out.append(StressResult(part=name, peak=peak, margin=margin, at_hz=at,
                                    status=Status.PASS if margin >= 0 else Status.FAIL,
                                    element=letter, dc=dc, **extra, **base))
    return tuple(out)


def _no_match(pattern: str, circuit) -> str:
    """Why a ``parts`` glob matched nothing (and what to write when it names model insides)."""
    inside = sorted({m.name for e in circuit.elements if _matches(pattern, e.name)
                     and (m := circuit.part_model_of(e.name)) is not None})
    if inside:
        shown = ", ".join(inside[:5]) + (f" and {len(inside) - 5} more" if len(inside) > 5 else "")
        what = "a model of one part" if len(inside) == 1 else "each a model of one part"
        return (f"parts glob {pattern!r} matches only elements inside {shown}, {what} "
                "(part_models): a model's elements are not parts; judge the part at its "
                f"ports with parts = {inside[0]!r}")
    return (f"parts glob {pattern!r} matches no part of the circuit (globs match full "
            "hierarchical names, e.g. 'X1.C*' or '*C3')")


def stress_cautions(results: Sequence[StressResult]) -> list[Caution]:
    """Cautions for parts at hazardous voltage or far above the stimulus.

    A caution is raised when a part sees more than :data:`HAZARD_VOLTAGE_PEAK` volts
    peak, or when an inductor or capacitor sees more than :data:`REACTIVE_RATIO` times
    the stimulus amplitude (voltage for a voltage stimulus, current for a current
    stimulus). One caution per part and quantity, in result order. Only what
    :func:`judge_stress` judged can raise one: physical parts and the ports of part
    models, never an element inside a part model.
    """
    out: list[Caution] = []
    seen: set[tuple[str, str]] = set()
    for r in results:
        if r.peak is None or (r.part, r.quantity) in seen:
            continue
        ratio = r.ratio
        reactive = r.element in ("L", "C") and ratio is not None and ratio > REACTIVE_RATIO
        hazard = r.quantity == "voltage" and r.peak > HAZARD_VOLTAGE_PEAK
        if not (reactive or hazard):
            continue
        seen.add((r.part, r.quantity))
        verb = "sees" if r.quantity == "voltage" else "carries"
        head = (f"{r.part} {verb} {_compact(r.peak, r.unit, 3)} peak at "
                f"{format_si(r.at_hz, 'Hz', 3)}")
        if reactive:
            head += f", {ratio:.3g}× the {r.stimulus_text} input"
        if hazard:
            head += f" (above {HAZARD_VOLTAGE_PEAK:g} V)"
        if reactive and r.quantity == "voltage":
            why = "Parts in a resonant circuit can hold voltages well above the input"
        elif reactive:
            why = "Resonant parts can circulate currents well above the input"
        else:
            why = "Voltages of this size can be hazardous to touch"
        out.append(Caution(STRESS_CAUTION_CODE, f"{head}. {why}: rate parts with margin, confirm by "
                           "measurement on the prototype, and follow local codes and licensed "
                           "practice.", "caution"))
    return out


def analyse(nominal: Nominal) -> Outcome | None:
    """The ``[[stress]]`` ratings judged on the nominal solution (rows after the
    limits'); None when the spec has none."""
    if nominal.spec.stress is None:
        return None
    stressed = judge_stress(nominal.spec.stress, nominal.probe.curve.response,
                            index_offset=len(nominal.spec.limits))
    return Outcome(tuple(r.to_limit_result() for r in stressed),
                   tuple(stress_cautions(stressed)), [r.to_json() for r in stressed])
