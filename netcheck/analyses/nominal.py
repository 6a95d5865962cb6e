"""Spec × circuit → SpecResult: solve, measure, judge every limit, collect cautions."""

from __future__ import annotations

import dataclasses
import hashlib
import math
import warnings
from dataclasses import dataclass, field
from typing import Callable
from pathlib import Path

import numpy as np

from ..mna.assemble import System, assemble, delay_seeds
from ..netlist.elaborate import Circuit, elaborate
from ..netlist.parse import Netlist, load_netlist
from ..exceptions import ElaborationError, NetcheckError, NetcheckWarning, SpecError
from ..measure.measurements import (Extremum, MeasurementFailure, Resonance, band_extremes, corner, peak,
                      resonance, root_seeds)
from ..result import Caution, Curves, SpecResult, Status, worst_status
from ..mna.solve import Response, solve
from ..spec.load import Spec, load_spec, locate
from ..netlist.units import format_eng, format_si
from .hazard import magnification_caution
from .operating import operating_point_block, region_cautions, stability_caution
from .outputs import output_label, output_systems
from .registry import Nominal, diag_caution, run_analyses

__all__ = ["ResponseCurve", "SpecProbe", "evaluate", "check_spec", "seeds_from_roots",
           "error_result", "failure_result", "TRACEBACK_MAX"]

#: the most characters of a traceback an internal-error result keeps (its last ones)
TRACEBACK_MAX = 4000

_TWO_PI = 2.0 * math.pi


def seeds_from_roots(roots_hz: np.ndarray, lo: float, hi: float) -> np.ndarray:
    """Frequencies (Hz) where lightly damped poles or zeros put narrow features.

    For a root s/2π = σ + jν the feature sits near |ν| (and |s|/2π); only roots with
    |ν| > |σ| (Q above 1/√2) inside the sweep are kept (:func:`netcheck.measure.root_seeds`).
    """
    return root_seeds(roots_hz, lo, hi)


class _CachedCurve:
    """A Curve whose ``transfer`` and ``dtransfer`` share one evaluation.

    Measurements ask for H and dH/df at the same points one after the other; the last
    evaluation is kept, so each point costs one solve. Subclasses give ``_evaluate``.
    """

    __slots__ = ()

    def _evaluate(self, f: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        raise NotImplementedError

    def _both(self, f_hz: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        f = np.asarray(f_hz, dtype=float)
        key = f.tobytes()
        if self._last.get("key") != key:
            h, dh = self._evaluate(f)
            self._last.update(key=key, h=h, dh=dh)
        return self._last["h"], self._last["dh"]

    def transfer(self, f_hz: np.ndarray) -> np.ndarray:
        return self._both(f_hz)[0].copy()

    def dtransfer(self, f_hz: np.ndarray) -> np.ndarray:
        return self._both(f_hz)[1].copy()


@dataclass(frozen=True, slots=True, eq=False)
class ResponseCurve(_CachedCurve):
    """A :class:`netcheck.measure.Curve` over a solved :class:`Response`."""

    response: Response
    grid_hz: np.ndarray
    seeds_hz: np.ndarray
    poles_hz: np.ndarray | None = None
    zeros_hz: np.ndarray | None = None
    roots_complete: bool = False
    _last: dict = field(default_factory=dict, repr=False)

    @classmethod
    def of(cls, response: Response) -> "ResponseCurve":
        """The curve of ``response``, seeded by its poles and zeros on every engine
        (:meth:`Response.roots_hz`), whatever the number of sweep points."""
        f = response.frequency_hz
        poles, zeros, complete = response.roots_hz()
        seeds = np.concatenate([seeds_from_roots(poles, f[0], f[-1]),
                                seeds_from_roots(zeros, f[0], f[-1]),
                                # a transmission line: where a line is n quarter waves long
                                delay_seeds(response.system, float(f[0]), float(f[-1]))])
        return cls(response, f, np.unique(seeds), poles, zeros, complete)

    def _evaluate(self, f: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        return self.response.at(f)


@dataclass(frozen=True, slots=True, eq=False)
class ImpedanceCurve(_CachedCurve):
    """Input impedance Z(f) seen by the stimulus, exact (direct solves)."""

    response: Response
    grid_hz: np.ndarray
    seeds_hz: np.ndarray
    poles_hz: np.ndarray | None = None
    zeros_hz: np.ndarray | None = None
    roots_complete: bool = False
    _last: dict = field(default_factory=dict, repr=False)

    @classmethod
    def of(cls, response: Response, seeds_hz: np.ndarray) -> "ImpedanceCurve":
        """Z(f) of ``response``'s circuit, with the roots of the current (V stimulus;
        |Z| = 1/|I| turns where |I| does) or of the voltage (I stimulus) at the input."""
        system = response.system
        if system.circuit.element(system.source).letter == "V":
            sel = system.input_current_selector()
        else:
            sel = system.input_voltage_selector()
        poles, zeros, complete = response.roots_hz(sel)
        return cls(response, response.frequency_hz, seeds_hz, poles, zeros, complete)

    def _evaluate(self, f: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        system = self.response.system
        engine = self.response.direct()
        if system.circuit.element(system.source).letter == "V":
            i, di = engine.transfer(f, system.input_current_selector())
            with np.errstate(all="ignore"):
                return 1.0 / i, -di / (i * i)
        return engine.transfer(f, system.input_voltage_selector())


@dataclass(eq=False)
class SpecProbe:
    """What limits measure on, with the shared measurements cached."""

    curve: ResponseCurve
    sweep: object
    _peak: Extremum | None = None
    _res: dict = field(default_factory=dict)
    _ext: dict = field(default_factory=dict)
    _imp: ImpedanceCurve | None = None
    #: the spec's ports (netcheck.netlist.ports.PortSpec), None without ``[ports]``
    ports: object = None
    _ports: object = None
    #: every named output's probe by name (``[outputs]``), shared by all of them
    siblings: dict = field(default_factory=dict)

    def sibling(self, name: str) -> "SpecProbe":
        """The probe of the output named ``name`` (a crossover compares two)."""
        return self.siblings[name]

    def port_extremes(self, port: str, quantity: str, lo_hz: float, hi_hz: float
                      ) -> tuple[Extremum, Extremum]:
        """Band extremes, in dB, of |Z| ('impedance', 20 log10 of ohms) or |Γ|
        ('reflection') looking into ``port`` ('input', 'output'), measured once."""
        key = ("port", port, quantity, lo_hz, hi_hz)
        if key not in self._ext:
            if self._ports is None:
                from .port_probe import PortCurves
                self._ports = PortCurves(self.curve.response, self.ports, self.impedance(),
                                         self.curve.seeds_hz, ImpedanceCurve.of)
            curve = self._ports.curve(port, quantity)  # type: ignore[attr-defined]
            self._ext[key] = band_extremes(curve, "gain_db", lo_hz, hi_hz)
        return self._ext[key]

    def noise(self, temp_c: float | None = None) -> object:
        """The noise curves at ``temp_c`` °C (default: the circuit's temperature), made
        once per temperature (:class:`netcheck.analyses.noise_probe.NoiseCurves`)."""
        from .noise_probe import NoiseCurves

        t = self.curve.response.system.circuit.temp_c if temp_c is None else temp_c
        key = ("noise", t)
        if key not in self._ext:
            self._ext[key] = NoiseCurves(self.curve.response, self.curve, t)
        return self._ext[key]

    def step_figures(self, duration: float | None = None) -> object:
        """The step response's figures (:class:`netcheck.analyses.step_probe.StepFigures`),
        made once per duration."""
        from .step_probe import StepFigures

        key = ("step", duration)
        if key not in self._ext:
            self._ext[key] = StepFigures(self.curve.response, duration)
        return self._ext[key]

    def peak(self) -> Extremum:
        if self._peak is None:
            self._peak = peak(self.curve)
        return self._peak

    def resonance(self, level_db: float | None, band: tuple[float, float] | None) -> Resonance:
        key = (level_db, band)
        if key not in self._res:
            lo, hi = band if band else (None, None)
            self._res[key] = resonance(self.curve, level_db, lo, hi)
        return self._res[key]

    def corner(self, level_db: float | None, reference_db: float | None, side: str) -> float:
        """Low- or high-pass edge (see :func:`netcheck.measure.corner`), measured once."""
        key = ("corner", level_db, reference_db, side)
        if key not in self._ext:
            self._ext[key] = corner(self.curve, level_db, reference_db, side, top=self.peak())
        return self._ext[key]

    def extremes(self, quantity: str, lo_hz: float, hi_hz: float) -> tuple[Extremum, Extremum]:
        """Band extremes of ``quantity`` (see :class:`netcheck.spec.limits.Probe`), measured once."""
        key = (quantity, lo_hz, hi_hz)
        if key not in self._ext:
            if quantity == "impedance_db":
                self._ext[key] = band_extremes(self.impedance(), "gain_db", lo_hz, hi_hz)
            else:
                self._ext[key] = band_extremes(self.curve, quantity, lo_hz, hi_hz)
        return self._ext[key]

    def impedance(self) -> ImpedanceCurve:
        if self._imp is None:
            self._imp = ImpedanceCurve.of(self.curve.response, self.curve.seeds_hz)
        return self._imp


def _sha256(text: str) -> str:
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def _assemble_for(spec: Spec, circuit: Circuit) -> System:
    try:
        return assemble(circuit, spec.source, spec.output[0], spec.output[1])
    except ElaborationError as err:
        key = "source" if err.code == "netlist-107" else "output"
        if key == "output" and spec.outputs:
            key = f"outputs.{spec.outputs[0][0]}"
        raise SpecError(f"{key}: {err.message}", code="spec-203", path=spec.path,
                        where=key) from None


#: a sweep whose largest gain is this far below 0 dB is tested for rounding noise
_DEAD_SCREEN_DB = -100.0


def _require_signal(spec: Spec, system: System, response: Response,
                    name: str | None = None) -> None:
    """Refuse a response with no signal in it (analysis-304), so no limit can pass on it.

    An output that is not driven (a node off the signal path, ground against a ground
    alias) has H = 0 at every frequency, −∞ dB: every upper gain bound would pass with an
    infinite margin. The same holds when the largest gain of the sweep lies within the
    rounding bound of a direct solve there (``_limit_base.gain_floor_db``): then every
    value of the sweep is noise. A rational H that is zero on more grid points than its
    order is zero everywhere, so the grid decides.
    """
    gain = response.magnitude_db
    k = int(np.argmax(np.where(np.isnan(gain), -np.inf, gain)))
    pair = spec.output_pair(name)
    out = f"V({pair[0]})" + ("" if pair[1] == "0" else f" − V({pair[1]})")
    where = f"outputs.{name}" if name else "output"
    lo, hi = format_si(spec.sweep.start_hz, "Hz", 4), format_si(spec.sweep.stop_hz, "Hz", 4)
    tail = (f"so no limit can be judged. Check that the output is driven by {system.source} "
            "and, for a differential output, that its two sides are not balanced")
    if gain[k] == -math.inf:
        raise SpecError(f"{where}: no signal: {out} is exactly zero at every frequency from "
                        f"{lo} to {hi}, {tail}", code="analysis-304", path=spec.path, where=where)
    if gain[k] > _DEAD_SCREEN_DB:
        return
    from ..spec.limits.base import rounding_floor_db
    floor = rounding_floor_db(system, float(response.frequency_hz[k]))
    if floor is not None and gain[k] <= floor:
        raise SpecError(
            f"{where}: no signal: the largest gain from {lo} to {hi}, "
            f"{format_eng(gain[k], 'dB', 1)} at {format_si(float(response.frequency_hz[k]), 'Hz', 5)}, lies below "
            f"the rounding floor of the solve there ({format_eng(floor, 'dB', 1)}): {out} cannot be told "
            f"from zero, {tail}", code="analysis-304", path=spec.path, where=where)


def evaluate(spec: Spec, circuit: Circuit, variant: str | None = None,
             plot_detail: bool = True,
             rebuild: "Callable[[dict[str, float]], Circuit] | None" = None) -> SpecResult:
    """Judge every limit of ``spec`` on ``circuit``.

    ``rebuild`` elaborates the netlist again with global ``.param`` values replaced (the
    tolerances of a ``.param`` need it); without it such tolerances are refused.

    Raises
    ------
    SpecError
        When the spec names a source or node the circuit does not have.
    NetcheckError
        When the circuit cannot be solved (singular).
    """
    system = _assemble_for(spec, circuit)
    grid = spec.sweep.grid()
    cautions = [diag_caution(d) for d in circuit.diagnostics]
    src = circuit.element(system.source)
    if not getattr(src, "has_ac", True):
        cautions.append(Caution("netlist-153", f"stimulus {src.name} has no AC value; results are "
                                "per unit stimulus", "warning", src.span.path, src.span.line,
                                src.span.column))
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", NetcheckWarning)
        response = solve(system, grid)
        _require_signal(spec, system, response)
        curve = ResponseCurve.of(response)
        probe = SpecProbe(curve, spec.sweep, ports=spec.ports)
        others = _other_outputs(spec, system, grid, probe)
        limits = []
        for k, lim in enumerate(spec.limits):
            name = spec.output_of(k)
            rows = lim.judge(probe.siblings[name] if name else probe)
            label = output_label(spec, k)
            limits.extend(dataclasses.replace(r, output=label) if label else r for r in rows)
        measurements = _measurements(probe)
    for w in caught:
        if issubclass(w.category, NetcheckWarning):
            cautions.append(Caution("analysis-302", str(w.message), "warning"))
    extra: list[tuple[str, object]] = []
    def probe_of(k: int) -> SpecProbe:  # the probe of the output limit k judges
        name = spec.output_of(k)
        return probe.siblings[name] if name else probe

    if any(lim.kind == "noise" for lim in spec.limits):  # the ranked sources of noise
        from .noise_probe import noise_block
        extra.append(("noise", noise_block(spec.limits, limits, probe_of)))
    if any(lim.kind == "step" for lim in spec.limits):  # the step response, for its plot
        from .step_probe import step_block
        block = step_block(spec.limits, probe_of, spec.output_of)
        if block is not None:
            extra.append(("step", block))
    op = system.circuit.operating_point
    if op is not None:  # a circuit with devices: checked around this operating point
        extra.append(("operating_point", operating_point_block(op)))
        cautions.extend(region_cautions(op, system.circuit))
        unstable = stability_caution(response)
        if unstable is not None:
            cautions.append(unstable)
    envelope: tuple = (None, None)
    nominal = Nominal(spec, circuit, system, probe, tuple(limits), dict(measurements), rebuild)
    for name, outcome in run_analyses(nominal):
        limits.extend(outcome.rows)
        cautions.extend(outcome.cautions)
        extra.append((name, outcome.block))
        if outcome.envelope is not None:
            envelope = outcome.envelope
    magnified = magnification_caution(response, limits, curve.seeds_hz)
    if magnified is not None:  # the hazard caution only where a result warrants it
        cautions.append(magnified)
    mask = tuple(dataclasses.replace(m, output=spec.output_of(k)) if spec.outputs else m
                 for k, lim in enumerate(spec.limits) for m in lim.mask())
    failed_names = {r.name for r in limits if r.status is not Status.PASS}
    mask = tuple(dataclasses.replace(m, failed=m.label in failed_names) for m in mask)
    inputs = tuple((s.path, _sha256(s.text)) for s in circuit.sources)
    inputs += ((spec.path, _sha256(spec.text)),)
    sweep_info = (("start_hz", spec.sweep.start_hz), ("stop_hz", spec.sweep.stop_hz),
                  ("points_per_decade", spec.sweep.points_per_decade),
                  ("points", int(grid.size)), ("method", response.method),
                  ("unknowns", system.size), ("seeds", int(curve.seeds_hz.size)),
                  ("source", system.source), ("output", list(spec.output)),
                  ("stimulus_unit", "V" if src.letter == "V" else "A"))
    if spec.outputs:
        sweep_info += (("outputs", {n: list(p) for n, p in spec.outputs}),)
    curves = Curves(grid, response.magnitude_db, response.phase_deg, response.group_delay_s,
                    *envelope, **(_detail(response, grid, curve, measurements, limits)
                                  if plot_detail else {}),
                    outputs=tuple((n, spec.output_pair(n), r.magnitude_db, r.phase_deg,
                                   r.group_delay_s) for n, r in others))
    status = worst_status(r.status for r in limits)
    return SpecResult(
        spec=spec.path, netlist=spec.netlist, title=spec.title or circuit.title or spec.path,
        status=status, limits=tuple(limits), measurements=measurements,
        cautions=tuple(cautions), variant=variant, inputs=inputs, sweep=sweep_info,
        curves=curves, mask=mask,
        source_text=tuple((s.path, s.text) for s in circuit.sources) + ((spec.path, spec.text),),
        extra=tuple(extra))


def _other_outputs(spec: Spec, system: System, grid: np.ndarray, probe: SpecProbe
                   ) -> list[tuple[str, Response]]:
    """Solve every named output but the main one (whose probe is ``probe``), each checked
    for signal; fill ``probe.siblings`` with every output's probe (the main one too)."""
    out: list[tuple[str, Response]] = []
    for name, sys_o in output_systems(spec, system).items():
        if sys_o is system:
            probe.siblings[name] = probe
            continue
        response = solve(sys_o, grid)
        _require_signal(spec, sys_o, response, name)
        probe.siblings[name] = SpecProbe(ResponseCurve.of(response), spec.sweep,
                                         siblings=probe.siblings)
        out.append((name, response))
    return out


def _measurements(probe: SpecProbe) -> tuple[tuple[str, float], ...]:
    out: dict[str, float] = {}
    try:
        pk = probe.peak()
    except MeasurementFailure:
        return ()
    out["f_peak_hz"], out["peak_gain_db"] = pk.frequency_hz, pk.value
    try:
        res = probe.resonance(None, None)
    except MeasurementFailure:
        return tuple(out.items())
    out.update(f_low_hz=res.f_low_hz, f_high_hz=res.f_high_hz, bandwidth_hz=res.bandwidth_hz,
               q=res.q, f_center_hz=res.f_center_hz)
    return tuple(out.items())


def _detail(response: Response, grid: np.ndarray, curve: "ResponseCurve",
            measurements, limits) -> dict:
    """Exactly evaluated points for drawing the true curve between grid points: at every
    measured frequency, around lightly damped poles and zeros, and wherever a straight
    segment would depart from the response (:mod:`netcheck.measure.detail`)."""
    from ..measure.detail import detail_curves

    marks = [v for k, v in dict(measurements).items() if k.startswith("f_") and v is not None]
    marks += [r.at_hz for r in limits if r.at_hz is not None]
    roots = [r for r in (curve.poles_hz, curve.zeros_hz) if r is not None]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", NetcheckWarning)  # drawing points add no cautions
        return detail_curves(response.at, grid, response.transfer, marks,
                             np.concatenate(roots) if roots else None, response.dtransfer)


def error_result(path: str, err: NetcheckError, netlist: str = "", title: str = "",
                 variant: str | None = None) -> SpecResult:
    """A SpecResult for a spec that could not be checked."""
    return SpecResult(spec=path, netlist=netlist, title=title or Path(path).name,
                      status=Status.ERROR, error=err.format(), variant=variant,
                      cautions=(Caution(err.code, err.message, "error", err.span.path
                                        if err.span else err.path,
                                        err.span.line if err.span else None,
                                        err.span.column if err.span else None),))


def failure_result(path: str, exc: BaseException, variant: str | None = None,
                   netlist: str = "", title: str = "") -> SpecResult:
    """A SpecResult for a check stopped by an exception that is not a NetcheckError.

    MemoryError and RecursionError mean the input asked for more than the machine or
    the interpreter's stack has: run-421, bad input. Anything else is a bug in netcheck:
    internal-500 (:data:`netcheck.exceptions.INTERNAL_CODE`), and the error text ends with the
    traceback (its last :data:`TRACEBACK_MAX` characters).
    """
    import traceback

    if isinstance(exc, (MemoryError, RecursionError)):
        what = "ran out of memory" if isinstance(exc, MemoryError) else \
            "ran out of recursion depth"
        message = (f"{what} while checking ({type(exc).__name__}); the spec or netlist asks "
                   "for more than this machine gives one check: lower the sweep points, "
                   "Monte Carlo samples or memory_mib, or split the design")
        err = NetcheckError(message, code="run-421", path=path)
        tail = ""
    else:
        from ..exceptions import INTERNAL_CODE
        shown = str(exc).splitlines()[0][:300] if str(exc) else ""
        message = (f"internal error in netcheck (a bug), {type(exc).__name__}"
                   f"{': ' + shown if shown else ''}; please report it with this traceback")
        err = NetcheckError(message, code=INTERNAL_CODE, path=path)
        tail = "".join(traceback.format_exception(exc))
        if len(tail) > TRACEBACK_MAX:
            tail = "… " + tail[-TRACEBACK_MAX:]
        tail = "\n" + tail.rstrip("\n")
    result = error_result(path, err, netlist, title, variant)
    return dataclasses.replace(result, error=result.error + tail)


def _with_spec_text(result: SpecResult, path: str) -> SpecResult:
    """Add the spec's text and SHA-256 to an error result when the file can be read.

    Read through :func:`netcheck.netlist.source.read_text`, so a FIFO, a device or a file over
    the size budget is not read here either.
    """
    from ..netlist.source import read_text

    try:
        text = read_text(path, SpecError, "spec")
    except NetcheckError:
        return result
    return dataclasses.replace(result, inputs=((path, _sha256(text)),),
                               source_text=((path, text),))


def check_spec(path: str, overrides: dict[str, float] | None = None,
               variant: str | None = None, spec: Spec | None = None,
               netlist: str | None = None, parsed: "Netlist | None" = None,
               design_root: str | None = None, allow_negative: bool = False,
               plot_detail: bool = True) -> SpecResult:
    """Load, solve and judge one spec file; never raises (but KeyboardInterrupt).

    ``overrides`` replace top-level ``.param`` values (a variant); ``netlist`` replaces the
    spec's netlist path (a family of netlists sharing one spec) and must lie inside the
    spec's design root, like every path the spec names (``design_root``: the explicit
    root, ``--root``; see :func:`netcheck.spec.design_root`). Bad input becomes an error
    result with its code; running out of memory or recursion depth run-421; any other
    exception, a bug, internal-500 with the traceback (:func:`failure_result`).
    ``allow_negative`` (``--allow-negative``) accepts negative R, L and C values as the
    spec's own ``allow_negative = true`` does. ``plot_detail`` stores the exactly
    evaluated points the PDF plots draw through (false when no PDF is wanted: they cost
    up to a few thousand extra solves).
    """
    try:
        return _check(path, overrides, variant, spec, netlist, parsed, design_root,
                      allow_negative, plot_detail)
    except Exception as exc:  # noqa: BLE001 - a bug or exhaustion costs this spec only
        return failure_result(path, exc, variant, netlist or "")


def _with_ports(parsed: "Netlist", spec: Spec) -> "Netlist":
    from ..netlist.ports import with_ports

    try:
        return with_ports(parsed, spec.ports, spec.path)
    except ElaborationError as err:
        where = err.message.split(":")[0] if err.message.startswith("ports.") else "ports"
        raise SpecError(err.message.removeprefix(f"{where}: "), code="spec-203",
                        path=spec.path, where=where) from None


def _check(path: str, overrides: dict[str, float] | None, variant: str | None,
           spec: Spec | None, netlist: str | None, parsed: "Netlist | None",
           design_root: str | None, allow_negative: bool = False,
           plot_detail: bool = True) -> SpecResult:
    """:func:`check_spec` without its guard against unexpected exceptions."""
    try:
        spec = spec or load_spec(path, design_root)
    except NetcheckError as err:
        return _with_spec_text(error_result(path, err, variant=variant), path)
    if allow_negative and not spec.allow_negative:
        spec = dataclasses.replace(spec, allow_negative=True)
    if netlist is not None:  # a family member: inside the design root like the rest
        from ..spec.load import confine, resolve_design_root
        try:
            root, why = resolve_design_root(path, design_root)
            confine(netlist, Path(), "variants.netlists", path, root, why)
        except SpecError as err:
            return _with_spec_text(error_result(path, locate(err, spec.text),
                                                variant=variant), path)
        spec = dataclasses.replace(spec, netlist=netlist)
    try:
        parsed = parsed or load_netlist(spec.netlist, spec.root)
        if spec.ports is not None:  # the terminations the spec declares, added as cards
            parsed = _with_ports(parsed, spec)
        defined = {a.key.text.lower() for a in parsed.top.params}
        unknown = sorted(set(overrides or {}) - defined)
        if unknown:
            raise SpecError(f"variants: variant {variant!r} sets {', '.join(unknown)}, which the "
                            f"netlist does not define with .param (it defines "
                            f"{', '.join(sorted(defined)) or 'none'})", code="spec-203",
                            path=path, where="variants")
        # part_models: the spec's part-model subcircuits, checked against this netlist
        from ..spec.load import part_models
        models = part_models(spec, parsed)
        circuit = elaborate(parsed, spec.allow_negative, overrides, models)

        def rebuild(values: dict[str, float]) -> Circuit:
            return elaborate(parsed, spec.allow_negative, {**(overrides or {}), **values},
                             models)

        return evaluate(spec, circuit, variant, plot_detail, rebuild)
    except NetcheckError as err:
        if isinstance(err, SpecError):
            err = locate(err, spec.text)
        return _with_spec_text(error_result(path, err, spec.netlist, spec.title, variant), path)
