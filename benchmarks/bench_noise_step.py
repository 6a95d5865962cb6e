"""Noise and step-response cost beside the nominal check's own work.

Run from the repository root::

    python benchmarks/bench_noise_step.py [--repeat N]

The circuit is bench_sweep.py's 9th-order Butterworth LC ladder (50 Ω both ends,
fc = 10 kHz) with a series resistance in each inductor (Rser = 0.5 Ω), so 5 more noise
sources than its 2 terminations; the grid is 2,000 points from 100 Hz to 1 MHz. Side by
side (medians of interleaved repeats):

(a) the nominal sweep: ``solve(system, grid)``;
(b) the output noise density on the same grid as the check computes it: every source's
    transfer put in pole–zero form (``rational_form``) and evaluated there;
(b') the same by one adjoint solve per frequency (every source at once), the path of
    circuits without a dense pole–zero form;
(c) (b) with its frequency derivative (what band extremes of the density use);
(d) the RMS noise over 100 Hz–1 MHz (adaptive quadrature on the exact density);
(e) the pole–zero build alone: ``response.roots_hz()`` on a fresh solve;
(f) the step model (the roots, the residues and their Talbot check) and the step
    response at 4,000 times: ``StepModel(response).y(t)``.

Targets (issue): (b) at most ~2 nominal sweeps; (f) no more than the pole–zero build
plus its evaluation. Nothing is asserted.
"""

from __future__ import annotations

import argparse

import _harness  # noqa: F401  (puts the repository root on sys.path)
import numpy as np

from bench_sweep import butterworth_ladder
from netcheck import read_netlist
from netcheck.mna.assemble import assemble
from netcheck.mna.noise import integrated_noise, noise_sources, output_noise, rational_form
from netcheck.mna.solve import solve
from netcheck.mna.step import StepModel


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=5)
    args = ap.parse_args()
    _harness.header("Noise and step response beside the nominal sweep")
    text, out = butterworth_ladder(9, 10e3, 50.0)
    text = "\n".join(line + " Rser=0.5" if line.startswith("L") else line
                     for line in text.splitlines()) + "\n"
    system = assemble(read_netlist(text), "V1", out)
    grid = np.logspace(2, 6, 2000)
    t = np.linspace(1e-6, 2e-3, 4000)
    srcs = noise_sources(system)
    t_all = _harness.compare({
        "a": lambda: solve(system, grid),
        "b": lambda: output_noise(system, grid, sources=srcs,
                                  rational=rational_form(system, srcs, grid)),
        "b'": lambda: output_noise(system, grid, sources=srcs),
        "c": lambda: output_noise(system, grid, sources=srcs, derivative=True,
                                  rational=rational_form(system, srcs, grid)),
        "d": lambda: integrated_noise(system, 100.0, 1e6),
        "e": lambda: solve(system, grid).roots_hz(),
        "f": lambda: StepModel(solve(system, grid)).y(t),
    }, args.repeat)
    names = {"a": "nominal sweep", "b": "noise density (pole-zero form)",
             "b'": "noise density (adjoint solves)", "c": "density + d/df (pole-zero)",
             "d": "RMS noise (quadrature)", "e": "sweep + pole-zero build",
             "f": "sweep + step model + 4,000 times"}
    for k, name in names.items():
        print(f"({k}) {name:33} {_harness.fmt_timing(t_all[k])}")
    a, e = t_all["a"].median, t_all["e"].median
    print(f"\n(b)/(a) = {t_all['b'].median / a:.2f}  (target about 2 or less: "
          f"{_harness.verdict(t_all['b'].median / a <= 2.0)})")
    print(f"(f)/(e) = {t_all['f'].median / e:.2f}  (the step's cost over the pole-zero "
          "build it rests on)")


if __name__ == "__main__":
    main()
