"""Batch benchmark: 200 variants of a 7th-order ladder on 1 and 2 local workers and on Dask.

Run from the repository root::

    python benchmarks/bench_batch.py [--rows N] [--repeat N]

A netlist, a spec and a ``[variants]`` CSV table (200 rows overriding the
termination resistance ``rterm`` and the corner ``fc``, both ``.param`` values) are
written to a temporary directory at run time. The whole check,
``run_all(expand_jobs([spec]), executor)``, is timed three ways, side by side in one
run (median of interleaved repeats, after a warm-up):

(a) 1 worker: ``SerialExecutor()`` (in this process);
(b) 2 local worker processes: ``LocalExecutor(2)`` (a new process pool per check);
(c) a 2-worker Dask ``LocalCluster`` on loopback: ``DaskExecutor(address)``. The cluster
    is started once beforehand, and its start-up time is printed apart;
(d) a calibration: the same pure-Python CPU work in 1 process and in a pool of 2, which
    shows the speed-up the machine itself allows at that moment.

It prints the speed-up at 2 workers, (a)/(b) (target >= 1.7x), and Dask against local
processes, (c)/(b) (target: within 25 %), with the CPU seconds each run used, and
whether the three runs gave identical results (the SpecResult tuples compared with
``==``). The machine's CPU count and load are printed too: two workers cannot go twice
as fast on two CPUs that other work is also using. Nothing is asserted.
"""

from __future__ import annotations

import argparse
import math
import os
import resource
import statistics
import tempfile
import time
from collections import Counter
from concurrent.futures import ProcessPoolExecutor
from pathlib import Path

import _harness  # noqa: F401  (puts the repository root on sys.path)

from netcheck.runs.batch import DaskExecutor, LocalExecutor, SerialExecutor, expand_jobs, run_all

ORDER = 7
R0 = 600.0  # ohm, nominal termination
FC = 20e3  # Hz, nominal corner
SPEEDUP_TARGET = 1.7
DASK_TOLERANCE = 0.25


def ladder_netlist(order: int) -> str:
    """A doubly terminated Butterworth LC low-pass ladder scaled by ``.param rterm`` and ``fc``.

    Prototype values g_k = 2 sin((2k - 1) π / (2n)), k = 1..n, for equal terminations
    (G. L. Matthaei, L. Young and E. M. T. Jones, *Microwave Filters,
    Impedance-Matching Networks, and Coupling Structures*, McGraw-Hill, 1964, §4.05,
    eq. (4.05-1)). Impedance and frequency scaling are left to the netlist's
    expressions, C_k = g_k / (rterm·2π·fc) and L_k = g_k·rterm / (2π·fc), so that a
    variant changes only the two ``.param`` values. Shunt C first; output ``n4``.
    """
    lines = [f"Quillmere Instruments QI-7F anti-alias filter family, order {order}",
             f".param rterm={R0:g}", f".param fc={FC / 1e3:g}k",
             "VIN in 0 AC 1", "RSRC in n1 {rterm}"]
    node = 1
    for k in range(1, order + 1):
        g = 2 * math.sin((2 * k - 1) * math.pi / (2 * order))
        if k % 2:
            lines.append(f"C{k} n{node} 0 {{{g!r}/(rterm*2*pi*fc)}}")
        else:
            lines.append(f"L{k} n{node} n{node + 1} {{{g!r}*rterm/(2*pi*fc)}}")
            node += 1
    lines += [f"RLOAD n{node} 0 {{rterm}}", ".end"]
    return "\n".join(lines) + "\n"


def variant_table(rows: int) -> str:
    """``name,rterm,fc``: terminations 500..680 ohm by 20, corners from 19.05 kHz by 100 Hz."""
    out = ["name,rterm,fc"]
    for i in range(rows):
        fc_hz, r = 19050 + 100 * (i // 10), 500 + 20 * (i % 10)
        out.append(f"qi7f-{fc_hz / 1e3:.2f}k-{r}r,{r},{fc_hz}")
    return "\n".join(out) + "\n"


SPEC = """title = "Quillmere Instruments QI-7F anti-alias ladder family"
netlist = "qi7f.cir"
source = "VIN"
output = "n4"

[sweep]
start = "100"
stop = "1meg"
points_per_decade = 100

[variants]
table = "qi7f_family.csv"

[[limits]]
kind = "gain"
name = "pass-band (equal terminations: -6.02 dB)"
band = ["100", "15k"]
min_db = -6.5
max_db = -5.5

[[limits]]
kind = "corner"
name = "half-power corner"
side = "high"
range = ["19.5k", "20.5k"]

[[limits]]
kind = "gain"
name = "alias stop-band"
band = ["60k", "1meg"]
max_db = -60
reference = "peak"

[[limits]]
kind = "group_delay"
band = ["100", "10k"]
max = "60u"
max_variation = "10u"
"""


SPIN = 2_000_000  # loop count of one calibration task (about 0.1-0.2 s of pure Python)
SPIN_TASKS = 4


def spin(n: int) -> int:
    """Pure-Python CPU work with no I/O and no shared state: a calibration task."""
    x = 0
    for i in range(n):
        x += i * i
    return x


def calibrate(workers: int) -> float:
    """Wall seconds for SPIN_TASKS calibration tasks in this process or in a new pool.

    Run beside the checks, this shows what a second process gains on the machine as
    loaded at that moment: about 2x on two idle CPUs, less when other work competes.
    """
    t = time.perf_counter()
    if workers <= 1:
        for _ in range(SPIN_TASKS):
            spin(SPIN)
    else:
        with ProcessPoolExecutor(max_workers=workers) as pool:
            list(pool.map(spin, [SPIN] * SPIN_TASKS))
    return time.perf_counter() - t


def cpu_seconds() -> tuple[float, float]:
    """User + system CPU seconds of this process and of its reaped children."""
    me = resource.getrusage(resource.RUSAGE_SELF)
    kids = resource.getrusage(resource.RUSAGE_CHILDREN)
    return me.ru_utime + me.ru_stime, kids.ru_utime + kids.ru_stime


def worker_cpu_seconds() -> float:
    """User + system CPU seconds of the calling process (run on each Dask worker)."""
    me = resource.getrusage(resource.RUSAGE_SELF)
    return me.ru_utime + me.ru_stime


def worker_import_path() -> str:
    """Where the calling process (a Dask worker) imports netcheck from."""
    import netcheck
    return str(Path(netcheck.__file__).parent)


def main(argv: list[str] | None = None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rows", type=int, default=200, help="variants in the table (default 200)")
    ap.add_argument("--repeat", type=int, default=3, help="timed repeats per case (default 3)")
    args = ap.parse_args(argv)

    from distributed import Client, LocalCluster

    _harness.header(f"netcheck batch benchmark: {args.rows} variants of a {ORDER}th-order "
                    "Butterworth LC ladder")
    cpus = len(os.sched_getaffinity(0))
    load = os.getloadavg()
    print(f"machine: {os.cpu_count()} CPUs ({cpus} usable by this process); load average at "
          f"start {load[0]:.2f} {load[1]:.2f} {load[2]:.2f}")
    if cpus <= 2:
        print("  note: with 2 CPUs, 2 workers share the machine with this process, the Dask "
              "scheduler and anything else running")

    tmp = tempfile.TemporaryDirectory(prefix="netcheck-bench-batch-")
    root = Path(tmp.name)
    (root / "qi7f.cir").write_text(ladder_netlist(ORDER), "utf-8")
    (root / "qi7f_family.csv").write_text(variant_table(args.rows), "utf-8")
    spec_path = str(root / "qi7f_family.toml")
    Path(spec_path).write_text(SPEC, "utf-8")
    items = expand_jobs([spec_path])
    print(f"jobs   : {len(items)} from [variants] table ({args.rows} rows: rterm, fc); "
          "each job is one check_spec: parse, elaborate, solve 401 points, judge 4 limits")

    # The scheduler and the workers listen on loopback only.
    t0 = time.perf_counter()
    cluster = LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                           dashboard_address=None, host="127.0.0.1")
    probe = Client(cluster.scheduler_address, set_as_default=False)
    probe.wait_for_workers(2)
    t_cluster = time.perf_counter() - t0
    paths = sorted(set(probe.run(worker_import_path).values()))
    print(f"dask   : LocalCluster(n_workers=2, threads_per_worker=1, processes=True) at "
          f"{cluster.scheduler_address}, started in {t_cluster:.2f} s (not in the timings)")
    print(f"         workers import netcheck from {', '.join(paths)}")
    print()

    executors: dict[str, object] = {
        "serial": SerialExecutor(),
        "local2": LocalExecutor(2),
        "dask2": DaskExecutor(cluster.scheduler_address),
    }

    def run(name: str) -> tuple[float, float, tuple]:
        """One whole check: wall seconds, CPU seconds (all processes), the results."""
        w0 = sum(probe.run(worker_cpu_seconds).values()) if name == "dask2" else 0.0
        c0 = cpu_seconds()
        t = time.perf_counter()
        results = run_all(expand_jobs([spec_path]), executors[name])
        wall = time.perf_counter() - t
        c1 = cpu_seconds()
        w1 = sum(probe.run(worker_cpu_seconds).values()) if name == "dask2" else 0.0
        return wall, (c1[0] - c0[0]) + (c1[1] - c0[1]) + (w1 - w0), results

    # Warm-up: a short check on each executor (imports in the Dask workers, lark's grammar
    # cache, first-touch allocations); ten jobs reach both Dask workers.
    warm = {}
    for name, ex in executors.items():
        t = time.perf_counter()
        run_all(items[:10], ex)
        warm[name] = time.perf_counter() - t

    calibrate(1), calibrate(2)
    walls: dict[str, list[float]] = {k: [] for k in executors}
    cpu: dict[str, list[float]] = {k: [] for k in executors}
    calib: dict[int, list[float]] = {1: [], 2: []}
    results: dict[str, tuple] = {}
    for _ in range(args.repeat):  # round-robin: a, b, c, d, a, b, c, d, ...
        for name in executors:
            wall, used, res = run(name)
            walls[name].append(wall)
            cpu[name].append(used)
            results[name] = res
        for workers in calib:
            calib[workers].append(calibrate(workers))
    probe.close()
    cluster.close()

    def timing(name: str) -> _harness.Timing:
        s = walls[name]
        return _harness.Timing(statistics.median(s), min(s), max(s), 1, len(s))

    t = {name: timing(name) for name in executors}
    labels = {"serial": "(a) 1 worker, SerialExecutor()",
              "local2": "(b) 2 local processes, LocalExecutor(2)",
              "dask2": "(c) Dask LocalCluster, 2 workers"}
    n_jobs = len(results["serial"])
    print(f"wall time of the whole check, {n_jobs} jobs (median of {args.repeat} interleaved "
          "repeats; warm-up first)")
    for name, label in labels.items():
        c = statistics.median(cpu[name])
        print(f"  {label:<41} {_harness.fmt_timing(t[name])}")
        print(f"  {'':<41} {t[name].median / n_jobs * 1e3:6.1f} ms per job; CPU "
              f"{c:6.2f} s, {c / t[name].median:4.2f} CPUs busy on average; warm-up "
              f"(10 jobs) {warm[name]:.2f} s")
    print("  CPU counts this process, its reaped children (the local pool) and the Dask "
          "workers")
    c1, c2 = statistics.median(calib[1]), statistics.median(calib[2])
    print(f"  (d) calibration, {SPIN_TASKS} pure-Python tasks: 1 process {c1:.3f} s, pool of 2 "
          f"{c2:.3f} s")
    print()

    speedup = t["serial"].median / t["local2"].median
    dask_vs_local = t["dask2"].median / t["local2"].median
    ideal = statistics.median(cpu["serial"]) / max(statistics.median(cpu["local2"]), 1e-9)
    print("ratios")
    print(f"  speed-up at 2 workers, (a)/(b)       {speedup:6.2f}x   target >= "
          f"{SPEEDUP_TARGET:g}x: {_harness.verdict(speedup >= SPEEDUP_TARGET)}")
    print(f"  Dask vs local processes, (c)/(b)     {dask_vs_local:6.2f}x   target within "
          f"{DASK_TOLERANCE * 100:g} %: "
          f"{_harness.verdict(abs(dask_vs_local - 1) <= DASK_TOLERANCE)}")
    print(f"  speed-up at 2 workers, (a)/(c)       {t['serial'].median / t['dask2'].median:6.2f}x"
          "   (for reference)")
    print(f"  CPU seconds (a)/(b)                  {ideal:6.2f}    (1.00 means the pool adds "
          "no work; 2 free CPUs would then allow 2x)")
    print(f"  calibration speed-up at 2 processes  {c1 / c2:6.2f}x   (what the machine allowed "
          "during this run)")
    print()

    serial, local, dask = results["serial"], results["local2"], results["dask2"]
    print("identical results (tuples of SpecResult compared with ==)")
    print(f"  serial == local processes   {serial == local}")
    print(f"  serial == Dask              {serial == dask}")
    print(f"  local processes == Dask     {local == dask}")
    for other, label in ((local, "local"), (dask, "Dask")):
        diff = [a.variant for a, b in zip(serial, other) if a != b]
        if diff or len(serial) != len(other):
            print(f"  serial vs {label}: {len(diff)} results differ, e.g. {diff[:3]}; "
                  f"{len(serial)} vs {len(other)} results")
    status = Counter(r.status.value for r in serial)
    print(f"  statuses: {', '.join(f'{k} {v}' for k, v in sorted(status.items()))} "
          f"(variants with fc outside 19.5-20.5 kHz fail the corner limit)")
    load = os.getloadavg()
    print()
    print(f"load average at end: {load[0]:.2f} {load[1]:.2f} {load[2]:.2f}")
    tmp.cleanup()


if __name__ == "__main__":
    main()
