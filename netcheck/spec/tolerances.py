"""The ``[tolerances]`` and ``[analysis]`` tables of a spec, validated: :class:`Tolerances`, :class:`Analysis`.

Parsed when the spec is loaded (:func:`netcheck.spec.load.parse_spec` fills
``Spec.tolerances`` and ``Spec.analysis``). Matching the tolerance globs against the
netlist's parts needs the circuit, so that stays with the analyses
(:func:`netcheck.analyses.tolerance.toleranced_parts`).
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from typing import Any

from .reader import SpecReader

__all__ = ["Tolerances", "Analysis", "parse_tolerances", "parse_analysis",
           "machine_memory_bytes", "TOLERANCE_KEYS", "ANALYSIS_KEYS", "MODES", "MEMORY_SHARE"]

TOLERANCE_KEYS = {
    "default": "tolerance by element letter, e.g. { R = \"1%\", C = \"5%\", L = \"10%\" } "
               "(%, ppm, ppb or a fraction)",
    "parts": "tolerance per part (hierarchical names, globs allowed), e.g. { C3 = \"2%\" }",
    "distribution": "'uniform', 'normal' (tolerance = 3 sigma) or 'truncnormal' (normal cut at ±tolerance)",
}
ANALYSIS_KEYS = {
    "mode": "any of 'nominal', 'worst_case', 'monte_carlo'",
    "samples": "Monte Carlo samples (default 2000)",
    "seed": "random seed, for reproducible samples (default 1)",
    "yield_min": "overall pass fraction required, 0..1 or a percentage such as \"95%\" (default: none)",
    "memory_mib": "memory budget for Monte Carlo chunks, MiB (default 1024)",
}
MODES = ("nominal", "worst_case", "monte_carlo")
#: the largest share of the machine's memory ``memory_mib`` may claim (it is capped there)
MEMORY_SHARE = 0.5


@dataclass(frozen=True, slots=True)
class Tolerances:
    """Part tolerances (fractions: 0.05 = 5 %) and their distribution."""

    default: tuple[tuple[str, float], ...] = ()
    parts: tuple[tuple[str, float], ...] = ()
    distribution: str = "uniform"


@dataclass(frozen=True, slots=True)
class Analysis:
    """Which analyses to run and how."""

    modes: tuple[str, ...] = ("nominal",)
    samples: int = 2000
    seed: int = 1
    yield_min: float | None = None
    memory_mib: int = 1024
    #: memory_mib as the spec gave it, when it was capped to the machine's memory
    requested_mib: int | None = None

    def budget_text(self) -> str:
        """``memory_mib = 1024``, or ``memory_mib = 99999 (capped at 3911 MiB, ...)``."""
        if self.requested_mib is None:
            return f"memory_mib = {self.memory_mib}"
        return (f"memory_mib = {self.requested_mib} (capped at {self.memory_mib} MiB, "
                f"{MEMORY_SHARE:.0%} of the memory this machine gives netcheck)")


def machine_memory_bytes() -> int | None:
    """The memory this process may use, bytes: the least of physical memory, the
    container's (cgroup) limit and the address-space limit; None when none is known."""
    found = []
    try:
        found.append(os.sysconf("SC_PHYS_PAGES") * os.sysconf("SC_PAGE_SIZE"))
    except (AttributeError, ValueError, OSError):  # not a POSIX system
        pass
    for limit in ("/sys/fs/cgroup/memory.max", "/sys/fs/cgroup/memory/memory.limit_in_bytes"):
        try:
            with open(limit, encoding="ascii") as fh:
                text = fh.read(64).strip()
        except (OSError, ValueError):
            continue
        if text.isdigit():
            found.append(int(text))
    try:
        import resource
        soft = resource.getrlimit(resource.RLIMIT_AS)[0]
        if soft != resource.RLIM_INFINITY and soft > 0:
            found.append(soft)
    except (ImportError, OSError, ValueError):
        pass
    found = [f for f in found if f > 0]
    return min(found) if found else None


def _capped_memory(requested: int) -> tuple[int, int | None]:
    """(memory_mib to use, the requested value when it was capped, else None)."""
    machine = machine_memory_bytes()
    if machine is None:
        return requested, None
    cap = max(16, int(machine * MEMORY_SHARE) // 2**20)
    return (cap, requested) if requested > cap else (requested, None)


def _fraction(rd: SpecReader, key: str, raw: Any) -> float:
    """A part tolerance: ``0.01``, ``"1%"``, ``"50ppm"`` or ``"10ppb"``."""
    value = rd.relative(key, raw)
    if not 0 <= value < 1:
        rd.fail(key, f"tolerance must be between 0 % and 100 %, got {raw!r}")
    return value


def parse_tolerances(table: Any, path: str) -> Tolerances:
    """Validate a ``[tolerances]`` table."""
    rd = SpecReader(table, "tolerances", path, TOLERANCE_KEYS)
    default = rd.raw("default", {})
    parts = rd.raw("parts", {})
    for key, value in (("default", default), ("parts", parts)):
        if not isinstance(value, dict):
            rd.fail(key, "expected a table, e.g. { R = \"1%\" }")
    for letter in default:
        if letter.upper() not in ("R", "L", "C") or len(letter) != 1:
            rd.fail(f"default.{letter}", "default tolerances are by element letter R, L or C")
    d = tuple((k.upper(), _fraction(rd, f"default.{k}", v)) for k, v in default.items())
    p = tuple((k.upper(), _fraction(rd, f"parts.{k}", v)) for k, v in parts.items())
    dist = rd.choice("distribution", ("uniform", "normal", "truncnormal"), "uniform")
    return Tolerances(d, p, dist)


def parse_analysis(table: Any, path: str) -> Analysis:
    """Validate an ``[analysis]`` table."""
    rd = SpecReader(table, "analysis", path, ANALYSIS_KEYS)
    mode = rd.raw("mode", ["nominal"])
    if isinstance(mode, str):
        mode = [mode]
    if not isinstance(mode, list) or not mode or any(m not in MODES for m in mode):
        rd.fail("mode", f"expected a list drawn from {', '.join(MODES)}, got {mode!r}")
    y = rd.relative("yield_min")
    if y is not None and not 0 < y <= 1:
        rd.fail("yield_min", "must be a fraction in (0, 1]")
    seed = rd.raw("seed", 1)
    if isinstance(seed, bool) or not isinstance(seed, int) or seed < 0:
        rd.fail("seed", f"expected a whole number >= 0, got {seed!r}")
    memory, requested = _capped_memory(rd.integer("memory_mib", 1024, minimum=16))
    return Analysis(tuple(dict.fromkeys(mode)), rd.integer("samples", 2000, minimum=2), seed,
                    y, memory, requested)
