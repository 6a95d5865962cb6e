"""Engineering notation in (``4k7``, ``10uF``, ``1meg``) and out (``38.000 kHz``).

The rule for reading a quantity: a decimal number, then at most one scale suffix (f p n
u µ m k meg g t, case-insensitive, or mil), then unit letters, which are ignored
(``10uF``, ``1kOhm``, ``10kHz``; ``1fF`` is one femtofarad). Unit letters must not start
with a second scale suffix: ``1kk``, ``1uu``, ``1megk`` or ``1kmeg`` are refused rather
than read as ``1k``, ``1u``, ``1meg`` and ``1k``, unless the letters are a unit word
that happens to start with a scale letter (:data:`UNIT_WORDS`: ``F``, ``Fd``, ``farad``,
``mho``). The IEC 60062 letter-and-digit codes (``4k7``, ``2n2``, ``4R7``) follow the
same rule for their unit letters.
"""

from __future__ import annotations

import math
from decimal import Decimal, DecimalException

from .source import printable, quoted

__all__ = ["SCALE", "UNIT_WORDS", "RELATIVE_UNITS", "parse_quantity", "parse_value",
           "parse_relative", "relative_unit", "format_eng", "format_si", "UnitError"]

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
    >>> parse_quantity("1kk")
    Traceback (most recent call last):
    ...
    netcheck.units.UnitError: '1kk': 'k' after the scale suffix 'k' is a second scale suffix; ...
    """
    s = text.strip()
    n = _scan_mantissa(s)
    if n == 0:
        raise UnitError(f"{quoted(text)} is not a number")
    mantissa, rest = s[:n], s[n:]
    value = float(mantissa)
    if not rest:
        return _finite(value, text)
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
    netcheck.units.UnitError: tolerance: '20p' is not a relative quantity: write a percentage ('1%'), ...
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
    mag = abs(value)
    scale, prefix = _PREFIXES[-1]
    for s, p in _PREFIXES:
        if mag >= s * 0.9999995:
            scale, prefix = s, p
            break
    scaled = value / scale
    decimals = max(0, digits - 1 - int(math.floor(math.log10(abs(scaled)) + 1e-12)))
    text = f"{scaled:.{decimals}f}"
    sep = " " if (prefix or unit) else ""
    return f"{text}{sep}{prefix}{unit}"


def format_eng(value: float, unit: str = "", digits: int = 4) -> str:
    """Format a value for tables: dB and degrees plain, other units with SI prefixes.

    Examples
    --------
    >>> format_eng(-0.51234, "dB"), format_eng(12.5, "deg"), format_eng(1.5e3, "Hz")
    ('-0.512 dB', '12.50 deg', '1.500 kHz')
    """
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "—"
    if unit == "dB":
        return f"{value:.3f} dB"
    if unit in ("deg", "°"):
        return f"{value:.2f} deg"
    if unit in ("", "1"):
        if value != 0 and (abs(value) >= 1e5 or abs(value) < 1e-3):
            return f"{value:.{digits - 1}e}"
        return f"{value:.{digits}g}"
    return format_si(value, unit, digits)
