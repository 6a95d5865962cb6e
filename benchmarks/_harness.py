"""Shared helpers for the benchmark scripts: import path, interleaved timings, header.

Not a test module: nothing here asserts a timing. Each script prints figures measured
side by side in one run, so machine load affects every case alike.
"""

from __future__ import annotations

import os
import platform
import resource
import statistics
import sys
import timeit
from dataclasses import dataclass
from pathlib import Path
from typing import Callable

REPO_ROOT = Path(__file__).resolve().parents[1]
# Benchmark the checkout, not whatever copy of netcheck happens to be installed:
# an installed (non-editable) copy can lag behind the source tree.
if str(REPO_ROOT) not in sys.path:
    sys.path.insert(0, str(REPO_ROOT))


@dataclass(frozen=True, slots=True)
class Timing:
    """Seconds per call over the repeats: median, fastest and slowest."""

    median: float
    low: float
    high: float
    number: int
    repeat: int


def compare(cases: dict[str, Callable[[], object]], repeat: int) -> dict[str, Timing]:
    """Time each case timeit-style, interleaving the repeats across cases.

    Every case is called once to warm up (imports, caches, first-touch allocations),
    then ``timeit.Timer.autorange`` picks a loop count giving at least 0.2 s per repeat.
    The repeats run round-robin (a, b, c, a, b, c, ...) so that drift in machine load
    lands on all cases alike; the ratios are taken between medians.
    """
    timers = {}
    for name, fn in cases.items():
        fn()
        timer = timeit.Timer(fn)
        number, _ = timer.autorange()
        timers[name] = (timer, number)
    samples: dict[str, list[float]] = {name: [] for name in cases}
    for _ in range(repeat):
        for name, (timer, number) in timers.items():
            samples[name].append(timer.timeit(number) / number)
    return {name: Timing(statistics.median(s), min(s), max(s), timers[name][1], repeat)
            for name, s in samples.items()}


def fmt_seconds(t: float) -> str:
    """A duration with a unit that keeps three or four significant figures."""
    if t >= 1.0:
        return f"{t:8.3f} s "
    if t >= 1e-3:
        return f"{t * 1e3:8.3f} ms"
    return f"{t * 1e6:8.1f} us"


def fmt_timing(t: Timing) -> str:
    """Median with the spread of the repeats."""
    return (f"{fmt_seconds(t.median)}  (range {fmt_seconds(t.low).strip()} .. "
            f"{fmt_seconds(t.high).strip()}; {t.repeat} repeats x {t.number} loops)")


def verdict(ok: bool) -> str:
    """How a printed figure compares with its target (printed, never asserted)."""
    return "met" if ok else "MISSED"


def header(title: str) -> None:
    """Print the title and what was measured on."""
    import numpy
    import scipy

    import netcheck

    print(title)
    print("=" * len(title))
    print(f"python {platform.python_version()}, numpy {numpy.__version__}, "
          f"scipy {scipy.__version__}, {os.cpu_count()} CPUs, {platform.machine()}")
    print(f"netcheck {netcheck.__version__} from {Path(netcheck.__file__).parent}")
    print()


def maxrss_bytes() -> int:
    """Peak resident set size of this process so far (Linux reports KiB)."""
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024


def mib(nbytes: float, decimals: int = 2) -> str:
    """Bytes as right-aligned MiB."""
    return f"{nbytes / 2**20:8.{decimals}f} MiB"
