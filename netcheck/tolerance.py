"""Tolerances: Monte Carlo yield, worst case by adjoint sensitivities (EVA/RSS), corners.

Monte Carlo draws every toleranced part for all samples at once (numpy Generator,
seeded) and judges every limit per sample through :mod:`netcheck.sampling`, in
memory-bounded chunks. Worst case linearises every judged quantity with the adjoint
sensitivities of :mod:`netcheck.sensitivity` [1]_ (one transposed solve per deciding
frequency serves every part; ∂A/∂p from the stamps by complex-step differentiation
[2]_). The extreme-value analysis (EVA) sets each part at the tolerance end that
hurts; RSS combines the contributions in quadrature; for up to 12 parts every corner
is also evaluated as a check of EVA.

References
----------
.. [1] S. W. Director and R. A. Rohrer, "The generalized adjoint network and network
   sensitivities", IEEE Trans. Circuit Theory 16(3), 318-323, 1969.
.. [2] J. N. Lyness and C. B. Moler, "Numerical differentiation of analytic
   functions", SIAM J. Numer. Anal. 4(2), 202-210, 1967.
.. [3] E. B. Wilson, "Probable inference, the law of succession, and statistical
   inference", J. Am. Stat. Assoc. 22(158), 209-212, 1927.
"""

from __future__ import annotations

import dataclasses
import fnmatch
import itertools
import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from . import progress
from .assemble import System
from .elaborate import Circuit
from .exceptions import SpecError
from .limits import LIMITS, Linearised
from .measure import MeasurementFailure
from .result import LimitResult, Status
from .sample_probe import BatchProbe
from .sampling import SampleSet
from .sensitivity import AdjointSensitivity
from .spec import Spec, SpecReader

if TYPE_CHECKING:  # pragma: no cover
    from .evaluate import SpecProbe

__all__ = ["Tolerances", "Analysis", "parse_tolerances", "parse_analysis", "toleranced_parts",
           "draw", "wilson_interval", "monte_carlo", "worst_case",
           "TOLERANCE_KEYS", "ANALYSIS_KEYS"]

TOLERANCE_KEYS = {
    "default": "tolerance by element letter, e.g. { R = \"1%\", C = \"5%\", L = \"10%\" }",
    "parts": "tolerance per part (hierarchical names, globs allowed), e.g. { C3 = \"2%\" }",
    "distribution": "'uniform', 'normal' (tolerance = 3 sigma) or 'truncnormal' (normal cut at ±tolerance)",
}
ANALYSIS_KEYS = {
    "mode": "any of 'nominal', 'worst_case', 'monte_carlo'",
    "samples": "Monte Carlo samples (default 2000)",
    "seed": "random seed, for reproducible samples (default 1)",
    "yield_min": "overall pass fraction required, 0..1 (default: none)",
    "memory_mib": "memory budget for Monte Carlo chunks, MiB (default 1024)",
}
MODES = ("nominal", "worst_case", "monte_carlo")
MAX_CORNER_PARTS = 12
#: Monte Carlo stress: samples screened within this fraction below a rating are judged exactly
BORDER = 0.05


@dataclass(frozen=True, slots=True)
class Tolerances:
    """Part tolerances (fractions: 0.05 = 5 %) and their distribution."""

    default: tuple[tuple[str, float], ...] = ()
    parts: tuple[tuple[str, float], ...] = ()
    distribution: str = "uniform"


@dataclass(frozen=True, slots=True)
class Analysis:
    """Which analyses to run and how."""

    modes: tuple[str, ...] = ("nominal",)
    samples: int = 2000
    seed: int = 1
    yield_min: float | None = None
    memory_mib: int = 1024


def _fraction(rd: SpecReader, key: str, raw: Any) -> float:
    if isinstance(raw, str) and raw.strip().endswith("%"):
        try:
            value = float(raw.strip()[:-1]) / 100.0
        except ValueError:
            rd.fail(key, f"{raw!r} is not a percentage")
    else:
        value = rd.number(key, value=raw)
    if not 0 <= value < 1:
        rd.fail(key, f"tolerance must be between 0 % and 100 %, got {raw!r}")
    return value


def parse_tolerances(table: Any, path: str) -> Tolerances:
    """Validate a ``[tolerances]`` table."""
    rd = SpecReader(table, "tolerances", path, TOLERANCE_KEYS)
    default = rd.raw("default", {})
    parts = rd.raw("parts", {})
    for key, value in (("default", default), ("parts", parts)):
        if not isinstance(value, dict):
            rd.fail(key, "expected a table, e.g. { R = \"1%\" }")
    for letter in default:
        if letter.upper() not in ("R", "L", "C") or len(letter) != 1:
            rd.fail(f"default.{letter}", "default tolerances are by element letter R, L or C")
    d = tuple((k.upper(), _fraction(rd, f"default.{k}", v)) for k, v in default.items())
    p = tuple((k.upper(), _fraction(rd, f"parts.{k}", v)) for k, v in parts.items())
    dist = rd.choice("distribution", ("uniform", "normal", "truncnormal"), "uniform")
    return Tolerances(d, p, dist)


def parse_analysis(table: Any, path: str) -> Analysis:
    """Validate an ``[analysis]`` table."""
    rd = SpecReader(table, "analysis", path, ANALYSIS_KEYS)
    mode = rd.raw("mode", ["nominal"])
    if isinstance(mode, str):
        mode = [mode]
    if not isinstance(mode, list) or not mode or any(m not in MODES for m in mode):
        rd.fail("mode", f"expected a list drawn from {', '.join(MODES)}, got {mode!r}")
    y = rd.number("yield_min")
    if y is not None and not 0 < y <= 1:
        rd.fail("yield_min", "must be a fraction in (0, 1]")
    seed = rd.raw("seed", 1)
    if isinstance(seed, bool) or not isinstance(seed, int) or seed < 0:
        rd.fail("seed", f"expected a whole number >= 0, got {seed!r}")
    return Analysis(tuple(dict.fromkeys(mode)), rd.integer("samples", 2000, minimum=2), seed,
                    y, rd.integer("memory_mib", 1024, minimum=16))


def _is_glob(pattern: str) -> bool:
    return any(ch in pattern for ch in "*?[")


def toleranced_parts(tol: Tolerances, circuit: Circuit, path: str = "<spec>"
                     ) -> list[tuple[str, float, float]]:
    """(name, nominal value, tolerance) for every part with a non-zero tolerance.

    Letter defaults apply first, then globs of ``parts`` in the order written, then
    exact part names, so an exact name always wins. Independent sources are never
    toleranced (the response is per unit stimulus: the drive level belongs in
    ``[[stress]] source_amplitude``); naming one is an error, and globs pass over
    them. A coupling factor may not be toleranced beyond |k| = 1.
    """
    default = dict(tol.default)
    out: dict[str, tuple[float, float]] = {}
    for e in circuit.elements:
        if e.letter in default and default[e.letter] > 0:
            out[e.name] = (e.value, default[e.letter])
    ordered = sorted(tol.parts, key=lambda item: not _is_glob(item[0]))  # stable: globs first
    for pattern, t in ordered:
        where = f"tolerances.parts.{pattern}"
        hits = [e for e in circuit.elements if fnmatch.fnmatchcase(e.name, pattern)]
        if not hits:
            raise SpecError(f"{where}: no part called {pattern} in the netlist",
                            code="NC203", path=path, where=where)
        sources = [e for e in hits if e.letter in ("V", "I")]
        if sources and not _is_glob(pattern):
            raise SpecError(f"{where}: {pattern} is an independent source; responses are "
                            "per unit stimulus, so its tolerance would change nothing (give "
                            "the drive level as [[stress]] source_amplitude)", code="NC202",
                            path=path, where=where)
        for e in hits:
            if e in sources:
                continue
            if e.letter == "K" and t > 0 and abs(e.value) * (1 + t) > 1:
                raise SpecError(
                    f"{where}: a {t:.4g} tolerance lets the coupling factor of {e.name} "
                    f"({e.value:g}) reach {abs(e.value) * (1 + t):.4g}, above 1, which no "
                    f"pair of coils can have; at most {(1 / abs(e.value) - 1) * 100:.3g} % "
                    "fits", code="NC202", path=path, where=where)
            if t > 0:
                out[e.name] = (e.value, t)
            else:
                out.pop(e.name, None)
    return [(name, v, t) for name, (v, t) in sorted(out.items())]


def draw(parts: list[tuple[str, float, float]], samples: int, distribution: str,
         rng: np.random.Generator, path: str = "<spec>") -> dict[str, np.ndarray]:
    """Sampled values (S,) per part: nominal × (1 + t·u) with u from ``distribution``.

    ``uniform``: u ~ U(−1, 1); ``normal``: u ~ N(0, 1/3²) (tolerance = 3σ);
    ``truncnormal``: that normal restricted to |u| ≤ 1 (redrawn until inside).
    """
    k = len(parts)
    if distribution == "uniform":
        u = rng.uniform(-1.0, 1.0, size=(samples, k))
    else:
        u = rng.standard_normal(size=(samples, k)) / 3.0
        if distribution == "truncnormal":
            bad = np.abs(u) > 1.0
            while bad.any():
                u[bad] = rng.standard_normal(int(bad.sum())) / 3.0
                bad = np.abs(u) > 1.0
    values = {name: nominal * (1.0 + t * u[:, j]) for j, (name, nominal, t) in enumerate(parts)}
    for name, nominal, t in parts:
        bad = int(np.count_nonzero(values[name] * nominal <= 0))
        if bad:  # only the untruncated normal reaches past ±100 %
            raise SpecError(
                f"tolerances.distribution: 'normal' with {t * 100:g} % (3σ) on {name} drew "
                f"{'a value' if bad == 1 else f'{bad} values'} of {name} at or beyond zero "
                f"in {samples} samples; use 'truncnormal' (cut at ± the tolerance) or a "
                "smaller tolerance", code="NC202", path=path, where="tolerances.distribution")
    return values


def wilson_interval(passed: int, n: int, z: float = 1.959963984540054) -> tuple[float, float]:
    """Wilson score interval for a binomial proportion (95 % by default) [3]_.

    Examples
    --------
    >>> lo, hi = wilson_interval(95, 100)
    >>> round(lo, 4), round(hi, 4)
    (0.8882, 0.9785)
    """
    if n <= 0:
        return (0.0, 1.0)
    p = passed / n
    denom = 1.0 + z * z / n
    centre = (p + z * z / (2 * n)) / denom
    half = z * math.sqrt(p * (1 - p) / n + z * z / (4 * n * n)) / denom
    lo = 0.0 if passed == 0 else max(0.0, centre - half)
    hi = 1.0 if passed == n else min(1.0, centre + half)
    return lo, hi


def _stats(x: np.ndarray) -> dict[str, float | None]:
    x = x[np.isfinite(x)]
    if x.size == 0:
        return {k: None for k in ("mean", "std", "p01", "p50", "p99", "min", "max")}
    p01, p50, p99 = np.percentile(x, [1, 50, 99])
    return {"mean": float(x.mean()), "std": float(x.std(ddof=1)) if x.size > 1 else 0.0,
            "p01": float(p01), "p50": float(p50), "p99": float(p99),
            "min": float(x.min()), "max": float(x.max())}


MEASUREMENT_KEYS = ("f_peak_hz", "peak_gain_db", "f_low_hz", "f_high_hz", "bandwidth_hz",
                    "q", "f_center_hz")


def _judge_chunk(system: System, spec: Spec, values: dict[str, np.ndarray], n: int,
                 memory: int) -> tuple[list, dict[str, np.ndarray], np.ndarray, np.ndarray]:
    ss = SampleSet(system, values, n, spec.sweep.grid(), memory)
    bp = BatchProbe(ss)
    rows = []
    for lim in spec.limits:
        rows.extend(lim.judge_batch(bp))
    try:
        res = bp.resonance(None, None)
        meas = {k: res[k] for k in MEASUREMENT_KEYS}
    except (ValueError, IndexError):
        meas = {}
    return rows, meas, np.nanmin(bp.gain, axis=0), np.nanmax(bp.gain, axis=0)


def _chunk_size(system: System, spec: Spec, memory: int) -> int:
    f = spec.sweep.grid().size
    n = system.size + 1
    per = 16 * (6 * f + 8 * n * n) + 16 * f * 6
    return max(1, min(20000, memory // per))


def run_samples(system: System, spec: Spec, values: dict[str, np.ndarray], samples: int,
                memory: int, label: str | None = None
                ) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray],
                           dict[str, np.ndarray], np.ndarray, np.ndarray]:
    """Judge every limit for each sample, in chunks; margins and measured values per row.

    With a ``label``, progress is reported per chunk (:mod:`netcheck.progress`); while a
    display listens, chunks are at most a fiftieth of the run (at least 64 samples).
    """
    step = _chunk_size(system, spec, memory)
    if label is not None and progress.active():
        step = min(step, max(64, -(-samples // 50)))
    margins: dict[str, list] = {}
    measured: dict[str, list] = {}
    meas: dict[str, list] = {}
    env_lo = env_hi = None
    for i in range(0, samples, step):
        j = min(samples, i + step)
        chunk = {k: v[i:j] for k, v in values.items()}
        rows, m, lo, hi = _judge_chunk(system, spec, chunk, j - i, memory)
        for name, value, margin in rows:
            margins.setdefault(name, []).append(np.asarray(margin, float))
            measured.setdefault(name, []).append(np.asarray(value, float))
        for k, v in m.items():
            meas.setdefault(k, []).append(v)
        env_lo = lo if env_lo is None else np.fmin(env_lo, lo)
        env_hi = hi if env_hi is None else np.fmax(env_hi, hi)
        if label is not None:
            progress.report(label, j, samples)
    cat = lambda d: {k: np.concatenate(v) for k, v in d.items()}  # noqa: E731
    return cat(margins), cat(measured), cat(meas), env_lo, env_hi


def monte_carlo(system: System, spec: Spec, parts: list[tuple[str, float, float]],
                tol: Tolerances, analysis: Analysis) -> tuple[dict[str, Any], list[LimitResult],
                                                              tuple[np.ndarray, np.ndarray]]:
    """Monte Carlo yield: the JSON block, result rows (yield limits) and the gain envelope."""
    rng = np.random.default_rng(analysis.seed)
    S = analysis.samples
    memory = analysis.memory_mib * 2**20
    # kept for every sample: the drawn values, a measured value and a margin per judged
    # quantity (a resonance limit judges up to three) and the summary measurements
    kept = 8 * S * (len(parts) + 2 * 3 * max(len(spec.limits), 1) + len(MEASUREMENT_KEYS))
    if kept > memory:
        raise SpecError(
            f"analysis.samples: {S} samples need about {kept / 2**20:.0f} MiB for their "
            f"values and results alone, over memory_mib = {analysis.memory_mib}; lower "
            "samples (the 95 % interval of a yield narrows as 1/√samples) or raise "
            "memory_mib", code="NC202", path=spec.path, where="analysis.samples")
    values = draw(parts, S, tol.distribution, rng, spec.path)
    margins, measured, meas, env_lo, env_hi = run_samples(
        system, spec, values, S, analysis.memory_mib * 2**20, "Monte Carlo samples")
    rows: list[LimitResult] = []
    stress_block, stress_ok = None, {}
    if spec.table("stress") is not None:
        stress_block, stress_rows, stress_ok = stress_over_samples(
            system, spec, values, S, analysis.memory_mib * 2**20)
        rows.extend(stress_rows)
    passed_all = np.ones(S, bool)
    lim_json = []
    # stress rows: screened on the grid, samples near or over a rating judged exactly
    judged = [(name, m, measured[name], m >= 0) for name, m in margins.items()]
    judged += [(name, m, v, ok) for name, (ok, m, v) in stress_ok.items()]
    for name, m, v, ok in judged:
        passed_all &= ok
        # unmeasurable samples rank lowest (−inf); "lower" picks sample values, so a
        # percentile among them is −inf, written as null
        p01, p50, p99 = (_f(x) for x in np.percentile(np.where(np.isnan(m), -np.inf, m),
                                                      [1, 50, 99], method="lower"))
        worst = int(np.argmin(np.where(np.isfinite(m), m, -np.inf)))
        lim_json.append({"name": name, "yield": float(ok.mean()),
                         "yield_ci": list(wilson_interval(int(ok.sum()), S)),
                         "margin_p01": p01, "margin_p50": p50, "margin_p99": p99,
                         "worst_sample": worst, "worst_measured": _f(v[worst]),
                         "worst_values": {k: float(x[worst]) for k, x in values.items()}})
    y = float(passed_all.mean())
    ci = wilson_interval(int(passed_all.sum()), S)
    block = {"samples": S, "seed": analysis.seed, "distribution": tol.distribution,
             "yield": y, "yield_ci": list(ci), "ci_method": "Wilson score, 95 %",
             "limits": lim_json, "measurements": {k: _stats(v) for k, v in meas.items()},
             "parts": [{"part": n, "nominal": v, "tolerance": t} for n, v, t in parts]}
    def deciding(k: str) -> tuple[float, float]:
        # the limit with the lowest yield; among equals, the smallest median margin
        # relative to the size of the measured value (so Hz, dB and Q compare fairly)
        m, v = margins[k], measured[k]
        fin = np.isfinite(m)
        scale = float(np.median(np.abs(v[np.isfinite(v)]))) if np.isfinite(v).any() else 1.0
        p50 = float(np.median(m[fin])) if fin.any() else -math.inf
        return float((m >= 0).mean()), p50 / (scale or 1.0)

    hist_key = min(margins, key=deciding) if margins else None
    if hist_key is not None:
        vals = measured[hist_key][np.isfinite(measured[hist_key])]
        if vals.size:
            counts, edges = np.histogram(vals, bins=30)
            block["histogram"] = {"name": hist_key, "counts": counts.tolist(),
                                  "edges": edges.tolist()}
    if stress_block is not None:
        block["stress"] = stress_block
    if analysis.yield_min is not None:
        margin = y - analysis.yield_min
        rows.append(LimitResult(
            "Monte Carlo yield (all limits)", "yield",
            Status.PASS if margin >= 0 else Status.FAIL, y, analysis.yield_min, None, margin,
            "", None, f"fraction of {S} samples passing every limit and every part-stress "
            f"rating ({tol.distribution} "
            f"tolerances, seed {analysis.seed}); 95 % Wilson interval {ci[0]:.4f}–{ci[1]:.4f}",
            "Monte Carlo, all samples solved together (pole–zero forms checked against direct "
            "solves), every limit judged per sample", "", len(spec.limits), None))
    return block, rows, (env_lo, env_hi)


def _f(v: float) -> float | None:
    v = float(v)
    return v if math.isfinite(v) else None


def _measurement_sensitivities(probe: "SpecProbe", adj: AdjointSensitivity,
                               keys: list[str]) -> dict[str, np.ndarray]:
    """∂/∂ln p of the nominal measurements (peak, half-power edges, bandwidth, centre, Q)."""
    out: dict[str, np.ndarray] = {}
    try:
        pk = probe.peak()
    except MeasurementFailure:
        return out
    grid = probe.curve.grid_hz
    out["peak_gain_db"] = adj.extreme("gain_db", pk.frequency_hz)
    out["f_peak_hz"] = adj.peak_shift(pk.frequency_hz,
                                      interior=grid[0] < pk.frequency_hz < grid[-1])
    if any(k not in out for k in keys):
        try:
            out.update(adj.resonance(probe.resonance(None, None)))
        except MeasurementFailure:
            pass
    return {k: v for k, v in out.items() if k in keys}


def _central_differences(system: System, spec: Spec, parts: list[tuple[str, float, float]],
                         memory: int) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    """∂M/∂ln p of every judged quantity and measurement by central differences.

    Sample k has part k at (1 + h), sample P + k at (1 − h), all solved together; the
    fallback for quantities the adjoint linearisation does not cover.
    """
    P, rel = len(parts), 1e-6
    values = {}
    for j, (name, v, _) in enumerate(parts):
        col = np.full(2 * P, v)
        col[j] = v * (1 + rel)
        col[P + j] = v * (1 - rel)
        values[name] = col
    rows, meas = _rows_for(system, spec, values, 2 * P, memory)
    diff = lambda m: (m[:P] - m[P:]) / (2 * rel)  # noqa: E731
    return {k: diff(m) for k, (m, _) in rows.items()}, {k: diff(v) for k, v in meas.items()}


def _rows_for(system: System, spec: Spec, values: dict[str, np.ndarray], n: int,
              memory: int, label: str | None = None
              ) -> tuple[dict[str, tuple[np.ndarray, np.ndarray]], dict[str, np.ndarray]]:
    margins, measured, meas, _, _ = run_samples(system, spec, values, n, memory, label)
    return {k: (measured[k], margins[k]) for k in margins}, meas


def _finite(row: Linearised) -> bool:
    return bool(np.all(np.isfinite(row.d_low)) and np.all(np.isfinite(row.d_high)))


def worst_case(system: System, spec: Spec, parts: list[tuple[str, float, float]],
               nominal: tuple[LimitResult, ...], nominal_measurements: dict[str, float],
               analysis: Analysis, probe: "SpecProbe") -> tuple[dict[str, Any], list[LimitResult]]:
    """Extreme-value analysis from adjoint sensitivities, RSS, and (≤ 12 parts) all corners.

    Every judged quantity is linearised by its limit kind's ``sensitivities`` from the
    adjoint derivatives at the frequencies that decide it (:mod:`netcheck.sensitivity`);
    a quantity that cannot be linearised there (a kind without the method, an edge
    where the gain is flat) falls back to central differences of the re-measured value,
    and the row says which method it used. ``probe`` is the nominal SpecProbe.
    """
    memory = analysis.memory_mib * 2**20
    P = len(parts)
    tol = np.array([t for _, _, t in parts])
    adj = AdjointSensitivity(system, parts)
    by_name = {r.name: r for r in nominal}
    lin: dict[str, tuple[Linearised, str]] = {}
    for lim in spec.limits:
        try:
            rows = lim.sensitivities(probe, adj)
        except (NotImplementedError, MeasurementFailure):
            continue
        lin.update((row.name, (row, "adjoint")) for row in rows if _finite(row))
    keys = [k for k in nominal_measurements if k in MEASUREMENT_KEYS]
    d_meas = _measurement_sensitivities(probe, adj, keys)
    judged = [r.name for r in nominal if r.index < len(spec.limits) and r.kind in LIMITS
              and r.measured is not None and math.isfinite(r.measured)]
    meas_method = {k: "adjoint" for k, d in d_meas.items() if np.all(np.isfinite(d))}
    if any(n not in lin for n in judged) or any(k not in meas_method for k in keys):
        fd_rows, fd_meas = _central_differences(system, spec, parts, memory)
        for name in judged:
            if name not in lin and name in fd_rows:
                m0 = by_name[name].measured
                lin[name] = (Linearised(name, m0, fd_rows[name], m0, fd_rows[name]),
                             "central difference")
        for k in keys:
            if k not in meas_method and k in fd_meas:
                d_meas[k], meas_method[k] = fd_meas[k], "central difference"
    out_rows, lim_json, sens_json = [], [], []
    corners = _corner_rows(system, spec, parts, memory) if 0 < P <= MAX_CORNER_PARTS else None
    for name in judged:
        if name not in lin:
            continue
        r = by_name[name]
        row, method = lin[name]
        c_lo, c_hi = row.d_low * tol, row.d_high * tol
        lo_v = row.low - float(np.sum(np.abs(c_lo)))
        hi_v = row.high + float(np.sum(np.abs(c_hi)))
        margin = _margin(r, lo_v, hi_v)
        entry = {"name": name, "measured_nominal": r.measured, "min": lo_v, "max": hi_v,
                 "rss_min": row.low - float(np.sqrt(np.sum(c_lo ** 2))),
                 "rss_max": row.high + float(np.sqrt(np.sum(c_hi ** 2))), "margin": margin,
                 "sensitivity_method": method}
        lost = 0
        if corners is not None and name in corners:
            cmin, cmax, cmargin, lost = corners[name]
            entry.update(corners_min=_f(cmin), corners_max=_f(cmax),
                         corners_margin=_f(cmargin), corners_unmeasurable=lost,
                         eva_differs=bool(math.isfinite(cmargin) and abs(cmargin - margin)
                                          > 1e-6 * max(1.0, abs(margin))))
            if math.isfinite(cmargin):
                margin = min(margin, cmargin)
                lo_v, hi_v = min(lo_v, cmin), max(hi_v, cmax)
        status = Status.PASS if margin >= 0 else Status.FAIL
        if lost:  # the worst case is not established where the quantity is not there
            status = Status.ERROR
            entry["margin"] = None
        entry["status"] = status.value
        lim_json.append(entry)
        lower_decides = r.lower is not None and (r.upper is None or
                                                 lo_v - r.lower < r.upper - hi_v)
        m0, dln = (row.low, row.d_low) if lower_decides else (row.high, row.d_high)
        contrib = dln * tol
        order = np.argsort(-np.abs(contrib))[:5]
        relative = m0 and r.unit not in ("dB", "deg")  # a ratio of logarithms means nothing
        sens_json.append({"name": name, "unit": r.unit, "method": method, "top": [
            {"part": parts[k][0], "sensitivity": _f(dln[k] / m0) if relative else None,
             "per_unit_log": _f(dln[k]), "contribution": _f(contrib[k])} for k in order]})
        definition = (f"extreme-value analysis over {P} toleranced parts: "
                      f"{_fmt(lo_v, r.unit)} … {_fmt(hi_v, r.unit)}" +
                      (f"; all {2 ** P} corners evaluated" if corners is not None else ""))
        method_text = f"sensitivities by {method}; EVA (each part at the end that hurts)"
        if lost:
            out_rows.append(LimitResult(
                f"worst case: {name}", "worst_case", status, None, r.lower, r.upper, None,
                r.unit, r.at_hz, definition, method_text,
                f"cannot be measured at {lost} of the {2 ** P} tolerance corners (the "
                "feature leaves the sweep or the band there), so no worst case is "
                "established; widen the sweep or tighten the tolerances", r.index, r.line))
            continue
        out_rows.append(LimitResult(
            f"worst case: {name}", "worst_case", status, lo_v if lower_decides else hi_v,
            r.lower, r.upper, margin, r.unit, r.at_hz, definition, method_text,
            "", r.index, r.line))
    meas_json = {}
    for key in keys:
        if key in d_meas:
            span = float(np.sum(np.abs(d_meas[key] * tol)))
            base = nominal_measurements[key]
            meas_json[key] = {"min": _f(base - span), "max": _f(base + span),
                              "method": meas_method[key]}
    block = {"method": "eva", "parts": P, "limits": lim_json, "measurements": meas_json,
             "sensitivities": sens_json, "rss": True,
             "corners": None if corners is None else 2 ** P}
    return block, out_rows


def _fmt(v: float, unit: str) -> str:
    from .units import format_eng
    return format_eng(v, unit)


def _margin(r: LimitResult, lo_v: float, hi_v: float) -> float:
    sides = []
    if r.lower is not None:
        sides.append(lo_v - r.lower)
    if r.upper is not None:
        sides.append(r.upper - hi_v)
    return float(min(sides)) if sides else math.inf


def _corner_rows(system: System, spec: Spec, parts: list[tuple[str, float, float]],
                 memory: int) -> dict[str, tuple[float, float, float, int]]:
    """Per judged quantity over all 2^P corners: (min, max, worst margin, unmeasurable).

    Corners where the quantity cannot be measured are left out of min, max and margin
    (NaN when none is left) and counted.
    """
    P = len(parts)
    signs = np.array(list(itertools.product((-1.0, 1.0), repeat=P)))
    values = {name: v * (1 + t * signs[:, j]) for j, (name, v, t) in enumerate(parts)}
    rows, _ = _rows_for(system, spec, values, signs.shape[0], memory, "worst-case corners")
    out = {}
    for k, (m, g) in rows.items():
        ok = np.isfinite(m) & np.isfinite(g)
        if ok.any():
            out[k] = (float(m[ok].min()), float(m[ok].max()), float(g[ok].min()),
                      int((~ok).sum()))
        else:
            out[k] = (math.nan, math.nan, math.nan, int(m.size))
    return out


def with_values(circuit: Circuit, values: dict[str, float]) -> Circuit:
    """A copy of ``circuit`` with the main value of the named elements replaced."""
    fields = ("magnitude", "gain", "k", "ac_magnitude")
    out = []
    for e in circuit.elements:
        if e.name in values:
            name = next(f for f in fields if hasattr(e, f))
            e = dataclasses.replace(e, **{name: float(values[e.name])})
        out.append(e)
    return dataclasses.replace(circuit, elements=tuple(out), _index=None)


def _full_solutions(system: System, values: dict[str, np.ndarray], rows: np.ndarray,
                    grid: np.ndarray, memory: int) -> np.ndarray:
    """x (R, F, n) for the sample rows, by direct solves in memory-bounded chunks."""
    from .assemble import assemble_batch

    sub = {k: v[rows] for k, v in values.items()}
    g, c = assemble_batch(system, sub, rows.size)
    n, f = system.size, grid.size
    out = np.empty((rows.size, f, n), dtype=complex)
    step = max(1, memory // 4 // (f * n * n * 16 * 2))
    s = 1j * 2 * np.pi * grid
    for i in range(0, rows.size, step):
        a = g[i:i + step, None] + s[None, :, None, None] * c[i:i + step, None]
        rhs = np.broadcast_to(system.b, a.shape[:-1])[..., None]
        out[i:i + step] = np.linalg.solve(a, rhs)[..., 0]
    return out


def stress_over_samples(system: System, spec: Spec, values: dict[str, np.ndarray],
                        samples: int, memory: int, candidates: int = 5
                        ) -> tuple[list[dict[str, Any]], list[LimitResult], np.ndarray]:
    """The worst part stress over the Monte Carlo samples, and which samples pass it.

    Every sample is screened on the sweep grid (full solution, scaled by the sample's
    own part value). A sample whose grid maximum already exceeds a rating fails it
    (the true maximum is at least that); one whose sharpened estimate stays below
    (1 − ``BORDER``) of the rating passes; every sample in between, and the
    ``candidates`` worst of each part, is rebuilt as a circuit of its own and judged
    exactly (true maximum between grid points, as at nominal). Returns the JSON block,
    the "Monte Carlo worst" rows and, per stress row name, (S,) arrays of: inside the
    rating, margin and peak (the sharpened grid estimate, exact where judged).
    """
    from .assemble import assemble
    from .solve import solve
    from .stress import _matches, _probe, judge_stress, parse_stress, stress_lines

    limits = parse_stress(spec.table("stress"), spec.path, stress_lines(spec.text))
    grid = spec.sweep.grid()
    screen: dict[tuple[int, str], list[np.ndarray]] = {}
    per_chunk = max(1, memory // 4 // max(grid.size * system.size * 16 * 4, 1))
    for i in range(0, samples, per_chunk):
        rows = np.arange(i, min(samples, i + per_chunk))
        x = _full_solutions(system, values, rows, grid, memory)
        for k, lim in enumerate(limits):
            for e in system.circuit.elements:
                if not _matches(lim.parts, e.name):
                    continue
                probe = _probe(system, e, lim.quantity, lim.amplitude)
                if isinstance(probe, str):
                    continue
                q = x @ probe.sel
                if probe.jw:
                    q = q * (1j * 2 * np.pi * grid)[None, :]
                mag = np.abs(q + probe.const)
                own = (values[e.name][rows] / e.value) ** probe.own \
                    if probe.own and e.name in values else 1.0
                scale = probe.scale * own
                both = np.stack([np.max(mag, axis=1), _vertex(mag, grid)])
                screen.setdefault((k, e.name), []).append(scale * both ** probe.power)
    passed: dict[tuple[int, str], tuple[np.ndarray, np.ndarray, np.ndarray]] = {}
    worst: dict[tuple[int, str], tuple[float, Any, int]] = {}
    names = list(values)
    exact: dict[tuple[int, int], dict[str, Any]] = {}

    def judged(j: int, k: int, part: str) -> Any:
        if (j, k) not in exact:
            sample = {n: float(values[n][j]) for n in names}
            sys_j = assemble(with_values(system.circuit, sample), system.source,
                             system.node, system.ref)
            exact[(j, k)] = {r.part: r for r in judge_stress([limits[k]], solve(sys_j, grid))}
        return exact[(j, k)].get(part)

    for (k, part), chunks in screen.items():
        grid_max, estimate = np.concatenate(chunks, axis=1)
        rating = limits[k].rating
        ok = ~(grid_max > rating)
        peak = np.maximum(estimate, grid_max)
        margin = rating - peak
        passed[(k, part)] = (ok, margin, peak)
        border = np.flatnonzero((estimate >= rating * (1.0 - BORDER)) & ~(grid_max > rating))
        for j in sorted(set(np.argsort(-estimate)[:candidates].tolist()) | set(border.tolist())):
            r = judged(int(j), k, part)
            if r is None or r.peak is None:
                continue
            peak[j], margin[j] = r.peak, r.rating - r.peak
            ok[j] = r.status is Status.PASS
            if (k, part) not in worst or r.peak > worst[(k, part)][0]:
                worst[(k, part)] = (r.peak, r, int(j))
    block, rows_out = [], []
    for (k, part), (_, r, j) in sorted(worst.items()):
        entry = r.to_json()
        entry["sample"] = j
        block.append(entry)
        lim = r.to_limit_result(index=len(spec.limits) + k)
        rows_out.append(dataclasses.replace(
            lim, name=f"Monte Carlo worst: {lim.name}",
            definition=f"{lim.definition}; worst of {samples} samples (sample {j}), "
                       "screened on the grid, then judged exactly"))
    quantity = {k: lim.quantity for k, lim in enumerate(limits)}
    return block, rows_out, {f"stress: {part} {quantity[k]}": arrays
                             for (k, part), arrays in sorted(passed.items())}


def _vertex(values: np.ndarray, grid: np.ndarray) -> np.ndarray:
    """Per-row peak of ``values`` (R, F), sharpened by a parabola through the largest
    grid sample and its neighbours in (log f, log value): ranks samples far better than
    the raw grid maximum when a resonance is narrow compared with the grid spacing."""
    k = np.argmax(values, axis=1)
    rows = np.arange(values.shape[0])
    best = values[rows, k]
    inner = (k > 0) & (k < grid.size - 1)
    km, kp = np.clip(k - 1, 0, grid.size - 1), np.clip(k + 1, 0, grid.size - 1)
    with np.errstate(all="ignore"):
        y0, y1, y2 = (np.log(values[rows, j]) for j in (km, k, kp))
        x0, x1, x2 = (np.log(grid[j]) for j in (km, k, kp))
        d1, d2 = (y1 - y0) / (x1 - x0), (y2 - y1) / (x2 - x1)
        curv = (d2 - d1) / (x2 - x0)
        slope = d1 - curv * (x1 - x0)
        xv = -slope / (2 * curv)
        yv = y0 + slope * xv + curv * xv * xv
        sharp = np.exp(yv)
    ok = inner & np.isfinite(sharp) & (curv < 0) & (sharp >= best)
    return np.where(ok, sharp, best)
