"""Sweep benchmark: a 9th-order Butterworth LC ladder at 2,000 points, three ways.

Run from the repository root::

    python benchmarks/bench_sweep.py [--repeat N]

Measured side by side in one run (median of interleaved repeats, after a warm-up):

(a) netcheck: ``solve(system, f)`` on an already assembled system, and
    ``circuit.ac(...)`` which also assembles;
(b) a naive loop: one ``scipy.sparse.linalg.spsolve`` of (G + jωC) x = b per point;
(c) ``scipy.signal.freqs`` on the exact transfer function of ``scipy.signal.butter``.

It then prints how far netcheck's response is from direct solves and from the exact
transfer function. Targets: naive/netcheck >= 200x, netcheck/freqs <= 8x, and
<= 1e-6 dB and 1e-6 degrees against direct solves wherever |H| > -200 dB. The
targets are printed beside the figures; nothing is asserted.
"""

from __future__ import annotations

import argparse
import math

import _harness  # noqa: F401  (puts the repository root on sys.path)
import numpy as np
import scipy.sparse.linalg as spla
from scipy import signal

from netcheck import read_netlist
from netcheck.mna.assemble import assemble
from netcheck.mna.solve import solve

ORDER = 9
R0 = 50.0  # ohm, source and load
FC = 10e3  # Hz, -3 dB corner of the prototype
F_START, F_STOP, POINTS = 1e2, 1e6, 2000
FLOOR_DB = -200.0  # accuracy against direct solves is judged above this level

NAIVE_TARGET = 200.0
FREQS_TARGET = 8.0
DB_TARGET = 1e-6
DEG_TARGET = 1e-6


def butterworth_ladder(order: int, fc: float, r: float) -> tuple[str, str]:
    """Netlist of a doubly terminated Butterworth LC low-pass ladder, shunt C first.

    Element values come from the low-pass prototype g_k = 2 sin((2k - 1) π / (2n)),
    k = 1..n, for equal terminations g_0 = g_(n+1) = 1 (G. L. Matthaei, L. Young and
    E. M. T. Jones, *Microwave Filters, Impedance-Matching Networks, and Coupling
    Structures*, McGraw-Hill, 1964, §4.05, eq. (4.05-1)), then impedance-scaled to
    ``r`` and frequency-scaled to ω_c = 2π·fc: C_k = g_k / (r ω_c), L_k = g_k r / ω_c.

    Returns the netlist text and the output node.
    """
    wc = 2 * math.pi * fc
    lines = [f"Quillmere Instruments QI-9B anti-alias filter, order {order}, fc {fc:g} Hz",
             "V1 in 0 AC 1", f"RS in n1 {r!r}"]
    node = 1
    for k in range(1, order + 1):
        g = 2 * math.sin((2 * k - 1) * math.pi / (2 * order))
        if k % 2:
            lines.append(f"C{k} n{node} 0 {g / (r * wc)!r}")
        else:
            lines.append(f"L{k} n{node} n{node + 1} {g * r / wc!r}")
            node += 1
    lines.append(f"RL n{node} 0 {r!r}")
    return "\n".join(lines) + "\n", f"n{node}"


def naive_sweep(system, f: np.ndarray, k: int) -> np.ndarray:
    """One sparse LU solve per frequency, written the obvious way (the baseline)."""
    h = np.empty(f.size, dtype=complex)
    for i, fi in enumerate(f):
        a = (system.G + (2j * np.pi * fi) * system.C).tocsc()
        h[i] = spla.spsolve(a, system.b)[k]
    return h


def errors(h: np.ndarray, ref: np.ndarray) -> tuple[float, float]:
    """Largest |dB| difference and largest phase difference (degrees) of h from ref."""
    ratio = h / ref
    return (float(np.max(np.abs(20 * np.log10(np.abs(ratio))))),
            float(np.max(np.abs(np.degrees(np.angle(ratio))))))


def main(argv: list[str] | None = None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=9, help="timed repeats per case (default 9)")
    args = ap.parse_args(argv)

    _harness.header(f"netcheck sweep benchmark: {ORDER}th-order Butterworth LC ladder, "
                    f"{R0:g} ohm, fc {FC / 1e3:g} kHz")

    text, out = butterworth_ladder(ORDER, FC, R0)
    circuit = read_netlist(text)
    system = assemble(circuit, "V1", out)
    f = np.logspace(math.log10(F_START), math.log10(F_STOP), POINTS)
    w = 2 * np.pi * f
    # Exact transfer function: the analog Butterworth prototype from scipy.signal.butter.
    # With equal terminations the ladder's pass-band gain is R_L/(R_S + R_L) = 1/2.
    b, a = signal.butter(ORDER, 2 * np.pi * FC, analog=True)
    k_out = system.node_index[out]

    resp = solve(system, f)
    print(f"system : {system.size} unknowns, nnz(G) = {system.G.nnz}, nnz(C) = {system.C.nnz}")
    print(f"sweep  : {POINTS} log-spaced points, {F_START:g} Hz .. {F_STOP / 1e6:g} MHz")
    extra = ""
    if resp.method == "pole-zero":
        extra = (f" ({resp.engine.fallback_points} of {POINTS} points fell back to "
                 "direct solves)")
    print(f"engine : resp.method = {resp.method!r}{extra}")
    print()

    timings = _harness.compare({
        "solve": lambda: solve(system, f),
        "ac": lambda: circuit.ac("V1", out, freqs=f),
        "naive": lambda: naive_sweep(system, f, k_out),
        "freqs": lambda: signal.freqs(b, a, worN=w),
    }, args.repeat)
    t_solve, t_naive, t_freqs = (timings[k].median for k in ("solve", "naive", "freqs"))
    print("timings per sweep (median; warm-up first; repeats interleaved across cases)")
    print(f"  (a) netcheck solve(system, f)      {_harness.fmt_timing(timings['solve'])}")
    print(f"      circuit.ac(...) incl. assembly {_harness.fmt_timing(timings['ac'])}")
    print(f"  (b) naive spsolve loop             {_harness.fmt_timing(timings['naive'])}")
    print(f"  (c) scipy.signal.freqs(b, a, w)    {_harness.fmt_timing(timings['freqs'])}")
    print("  note: all three return H only; netcheck computes the exact dH/df when first asked for")
    print()
    r_naive, r_freqs = t_naive / t_solve, t_solve / t_freqs
    print("ratios")
    print(f"  naive / netcheck      {r_naive:8.1f}x   target >= {NAIVE_TARGET:g}x: "
          f"{_harness.verdict(r_naive >= NAIVE_TARGET)}")
    print(f"  netcheck / freqs      {r_freqs:8.2f}x   target <= {FREQS_TARGET:g}x: "
          f"{_harness.verdict(r_freqs <= FREQS_TARGET)}")
    print(f"  ac / freqs            {timings['ac'].median / t_freqs:8.2f}x   (for reference)")
    print()

    h = resp.transfer
    h_direct, _ = resp.direct().transfer(f)
    _, h_exact = signal.freqs(b, a, worN=w)
    h_exact = 0.5 * h_exact
    db_direct = 20 * np.log10(np.abs(h_direct))
    above = db_direct > FLOOR_DB
    db_d, deg_d = errors(h[above], h_direct[above])
    db_e, deg_e = errors(h[above], h_exact[above])
    db_all, deg_all = errors(h, h_exact)
    db_naive, deg_naive = errors(naive_sweep(system, f, k_out)[above], h_direct[above])
    ok = db_d <= DB_TARGET and deg_d <= DEG_TARGET
    print(f"accuracy (response spans {db_direct.max():.2f} dB .. "
          f"{20 * np.log10(np.abs(h_exact)).min():.1f} dB; "
          f"{int(above.sum())} points above {FLOOR_DB:g} dB)")
    rows = [(f"netcheck vs direct solves, above {FLOOR_DB:g} dB", db_d, deg_d,
             f"   target <= {DB_TARGET:g} dB, {DEG_TARGET:g} deg: {_harness.verdict(ok)}"),
            (f"netcheck vs exact (freqs), above {FLOOR_DB:g} dB", db_e, deg_e, ""),
            (f"netcheck vs exact (freqs), all {POINTS} points", db_all, deg_all, ""),
            (f"naive loop vs direct solves, above {FLOOR_DB:g} dB", db_naive, deg_naive, "")]
    for label, db, deg, note in rows:
        print(f"  {label:<45} max |dB| {db:.2e}, max phase {deg:.2e} deg{note}")


if __name__ == "__main__":
    main()
