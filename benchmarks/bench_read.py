"""Reading a big generated netlist: netcheck's read and elaborate against a bare split loop.

Post-layout and generated netlists run to hundreds of thousands of cards. The design
here has 125,000 elements: 25,000 instances of a four-element section subcircuit whose
values are parameter expressions (``params: rs=.. cs=..``, ``{rs*2}``), plus 25,000 plain
R and C cards between the section outputs and ground, and one source.

It prints, measured side by side in one run (interleaved repeats, medians):

(a) a bare Python loop over the same text that splits every line into fields and
    converts every value written in engineering notation with a small hand-written
    converter (what any reader must do at least), and
(b) ``netcheck.read_netlist`` on the same text: parse, flatten the subcircuits,
    evaluate every expression, build the circuit.

Target: (b)/(a) at most 10 (printed, never asserted).
"""

from __future__ import annotations

import argparse
import re

import _harness
from netcheck import read_netlist

TARGET_RATIO = 10.0
SCALE = {"t": 1e12, "g": 1e9, "meg": 1e6, "k": 1e3, "m": 1e-3, "u": 1e-6, "n": 1e-9,
         "p": 1e-12, "f": 1e-15}
_NUMBER = re.compile(r"([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)(meg|[tgkmunpf])?", re.I)


def design(sections: int, plain: int) -> str:
    """The generated netlist: ``sections`` subcircuit instances and ``plain`` cards."""
    lines = ["* Quillmere Instruments generated RC mesh, reading benchmark",
             ".param rbase=1k cbase=10n",
             ".subckt sect a b params: rs=1k cs=1n",
             "R1 a m {rs}", "C1 m 0 {cs}", "R2 m b {rs*2}", "C2 b 0 {cs/2}",
             ".ends sect",
             "V1 n0 0 AC 1"]
    for i in range(sections):
        lines.append(f"X{i} n{i} n{i + 1} sect params: rs={{rbase*{1 + i % 7}}} "
                     f"cs={{cbase/{1 + i % 5}}}")
    for i in range(plain):
        node = f"n{1 + i % sections}"
        lines.append(f"R{i}p {node} 0 {100 + i % 900}k" if i % 2 else
                     f"C{i}p {node} 0 {1 + i % 90}p")
    lines.append(".end")
    return "\n".join(lines) + "\n"


def bare_loop(text: str) -> float:
    """Split every card and convert every plain value; the floor any reader pays."""
    total = 0.0
    for line in text.splitlines():
        fields = line.split()
        if not fields or fields[0][0] in "*.":
            continue
        for f in fields[3:]:
            m = _NUMBER.fullmatch(f)
            if m:
                total += float(m.group(1)) * SCALE.get((m.group(2) or "").lower(), 1.0)
    return total


def main(argv: list[str] | None = None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sections", type=int, default=25_000)
    ap.add_argument("--plain", type=int, default=25_000)
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args(argv)
    elements = 4 * args.sections + args.plain + 1
    _harness.header(f"netcheck reading benchmark: {elements:,} elements "
                    f"({args.sections:,} subcircuit instances with expressions, "
                    f"{args.plain:,} plain cards)")
    text = design(args.sections, args.plain)
    circuit = read_netlist(text)
    print(f"netlist: {len(text.splitlines()):,} lines, {len(text) / 2**20:.1f} MiB; "
          f"circuit: {len(circuit.elements):,} elements")
    t = _harness.compare({"a": lambda: bare_loop(text), "b": lambda: read_netlist(text)},
                         args.repeat)
    print(f"(a) bare split-and-convert loop : {_harness.fmt_timing(t['a'])}")
    print(f"(b) read_netlist                : {_harness.fmt_timing(t['b'])}")
    ratio = t["b"].median / t["a"].median
    print(f"(b)/(a) = {ratio:.1f}x  (target <= {TARGET_RATIO:g}x: "
          f"{_harness.verdict(ratio <= TARGET_RATIO)})")


if __name__ == "__main__":
    main()
