"""Text of the report's view data: status symbols, values with units, margins, ranges, paths."""

from __future__ import annotations

import math
import re
from typing import Any

from ..render import NAME_SHOWN_MAX, TEXT_SHOWN_MAX
from ..result import LimitResult, Status
from ..netlist.source import clip, display_path
from ..netlist.units import digits_at, format_eng, signed_eng, tell_apart

__all__ = ["SYMBOL", "MEASUREMENTS", "status_view", "format_measured", "format_margin",
           "unit_of", "signed", "format_fraction", "format_interval", "format_range",
           "cell_text",
           "coefficient", "tolerance_text", "display_path", "date_text", "caution_view",
           "LISTING_COLUMNS", "LISTING_ROWS_MAX", "LISTING_TOTAL_MAX", "LISTING_LINE_ROWS",
           "listing_rows", "listing",
           "shown_name", "NAME_SHOWN_MAX", "TEXT_SHOWN_MAX"]

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


def shown_name(text: Any) -> str:
    """A name or title as the report shows it: cut at
    :data:`~netcheck.render.NAME_SHOWN_MAX` characters, the cut marked with the count left
    out (the ``name`` filter of the templates).

    >>> shown_name("q" * 300)[195:]
    'qqqqq… (100 more characters)'
    """
    return clip(str(text), NAME_SHOWN_MAX)


def status_view(status: Status) -> dict[str, str]:
    """The ``status``, ``word`` and ``symbol`` entries the templates show for a status.

    Examples
    --------
    >>> status_view(Status.FAIL)
    {'status': 'fail', 'word': 'FAIL', 'symbol': '✗'}
    """
    return {"status": status.value, "word": status.word, "symbol": SYMBOL[status]}


def format_measured(lim: LimitResult) -> str:
    """Measured value as the report prints it (``—`` when none; ``below -255.400 dB`` at
    the numerical floor), with as many figures as tell it from the bounds."""
    return lim.figures.measured


def format_margin(lim: LimitResult) -> str:
    """Signed margin as the report prints it: ``+0.429 dB`` inside, ``-1.200 dB``
    outside, ``≥ +195.400 dB`` for a gain at the numerical floor."""
    return lim.figures.margin


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


def signed(value: float | None, unit: str, place: int | None = None) -> str:
    """``+1.200 kHz`` / ``-0.500 dB``; ``—`` when missing, ``not measured`` for the
    stand-in. A margin in dB or degrees to the decimal ``place`` of its row, if given.
    """
    if value is None or not math.isfinite(value):
        return "—"
    if abs(value) > _ABSURD:
        return "not measured"
    digits = None
    if place is not None and unit in ("dB", "deg", "°"):
        digits = digits_at(value, unit, place)
    return signed_eng(value, unit, digits)


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


def format_range(lo: float | None, hi: float | None, unit: str,
                 place: int | None = None) -> str:
    """A range as the tolerance tables print it, the unit written once when shared; its
    ends to the decimal ``place`` a table row chose (:func:`netcheck.netlist.units.tell_apart`),
    or else with as many figures as tell them apart.

    Examples
    --------
    >>> format_range(39e3, 41e3, "Hz"), format_range(-25.7, -24.9, "dB")
    ('39.00 … 41.00 kHz', '-25.700 … -24.900 dB')
    >>> format_range(999.0, 1.2e3, "Hz"), format_range(11.59, 12.46, "")
    ('999.0 Hz … 1.200 kHz', '11.59 … 12.46')
    >>> format_range(9.99998e6, 10.00002e6, "Hz")
    '9.99998 … 10.00002 MHz'
    """
    if lo is None or hi is None:
        return "—"
    if place is None:
        place = tell_apart([lo, hi], unit)
    a = format_eng(lo, unit, digits_at(lo, unit, place))
    b = format_eng(hi, unit, digits_at(hi, unit, place))
    if " " in a and " " in b and a.split(" ", 1)[1] == b.split(" ", 1)[1]:
        return f"{a.split(' ', 1)[0]} … {b}"
    return f"{a} … {b}"


def cell_text(text: str) -> str:
    """A range or a pair of bounds for a narrow table cell: a line may break after ``…``
    only, never inside a value (its own spaces become no-break spaces).

    >>> cell_text("9.99998 MHz … 10.00002 MHz") == "9.99998\u00a0MHz\u00a0… 10.00002\u00a0MHz"
    True
    """
    return "\u00a0… ".join(part.replace(" ", "\u00a0") for part in text.split(" … "))


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
#: the most rows the appendix lists of one input file (about 12 pages; each row costs
#: the PDF a few milliseconds, and an input may be 16 MiB)
LISTING_ROWS_MAX = 1_000
#: the most rows the appendix lists of all the input files of one spec together
LISTING_TOTAL_MAX = 4_000
#: the most rows one long line wraps into; the rest of it is counted, not listed
LISTING_LINE_ROWS = 20


def listing_rows(text: str, columns: int = LISTING_COLUMNS) -> list[tuple[str, str]]:
    """(line number, text) rows of a file listing; long lines wrap without a number.

    Examples
    --------
    >>> listing_rows("a\\tb\\n" + "x" * 20, columns=10)
    [('1', 'a   b'), ('2', 'xxxxxxxx'), (' ', 'xxxxxxxx'), (' ', 'xxxx')]
    """
    return listing(text, columns, None, None)["rows"]


def listing(text: str, columns: int = LISTING_COLUMNS, max_rows: int | None = LISTING_ROWS_MAX,
            line_rows: int | None = LISTING_LINE_ROWS) -> dict[str, Any]:
    """A file listing of at most ``max_rows`` rows: ``rows`` as :func:`listing_rows` makes
    them, and ``cut``, a sentence saying what is left out (empty when nothing is).

    A line that would wrap into more than ``line_rows`` rows shows that many, then a row
    counting the characters of it not shown.

    Examples
    --------
    >>> view = listing("a\\n" + "x" * 20 + "\\nb\\nc", columns=10, max_rows=3)
    >>> view["rows"]
    [('1', 'a'), ('2', 'xxxxxxxx'), (' ', 'xxxxxxxx')]
    >>> view["cut"]
    'Listing cut after 3 rows: the rest of line 2 and 2 more lines are not shown; the SHA-256 is of the whole file.'
    >>> listing("y" * 30 + "\\nz", columns=10, line_rows=2)["rows"]
    [('1', 'yyyyyyyy'), (' ', 'yyyyyyyy'), (' ', '… 14 more characters of line 1 not shown'), ('2', 'z')]
    """
    lines = text.splitlines() or [""]
    width = len(str(len(lines)))
    room = max(8, columns - width - 1)
    rows: list[tuple[str, str]] = []
    for no, line in enumerate(lines, 1):
        line = line.expandtabs(4)
        for k, i in enumerate(range(0, max(len(line), 1), room)):
            if max_rows is not None and len(rows) >= max_rows:
                rest = len(lines) - no
                partial = f"the rest of line {no} and " if i else ""
                more = rest if i else rest + 1
                what = f"{partial}{more:,} more line{'s' if more != 1 else ''}"
                return {"rows": rows, "cut": f"Listing cut after {len(rows):,} rows: {what} "
                        "are not shown; the SHA-256 is of the whole file."}
            if line_rows is not None and k == line_rows:
                rows.append((" " * width, f"… {len(line) - i:,} more characters of line "
                                          f"{no} not shown"))
                break
            rows.append((str(no).rjust(width) if i == 0 else " " * width, line[i:i + room]))
    return {"rows": rows, "cut": ""}
