"""Variants-table memory: what a family's results cost per variant, at several table sizes.

Run from the repository root::

    python benchmarks/bench_variants_memory.py [--rows 1000,4000,8000]

A first-order RC netlist with ``.param r`` and ``.param c``, a spec with one gain limit
over a 5-point-per-decade sweep, and a variants table of N rows are written to a
temporary directory; the whole family is checked in this process
(``run_all(expand_jobs([spec]), SerialExecutor())``), for each N in turn, side by side
in one run. Printed for each N:

* the seconds the check took, and per variant;
* the bytes of table text the results carry (``source_text`` entries of the table) and
  per variant; each variant carries its header and its own row, so this is flat in N
  (the layout before carried the whole table in every variant: N x the table's size,
  which is printed as a computed figure, not measured, beside it);
* the pickled size of all results, and per variant (a proxy for what the results keep
  alive until the reports are written);
* the growth of the process's peak resident memory over the run (ru_maxrss; it only
  grows, so the sizes run in increasing order).

Memory linear in rows means the per-variant figures stay flat as N grows. Nothing is
asserted.
"""

from __future__ import annotations

import argparse
import pickle
import resource
import tempfile
import time
from pathlib import Path

import _harness  # noqa: F401  (puts the repository root on sys.path)

from netcheck.runs.batch import SerialExecutor, expand_jobs, run_all

NETLIST = """Quillmere Instruments QI-RC1 sensor input filter
.param r=1k
.param c=10n
VIN in 0 AC 1
R1 in out {r}
C1 out 0 {c}
.end
"""

SPEC = """title = "Quillmere Instruments QI-RC1 input filter family"
netlist = "qi_rc1.cir"
source = "VIN"
output = "out"

[sweep]
start = "1k"
stop = "100k"
points_per_decade = 5

[variants]
table = "qi_rc1_family.csv"

[[limits]]
kind = "gain"
name = "pass-band"
band = ["1k", "2k"]
min_db = -3
"""


def table(rows: int) -> str:
    """``name,r,c``: 1.000 k to 1.499 k, 10.0 n to 10.6 n, one variant a row."""
    out = ["name,r,c"]
    out += [f"qi-rc1-{i:05d},{1000 + i % 500},{10e-9 * (1 + (i % 7) / 100)!r}"
            for i in range(rows)]
    return "\n".join(out) + "\n"


def peak_rss_mib() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024  # KiB on Linux


def measure(folder: Path, rows: int) -> dict[str, float]:
    (folder / "qi_rc1_family.csv").write_text(table(rows), "utf-8")
    spec = str(folder / "spec.toml")
    before = peak_rss_mib()
    t0 = time.perf_counter()
    results = run_all(expand_jobs([spec]), SerialExecutor())
    seconds = time.perf_counter() - t0
    assert len(results) == rows and all(r.error is None for r in results)
    table_path = str(folder / "qi_rc1_family.csv")
    carried = sum(len(text.encode("utf-8")) for r in results
                  for path, text in r.source_text if path == table_path)
    pickled = len(pickle.dumps(results))
    whole = len(table(rows).encode("utf-8"))
    return {"seconds": seconds, "carried": carried, "pickled": pickled,
            "old_carried": float(rows) * whole, "rss_growth": peak_rss_mib() - before}


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rows", default="1000,4000,8000",
                    help="comma-separated table sizes, increasing (default 1000,4000,8000)")
    args = ap.parse_args()
    sizes = sorted(int(n) for n in args.rows.split(","))
    _harness.header("variants-table memory: per-variant cost at several table sizes")
    print(f"{'rows':>6} {'check s':>8} {'ms/var':>7} {'table text carried':>19} "
          f"{'B/var':>6} {'(old layout, computed)':>23} {'pickled results':>16} {'B/var':>6} "
          f"{'peak RSS growth':>16}")
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        (folder / "qi_rc1.cir").write_text(NETLIST, "utf-8")
        (folder / "spec.toml").write_text(SPEC, "utf-8")
        for rows in sizes:
            m = measure(folder, rows)
            print(f"{rows:>6} {m['seconds']:>8.1f} {1e3 * m['seconds'] / rows:>7.2f} "
                  f"{m['carried'] / 2**20:>15.2f} MiB {m['carried'] / rows:>6.0f} "
                  f"{m['old_carried'] / 2**20:>19.1f} MiB "
                  f"{m['pickled'] / 2**20:>12.2f} MiB {m['pickled'] / rows:>6.0f} "
                  f"{m['rss_growth']:>12.1f} MiB")
    print("Linear in rows: the B/var columns stay flat as the table grows.")


if __name__ == "__main__":
    main()
