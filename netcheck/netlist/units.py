"""Engineering notation in (``4k7``, ``10uF``, ``1meg``) and out (``38.000 kHz``).

The rule for reading a quantity: a decimal number, then at most one scale suffix (f p n
u µ m k meg g t, case-insensitive, or mil), then unit letters, which are ignored
(``10uF``, ``1kOhm``, ``10kHz``; ``1fF`` is one femtofarad). Unit letters must not start
with a second scale suffix: ``1kk``, ``1uu``, ``1megk`` or ``1kmeg`` are refused rather
than read as ``1k``, ``1u``, ``1meg`` and ``1k``, unless the letters are a unit word
that happens to start with a scale letter (:data:`UNIT_WORDS`: ``F``, ``Fd``, ``farad``,
``mho``). The IEC 60062 letter-and-digit codes (``4k7``, ``2n2``, ``4R7``) follow the
same rule for their unit letters.

The house style for numbers out (every report prints a judged row through
:func:`row_text`): dB with 3 decimals, degrees with 2, every other unit with 4
significant figures and an SI prefix (``38.00 kHz``), dimensionless numbers likewise
(``12.02``, ``0.9800``, ``52.36 k``; ``120.0e-6`` below 0.001), trailing zeros kept. When
those figures would print two different values of one row (a bound and the measured
value) alike, the whole row is printed down to the decimal place that tells them apart
(:func:`tell_apart`: ``9.999995 MHz … 10.000005 MHz``, at most 12 significant figures).
Margins in dB and degrees follow the row's decimals; other margins keep their own 4
figures. Frequencies in the ``at`` column have at least 5 figures.
"""

from __future__ import annotations

import math
from decimal import Decimal, DecimalException
from typing import Iterable, NamedTuple

from .source import printable, quoted

__all__ = ["SCALE", "UNIT_WORDS", "RELATIVE_UNITS", "parse_quantity", "parse_value",
           "parse_relative", "relative_unit", "format_eng", "format_si", "UnitError",
           "default_precision", "tell_apart", "digits_at", "signed_eng", "row_text", "RowText",
           "format_span", "PRECISION_CAP", "AT_DIGITS"]

#: Classic SPICE scale letters (case-insensitive; ``m`` is milli, ``meg`` mega).
SCALE: dict[str, int] = {
    "f": -15, "p": -12, "n": -9, "u": -6, "µ": -6, "m": -3, "k": 3, "g": 9, "t": 12,
}
#: Unit words (lower case) that start with a scale letter but may follow a scale suffix:
#: ``10uF`` is 10 µ(farad), not 10 µ·femto. Other letters after a scale suffix that
#: start with one are refused (``1kk``).
UNIT_WORDS = frozenset({"f", "fd", "farad", "farads", "mho", "mhos"})
_MEG = 6
_DIGITS = "0123456789"


class UnitError(ValueError):
    """A quantity string is not valid engineering notation."""


def _scan_mantissa(text: str) -> int:
    """Return the length of the leading decimal number (with exponent) in ``text``."""
    i, n = 0, len(text)
    if i < n and text[i] in "+-":
        i += 1
    start = i
    while i < n and text[i] in _DIGITS:
        i += 1
    if i < n and text[i] == ".":
        i += 1
        while i < n and text[i] in _DIGITS:
            i += 1
    if i == start or text[start:i] == ".":
        return 0
    if i < n and text[i] in "eE":
        j = i + 1
        if j < n and text[j] in "+-":
            j += 1
        if j < n and text[j] in _DIGITS:
            while j < n and text[j] in _DIGITS:
                j += 1
            i = j
    return i


def _scaled(digits: str, exponent: int) -> float:
    """``digits`` × 10**exponent, rounded once (so ``10u`` is exactly ``1e-05``)."""
    try:
        return float(Decimal(digits).scaleb(exponent))
    except DecimalException:  # exponent beyond Decimal's range: far outside float's too
        return math.inf


def _finite(value: float, text: str) -> float:
    if not math.isfinite(value):
        raise UnitError(f"{quoted(text)} is too large to be a value")
    return value


def _scale_of(letters: str) -> tuple[int | None, int]:
    """Power-of-ten of a suffix (None for mil) and how many characters it uses."""
    low = letters.lower()
    if low.startswith("meg"):
        return _MEG, 3
    if low.startswith("mil"):
        return None, 3
    if low and low[0] in SCALE:
        return SCALE[low[0]], 1
    return 0, 0


def parse_quantity(text: str) -> float:
    """Parse one SPICE-style quantity.

    A decimal number, then an optional scale suffix (f p n u m k meg g t, or
    mil = 25.4 µm), then ignored unit letters. The IEC 60062 letter-and-digit
    form (``4k7`` = 4.7k, ``2n2`` = 2.2n, ``4R7`` = 4.7) is accepted, except
    with ``m``/``M``, which IEC 60062 reads as mega but SPICE as milli: that
    form is refused rather than guessed.

    Parameters
    ----------
    text : str
        The token, e.g. ``"10uF"``.

    Returns
    -------
    float
        The value in base units.

    Raises
    ------
    UnitError
        If ``text`` is not a quantity; the message says why.

    Examples
    --------
    >>> parse_quantity("10uF"), parse_quantity("1meg"), parse_quantity("4k7")
    (1e-05, 1000000.0, 4700.0)
    >>> parse_quantity("1M")   # milli, as in SPICE
    0.001
    >>> parse_quantity("18µH"), parse_quantity("18\u03bcH")  # micro sign, Greek mu
    (1.8e-05, 1.8e-05)
    >>> parse_quantity("1kk")
    Traceback (most recent call last):
    ...
    netcheck.netlist.units.UnitError: '1kk': 'k' after the scale suffix 'k' is a second scale suffix; ...
    """
    s = text.strip()
    n = _scan_mantissa(s)
    if n == 0:
        raise UnitError(f"{quoted(text)} is not a number")
    mantissa, rest = s[:n], s[n:]
    value = float(mantissa)
    if not rest:
        return _finite(value, text)
    if "\u03bc" in rest:  # the Greek small mu, written for the micro sign
        rest = rest.replace("\u03bc", "µ")
    if not (rest[0].isalpha() or rest[0] == "µ"):
        raise UnitError(f"unexpected {quoted(rest[0])} after the number in {quoted(text)}")
    # IEC 60062 letter-and-digit code: <digits><letter><digits>[unit]
    letter = rest[0]
    k = 1
    while k < len(rest) and rest[k] in _DIGITS:
        k += 1
    if k > 1:
        return _finite(_rkm(text, mantissa, letter, rest[1:k], rest[k:]), text)
    exponent, used = _scale_of(rest)
    tail = rest[used:]
    if any(not (ch.isalpha() or ch == "µ") for ch in tail):
        raise UnitError(f"unexpected characters {quoted(tail)} in {quoted(text)}")
    _check_unit(text, rest[:used], tail)
    if exponent is None:
        return _finite(value * 25.4e-6, text)
    return _finite(_scaled(mantissa, exponent), text)


def _rkm(text: str, mantissa: str, letter: str, decimals: str, unit: str) -> float:
    """Value of an IEC 60062 code such as ``4k7`` (mantissa, letter, decimals)."""
    if not mantissa.lstrip("+-").isdigit():
        raise UnitError(f"{quoted(text)} mixes a decimal point or exponent with the "
                        f"letter-and-digit code; write {mantissa}{letter} or use one form")
    low = letter.lower()
    if low == "m":
        raise UnitError(f"{quoted(text)} is ambiguous: the IEC 60062 code reads {letter} as "
                        f"mega, SPICE reads it as milli; write {mantissa}.{decimals}meg "
                        f"or {mantissa}.{decimals}m")
    if low in ("r", "e"):
        exponent = 0
    elif low in SCALE:
        exponent = SCALE[low]
    else:
        raise UnitError(f"{quoted(text)}: {quoted(letter)} is not a scale letter")
    if any(not ch.isalpha() for ch in unit):
        raise UnitError(f"unexpected characters {quoted(unit)} in {quoted(text)}")
    _check_unit(text, letter, unit)
    return _scaled(f"{mantissa}.{decimals}", exponent)


def _check_unit(text: str, scale: str, unit: str) -> None:
    """Refuse unit letters that start with a second scale suffix (``1kk``, ``4k7k``)."""
    if not unit or unit.lower() in UNIT_WORDS or _scale_of(unit) == (0, 0):
        return
    second = unit[:_scale_of(unit)[1]]
    raise UnitError(f"{quoted(text)}: {quoted(second)} after the scale suffix {quoted(scale)} "
                    "is a second scale suffix; write one (1meg, not 1kk)")


def _number(value: object, what: str) -> float | None:
    """``value`` as a float when it is a TOML number (finite), None when it is not a
    number at all; a boolean or a non-finite number is refused."""
    if isinstance(value, bool):
        raise UnitError(f"{what}: expected a number, got {printable(repr(value), 60)}")
    if isinstance(value, (int, float)):
        if not math.isfinite(value):
            raise UnitError(f"{what}: {printable(repr(value), 60)} is not finite")
        return float(value)
    return None


def parse_value(value: object, what: str = "value") -> float:
    """Parse a spec value: a number, or a string of engineering notation.

    Examples
    --------
    >>> parse_value("38k"), parse_value(2.5)
    (38000.0, 2.5)
    """
    number = _number(value, what)
    if number is not None:
        return number
    if isinstance(value, str):
        return parse_quantity(value)
    raise UnitError(f"{what}: expected a number or a string like '10k', got {type(value).__name__}")


#: units of a relative quantity (a tolerance, a fraction of a value): their own units,
#: never engineering prefixes (``20ppm`` is 20e-6, not 20 pico-something)
#: (the number each unit divides by, so that 50 ppm is exactly 50 / 1e6)
RELATIVE_UNITS: dict[str, float] = {"%": 1e2, "ppm": 1e6, "ppb": 1e9}


def relative_unit(text: str) -> tuple[float, float] | None:
    """(number, divisor) of ``text`` written with a relative unit (``1%``, ``20 ppm``,
    ``5ppb``; case-insensitive, space allowed), or None when it has none.

    Raises
    ------
    UnitError
        When the unit is there but the number before it is not a number.

    Examples
    --------
    >>> relative_unit("20ppm"), relative_unit("1.5 %"), relative_unit("10k")
    ((20.0, 1000000.0), (1.5, 100.0), None)
    """
    s = text.strip()
    low = s.lower()
    for unit, factor in RELATIVE_UNITS.items():
        if low.endswith(unit):
            number = s[:len(s) - len(unit)].strip()
            try:
                value = float(number)
            except ValueError:
                raise UnitError(f"{quoted(text)}: {quoted(number)} before {unit} is not a "
                                "number") from None
            if not math.isfinite(value):
                raise UnitError(f"{quoted(text)} is not finite")
            return value, factor
    return None


def parse_relative(value: object, what: str = "value") -> float:
    """A relative quantity as a fraction: a plain number (``0.01``), or a string with a
    relative unit (``"1%"``, ``"50ppm"``, ``"10 ppb"``).

    A string with an engineering suffix (``"5p"``, ``"20m"``) is refused: a relative
    quantity has no scale prefix, and reading ``"20p"`` as 2e-11 would hide a typo.

    Examples
    --------
    >>> parse_relative("1%"), parse_relative("50ppm"), parse_relative(0.02)
    (0.01, 5e-05, 0.02)
    >>> parse_relative("20p", "tolerance")
    Traceback (most recent call last):
    ...
    netcheck.netlist.units.UnitError: tolerance: '20p' is not a relative quantity: write a percentage ('1%'), ...
    """
    number = _number(value, what)
    if number is not None:
        return number
    if isinstance(value, str):
        found = relative_unit(value)
        if found is not None:
            return found[0] / found[1]
        try:
            plain = float(value.strip())
        except ValueError:
            raise UnitError(f"{what}: {quoted(value)} is not a relative quantity: write a percentage "
                            "('1%'), parts per million ('50ppm'), parts per billion "
                            "('10ppb') or a plain fraction (0.01)") from None
        if math.isfinite(plain):
            return plain
        raise UnitError(f"{what}: {quoted(value)} is not finite")
    raise UnitError(f"{what}: expected a number or a string like '1%' or '50ppm', got "
                    f"{type(value).__name__}")


_PREFIXES = [(1e12, "T"), (1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m"),
             (1e-6, "µ"), (1e-9, "n"), (1e-12, "p"), (1e-15, "f")]
#: the power of ten of each prefix, for the exact value a printed number stands for
_PREFIX_EXP = {"T": 12, "G": 9, "M": 6, "k": 3, "": 0, "m": -3, "µ": -6, "n": -9, "p": -12,
               "f": -15}
#: units printed with a fixed number of decimals (the rest with significant digits)
_DECIMAL_UNITS = {"dB": 3, "deg": 2, "°": 2}
#: the most significant digits a value is ever printed with: 17 tell any two distinct
#: doubles apart (IEEE 754-2008, §5.12.2), so distinct values of a row never print alike
PRECISION_CAP = 17


def default_precision(unit: str) -> int:
    """The house precision of ``unit``: decimals for dB (3) and degrees (2), significant
    digits for everything else (4).

    Examples
    --------
    >>> default_precision("dB"), default_precision("deg"), default_precision("Hz")
    (3, 2, 4)
    """
    return _DECIMAL_UNITS.get(unit, 4)


def _si_parts(value: float, digits: int) -> tuple[str, str]:
    """The printed mantissa and the prefix of a non-zero finite ``value`` (format_si)."""
    mag = abs(value)
    scale, prefix = _PREFIXES[-1]
    for s, p in _PREFIXES:
        if mag >= s * 0.9999995:
            scale, prefix = s, p
            break
    scaled = value / scale
    decimals = max(0, digits - 1 - int(math.floor(math.log10(abs(scaled)) + 1e-12)))
    return f"{scaled:.{decimals}f}", prefix


def format_si(value: float, unit: str = "", digits: int = 4) -> str:
    """Format with an SI prefix and ``digits`` significant figures.

    Examples
    --------
    >>> format_si(38000.0, "Hz"), format_si(4.7e-9, "F"), format_si(0.0, "V")
    ('38.00 kHz', '4.700 nF', '0 V')
    >>> format_si(-1.25e-4, "s", 3)
    '-125 µs'
    """
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "—"
    if math.isinf(value):
        return ("-" if value < 0 else "") + "∞" + (f" {unit}" if unit else "")
    if value == 0:
        return f"0 {unit}".rstrip() if unit else "0"
    text, prefix = _si_parts(value, digits)
    sep = " " if (prefix or unit) else ""
    return f"{text}{sep}{prefix}{unit}"


def _plain(value: float, digits: int) -> tuple[str, Decimal]:
    """A dimensionless number in the house style and the exact value it prints.

    ``digits`` significant figures, trailing zeros kept; from 1000 up with an SI prefix
    letter (``52.36 k``), below 0.001 in engineering exponent form (``120.0e-6``).
    """
    if value == 0:
        return "0", Decimal(0)
    mag = abs(value)
    if mag >= 1e15 * 0.9999995:
        text = f"{value:.{digits - 1}e}"
        return text, Decimal(text)
    if mag >= 1e3 * 0.9999995:
        text, prefix = _si_parts(value, digits)
        return f"{text} {prefix}", Decimal(text).scaleb(_PREFIX_EXP[prefix])
    if mag >= 1e-3 * 0.9999995:
        decimals = max(0, digits - 1 - int(math.floor(math.log10(mag) + 1e-12)))
        text = f"{value:.{decimals}f}"
        return text, Decimal(text)
    exp3 = 3 * int(math.floor(math.log10(mag) / 3.0))
    mantissa = value / 10.0 ** exp3
    decimals = max(0, digits - 1 - int(math.floor(math.log10(abs(mantissa)) + 1e-12)))
    text = f"{mantissa:.{decimals}f}"
    return f"{text}e{exp3}", Decimal(text).scaleb(exp3)


def format_eng(value: float, unit: str = "", digits: int | None = None) -> str:
    """Format a value for tables in the house style.

    dB and degrees with a fixed number of decimals (3 and 2), dimensionless numbers with
    4 significant figures (an SI prefix letter from 1000 up: ``52.36 k``), other units
    with 4 significant figures and an SI prefix. ``digits`` overrides the precision:
    decimals for dB and degrees, significant figures for the rest
    (:func:`tell_apart` chooses it for a table row).

    Examples
    --------
    >>> format_eng(-0.51234, "dB"), format_eng(12.5, "deg"), format_eng(1.5e3, "Hz")
    ('-0.512 dB', '12.50 deg', '1.500 kHz')
    >>> format_eng(52360.0), format_eng(0.98), format_eng(12.0), format_eng(1.2e-4)
    ('52.36 k', '0.9800', '12.00', '120.0e-6')
    >>> format_eng(10.000019e6, "Hz", 9), format_eng(-60.0004, "dB", 4)
    ('10.0000190 MHz', '-60.0004 dB')
    """
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "—"
    p = default_precision(unit) if digits is None else digits
    if unit in _DECIMAL_UNITS:
        return f"{value:.{p}f} {'deg' if unit == '°' else unit}"
    if unit in ("", "1"):
        if math.isinf(value):
            return ("-" if value < 0 else "") + "∞"
        return _plain(value, p)[0]
    return format_si(value, unit, p)


def _shown(value: float, unit: str, p: int) -> Decimal:
    """The exact number ``format_eng(value, unit, p)`` prints."""
    if unit in _DECIMAL_UNITS:
        return Decimal(f"{value:.{p}f}")
    if unit in ("", "1"):
        return _plain(value, p)[1]
    if value == 0:
        return Decimal(0)
    text, prefix = _si_parts(value, p)
    return Decimal(text).scaleb(_PREFIX_EXP[prefix])


def digits_at(value: float, unit: str, place: int | None) -> int | None:
    """The precision (as :func:`format_eng` takes it) that prints ``value`` down to the
    decimal place ``place`` (10**place), never below the house precision of ``unit``
    nor above :data:`PRECISION_CAP` significant figures; None for the house precision.

    Examples
    --------
    >>> digits_at(10.00002e6, "Hz", 1), digits_at(9.99998e6, "Hz", 1), digits_at(-60.0, "dB", -4)
    (7, 6, 4)
    """
    if place is None or value is None or not math.isfinite(value):
        return None
    least = default_precision(unit)
    if unit in _DECIMAL_UNITS:
        whole = int(math.floor(math.log10(abs(value)))) + 1 if abs(value) >= 1 else 1
        return max(least, min(-place, PRECISION_CAP - whole))
    if value == 0:
        return least
    lead = int(math.floor(math.log10(abs(value))))
    return max(least, min(lead - place + 1, PRECISION_CAP))


def tell_apart(values: Iterable[float | None], unit: str = "") -> int | None:
    """The decimal place (10**place) down to which the values of one row must all be
    printed so that each distinct one prints distinctly; None when the house precision
    of ``unit`` already tells them apart (see :func:`digits_at`). None and non-finite
    values are left out; :data:`PRECISION_CAP` significant figures is the most any
    value gets.

    Every value is printed to the same place, so the printed numbers differ by about
    what the values differ by: a ±20 Hz window at 10 MHz reads 9.99998 … 10.00002 MHz.

    Examples
    --------
    >>> tell_apart([9.99998e6, 10.00002e6], "Hz"), tell_apart([38e3, 42e3, 40.1e3], "Hz")
    (1, None)
    >>> tell_apart([9.99998e6, 10.00002e6, 10.0000195e6], "Hz"), tell_apart([-60.0, -60.0004], "dB")
    (-1, -4)
    """
    vals = sorted({float(v) for v in values if v is not None and math.isfinite(v)})
    if len(vals) < 2:
        return None
    house = default_precision(unit)
    if len({_shown(v, unit, house) for v in vals}) == len(vals):
        return None
    gap = min(b - a for a, b in zip(vals, vals[1:]))
    place = int(math.floor(math.log10(gap)))
    while True:
        digits = [digits_at(v, unit, place) for v in vals]
        if len({_shown(v, unit, d) for v, d in zip(vals, digits)}) == len(vals):
            return place
        if all(digits_at(v, unit, place - 1) == d for v, d in zip(vals, digits)):
            return place  # every value at the cap: as far as figures go
        place -= 1


def signed_eng(value: float | None, unit: str = "", digits: int | None = None) -> str:
    """:func:`format_eng` with ``+`` on values ≥ 0 (margins: inside or outside); ``—``
    when missing. A negative zero prints as ``+0``.

    Examples
    --------
    >>> signed_eng(0.42, "dB"), signed_eng(-1.3, "Hz"), signed_eng(-0.0, "dB")
    ('+0.420 dB', '-1.300 Hz', '+0.000 dB')
    """
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "—"
    value = float(value) + 0.0
    return ("+" if value >= 0 else "") + format_eng(value, unit, digits)


class RowText(NamedTuple):
    """One judged row as every report prints it (see :func:`row_text`)."""

    measured: str
    bound: str
    margin: str
    #: where the deciding value occurred, Hz ('' when not recorded)
    at: str
    #: the same frequency with at least 7 significant figures, for detail pages
    at_full: str
    #: the decimal place the row's values were printed to (:func:`tell_apart`; None:
    #: the house precision)
    place: int | None


#: the fewest significant figures a frequency of the ``at`` column is printed with
AT_DIGITS = 5


def row_text(measured: float | None, lower: float | None, upper: float | None,
             margin: float | None, unit: str, at_hz: float | None = None,
             floor: float | None = None) -> RowText:
    """The measured value, the bounds, the margin and the frequency of one judged row.

    The house style for digits: the bounds and the measured value are printed in the
    house precision of the unit when that tells each distinct one of them apart, else
    all down to the one decimal place that does (:func:`tell_apart`), so a bound and a
    value that differ never read alike. A margin in dB or degrees takes the row's
    decimals (so it reads as the difference of the printed numbers); a margin in another
    unit its own 4 significant figures, which never round it to zero. A frequency in the
    ``at`` column takes at least :data:`AT_DIGITS` figures, and as many as the row when
    the row itself is in Hz.

    ``floor`` is set when the measured value lies at or below the numerical floor of the
    solve (a gain there cannot be told from no transmission at all): the value then
    prints as ``below <floor>`` and the margin as the bound it certainly meets
    (``≥ +195.400 dB`` on an upper bound, ``≤ -40.000 dB`` on a lower one).

    Examples
    --------
    >>> r = row_text(10.0000195e6, 9.99998e6, 10.00002e6, 0.5, "Hz", 10.0000195e6)
    >>> r.measured, r.bound, r.margin, r.at
    ('10.0000195 MHz', '9.9999800 MHz … 10.0000200 MHz', '+500.0 mHz', '10.0000195 MHz')
    >>> r = row_text(-321.9, None, -60.0, 261.9, "dB", 5032.9, floor=-255.4)
    >>> r.measured, r.bound, r.margin
    ('below -255.400 dB', '≤ -60.000 dB', '≥ +195.400 dB')
    """
    below = floor is not None
    place = tell_apart([lower, upper, floor if below else measured], unit)

    def fmt(v: float) -> str:
        return format_eng(v, unit, digits_at(v, unit, place))

    lo = None if lower is None else fmt(lower)
    hi = None if upper is None else fmt(upper)
    bound = f"{lo} … {hi}" if lo is not None and hi is not None else \
        f"≥ {lo}" if lo is not None else f"≤ {hi}" if hi is not None else "—"
    # a margin in dB or degrees to the row's decimal place; in other units its own figures
    margin_digits = (None if place is None else max(default_precision(unit), -place)) \
        if unit in _DECIMAL_UNITS else None
    if below:
        shown = f"below {fmt(floor)}"
    else:
        shown = "—" if measured is None else fmt(measured)
    if margin is None or (isinstance(margin, float) and math.isnan(margin)):
        margin_text = "—"
    elif below and measured is not None:
        on_upper = upper is not None and (lower is None or margin == upper - measured)
        if on_upper:
            margin_text = "≥ " + signed_eng(upper - floor, unit, margin_digits)
        else:
            margin_text = "≤ " + signed_eng(floor - lower, unit, margin_digits)
    else:
        margin_text = signed_eng(margin, unit, margin_digits)
    if at_hz is None or not math.isfinite(at_hz):
        at = at_full = ""
    else:
        row = (digits_at(at_hz, unit, place) or 0) if unit == "Hz" else 0
        at = format_si(at_hz, "Hz", max(AT_DIGITS, row))
        at_full = format_si(at_hz, "Hz", max(7, row))
    return RowText(shown, bound, margin_text, at, at_full, place)


def format_span(lo: float, hi: float, unit: str = "Hz") -> str:
    """``38.00–42.00 kHz`` (or ``500.0 Hz–2.000 kHz`` when the prefixes differ), the two
    ends printed with as many figures as tell them apart.

    Examples
    --------
    >>> format_span(38e3, 42e3), format_span(500.0, 2e3)
    ('38.00–42.00 kHz', '500.0 Hz–2.000 kHz')
    >>> format_span(9.99998e6, 10.00002e6)
    '9.99998–10.00002 MHz'
    """
    place = tell_apart([lo, hi], unit)
    a = format_si(lo, unit, digits_at(lo, unit, place) or 4)
    b = format_si(hi, unit, digits_at(hi, unit, place) or 4)
    a_num, _, a_unit = a.partition(" ")
    b_num, _, b_unit = b.partition(" ")
    if a_unit == b_unit:
        return f"{a_num}–{b_num} {b_unit}"
    return f"{a}–{b}"
