"""Worst-case sensitivities: adjoint linearisation against central differences, side by side.

Run from the repository root::

    python benchmarks/bench_worstcase.py [--orders 7 15 31] [--repeat 5]

For doubly terminated Butterworth LC ladders of several orders (every part toleranced,
so P = order + 2), with a pass-band, a corner, a resonance-free stop-band and a group
delay limit, this times

(a) what the worst case now does: every limit kind's ``sensitivities(probe, adj)`` from
    :class:`netcheck.mna.sensitivity.AdjointSensitivity` — four solves per deciding
    frequency, none per part — on a probe the nominal judging has already measured
    (as in ``check``);
(b) central differences of every re-measured quantity: 2P perturbed samples, all solved
    together by the Monte Carlo machinery (the former method for most kinds);

and prints the ratio (b)/(a) and the largest difference between the two sets of
sensitivities, relative to each row's largest. Nothing is asserted.
"""

from __future__ import annotations

import argparse
import tempfile
from pathlib import Path

import _harness
from bench_sweep import butterworth_ladder  # the same prototype ladder, scaled
import numpy as np

from netcheck.mna.assemble import assemble
from netcheck import elaborate
from netcheck.analyses.nominal import ResponseCurve, SpecProbe
from netcheck.netlist.parse import load_netlist
from netcheck.mna.sensitivity import AdjointSensitivity
from netcheck.mna.solve import solve
from netcheck.spec import load_spec
from netcheck.analyses.tolerance import toleranced_parts
from netcheck.analyses.worstcase import _central_differences

R0, FC = 600.0, 20e3


def spec(netlist: str, out: str) -> str:
    return f"""netlist = "{netlist}"
source = "V1"
output = "{out}"
[sweep]
start = "1k"
stop = "1meg"
points_per_decade = 133
[tolerances]
default = {{ R = "1%", C = "5%", L = "5%" }}
[analysis]
mode = ["worst_case"]
[[limits]]
kind = "gain"
band = ["1k", "15k"]
min_db = -6.3
max_db = -5.7
[[limits]]
kind = "corner"
side = "high"
range = ["19k", "21k"]
[[limits]]
kind = "gain"
band = ["45k", "1meg"]
max_db = -20
reference = "peak"
[[limits]]
kind = "group_delay"
band = ["1k", "15k"]
max_variation = 1e-3
"""


def main(argv: list[str] | None = None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--orders", type=int, nargs="+", default=[7, 15, 31])
    ap.add_argument("--repeat", type=int, default=5)
    args = ap.parse_args(argv)
    _harness.header("netcheck worst-case sensitivities: adjoint vs central differences")
    tmp = tempfile.TemporaryDirectory(prefix="netcheck-bench-wc-")
    print(f"{'order':>5} {'parts':>5} {'adjoint (a)':>13} {'central diff (b)':>17} "
          f"{'(b)/(a)':>8} {'max rel. diff':>14}")
    for order in args.orders:
        text, out = butterworth_ladder(order, FC, R0)
        root = Path(tmp.name)
        (root / f"l{order}.cir").write_text(text, "utf-8")
        path = root / f"l{order}.toml"
        path.write_text(spec(f"l{order}.cir", out), "utf-8")
        sp = load_spec(path)
        circuit = elaborate(load_netlist(sp.netlist, sp.root), sp.allow_negative)
        system = assemble(circuit, sp.source, *sp.output)
        parts = toleranced_parts(sp.tolerances, circuit)
        probe = SpecProbe(ResponseCurve.of(solve(system, sp.sweep.grid())), sp.sweep)
        # the nominal check has measured everything before the worst case runs
        judged = {r.name: r.measured for lim in sp.limits for r in lim.judge(probe)}

        def adjoint() -> dict[str, np.ndarray]:
            adj = AdjointSensitivity(system, parts)  # fresh: no cached factorisations
            # the side whose nominal value the judge reports is what central differences see
            return {r.name: r.d_low if r.low == judged[r.name] else r.d_high
                    for lim in sp.limits for r in lim.sensitivities(probe, adj)}

        def central() -> dict[str, np.ndarray]:
            return _central_differences(system, sp, parts, 2**30)[0]

        t = _harness.compare({"a": adjoint, "b": central}, args.repeat)
        a, b = adjoint(), central()
        diff = max(float(np.max(np.abs(a[k] - b[k])) / max(np.max(np.abs(b[k])), 1e-300))
                   for k in a)
        print(f"{order:>5} {len(parts):>5} {_harness.fmt_seconds(t['a'].median):>13} "
              f"{_harness.fmt_seconds(t['b'].median):>17} "
              f"{t['b'].median / t['a'].median:>7.1f}× {diff:>14.2e}")
    tmp.cleanup()


if __name__ == "__main__":
    main()
