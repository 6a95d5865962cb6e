"""Monte Carlo on circuits with transistors: what solving each sample's bias costs.

Run from the repository root::

    python benchmarks/bench_bias_samples.py [--samples N] [--repeat N]

The circuits are chains of 1, 2, 4 and 8 common-emitter stages (each: divider bias,
emitter resistor (unbypassed: a gain near 4.7 per stage), collector resistor, coupling capacitor to the next stage,
an NPN with junction capacitances), every resistor and capacitor toleranced. For each
chain, measured side by side in one run (medians of interleaved repeats):

(a) ``sampled_small_signal(circuit, values, S)``: every sample's operating point solved
    again (Newton from the nominal point) and every transistor linearised there — the
    part of a Monte Carlo run that a circuit with devices adds;
(b) ``SampleSet(system, values, S, grid)``: the whole batched build, (a) included (where
    a sample's pole–zero form fails its check, its direct solves are deferred to the
    measurements, so (b) − (a) is not the same work in every chain);
(c) the per-sample loop (b) replaces: ``with_values`` (re-linearise) + ``assemble`` +
    ``solve`` per sample, timed over 50 samples and scaled.

Printed: (a) per sample and per transistor, (b), (c) and (c)/(b). Nothing is asserted.
"""

from __future__ import annotations

import argparse

import _harness  # noqa: F401  (puts the repository root on sys.path)
import numpy as np

from netcheck.analyses.tolerance import with_values
from netcheck.api import read_netlist
from netcheck.mna.assemble import assemble
from netcheck.mna.bias_samples import sampled_small_signal
from netcheck.mna.sampling import SampleSet
from netcheck.mna.solve import solve

MODEL = (".model qm_bench_q NPN (IS=4f BF=180 BR=3 VAF=70 CJE=1.1p VJE=0.75 MJE=0.33 "
         "CJC=0.6p VJC=0.75 MJC=0.33 TF=0.35n)")


def chain(stages: int) -> str:
    lines = ["Quillmere QM-CE chain benchmark", "VCC vcc 0 DC 12", "VIN in 0 DC 0 AC 1",
             "RSIG in s0 600"]
    for k in range(stages):
        lines += [f"CI{k} s{k} b{k} 22u", f"RA{k} vcc b{k} 47k", f"RB{k} b{k} 0 10k",
                  f"RC{k} vcc c{k} 4.7k", f"RE{k} e{k} 0 1k",
                  f"Q{k} c{k} b{k} e{k} qm_bench_q", f"RX{k} c{k} s{k + 1} 100"]
    lines += [f"RL s{stages} 0 10k", MODEL]
    return "\n".join(lines) + "\n"


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--samples", type=int, default=1000)
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    _harness.header("Monte Carlo with each sample's operating point")
    grid = np.logspace(1, 8, 200)
    rng = np.random.default_rng(1)
    print(f"{args.samples} samples, {grid.size} frequencies\n")
    print(f"{'stages':>6} {'unknowns':>8} {'(a) bias':>12} {'per sample':>11} "
          f"{'per device':>11} {'(b) SampleSet':>14} {'(c) loop':>10} {'(c)/(b)':>8}")
    for stages in (1, 2, 4, 8):
        system = assemble(read_netlist(chain(stages)), "VIN", f"s{stages}")
        parts = [e for e in system.circuit.elements if e.letter in "RC" and
                 not e.name.startswith("RSIG")]
        values = {e.name: e.value * (1 + 0.05 * rng.uniform(-1, 1, args.samples))
                  for e in parts}
        t = _harness.compare({
            "a": lambda: sampled_small_signal(system.circuit, values, args.samples),
            "b": lambda: SampleSet(system, values, args.samples, grid),
        }, args.repeat)
        few = 50
        loop = _harness.compare({"c": lambda: [
            solve(assemble(with_values(system.circuit, {k: float(v[s]) for k, v in
                                                        values.items()}),
                           "VIN", f"s{stages}"), grid) for s in range(few)]}, 1)
        a, b = t["a"].median, t["b"].median
        c = loop["c"].median / few * args.samples
        print(f"{stages:>6} {system.size:>8} {_harness.fmt_seconds(a):>12} "
              f"{_harness.fmt_seconds(a / args.samples):>11} "
              f"{_harness.fmt_seconds(a / args.samples / stages):>11} "
              f"{_harness.fmt_seconds(b):>14} {_harness.fmt_seconds(c):>10} {c / b:>7.1f}x")


if __name__ == "__main__":
    main()
