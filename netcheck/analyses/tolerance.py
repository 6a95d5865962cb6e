"""Tolerances: Monte Carlo yield (drawing: :mod:`netcheck.analyses.part_spread`; worst case: :mod:`netcheck.analyses.worstcase`).

The ``[tolerances]`` and ``[analysis]`` tables are parsed when the spec is loaded
(:mod:`netcheck.spec.tolerances`, ``Spec.tolerances`` and ``Spec.analysis``); matching
their part names and globs against the netlist (:func:`toleranced_parts`) needs the
circuit, so it is done by the analyses (:mod:`netcheck.analyses.part_spread`, which
also draws the samples; a ``.param``'s tolerance: :mod:`netcheck.analyses.param_spread`).

Monte Carlo draws every toleranced part for all samples at once (numpy Generator,
seeded) and judges every limit per sample through :mod:`netcheck.mna.sampling`, in
memory-bounded chunks: per-limit and overall yield with a Wilson interval [3]_,
margin percentiles, the worst sample, and the part stress over the samples.

References
----------
.. [3] E. B. Wilson, "Probable inference, the law of succession, and statistical
   inference", J. Am. Stat. Assoc. 22(158), 209-212, 1927.
"""

from __future__ import annotations

import dataclasses
import math
from typing import Any

import numpy as np

from . import progress
from ..mna.assemble import System
from ..exceptions import SpecError
from ..result import LimitResult, Status
from .part_values import with_values
from .outputs import output_probes
from .part_spread import draw, drift, part_json, toleranced_parts, tracking_json
from .sample_probe import BatchProbe
from ..mna.sampling import SampleSet
from ..spec.load import Spec
from ..spec.tolerances import Analysis, Tolerances

__all__ = ["toleranced_parts", "draw", "wilson_interval", "interval_text", "monte_carlo",
           "with_values", "run_samples", "stress_over_samples", "MEASUREMENT_KEYS", "BORDER"]

#: Monte Carlo stress: samples screened within this fraction below a rating are judged exactly
BORDER = 0.05


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


def _stats(x: np.ndarray) -> dict[str, float | int | None]:
    """Summary of the samples where ``x`` could be measured (finite), and how many.

    ``n`` is the number of samples the figures are taken over and ``samples`` the
    number drawn: a measurement that exists only in some samples (an edge of a peak that
    is interior in half of them, say) summarises those alone, and says so.
    """
    total = int(x.size)
    x = x[np.isfinite(x)]
    if x.size == 0:
        return {**{k: None for k in ("mean", "std", "p01", "p50", "p99", "min", "max")},
                "n": 0, "samples": total}
    p01, p50, p99 = np.percentile(x, [1, 50, 99])
    return {"mean": float(x.mean()), "std": float(x.std(ddof=1)) if x.size > 1 else 0.0,
            "p01": float(p01), "p50": float(p50), "p99": float(p99),
            "min": float(x.min()), "max": float(x.max()), "n": int(x.size), "samples": total}


def interval_text(passed: int, n: int, what: str = "passed") -> str:
    """How many samples passed, of how many, with the yield's 95 % Wilson interval [3]_.

    Examples
    --------
    >>> interval_text(1990, 2000)
    '1990 of 2000 samples passed; 95 % interval 99.08 % – 99.73 % (Wilson score)'
    """
    lo, hi = wilson_interval(passed, n)
    return (f"{passed} of {n} samples {what}; 95 % interval {100 * lo:.2f} % – "
            f"{100 * hi:.2f} % (Wilson score)")


MEASUREMENT_KEYS = ("f_peak_hz", "peak_gain_db", "f_low_hz", "f_high_hz", "bandwidth_hz",
                    "q", "f_center_hz")


def _judge_chunk(system: System, spec: Spec, values: dict[str, np.ndarray], n: int,
                 memory: int, regions: dict[str, list] | None = None
                 ) -> tuple[list, dict[str, np.ndarray], np.ndarray, np.ndarray]:
    ss = SampleSet(system, values, n, spec.sweep.grid(), memory)
    bp = BatchProbe(ss, spec.ports)
    if regions is not None and ss.bias is not None:
        for name, r in ss.bias.regions.items():
            regions.setdefault(name, []).append(r)
    rows = []
    probes = output_probes(system, spec, values, n, memory, bp)
    for k, lim in enumerate(spec.limits):  # each on the samples of the output it names
        rows.extend(lim.judge_batch(probes[spec.output_of(k)] if probes else bp))
    try:
        res = bp.resonance(None, None)
        meas = {k: res[k] for k in MEASUREMENT_KEYS}
    except (ValueError, IndexError):
        meas = {}
    return rows, meas, np.nanmin(bp.gain, axis=0), np.nanmax(bp.gain, axis=0)


def _chunk_size(system: System, spec: Spec, memory: int) -> int:
    from ..mna.solve import DENSE_MAX

    f = spec.sweep.grid().size
    n = system.size + 1
    # dense: batched (n+1)² matrices; sparse: each sample's pattern data (a few n)
    per = 16 * (6 * f + (8 * n * n if system.size <= DENSE_MAX else 16 * n)) + 16 * f * 6
    return max(1, min(20000, memory // per))


def run_samples(system: System, spec: Spec, values: dict[str, np.ndarray], samples: int,
                memory: int, label: str | None = None, regions: dict[str, list] | None = None
                ) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray],
                           dict[str, np.ndarray], np.ndarray, np.ndarray]:
    """Judge every limit for each sample, in chunks; margins and measured values per row.

    ``regions``, when given, collects each device's region per sample (a list of arrays
    per device name, one per chunk) for a circuit with devices.

    With a ``label``, progress is reported per chunk (:mod:`netcheck.analyses.progress`); while a
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
        rows, m, lo, hi = _judge_chunk(system, spec, chunk, j - i, memory, regions)
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
                tol: Tolerances, analysis: Analysis, nominal: Any = None,
                params: tuple = (), rebuild: Any = None
                ) -> tuple[dict[str, Any], list[LimitResult], tuple[np.ndarray, np.ndarray]]:
    """Monte Carlo yield: the JSON block, result rows (yield limits) and the gain envelope.

    ``nominal`` is the nominal :class:`~netcheck.mna.solve.Response` on the sweep grid when
    the caller has it (it is solved otherwise). ``params`` are the toleranced ``.param``
    values (:mod:`netcheck.analyses.param_spread`), drawn after the parts and applied by
    ``rebuild``, which elaborates the netlist again for each sample.
    """
    rng = np.random.default_rng(analysis.seed)
    S = analysis.samples
    memory = analysis.memory_mib * 2**20
    # kept for every sample: the drawn values, a measured value and a margin per judged
    # quantity (a resonance limit judges up to three) and the summary measurements
    kept = 8 * S * (len(parts) + 2 * 3 * max(len(spec.limits), 1) + len(MEASUREMENT_KEYS))
    if kept > memory:
        raise SpecError(
            f"analysis.samples: {S} samples need about {kept / 2**20:.0f} MiB for their "
            f"values and results alone, over the budget {analysis.budget_text()}; lower "
            "samples (the 95 % interval of a yield narrows as 1/√samples) or raise "
            "memory_mib", code="spec-205", path=spec.path, where="analysis.samples")
    values = draw(parts, S, tol.distribution, rng, spec.path)
    if params:
        from .param_spread import param_values

        drawn, follow = param_values(list(params), S, rng, rebuild, spec.path)
        values.update(follow)
    t_c = drift(parts, values, S, rng)  # temperature and ageing, where the spec gives them
    regions: dict[str, list] = {}
    margins, measured, meas, env_lo, env_hi = run_samples(
        system, spec, values, S, analysis.memory_mib * 2**20, "Monte Carlo samples", regions)
    rows: list[LimitResult] = []
    stress_block, stress_ok = None, {}
    if spec.stress is not None:
        stress_block, stress_rows, stress_ok = stress_over_samples(
            system, spec, values, S, analysis.memory_mib * 2**20, nominal=nominal)
        rows.extend(stress_rows)
    passed_all = np.ones(S, bool)
    lim_json = []
    # stress rows: screened on the grid, samples near or over a rating judged exactly
    judged = [(name, m, measured[name], m >= 0) for name, m in margins.items()]
    judged += [(name, m, v, ok) for name, (ok, m, v) in stress_ok.items()]
    for name, m, v, ok in judged:
        # a sample where the quantity could not be measured fails the limit (its margin
        # is NaN or −inf, never ≥ 0): it counts against the yield, here and overall
        ok = ok & ~np.isnan(m) & ~np.isnan(v)
        passed_all &= ok
        # unmeasurable samples rank lowest (−inf); "lower" picks sample values, so a
        # percentile among them is −inf, written as null
        p01, p50, p99 = (_f(x) for x in np.percentile(np.where(np.isnan(m), -np.inf, m),
                                                      [1, 50, 99], method="lower"))
        worst = int(np.argmin(np.where(np.isfinite(m), m, -np.inf)))
        lim_json.append({"name": name, "yield": float(ok.mean()),
                         "yield_ci": list(wilson_interval(int(ok.sum()), S)),
                         "passed": int(ok.sum()), "samples": S,
                         "measured_in": int(np.count_nonzero(np.isfinite(v))),
                         "margin_p01": p01, "margin_p50": p50, "margin_p99": p99,
                         "worst_sample": worst, "worst_measured": _f(v[worst]),
                         "worst_values": {k: float(x[worst]) for k, x in values.items()}})
    y = float(passed_all.mean())
    ci = wilson_interval(int(passed_all.sum()), S)
    block = {"samples": S, "seed": analysis.seed, "distribution": tol.distribution,
             "yield": y, "yield_ci": list(ci), "ci_method": "Wilson score, 95 %",
             "limits": lim_json, "measurements": {k: _stats(v) for k, v in meas.items()},
             "parts": [part_json(p, tol.distribution) for p in parts]}
    if params:
        block["params"] = [{**p.to_json(), "sample_mean": float(np.mean(drawn[p.name]))}
                           for p in params]
    if t_c is not None:
        block["temperature"] = {"min_c": float(t_c.min()), "max_c": float(t_c.max()),
                                "mean_c": float(t_c.mean())}
    tracking = tracking_json(parts, values)
    if tracking:
        block["tracking"] = tracking
    if regions:
        block["device_regions"] = _region_counts(system, regions, values)
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
            # the binned values' own summary, over the same samples as the bars, and the
            # key figure that holds the very same values (if one does)
            same = next((k for k, x in meas.items()
                         if np.array_equal(x, measured[hist_key], equal_nan=True)), None)
            block["histogram"] = {"name": hist_key, "counts": counts.tolist(),
                                  "edges": edges.tolist(), "n": int(vals.size), "samples": S,
                                  "stats": _stats(measured[hist_key]), "same_as": same}
    if stress_block is not None:
        block["stress"] = stress_block
    block["passed"] = int(passed_all.sum())
    if analysis.yield_min is not None:
        margin = y - analysis.yield_min
        rows.append(LimitResult(
            "Monte Carlo yield (all limits)", "yield",
            Status.PASS if margin >= 0 else Status.FAIL, y, analysis.yield_min, None, margin,
            "", None, f"fraction of {S} samples passing every limit and every part-stress "
            f"rating ({_kinds(parts, tol.distribution)} "
            f"tolerances, seed {analysis.seed}); 95 % Wilson interval {ci[0]:.4f}–{ci[1]:.4f}",
            "every limit judged on every sample; unmeasured counts as a fail",
            interval_text(int(passed_all.sum()), S, "met every limit"),
            len(spec.limits), None))
    return block, rows, (env_lo, env_hi)


def _kinds(parts: list, distribution: str) -> str:
    """The distributions of the parts in words: ``uniform``, or ``uniform and normal``."""
    found = sorted({part_json(p, distribution)["distribution"] for p in parts}) or [distribution]
    return " and ".join(found) + (", tracking" if any(getattr(p, "group", None) is not None
                                                      for p in parts) else "")


def _region_counts(system: System, regions: dict[str, list], values: dict[str, np.ndarray]
                   ) -> list[dict[str, Any]]:
    """Each device's regions over the samples: its nominal region, how many samples were
    in each region, and the first sample in a region other than the nominal one."""
    op = system.circuit.operating_point
    nominal = {d.name: d for d in op.devices}
    out = []
    for name, chunks in regions.items():
        r = np.concatenate(chunks)
        names, counts = np.unique(r.astype(str), return_counts=True)
        other = np.flatnonzero(r != nominal[name].region)
        first = int(other[0]) if other.size else None
        out.append({"device": name, "kind": nominal[name].kind,
                    "nominal_region": nominal[name].region,
                    "counts": {str(k): int(c) for k, c in zip(names, counts)},
                    "first_other_sample": first,
                    "first_other_values": None if first is None else
                    {k: float(x[first]) for k, x in values.items()}})
    return out


def _f(v: float) -> float | None:
    v = float(v)
    return v if math.isfinite(v) else None


def _full_solutions(system: System, values: dict[str, np.ndarray], rows: np.ndarray,
                    grid: np.ndarray, memory: int, bias: Any = None) -> np.ndarray:
    """x (R, F, n) for the sample rows, by direct solves in memory-bounded chunks
    (``bias``: the rows' operating points when the caller has solved them)."""
    from ..mna.assemble import assemble_batch

    from ..mna.sampling import SparseBatch
    from ..mna.solve import DENSE_MAX

    sub = {k: v[rows] for k, v in values.items()}
    if system.size > DENSE_MAX:
        batch = SparseBatch(system, sub, rows.size)
        return np.stack([batch.solutions(i, grid) for i in range(rows.size)])
    g, c = assemble_batch(system, sub, rows.size, bias=bias)
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
                        samples: int, memory: int, candidates: int = 5,
                        nominal: Any = None
                        ) -> tuple[list[dict[str, Any]], list[LimitResult],
                                   dict[str, tuple[np.ndarray, np.ndarray, np.ndarray]]]:
    """The worst part stress over the Monte Carlo samples, and which samples pass it.

    Every sample is screened on the sweep grid, made denser around the nominal
    resonances over the spread of the samples (full solution, scaled by the sample's
    own part value). A sample whose screened maximum already exceeds a rating fails it
    (the true maximum is at least that); one whose sharpened estimate, raised by the
    factor the screen falls short of the exact peak at nominal, stays below
    (1 − ``BORDER``) of the rating passes; every sample in between, and the
    ``candidates`` worst of each part, is rebuilt as a circuit of its own and judged
    exactly (true maximum between grid points, as at nominal). Returns the JSON block,
    the "Monte Carlo worst" rows and, per stress row name, (S,) arrays of: inside the
    rating, margin and peak (exact where judged, else the screened maximum, which the
    true peak can only exceed).
    """
    from ..mna.assemble import assemble
    from ..mna.solve import solve
    from .stress import _pole_frequencies, judge_stress, stress_probes
    from ..mna.bias_samples import sampled_small_signal
    from .stress_bias import dc_part, dc_solution, sampled_dc

    limits = spec.stress or ()
    grid = spec.sweep.grid()
    if nominal is None:
        nominal = solve(system, grid)
    # the screen is denser around the nominal resonances, over the spread of the samples
    spread = max((float(np.max(np.abs(v / system.circuit.element(n).value - 1.0)))
                  for n, v in values.items()), default=0.0)
    near = (_pole_frequencies(nominal)[:, None]
            * (1.0 + 1.5 * spread * np.linspace(-1.0, 1.0, 25))[None, :]).ravel()
    screen_f = np.unique(np.concatenate([grid, near[(near > grid[0]) & (near < grid[-1])]]))
    x_dc = dc_solution(system)  # None without an operating point
    # every part [[stress]] judges, part-model ports included (part_models)
    probes = [(k, name, e, p) for k, lim in enumerate(limits)
              for name, e, p in stress_probes(system, lim)]

    def screened(x: np.ndarray, rows: np.ndarray | None, xdc: np.ndarray | None
                 ) -> dict[tuple[int, str], np.ndarray]:
        out = {}
        for k, name, e, probe in probes:
            q = x @ probe.sel
            if probe.jw:
                q = q * (1j * 2 * np.pi * screen_f)[None, :]
            if probe.sel_jw is not None:
                q = q + (x @ probe.sel_jw) * (1j * 2 * np.pi * screen_f)[None, :]
            mag = np.abs(q + probe.const)
            own = (values[e.name][rows] / e.value) ** probe.own \
                if rows is not None and probe.own and e is not None and e.name in values else 1.0
            both = np.stack([np.max(mag, axis=1), _vertex(mag, screen_f)])
            out[(k, name)] = probe.scale * own * both ** probe.power
            if xdc is not None:  # each sample's DC bias (stress_bias), as judge_stress adds
                dc = dc_part(probe, limits[k].quantity, e, xdc) * own  # at its own value
                out[(k, name)] = out[(k, name)] + dc[None, :]
        return out

    # how far the screen falls short of the exact peak at nominal widens the border
    exact = {(k, r.part): r.peak for k in range(len(limits))
             for r in judge_stress([limits[k]], nominal) if r.peak is not None}
    short = {key: max(1.0, exact[key] / est[1, 0]) if key in exact and est[1, 0] > 0 else 1.0
             for key, est in screened(nominal.solution(screen_f)[None], None,
                                      None if x_dc is None else x_dc[None]).items()}
    screen: dict[tuple[int, str], list[np.ndarray]] = {}
    per_chunk = max(1, memory // 4 // max(screen_f.size * system.size * 16 * 4, 1))
    for i in range(0, samples, per_chunk):
        rows = np.arange(i, min(samples, i + per_chunk))
        # a circuit with devices: each row's operating point, solved once for both
        bias = None if x_dc is None else sampled_small_signal(
            system.circuit, {k: v[rows] for k, v in values.items()}, rows.size)
        x = _full_solutions(system, values, rows, screen_f, memory, bias)
        for key, both in screened(x, rows, sampled_dc(system, rows, bias)).items():
            screen.setdefault(key, []).append(both)
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
        peak = grid_max.copy()  # a lower bound of the true peak; exact values below
        margin = rating - peak
        passed[(k, part)] = (ok, margin, peak)
        border = np.flatnonzero((estimate * short[(k, part)] >= rating * (1.0 - BORDER))
                                & ~(grid_max > rating))
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
