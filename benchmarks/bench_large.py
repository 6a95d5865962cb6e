"""Large-system benchmark: a 2,000-section RC ladder at 200 points on the sparse path.

Run from the repository root::

    python benchmarks/bench_large.py [--sections N] [--repeat N]

Prints the engine netcheck picked (expected: ``sparse``), the sweep time, and memory:
the tracemalloc peak of one ``solve()``, the process's peak resident set size before
and after it, and the size of one SuperLU factor, beside the cost of a single dense
complex n×n matrix. A small scaling table shows the traced peak growing with the
non-zeros (linearly in the number of sections) rather than with n². Finally the
transfer at a few points is compared with dense LAPACK solves of the same equations.
Nothing is asserted.
"""

from __future__ import annotations

import argparse
import math
import time
import tracemalloc

import _harness  # noqa: F401  (puts the repository root on sys.path)
import numpy as np
import scipy.sparse.linalg as spla

from netcheck import read_netlist
from netcheck.mna.assemble import assemble
from netcheck.mna.solve import DENSE_MAX, solve

R_SECTION = 1.0  # ohm per section
C_SECTION = 100e-12  # farad per section
F_START, F_STOP, POINTS = 10.0, 1e6, 200
CHECK_HZ = (1e2, 1e4, 1e5, 1e6)  # dense cross-check frequencies (nearest grid points)
SCALING = (500, 1000)  # extra ladder lengths for the scaling table


def rc_ladder(sections: int) -> tuple[str, str]:
    """Netlist of a uniform RC ladder: series R, shunt C, driven by V1, output at the end.

    A lumped model of a distributed RC line (Quillmere Instruments' resistive sensor
    lead). With R_tot = N·R and C_tot = N·C, the uniform line it approximates has the
    open-end response H(s) = 1 / cosh(γℓ), γℓ = sqrt(s R_tot C_tot): the solution of the
    telegrapher's equations with L' = G' = 0 (S. Ramo, J. R. Whinnery and T. Van Duzer,
    *Fields and Waves in Communication Electronics*, Wiley, chapter on transmission
    lines). So |H| falls off as exp(-sqrt(ω R_tot C_tot / 2)): here from about 0 dB at
    10 Hz to about -300 dB at 1 MHz, with 1/(R C) = 1e10 rad/s per section keeping the
    lumped ladder close to the line over the whole sweep.
    """
    lines = [f"Quillmere Instruments QL-{sections} sensor lead model, {sections} RC sections",
             "V1 n0 0 AC 1"]
    for k in range(sections):
        lines.append(f"R{k} n{k} n{k + 1} {R_SECTION!r}")
        lines.append(f"C{k} n{k + 1} 0 {C_SECTION!r}")
    return "\n".join(lines) + "\n", f"n{sections}"


def traced_peak(system, f: np.ndarray) -> tuple[int, object]:
    """Peak bytes allocated through Python/numpy during one solve()."""
    tracemalloc.start()
    try:
        resp = solve(system, f)
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    return peak, resp


def main(argv: list[str] | None = None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sections", type=int, default=2000, help="ladder sections (default 2000)")
    ap.add_argument("--repeat", type=int, default=5, help="timed repeats (default 5)")
    args = ap.parse_args(argv)

    _harness.header(f"netcheck large-system benchmark: {args.sections}-section RC ladder "
                    f"({R_SECTION:g} ohm, {C_SECTION * 1e12:g} pF per section)")

    text, out = rc_ladder(args.sections)
    t0 = time.perf_counter()
    circuit = read_netlist(text)
    t1 = time.perf_counter()
    system = assemble(circuit, "V1", out)
    t2 = time.perf_counter()
    f = np.logspace(math.log10(F_START), math.log10(F_STOP), POINTS)
    n = system.size
    nnz_a = (system.G + system.C).nnz  # pattern of G + sC
    print(f"system : n = {n} unknowns, nnz(G) = {system.G.nnz}, nnz(C) = {system.C.nnz}, "
          f"nnz(G + sC) = {nnz_a}  (dense path only up to n = {DENSE_MAX})")
    print(f"sweep  : {POINTS} log-spaced points, {F_START:g} Hz .. {F_STOP / 1e6:g} MHz")
    print(f"setup  : read_netlist {t1 - t0:.3f} s, assemble {t2 - t1:.3f} s")

    # Memory first, before anything else in this process touches n×n storage. A warm-up
    # solve of a short ladder (also sparse) first, so that one-off costs such as lazy
    # imports are not counted as growth of the peak RSS.
    warm_text, warm_out = rc_ladder(DENSE_MAX + 100)
    solve(assemble(read_netlist(warm_text), "V1", warm_out), f)
    rss_before = _harness.maxrss_bytes()
    resp = solve(system, f)
    rss_after = _harness.maxrss_bytes()
    peak, _ = traced_peak(system, f)
    print(f"engine : resp.method = {resp.method!r}")
    print()

    timing = _harness.compare({"solve": lambda: solve(system, f)}, args.repeat)["solve"]
    print("timing (median; warm-up first)")
    print(f"  solve(system, f), {POINTS} points  {_harness.fmt_timing(timing)}")
    print(f"  per frequency point            {_harness.fmt_seconds(timing.median / POINTS)}")
    print()

    # One factorisation as the sparse engine makes it (same COLAMD ordering), for its size;
    # SuperLU allocates its factors in C, outside tracemalloc's view.
    a = (system.G + (2j * np.pi * 1e4) * system.C).tocsc()
    lu = spla.splu(a, permc_spec="COLAMD")
    lu_bytes = (lu.L.nnz + lu.U.nnz) * (16 + 4) + 2 * (n + 1) * 4
    sparse_bytes = sum(m.data.nbytes + m.indices.nbytes + m.indptr.nbytes
                       for m in (system.G, system.C))
    dense_bytes = 16 * n * n
    print("memory")
    print(f"  sparse G and C as stored (CSC)            {_harness.mib(sparse_bytes)}")
    print(f"  tracemalloc peak during one solve()       {_harness.mib(peak)}  "
          f"({peak / nnz_a:.0f} bytes per non-zero of G + sC)")
    print(f"  one SuperLU factor: nnz(L) + nnz(U) = {lu.L.nnz + lu.U.nnz:<6d}{_harness.mib(lu_bytes)}"
          "  (C-allocated, not traced)")
    print(f"  process peak RSS before / after solve()   {_harness.mib(rss_before)} / {_harness.mib(rss_after)}"
          f"  (+{(rss_after - rss_before) / 2**20:.2f} MiB)")
    print(f"  for comparison: one dense complex n x n   {_harness.mib(dense_bytes)}  "
          f"({dense_bytes / max(peak, 1):.0f}x the traced peak)")
    print()

    print("scaling of the traced peak with ladder length (sparse path throughout)")
    print(f"  {'sections':>8} {'n':>6} {'nnz(G+sC)':>10} {'traced peak':>13} {'bytes/nnz':>10}"
          f" {'dense n x n':>13}  engine")
    rows = []
    for sections in (s for s in SCALING if s < args.sections):
        t, o = rc_ladder(sections)
        rows.append((sections, assemble(read_netlist(t), "V1", o)))
    for sections, sysm in rows + [(args.sections, system)]:
        p, r = traced_peak(sysm, f)
        nz = (sysm.G + sysm.C).nnz
        print(f"  {sections:>8} {sysm.size:>6} {nz:>10} {_harness.mib(p):>13} {p / nz:>10.0f}"
              f" {_harness.mib(16 * sysm.size ** 2):>13}  {r.method}")
    print()

    # Independent dense reference: LAPACK on the same G, C, b (not a netcheck engine).
    g, c = system.G.toarray(), system.C.toarray()
    idx = sorted({int(np.argmin(np.abs(np.log(f / fc)))) for fc in CHECK_HZ})
    print("accuracy vs dense LAPACK solves of the same equations")
    worst = 0.0
    t_dense = []
    for i in idx:
        t = time.perf_counter()
        x = np.linalg.solve(g + (2j * np.pi * f[i]) * c, system.b.astype(complex))
        t_dense.append(time.perf_counter() - t)
        h_ref = system.l @ x
        rel = abs(resp.transfer[i] - h_ref) / abs(h_ref)
        worst = max(worst, rel)
        print(f"  f = {f[i]:11.1f} Hz  |H| = {20 * np.log10(abs(h_ref)):9.3f} dB  "
              f"relative difference {rel:.2e}  "
              f"(dB diff {abs(20 * np.log10(abs(resp.transfer[i] / h_ref))):.1e})")
    print(f"  worst relative difference {worst:.2e}; one dense solve took "
          f"{_harness.fmt_seconds(float(np.median(t_dense))).strip()} "
          f"(x {POINTS} points = {float(np.median(t_dense)) * POINTS:.0f} s, "
          f"vs {timing.median:.2f} s sparse)")


if __name__ == "__main__":
    main()
