"""Text of the report's view data: status symbols, values with units, margins, ranges, paths."""

from __future__ import annotations

import math
import re
from typing import Any

from ..result import LimitResult, Status
from ..source import display_path
from ..units import format_eng

__all__ = ["SYMBOL", "MEASUREMENTS", "status_view", "format_measured", "format_margin",
           "unit_of", "signed", "format_fraction", "format_interval", "format_range",
           "coefficient", "tolerance_text", "display_path", "date_text", "caution_view",
           "LISTING_COLUMNS", "listing_rows"]

SYMBOL = {Status.PASS: "✓", Status.FAIL: "✗", Status.ERROR: "!", Status.SKIPPED: "–"}
#: measurement key → (label, unit) for the key-figures and spread tables
MEASUREMENTS = {
    "f_peak_hz": ("peak frequency", "Hz"), "peak_gain_db": ("peak gain", "dB"),
    "f_low_hz": ("lower half-power edge f_low", "Hz"),
    "f_high_hz": ("upper half-power edge f_high", "Hz"),
    "bandwidth_hz": ("half-power bandwidth f_high − f_low", "Hz"),
    "f_center_hz": ("centre f_center = √(f_low·f_high)", "Hz"),
    "q": ("Q = f_center / bandwidth", ""),
}
#: margins beyond this are the Monte Carlo block's stand-in for "not measured" samples
_ABSURD = 1e200


def status_view(status: Status) -> dict[str, str]:
    """The ``status``, ``word`` and ``symbol`` entries the templates show for a status.

    Examples
    --------
    >>> status_view(Status.FAIL)
    {'status': 'fail', 'word': 'FAIL', 'symbol': '✗'}
    """
    return {"status": status.value, "word": status.word, "symbol": SYMBOL[status]}


def format_measured(lim: LimitResult) -> str:
    """Measured value as the report prints it (``—`` when none)."""
    return "—" if lim.measured is None else format_eng(lim.measured, lim.unit)


def format_margin(lim: LimitResult) -> str:
    """Signed margin as the report prints it: ``+0.429 dB`` inside, ``-1.2 dB`` outside."""
    if lim.margin is None:
        return "—"
    return ("+" if lim.margin >= 0 else "") + format_eng(lim.margin, lim.unit)


def unit_of(key: str) -> str:
    """Unit of a measurement key: from :data:`MEASUREMENTS`, else from its suffix.

    Examples
    --------
    >>> unit_of("q"), unit_of("f_peak_hz"), unit_of("z_min_ohm"), unit_of("count")
    ('', 'Hz', 'Ω', '')
    """
    if key in MEASUREMENTS:
        return MEASUREMENTS[key][1]
    for suffix, unit in (("_hz", "Hz"), ("_db", "dB"), ("_s", "s"), ("_deg", "deg"),
                         ("_ohm", "Ω")):
        if key.endswith(suffix):
            return unit
    return ""


def signed(value: float | None, unit: str) -> str:
    """``+1.200 kHz`` / ``-0.5 dB``; ``—`` when missing, ``not measured`` for the stand-in."""
    if value is None or not math.isfinite(value):
        return "—"
    if abs(value) > _ABSURD:
        return "not measured"
    value = float(value) + 0.0  # no "-0"
    return ("+" if value >= 0 else "") + format_eng(value, unit)


def format_fraction(value: float | None) -> str:
    """A yield or other fraction as the report prints it: ``99.81 %``.

    Examples
    --------
    >>> format_fraction(0.9980829527), format_fraction(1.0), format_fraction(None)
    ('99.81 %', '100.00 %', '—')
    """
    if value is None or not math.isfinite(value):
        return "—"
    return f"{100.0 * value:.2f} %"


def format_interval(ci: Any) -> str:
    """A yield interval ``[lo, hi]`` as ``99.81 % – 100.00 %``."""
    if not isinstance(ci, (list, tuple)) or len(ci) != 2:
        return "—"
    return f"{format_fraction(ci[0])} – {format_fraction(ci[1])}"


def format_range(lo: float | None, hi: float | None, unit: str) -> str:
    """A range as the tolerance tables print it, the unit written once when shared.

    Examples
    --------
    >>> format_range(39e3, 41e3, "Hz"), format_range(-25.7, -24.9, "dB")
    ('39.00 … 41.00 kHz', '-25.700 … -24.900 dB')
    >>> format_range(999.0, 1.2e3, "Hz"), format_range(11.59, 12.46, "")
    ('999.0 Hz … 1.200 kHz', '11.59 … 12.46')
    """
    if lo is None or hi is None:
        return "—"
    a, b = format_eng(lo, unit), format_eng(hi, unit)
    if " " in a and " " in b and a.split(" ", 1)[1] == b.split(" ", 1)[1]:
        return f"{a.split(' ', 1)[0]} … {b}"
    return f"{a} … {b}"


def coefficient(x: float | None) -> str:
    """A signed dimensionless coefficient: ``+0.500``, ``-9.1e-10``, ``0``."""
    if x is None or not math.isfinite(x):
        return "—"
    if x == 0:
        return "0"
    return f"{x:+.3f}" if abs(x) >= 1e-3 else f"{x:+.1e}"


def tolerance_text(t: float | None) -> str:
    """A relative part tolerance as ``±5 %`` (``—`` when none)."""
    return "—" if t is None else f"±{100.0 * t:.4g} %"


def date_text(created_utc: str) -> str:
    """``2026-01-01 00:00:00 UTC`` from the result's ISO time; ``not recorded`` when none."""
    m = re.fullmatch(r"(\d{4}-\d\d-\d\d)T(\d\d:\d\d:\d\d)Z", created_utc or "")
    return f"{m[1]} {m[2]} UTC" if m else (created_utc or "not recorded")


def caution_view(c: Any) -> dict[str, str]:
    """A Caution as the templates show it: code, severity, message and ``file:line:col``."""
    where = ""
    if c.path:
        where = display_path(c.path) + (f":{c.line}" if c.line else "") + (
            f":{c.column}" if c.line and c.column else "")
    return {"code": c.code, "severity": c.severity, "message": c.message, "where": where}


#: characters per appendix line: the 176 mm text width at 7 pt DejaVu Sans Mono (0.602 em)
LISTING_COLUMNS = 118


def listing_rows(text: str, columns: int = LISTING_COLUMNS) -> list[tuple[str, str]]:
    """(line number, text) rows of a file listing; long lines wrap without a number.

    Examples
    --------
    >>> listing_rows("a\\tb\\n" + "x" * 20, columns=10)
    [('1', 'a   b'), ('2', 'xxxxxxxx'), (' ', 'xxxxxxxx'), (' ', 'xxxx')]
    """
    lines = text.splitlines() or [""]
    width = len(str(len(lines)))
    room = max(8, columns - width - 1)
    rows = []
    for no, line in enumerate(lines, 1):
        line = line.expandtabs(4)
        chunks = [line[i:i + room] for i in range(0, len(line), room)] or [""]
        rows.append((str(no).rjust(width), chunks[0]))
        rows += [(" " * width, c) for c in chunks[1:]]
    return rows
