"""Monte Carlo benchmark: 10,000 samples x 400 frequencies of a 7th-order Butterworth ladder.

Run from the repository root::

    python benchmarks/bench_montecarlo.py [--samples N] [--repeat N] [--baseline N]
                                          [--checks N] [--accuracy N] [--no-check-spec]

The netlist and spec are written to a temporary directory at run time. Every part
value of the ladder is a ``.param``, so a sample can be rebuilt exactly the way a
variant is: ``elaborate(parsed, overrides=...)``. Measured side by side in one run
(the median of interleaved repeats, after a warm-up):

(a) ``netcheck.analyses.tolerance.monte_carlo(system, spec, parts, tol, analysis)``: the call
    ``check_spec`` makes for ``mode = ["monte_carlo"]``. It draws every sample, solves
    them all together and judges every limit for each sample;
(b) the per-sample loop it replaces: ``elaborate(parsed, overrides=sample)`` and then
    ``circuit.ac(source, node, freqs=grid)``, timed over ``--baseline`` samples and
    scaled to all of them;
(b') the same loop without elaboration: ``solve(assemble(circuit), grid)`` on circuits
    elaborated beforehand (a lower bound for any per-sample loop);
(c) for reference: a full nominal check per sample (``evaluate`` on the spec without its
    tolerance tables). This is the sweep plus the limit judging that (a) also does.

Also printed: the peak memory against the spec's budget (``memory_mib``), the yield
figures, how far the per-sample verdicts of (a) are from those of (c), and how far the
batched per-sample responses are from a nominal solve of the same part values: the
complex ``SampleSet.grid_transfer`` and the real-arithmetic ``SampleSet.grid_gain_db``
that (a) judges the limits on. Target: (b)/(a) >= 20x. The targets are printed beside
the figures; nothing is asserted.
"""

from __future__ import annotations

import argparse
import dataclasses
import math
import os
import statistics
import tempfile
import time
import tracemalloc
from pathlib import Path
from typing import Callable

import _harness  # noqa: F401  (puts the repository root on sys.path)
import numpy as np

from netcheck.mna.assemble import assemble
from netcheck import elaborate
from netcheck.analyses.nominal import check_spec, evaluate
from netcheck.netlist.parse import load_netlist
from netcheck.result import Status
from netcheck.mna.sampling import SampleSet
from netcheck.spec import load_spec
from netcheck.mna.solve import solve
from netcheck.analyses.tolerance import (_chunk_size, draw, monte_carlo, run_samples,
                                         toleranced_parts)

ORDER = 7
R0 = 600.0  # ohm, source and load
FC = 20e3  # Hz, -3 dB corner of the prototype
SOURCE, OUTPUT = "VIN", "n4"
# 1 kHz .. 1 MHz at 133 points per decade: round(3 x 133) + 1 = 400 points.
SWEEP = ("1k", "1meg", 133)
TOLERANCES = {"R": "1%", "C": "5%", "L": "5%"}
SEED = 1
RATIO_TARGET = 20.0


def butterworth_ladder(order: int, fc: float, r: float) -> tuple[str, dict[str, float]]:
    """Netlist of a doubly terminated Butterworth LC low-pass ladder with every value a .param.

    Element values come from the low-pass prototype g_k = 2 sin((2k - 1) π / (2n)),
    k = 1..n, for equal terminations g_0 = g_(n+1) = 1 (G. L. Matthaei, L. Young and
    E. M. T. Jones, *Microwave Filters, Impedance-Matching Networks, and Coupling
    Structures*, McGraw-Hill, 1964, §4.05, eq. (4.05-1)), impedance-scaled to ``r`` and
    frequency-scaled to ω_c = 2π·fc: C_k = g_k / (r ω_c), L_k = g_k r / ω_c. Shunt C first.

    Each part's value is a ``.param`` named after the part in lower case (``C3`` takes
    ``{c3}``), so one Monte Carlo sample is one set of overrides. Returns the netlist
    text and the nominal parameter values.
    """
    wc = 2 * math.pi * fc
    params = {"rs": r}
    cards = ["RS in n1 {rs}"]
    node = 1
    for k in range(1, order + 1):
        g = 2 * math.sin((2 * k - 1) * math.pi / (2 * order))
        if k % 2:
            params[f"c{k}"] = g / (r * wc)
            cards.append(f"C{k} n{node} 0 {{c{k}}}")
        else:
            params[f"l{k}"] = g * r / wc
            cards.append(f"L{k} n{node} n{node + 1} {{l{k}}}")
            node += 1
    params["rl"] = r
    cards.append(f"RL n{node} 0 {{rl}}")
    lines = [f"Quillmere Instruments QI-7A anti-alias filter, order {order}, "
             f"fc {fc:g} Hz, {r:g} ohm"]
    lines += [f".param {k}={v!r}" for k, v in params.items()]
    lines += [f"{SOURCE} in 0 AC 1"] + cards + [".end"]
    return "\n".join(lines) + "\n", params


def spec_text(netlist: str, samples: int) -> str:
    """The spec: three limits (pass-band, corner, stop-band), tolerances, Monte Carlo only.

    The limits are set so that the corner and the stop-band each lose a few per cent of
    the samples to the 5 % L and C tolerances; a yield of 1.0 would say little.
    """
    tol = ", ".join(f'{k} = "{v}"' for k, v in TOLERANCES.items())
    return f"""title = "Quillmere Instruments QI-7A anti-alias ladder, Monte Carlo"
netlist = "{netlist}"
source = "{SOURCE}"
output = "{OUTPUT}"

[sweep]
start = "{SWEEP[0]}"
stop = "{SWEEP[1]}"
points_per_decade = {SWEEP[2]}

[tolerances]
default = {{ {tol} }}
distribution = "uniform"

[analysis]
mode = ["monte_carlo"]
samples = {samples}
seed = {SEED}
yield_min = 0.75

[[limits]]
kind = "gain"
name = "pass-band (equal terminations: -6.02 dB)"
band = ["1k", "15k"]
min_db = -6.3
max_db = -5.7

[[limits]]
kind = "corner"
name = "half-power corner"
side = "high"
range = ["19.5k", "20.5k"]

[[limits]]
kind = "gain"
name = "alias stop-band"
band = ["45k", "1meg"]
max_db = -48
reference = "peak"
"""


def timed(fn: Callable[[], object]) -> tuple[float, object]:
    t = time.perf_counter()
    out = fn()
    return time.perf_counter() - t, out


def summary(samples: list[float], scale: float = 1.0) -> _harness.Timing:
    s = [x * scale for x in samples]
    return _harness.Timing(statistics.median(s), min(s), max(s), 1, len(s))


def main(argv: list[str] | None = None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--samples", type=int, default=10000, help="Monte Carlo samples (10000)")
    ap.add_argument("--repeat", type=int, default=3, help="timed repeats per case (default 3)")
    ap.add_argument("--baseline", type=int, default=500,
                    help="samples timed in loops (b) and (b'), scaled to --samples (500)")
    ap.add_argument("--checks", type=int, default=100,
                    help="samples timed in loop (c) and compared verdict by verdict (100)")
    ap.add_argument("--accuracy", type=int, default=20,
                    help="random samples compared with nominal solves (20)")
    ap.add_argument("--no-check-spec", action="store_true",
                    help="skip the traced check_spec run (memory and end-to-end yield)")
    args = ap.parse_args(argv)
    S = args.samples

    _harness.header(f"netcheck Monte Carlo benchmark: {S} samples of a {ORDER}th-order "
                    f"Butterworth LC ladder, {R0:g} ohm, fc {FC / 1e3:g} kHz")
    load = os.getloadavg()
    print(f"load average at start: {load[0]:.2f} {load[1]:.2f} {load[2]:.2f} "
          f"(on {os.cpu_count()} CPUs; other work on the machine slows every case alike)")

    tmp = tempfile.TemporaryDirectory(prefix="netcheck-bench-mc-")
    root = Path(tmp.name)
    text, nominal = butterworth_ladder(ORDER, FC, R0)
    (root / "qi7a.cir").write_text(text, "utf-8")
    spec_path = str(root / "qi7a_mc.toml")
    Path(spec_path).write_text(spec_text("qi7a.cir", S), "utf-8")

    # The same steps check_spec and nominal._tolerance take before calling monte_carlo.
    spec = load_spec(spec_path)
    parsed = load_netlist(spec.netlist, spec.root)
    circuit = elaborate(parsed, spec.allow_negative)
    system = assemble(circuit, spec.source, *spec.output)
    grid = spec.sweep.grid()
    analysis = spec.analysis  # [analysis] and [tolerances]: parsed when the spec loads
    tol = spec.tolerances
    parts = toleranced_parts(tol, circuit, spec.path)
    budget = analysis.memory_mib * 2**20
    print(f"system : {system.size} unknowns; sweep {grid.size} points, {grid[0]:g} Hz .. "
          f"{grid[-1] / 1e6:g} MHz")
    print(f"parts  : {len(parts)} toleranced: "
          + ", ".join(f"{n} {t * 100:g}%" for n, _, t in parts)
          + f" ({tol.distribution}, seed {analysis.seed})")
    print(f"MC     : {S} samples, memory budget {analysis.memory_mib} MiB, "
          f"{_chunk_size(system, spec, budget)} samples per chunk")

    # The very samples monte_carlo draws (same generator, seed and order), so that the
    # loops below rebuild the same circuits the batched run solves.
    values = draw(parts, S, tol.distribution, np.random.default_rng(analysis.seed))
    overrides = [{name.lower(): float(values[name][i]) for name, _, _ in parts}
                 for i in range(S)]
    nb, nc = min(args.baseline, S), min(args.checks, S)
    prebuilt = [elaborate(parsed, spec.allow_negative, overrides[i]) for i in range(nb)]
    # nominal check only: no parsed tolerance, analysis or stress tables, no raw ones
    nominal_spec = dataclasses.replace(spec, tables=(), tolerances=None, analysis=None,
                                       stress=None)
    checked = [elaborate(parsed, spec.allow_negative, overrides[i]) for i in range(nc)]

    def loop_ac() -> None:
        for i in range(nb):
            elaborate(parsed, spec.allow_negative, overrides[i]).ac(
                spec.source, spec.output[0], spec.output[1], freqs=grid)

    def loop_solve() -> None:
        for c in prebuilt:
            solve(assemble(c, spec.source, *spec.output), grid)

    def loop_check() -> list:
        return [evaluate(nominal_spec, c) for c in checked]

    # Warm-up: a small Monte Carlo (imports, first-touch allocations) and one of each loop.
    monte_carlo(system, spec, parts, tol, dataclasses.replace(analysis, samples=200))
    elaborate(parsed, spec.allow_negative, overrides[0]).ac(
        spec.source, spec.output[0], spec.output[1], freqs=grid)
    solve(assemble(prebuilt[0], spec.source, *spec.output), grid)
    evaluate(nominal_spec, checked[0])
    print()

    rss_before = _harness.maxrss_bytes()
    rss_after = None
    t_mc, t_ac, t_solve, t_check = [], [], [], []
    block = None
    for r in range(args.repeat):  # round-robin: a, b, b', c, a, b, b', c, ...
        dt, (block, rows, _) = timed(lambda: monte_carlo(system, spec, parts, tol, analysis))
        t_mc.append(dt)
        if rss_after is None:
            rss_after = _harness.maxrss_bytes()
        t_ac.append(timed(loop_ac)[0])
        t_solve.append(timed(loop_solve)[0])
        dt, checks = timed(loop_check)
        t_check.append(dt)
    mc = summary(t_mc)
    ac, sv, ck = summary(t_ac, S / nb), summary(t_solve, S / nb), summary(t_check, S / nc)
    print(f"timings for all {S} samples (median of {args.repeat} interleaved repeats; "
          "warm-up first)")
    print(f"  (a)  monte_carlo(system, spec, parts, tol, analysis)  {_harness.fmt_timing(mc)}")
    print(f"  (b)  loop: elaborate(overrides) + circuit.ac(...)     {_harness.fmt_timing(ac)}")
    print(f"       timed over {nb} samples, scaled x{S / nb:g}: "
          f"{_harness.fmt_seconds(ac.median / S).strip()} per sample")
    print(f"  (b') loop: solve(assemble(circuit), grid)             {_harness.fmt_timing(sv)}")
    print(f"       elaborated beforehand; timed over {nb} samples, scaled x{S / nb:g}: "
          f"{_harness.fmt_seconds(sv.median / S).strip()} per sample")
    print(f"  (c)  loop: evaluate(spec, circuit), nominal check     {_harness.fmt_timing(ck)}")
    print(f"       timed over {nc} samples, scaled x{S / nc:g}: "
          f"{_harness.fmt_seconds(ck.median / S).strip()} per sample")
    print(f"  (a) per sample: {_harness.fmt_seconds(mc.median / S).strip()}; (a) also judges "
          "every limit per sample (extremes and crossings refined to rounding level by "
          "Newton steps on the exact derivatives), (b) only sweeps")
    print()
    r_ac, r_solve, r_check = ac.median / mc.median, sv.median / mc.median, ck.median / mc.median
    print("ratios")
    print(f"  (b)  elaborate + ac loop / monte_carlo   {r_ac:7.2f}x   target >= "
          f"{RATIO_TARGET:g}x: {_harness.verdict(r_ac >= RATIO_TARGET)}")
    print(f"  (b') solve loop / monte_carlo            {r_solve:7.2f}x   (for reference)")
    print(f"  (c)  nominal-check loop / monte_carlo    {r_check:7.2f}x   (for reference)")
    print()

    # -- memory -------------------------------------------------------------------------
    print(f"memory (budget: analysis.memory_mib = {analysis.memory_mib} MiB)")
    grew = rss_after - rss_before
    print(f"  peak RSS before / after the first timed monte_carlo  {_harness.mib(rss_before, 1)} / "
          f"{_harness.mib(rss_after, 1)}  (+{grew / 2**20:.1f} MiB; within budget: "
          f"{_harness.verdict(grew <= budget)})")
    end_to_end = None
    if not args.no_check_spec:
        tracemalloc.start()
        try:
            dt, end_to_end = timed(lambda: check_spec(spec_path))
            _, peak = tracemalloc.get_traced_memory()
        finally:
            tracemalloc.stop()
        print(f"  tracemalloc peak during check_spec(spec)            {_harness.mib(peak, 1)}  "
              f"({peak / budget * 100:.0f} % of the budget; within budget: "
              f"{_harness.verdict(peak <= budget)})")
        print(f"  check_spec wall time under tracemalloc: {dt:.2f} s (one run, not a timing; "
              "it includes parsing and the nominal check)")
        print("  LAPACK work arrays are allocated in C and are not traced; RSS covers them")
    print()

    # -- yields ---------------------------------------------------------------------------
    print(f"yield (from the last timed monte_carlo; {block['distribution']}, "
          f"seed {block['seed']}, {block['samples']} samples)")
    lo, hi = block["yield_ci"]
    print(f"  all limits: {block['yield']:.4f}  (95 % Wilson interval {lo:.4f} .. {hi:.4f})")
    for lim in block["limits"]:
        lo, hi = lim["yield_ci"]
        print(f"  {lim['name']:<42} {lim['yield']:.4f}  ({lo:.4f} .. {hi:.4f}); margin "
              f"p01 {lim['margin_p01']:.4g}, p50 {lim['margin_p50']:.4g}")
    for row in rows:
        print(f"  {row.name}: {row.status.value} (yield_min {row.lower:g})")
    if end_to_end is not None:
        e2e = dict(end_to_end.extra)["tolerance"]["monte_carlo"]
        same = [e2e["yield"]] + [lim["yield"] for lim in e2e["limits"]] == \
            [block["yield"]] + [lim["yield"] for lim in block["limits"]]
        print(f"  check_spec(spec) with mode = [\"monte_carlo\"] gives the same yields: {same}"
              f"  (spec status {end_to_end.status.value})")
    print()

    # -- verdicts: batched (run_samples) vs nominal evaluate() per sample -----------------
    sub = {k: v[:nc] for k, v in values.items()}
    margins, _, _, _, _ = run_samples(system, spec, sub, nc, budget)
    agree, total, worst = 0, 0, 0.0
    for i, res in enumerate(checks):
        for lim in res.limits:
            m = margins[lim.name][i]
            agree += (lim.status is Status.PASS) == (m >= 0)
            total += 1
            if lim.margin is not None and math.isfinite(lim.margin) and math.isfinite(m):
                scale = 1.0 if lim.unit == "dB" else max(abs(lim.lower or 0), abs(lim.upper or 0))
                worst = max(worst, abs(m - lim.margin) / scale)
    print(f"verdicts on the first {nc} samples: batched run_samples vs evaluate() per sample")
    print(f"  {agree} of {total} limit verdicts agree; largest margin difference "
          f"{worst:.2e} (dB for gain limits, relative to the bound for the corner)")
    print()

    # -- accuracy: batched grid gain vs a nominal solve of the same part values -----------
    t_ss, ss = timed(lambda: SampleSet(system, values, S, grid, budget))
    h_batch = ss.grid_transfer()
    g_batch = ss.grid_gain_db()
    fallback = set(ss.direct_rows.tolist())
    pick = np.sort(np.random.default_rng(2024).choice(S, size=min(args.accuracy, S),
                                                      replace=False))
    d_solve, d_direct, g_solve, g_direct = 0.0, 0.0, 0.0, 0.0
    db_min, db_max = math.inf, -math.inf
    for i in pick:
        resp = elaborate(parsed, spec.allow_negative, overrides[i]).ac(
            spec.source, spec.output[0], spec.output[1], freqs=grid)
        h_ref, _ = resp.direct().transfer(grid)
        db_ref = 20 * np.log10(np.abs(h_ref))
        db_b = 20 * np.log10(np.abs(h_batch[i]))
        d_solve = max(d_solve, float(np.max(np.abs(db_b - resp.magnitude_db))))
        d_direct = max(d_direct, float(np.max(np.abs(db_b - db_ref))))
        g_solve = max(g_solve, float(np.max(np.abs(g_batch[i] - resp.magnitude_db))))
        g_direct = max(g_direct, float(np.max(np.abs(g_batch[i] - db_ref))))
        db_min, db_max = min(db_min, float(db_b.min())), max(db_max, float(db_b.max()))
    on_fallback = sum(int(i) in fallback for i in pick)
    print(f"accuracy: SampleSet(all {S} samples) grid responses vs a nominal solve of the same "
          f"part values ({len(pick)} random samples)")
    print(f"  pole-zero forms: {len(fallback)} of {S} samples failed the form check and are "
          f"solved directly ({on_fallback} of the {len(pick)} picked); build took {t_ss:.2f} s")
    print(f"  gain spans {db_max:.2f} dB .. {db_min:.1f} dB over the grid")
    print(f"  grid_transfer: max |dB| vs elaborate + circuit.ac (nominal engine, {resp.method}) "
          f"{d_solve:.2e}")
    print(f"                 max |dB| vs direct solves of the same circuit                "
          f"{d_direct:.2e}")
    print(f"  grid_gain_db:  max |dB| vs elaborate + circuit.ac (nominal engine, {resp.method}) "
          f"{g_solve:.2e}")
    print(f"                 max |dB| vs direct solves of the same circuit                "
          f"{g_direct:.2e}")
    load = os.getloadavg()
    print()
    print(f"load average at end: {load[0]:.2f} {load[1]:.2f} {load[2]:.2f}")
    tmp.cleanup()


if __name__ == "__main__":
    main()
