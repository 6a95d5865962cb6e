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

__all__ = ["Tolerances", "Spread", "Tracking", "Analysis", "parse_tolerances", "parse_analysis",
           "machine_memory_bytes", "TOLERANCE_KEYS", "ANALYSIS_KEYS", "MODES", "MEMORY_SHARE"]

TOLERANCE_KEYS = {
    "default": "tolerance by element letter, e.g. { R = \"1%\", C = \"5%\", L = \"10%\" } "
               "(%, ppm, ppb or a fraction; each may be a part tolerance table, below)",
    "parts": "tolerance per part (hierarchical names, globs allowed), e.g. { C3 = \"2%\" }",
    "distribution": "'uniform', 'normal' (tolerance = 3 sigma) or 'truncnormal' (normal cut "
                    "at ±tolerance); the default of every part",
    "params": "tolerance of a global .param, e.g. { gbw = \"20%\" }: every element whose value "
              "depends on it follows the drawn value (same forms as a part's tolerance)",
    "temperature": "the temperature range the parts see, °C: { range_c = [-40, 85], "
                   "reference_c = 25 } (their values are nominal at reference_c)",
    "tracking": "groups of parts that move together: [{ parts = [\"RN1.*\"], correlation = 1 }] "
                "(1: one shared draw)",
}
#: the keys of a part tolerance written as a table, e.g. C = { tolerance = "10%", distribution = "normal" }
SPREAD_KEYS = {
    "tolerance": "\"5%\" (±5 %), or the two ends [\"-20%\", \"+80%\"] (0 when the table gives "
                 "only tc or ageing)",
    "distribution": "'uniform', 'normal' or 'truncnormal' for these parts (default: the "
                    "spec's distribution)",
    "tc": "temperature coefficient, ppm/K: \"30ppm/K\" (±30 ppm/K) or the two ends "
          "[\"-750ppm/K\", \"-600ppm/K\"]; acts over tolerances.temperature",
    "ageing": "drift over the service life, an extra band: \"1%\" (±) or [\"0%\", \"+2%\"]",
}
TEMPERATURE_KEYS = {
    "range_c": "lowest and highest temperature of the parts, °C, e.g. [-40, 85]",
    "reference_c": "the temperature the nominal values hold at, °C (default 25)",
}
TRACKING_KEYS = {
    "parts": "names or globs of the parts that track, e.g. [\"RN1.*\"] or [\"C4\", \"C5\"]",
    "correlation": "correlation coefficient of their values, 0 < ρ ≤ 1 (default 1: one "
                   "shared draw)",
}
DISTRIBUTIONS = ("uniform", "normal", "truncnormal")
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
class Spread:
    """How one part (or a family) varies: its value lies between nominal × (1 + ``low``) and
    nominal × (1 + ``high``) (fractions, ``low`` ≤ 0 ≤ ``high``; ±5 % is −0.05, 0.05),
    drawn from ``distribution`` (None: the spec's) over that band."""

    low: float
    high: float
    distribution: str | None = None
    #: temperature coefficient band (low, high), per kelvin (30 ppm/K is 3e-5), or None
    tc: tuple[float, float] | None = None
    #: ageing band (low, high), signed fractions, or None
    ageing: tuple[float, float] | None = None

    @property
    def half(self) -> float:
        """The wider of the two ends, as a positive fraction (±-tolerance figures)."""
        return max(-self.low, self.high)

    @property
    def symmetric(self) -> bool:
        return self.low == -self.high


@dataclass(frozen=True, slots=True)
class Tracking:
    """Parts that move together: names or globs, and the correlation of their values."""

    patterns: tuple[str, ...]
    correlation: float = 1.0
    #: the key path of this group, for errors (``tolerances.tracking[0]``)
    where: str = "tolerances.tracking"


@dataclass(frozen=True, slots=True)
class Tolerances:
    """Part tolerances and their distribution: per letter (``default``) and per part or glob
    (``parts``), each a fraction (0.05 = ±5 %) or a :class:`Spread`; groups that track."""

    default: tuple[tuple[str, "float | Spread"], ...] = ()
    parts: tuple[tuple[str, "float | Spread"], ...] = ()
    distribution: str = "uniform"
    tracking: tuple[Tracking, ...] = ()
    #: tolerances of global ``.param`` values (lower-case names)
    params: tuple[tuple[str, "float | Spread"], ...] = ()
    #: (lowest, highest, reference) temperature, °C, when the spec states a range
    temperature: tuple[float, float, float] | None = None


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


def _ends(rd: SpecReader, key: str, raw: list) -> Spread:
    """``["-20%", "+80%"]``: the lower and upper end of an asymmetric tolerance."""
    if len(raw) != 2:
        rd.fail(key, f"an asymmetric tolerance is [lower, upper], e.g. [\"-20%\", \"+80%\"]; "
                     f"got {len(raw)} values", code="spec-270")
    low, high = (rd.relative(key, v) for v in raw)
    if not (-1 < low <= 0 <= high < 10):
        rd.fail(key, f"the lower end must lie in (−100 %, 0] and the upper in [0, +1000 %), "
                     f"the nominal between them; got {raw!r} (write the lower end with its "
                     "minus sign, e.g. [\"-20%\", \"+80%\"])", code="spec-270")
    return Spread(low, high)


def _spread(rd: SpecReader, key: str, raw: Any) -> "float | Spread":
    """A part tolerance: ``"1%"`` (a fraction, ±), ``["-20%", "+80%"]`` or a table
    (:data:`SPREAD_KEYS`)."""
    if isinstance(raw, list):
        return _ends(rd, key, raw)
    if not isinstance(raw, dict):
        return _fraction(rd, key, raw)
    if not set(raw) & set(SPREAD_KEYS):
        rd.fail(key, f"expected a tolerance (\"5%\", [\"-20%\", \"+80%\"] or {{ tolerance = "
                     f"\"5%\", distribution = \"normal\" }}), got a table with "
                     f"{', '.join(map(repr, raw))} (got dict); a hierarchical part name "
                     "must be quoted: \"X1.L1\" = \"5%\"")
    sub = SpecReader(raw, rd.key_path(key), rd.path, SPREAD_KEYS)
    if "tolerance" not in raw and not {"tc", "ageing"} & set(raw):
        sub.fail("tolerance", "missing (required): the part's tolerance, e.g. \"5%\" or "
                              "[\"-20%\", \"+80%\"]", code="spec-270")
    t = raw.get("tolerance", 0.0)  # a part that only drifts: { tc = "30ppm/K" }
    s = _ends(sub, "tolerance", t) if isinstance(t, list) else \
        Spread(-(v := _fraction(sub, "tolerance", t)), v)
    dist = sub.choice("distribution", DISTRIBUTIONS, None) if "distribution" in raw else None
    tc = _tc(sub, raw["tc"]) if "tc" in raw else None
    ageing = None
    if "ageing" in raw:
        a = raw["ageing"]
        age = _ends(sub, "ageing", a) if isinstance(a, list) else \
            Spread(-(v := _fraction(sub, "ageing", a)), v)
        ageing = (age.low, age.high)
    return Spread(s.low, s.high, dist, tc, ageing)


def _per_kelvin(rd: SpecReader, key: str, raw: Any) -> float:
    """``"30ppm/K"`` (or ``"30ppm"``, ``3e-5``) as a fraction per kelvin."""
    text = raw.strip() if isinstance(raw, str) else raw
    if isinstance(text, str) and text[-2:].upper() == "/K":
        text = text[:-2]
    if isinstance(text, str) and text.startswith("±"):  # "±30ppm/K" is the ± band it says
        text = text[1:]
    value = rd.relative(key, text)
    if abs(value) > 0.1:
        rd.fail(key, f"{raw!r} is {value:g} per kelvin, 10 % a degree: write ppm/K, e.g. "
                     "\"30ppm/K\"", code="spec-275")
    return value


def _tc(rd: SpecReader, raw: Any) -> tuple[float, float]:
    """``"30ppm/K"`` → (−3e-5, 3e-5); ``["-750ppm/K", "-600ppm/K"]`` → its two ends."""
    if isinstance(raw, list):
        if len(raw) != 2:
            rd.fail("tc", "a temperature coefficient band is [lower, upper], e.g. "
                          "[\"-750ppm/K\", \"-600ppm/K\"]", code="spec-275")
        lo, hi = (_per_kelvin(rd, "tc", v) for v in raw)
        if lo > hi:
            rd.fail("tc", f"the lower end {raw[0]!r} is above the upper {raw[1]!r}",
                    code="spec-275")
        return lo, hi
    v = _per_kelvin(rd, "tc", raw)
    if v < 0:
        rd.fail("tc", f"a single coefficient is a ± band: write {raw!r} without its sign, or "
                      "the two ends as a list", code="spec-275")
    return -v, v


def _temperature(rd: SpecReader, raw: Any) -> tuple[float, float, float] | None:
    if raw is None:
        return None
    sub = SpecReader(raw, rd.key_path("temperature"), rd.path, TEMPERATURE_KEYS)
    span = sub.bounds("range_c", required=True)
    if span[0] is None or span[1] is None:
        sub.fail("range_c", "give both ends, e.g. [-40, 85]", code="spec-275")
    ref = sub.number("reference_c", 25.0)
    for t in (*span, ref):
        if not -273.15 < t < 1000:
            sub.fail("range_c" if t != ref else "reference_c",
                     f"{t:g} °C is not a temperature parts work at", code="spec-275")
    return float(span[0]), float(span[1]), float(ref)


def _tracking(rd: SpecReader, raw: Any) -> tuple[Tracking, ...]:
    if isinstance(raw, dict):
        raw = [raw]
    if not isinstance(raw, list):
        rd.fail("tracking", "expected a list of groups, e.g. [{ parts = [\"RN1.*\"] }]",
                code="spec-271")
    out = []
    for i, group in enumerate(raw):
        where = f"tracking[{i}]"
        sub = SpecReader(group, rd.key_path(where), rd.path, TRACKING_KEYS)
        names = sub.raw("parts")
        if isinstance(names, str):
            names = [names]
        if not isinstance(names, list) or not names or \
                not all(isinstance(n, str) and n for n in names):
            sub.fail("parts", "expected a list of part names or globs, e.g. [\"R1\", \"R2\"] "
                              "or [\"RN1.*\"]", code="spec-271")
        rho = sub.number("correlation", 1.0)
        if not 0 < rho <= 1:
            sub.fail("correlation", f"must be in (0, 1] (1: the parts share one draw), got "
                                    f"{rho!r}", code="spec-271")
        out.append(Tracking(tuple(n.upper() for n in names), float(rho), sub.key_path("")))
    return tuple(out)


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
    d = tuple((k.upper(), _spread(rd, f"default.{k}", v)) for k, v in default.items())
    p = tuple((k.upper(), _spread(rd, f"parts.{k}", v)) for k, v in parts.items())
    dist = rd.choice("distribution", DISTRIBUTIONS, "uniform")
    params = rd.raw("params", {})
    if not isinstance(params, dict):
        rd.fail("params", "expected a table, e.g. { gbw = \"20%\" }", code="spec-273")
    q = tuple((k.lower(), _spread(rd, f"params.{k}", v)) for k, v in params.items())
    temperature = _temperature(rd, rd.raw("temperature"))
    if temperature is None:
        for key, s in (*(("default." + k, v) for k, v in d), *(("parts." + k, v) for k, v in p),
                       *(("params." + k, v) for k, v in q)):
            if isinstance(s, Spread) and s.tc is not None:
                rd.fail(f"{key}.tc", "a temperature coefficient needs the temperature range "
                                     "it acts over: tolerances.temperature = { range_c = "
                                     "[-40, 85] }", code="spec-275")
    return Tolerances(d, p, dist, _tracking(rd, rd.raw("tracking", [])), q, temperature)


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
