"""The ``[[stress]]`` tables of a spec, validated: one :class:`StressLimit` per table.

Parsed when the spec is loaded (:func:`netcheck.spec.load.parse_spec` fills
``Spec.stress``). Matching the ``parts`` globs against the circuit and judging the peaks
need the circuit and its response, so they stay with the analyses
(:mod:`netcheck.analyses.stress`).

Spec syntax (one ``[[stress]]`` table per quantity and glob)::

    [[stress]]
    source_amplitude = "10"       # PEAK volts (V stimulus) or amps (I stimulus)
    parts = "C*"                  # fnmatch glob over part names, case-insensitive
    max_voltage = "50"            # peak volts across each matching part

    [[stress]]                    # no source_amplitude: inherits 10 from the table above
    parts = "L*"
    max_current = "0.5"           # peak amps through each matching part

    [[stress]]
    source_amplitude = "rms:7.07" # an RMS stimulus: 7.07 × √2 ≈ 10 peak
    parts = "R*"
    max_power = "0.25"            # average watts, |I|²R/2 for a peak |I|

Amplitude convention
--------------------
Every amplitude is a **peak** value. ``source_amplitude`` is a number or an
engineering-notation string taken as peak (``"peak:10"`` says so explicitly);
``"rms:7.07"`` is an RMS value and is converted to peak by ×√2 (a sinusoid).
A table without ``source_amplitude`` inherits the amplitude of the table before
it; the first table must give one. Peak voltages and currents are the stimulus
amplitude times the per-unit phasor magnitude; power is the average of the
sinusoid, P = |V|²/(2R) = |I|²R/2 with peak |V|, |I|.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Sequence

from .guard import check_count
from .reader import SpecReader

__all__ = ["KEYS", "QUANTITIES", "UNITS", "StressLimit", "parse_stress", "stress_lines"]

#: Keys of a ``[[stress]]`` table and what they hold (for docs, did-you-mean and the loader).
KEYS: dict[str, str] = {
    "source_amplitude": "stimulus amplitude, PEAK volts (V source) or amps (I source); "
                        "'rms:7.07' is RMS (×√2), 'peak:10' explicit; omitted: inherited "
                        "from the previous [[stress]] table",
    "parts": "glob over part names (case-insensitive fnmatch on the full hierarchical name, "
             "e.g. 'C*', 'X1.*', '*L2'); a part model (part_models) is one part, matched by "
             "its instance name ('X1') and judged at its ports",
    "max_voltage": "largest allowed peak |V| across each matching part, V (any two-terminal "
                   "part; between each pair of ports of a part model)",
    "max_current": "largest allowed peak |I| through each matching part, A "
                   "(R, L, C, V, I, F, H; into each port of a part model)",
    "max_power": "largest allowed average dissipation |I|²R/2 (peak |I|), W (resistors only)",
}

#: rating key → (quantity, unit)
QUANTITIES: dict[str, tuple[str, str]] = {
    "max_voltage": ("voltage", "V"),
    "max_current": ("current", "A"),
    "max_power": ("power", "W"),
}

#: quantity → unit of its rating
UNITS: dict[str, str] = {q: u for q, u in QUANTITIES.values()}


@dataclass(frozen=True, slots=True)
class StressLimit:
    """One validated ``[[stress]]`` table.

    ``amplitude`` is the PEAK stimulus (V or A); ``rms`` records that it was given
    as RMS, ``inherited`` that it came from an earlier table.
    """

    index: int
    parts: str
    quantity: str
    rating: float
    amplitude: float
    rms: bool = False
    inherited: bool = False
    line: int | None = None

    @property
    def unit(self) -> str:
        """Unit of the rating: V, A or W."""
        return UNITS[self.quantity]


def stress_lines(text: str) -> list[int]:
    """1-based line of each ``[[stress]]`` header of a spec's TOML ``text``, in order."""
    out = []
    for i, line in enumerate(text.splitlines(), 1):
        stripped = line.strip()
        if stripped.startswith("[[") and stripped[2:].split("]]")[0].strip() == "stress":
            out.append(i)
    return out


def _amplitude(rd: SpecReader) -> tuple[float, bool]:
    """Peak amplitude and whether it was given as RMS."""
    key = "source_amplitude"
    value = rd.raw(key)
    rms = False
    if isinstance(value, str) and ":" in value:
        prefix, _, rest = value.partition(":")
        word = prefix.strip().lower()
        if word not in ("rms", "peak"):
            rd.fail(key, f"unknown amplitude prefix {prefix.strip()!r}: write 'rms:<value>', "
                         "'peak:<value>' or a plain value (peak)")
        rms = word == "rms"
        if not rest.strip():
            rd.fail(key, f"no value after {prefix.strip()!r}:")
        value = rest.strip()
    amp = rd.number(key, value=value, positive=True)
    return (amp * math.sqrt(2.0) if rms else amp), rms


def parse_stress(tables: Any, path: str, lines: Sequence[int] | None = None
                 ) -> tuple[StressLimit, ...]:
    """Validate the ``[[stress]]`` tables of a spec.

    Parameters
    ----------
    tables : list of dict
        The TOML array ``stress`` (``Spec.table("stress")``; :func:`netcheck.spec.load.parse_spec`
        parses it into ``Spec.stress``).
    path : str
        Spec file path, for error messages.
    lines : sequence of int, optional
        Line of each table's header (:func:`stress_lines`), for locating results.

    Returns
    -------
    tuple of StressLimit
        One per table, with the amplitude resolved to peak (inherited where omitted).

    Raises
    ------
    SpecError
        With the key path, e.g. ``stress[1].max_current: must be > 0, got -1``.

    Examples
    --------
    >>> lims = parse_stress([{"source_amplitude": "rms:1", "parts": "C*", "max_voltage": "50"},
    ...                      {"parts": "L1", "max_current": "200m"}], "demo.toml")
    >>> [(x.quantity, round(x.amplitude, 6), x.inherited) for x in lims]
    [('voltage', 1.414214, False), ('current', 1.414214, True)]
    """
    if not isinstance(tables, list):
        SpecReader({}, "", path, {}).fail("stress", "expected an array of tables ([[stress]])")
    check_count(tables, "stress", path)
    out: list[StressLimit] = []
    previous: tuple[float, bool] | None = None
    for i, table in enumerate(tables):
        rd = SpecReader(table, f"stress[{i}]", path, KEYS)
        if rd.has("source_amplitude"):
            amp, rms = _amplitude(rd)
            inherited = False
            previous = (amp, rms)
        elif previous is None:
            rd.fail("source_amplitude", "missing in the first [[stress]] table (later tables "
                                        "inherit it): give the stimulus peak, e.g. \"10\" or "
                                        "\"rms:7.07\"")
        else:
            (amp, rms), inherited = previous, True
        parts = rd.text("parts", required=True).strip()
        given = [k for k in QUANTITIES if rd.has(k)]
        if not given:
            rd.fail("", "a [[stress]] table needs one of max_voltage, max_current or max_power")
        if len(given) > 1:
            rd.fail(given[1], f"give only one of max_voltage, max_current, max_power per table "
                              f"(this one also has {given[0]}); use one [[stress]] table each")
        key = given[0]
        rating = rd.number(key, positive=True)
        line = lines[i] if lines is not None and i < len(lines) else None
        out.append(StressLimit(i, parts, QUANTITIES[key][0], rating, amp, rms, inherited, line))
    return tuple(out)
