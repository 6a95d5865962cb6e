"""IEC 60063 preferred-number series (E6 … E192) and the netlist-154 off-series part check."""

from __future__ import annotations

import bisect
import math
from types import MappingProxyType
from typing import Mapping

from ..exceptions import Diagnostic
from ..netlist.units import format_si

__all__ = [
    "E6", "E12", "E24", "E48", "E96", "E192", "SERIES", "TOLERANCE_STEPS",
    "series_for_tolerance", "nearest_preferred", "is_preferred", "check_preferred",
]

# The tables below are written out as data, reproduced from memory of IEC 60063:2015
# ("Preferred number series for resistors and capacitors"), not generated. E6/E12/E24
# are the traditional two-figure values, which depart from round(10**(i/N), 1) at
# 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7 and 8.2; E48/E96/E192 are three-figure values
# equal to round(10**(i/N), 2) except E192's 9.20 (the formula gives 9.19).
# tests/analyses/test_eseries.py checks both statements.

#: E6 mantissas (±20 % parts), one decade in [1, 10).
E6: tuple[float, ...] = (1.0, 1.5, 2.2, 3.3, 4.7, 6.8)

#: E12 mantissas (±10 % parts).
E12: tuple[float, ...] = (1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2)

#: E24 mantissas (±5 % parts).
E24: tuple[float, ...] = (
    1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
    3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1,
)

#: E48 mantissas (±2 % parts).
E48: tuple[float, ...] = (
    1.00, 1.05, 1.10, 1.15, 1.21, 1.27, 1.33, 1.40, 1.47, 1.54, 1.62, 1.69,
    1.78, 1.87, 1.96, 2.05, 2.15, 2.26, 2.37, 2.49, 2.61, 2.74, 2.87, 3.01,
    3.16, 3.32, 3.48, 3.65, 3.83, 4.02, 4.22, 4.42, 4.64, 4.87, 5.11, 5.36,
    5.62, 5.90, 6.19, 6.49, 6.81, 7.15, 7.50, 7.87, 8.25, 8.66, 9.09, 9.53,
)

#: E96 mantissas (±1 % parts).
E96: tuple[float, ...] = (
    1.00, 1.02, 1.05, 1.07, 1.10, 1.13, 1.15, 1.18, 1.21, 1.24, 1.27, 1.30,
    1.33, 1.37, 1.40, 1.43, 1.47, 1.50, 1.54, 1.58, 1.62, 1.65, 1.69, 1.74,
    1.78, 1.82, 1.87, 1.91, 1.96, 2.00, 2.05, 2.10, 2.15, 2.21, 2.26, 2.32,
    2.37, 2.43, 2.49, 2.55, 2.61, 2.67, 2.74, 2.80, 2.87, 2.94, 3.01, 3.09,
    3.16, 3.24, 3.32, 3.40, 3.48, 3.57, 3.65, 3.74, 3.83, 3.92, 4.02, 4.12,
    4.22, 4.32, 4.42, 4.53, 4.64, 4.75, 4.87, 4.99, 5.11, 5.23, 5.36, 5.49,
    5.62, 5.76, 5.90, 6.04, 6.19, 6.34, 6.49, 6.65, 6.81, 6.98, 7.15, 7.32,
    7.50, 7.68, 7.87, 8.06, 8.25, 8.45, 8.66, 8.87, 9.09, 9.31, 9.53, 9.76,
)

#: E192 mantissas (±0.5 % and tighter parts).
E192: tuple[float, ...] = (
    1.00, 1.01, 1.02, 1.04, 1.05, 1.06, 1.07, 1.09, 1.10, 1.11, 1.13, 1.14,
    1.15, 1.17, 1.18, 1.20, 1.21, 1.23, 1.24, 1.26, 1.27, 1.29, 1.30, 1.32,
    1.33, 1.35, 1.37, 1.38, 1.40, 1.42, 1.43, 1.45, 1.47, 1.49, 1.50, 1.52,
    1.54, 1.56, 1.58, 1.60, 1.62, 1.64, 1.65, 1.67, 1.69, 1.72, 1.74, 1.76,
    1.78, 1.80, 1.82, 1.84, 1.87, 1.89, 1.91, 1.93, 1.96, 1.98, 2.00, 2.03,
    2.05, 2.08, 2.10, 2.13, 2.15, 2.18, 2.21, 2.23, 2.26, 2.29, 2.32, 2.34,
    2.37, 2.40, 2.43, 2.46, 2.49, 2.52, 2.55, 2.58, 2.61, 2.64, 2.67, 2.71,
    2.74, 2.77, 2.80, 2.84, 2.87, 2.91, 2.94, 2.98, 3.01, 3.05, 3.09, 3.12,
    3.16, 3.20, 3.24, 3.28, 3.32, 3.36, 3.40, 3.44, 3.48, 3.52, 3.57, 3.61,
    3.65, 3.70, 3.74, 3.79, 3.83, 3.88, 3.92, 3.97, 4.02, 4.07, 4.12, 4.17,
    4.22, 4.27, 4.32, 4.37, 4.42, 4.48, 4.53, 4.59, 4.64, 4.70, 4.75, 4.81,
    4.87, 4.93, 4.99, 5.05, 5.11, 5.17, 5.23, 5.30, 5.36, 5.42, 5.49, 5.56,
    5.62, 5.69, 5.76, 5.83, 5.90, 5.97, 6.04, 6.12, 6.19, 6.26, 6.34, 6.42,
    6.49, 6.57, 6.65, 6.73, 6.81, 6.90, 6.98, 7.06, 7.15, 7.23, 7.32, 7.41,
    7.50, 7.59, 7.68, 7.77, 7.87, 7.96, 8.06, 8.16, 8.25, 8.35, 8.45, 8.56,
    8.66, 8.76, 8.87, 8.98, 9.09, 9.20, 9.31, 9.42, 9.53, 9.65, 9.76, 9.88,
)

#: Series name → mantissas, loosest first (read-only).
SERIES: Mapping[str, tuple[float, ...]] = MappingProxyType({
    "E6": E6, "E12": E12, "E24": E24, "E48": E48, "E96": E96, "E192": E192,
})

#: (tolerance fraction, series) from loosest to tightest: the pairing IEC 60063 gives.
TOLERANCE_STEPS: tuple[tuple[float, str], ...] = (
    (0.20, "E6"), (0.10, "E12"), (0.05, "E24"), (0.02, "E48"), (0.01, "E96"), (0.005, "E192"),
)

#: Relative slack on tolerance steps, so a computed 1 - 0.95 still counts as 5 %.
_STEP_SLACK = 1e-9
#: Relative distance below which a value *is* a table value (float noise only).
_EXACT_REL = 1e-9
#: Significant figures tried when printing a value as short as it allows.
_MAX_DIGITS = 6
#: Part letter → unit of its value.
_UNITS: Mapping[str, str] = MappingProxyType({"R": "Ω", "L": "H", "C": "F"})


def series_for_tolerance(tol: float) -> str | None:
    """The preferred-number series a part tolerance implies.

    The steps are 20 % → E6, 10 % → E12, 5 % → E24, 2 % → E48, 1 % → E96 and
    0.5 % → E192. A tolerance between two steps takes the series of the next
    *looser* step (3 % → E24, 7 % → E12): such a part is at least as good as
    that step, so that series' values are the ones it is sure to come in.
    Everything at 0.5 % or tighter (0.25 %, 0.1 %, …) maps to E192, the finest
    series there is. Steps are compared with a relative slack of 1e-9 so
    that computed tolerances (``1 - 0.95``) land on their step.

    Parameters
    ----------
    tol : float
        Tolerance as a fraction (0.05 = ±5 %), positive and finite.

    Returns
    -------
    str or None
        ``"E6"`` … ``"E192"``, or None above 20 % (no series is implied).

    Raises
    ------
    ValueError
        If ``tol`` is not a positive finite number.

    References
    ----------
    .. [1] IEC 60063:2015, *Preferred number series for resistors and
       capacitors*, International Electrotechnical Commission (pairing of each
       E series with its tolerance).

    Examples
    --------
    >>> series_for_tolerance(0.05), series_for_tolerance(0.03), series_for_tolerance(0.001)
    ('E24', 'E24', 'E192')
    >>> series_for_tolerance(0.3) is None
    True
    """
    tol = _positive(tol, "tol")
    for step, name in reversed(TOLERANCE_STEPS):
        if tol <= step * (1.0 + _STEP_SLACK):
            return name
    return None


def nearest_preferred(value: float, series: str) -> tuple[float, float]:
    """The preferred values just below and just above ``value``.

    ``value`` is split into a mantissa in [1, 10) and a decade; the mantissa is
    placed in the series table (with 10 standing for the next decade's 1.0),
    and the neighbours are scaled back to the decade. Results are the floats
    nearest the decimal values (``9.1e3`` is exactly ``9100.0``).

    Parameters
    ----------
    value : float
        A positive part value in base units (Ω, F, H).
    series : str
        ``"E6"``, ``"E12"``, ``"E24"``, ``"E48"``, ``"E96"`` or ``"E192"``.

    Returns
    -------
    below, above : float
        Neighbouring preferred values, ``below < value < above``. If ``value``
        is a preferred value (to within 1e-9 relative, which absorbs float
        representation noise), both are ``value`` itself.

    Raises
    ------
    ValueError
        If ``series`` is unknown or ``value`` is not positive and finite.

    Examples
    --------
    >>> nearest_preferred(9.9e3, "E24")
    (9100.0, 10000.0)
    >>> nearest_preferred(4.7e-9, "E12")
    (4.7e-09, 4.7e-09)
    """
    table = _table(series)
    value = _positive(value, "value")
    mantissa, exponent = _decade(value)
    k = bisect.bisect_left(table, mantissa)
    # Candidates on either side of the insertion point; 10.0 is the next decade's 1.0.
    below = table[k - 1] if k > 0 else table[-1] / 10.0
    above = table[k] if k < len(table) else 10.0
    for preferred in (below, above):
        if math.isclose(mantissa, preferred, rel_tol=_EXACT_REL):
            return value, value
    return _scaled(below, exponent), _scaled(above, exponent)


def is_preferred(value: float, series: str, rel: float = 1e-3) -> bool:
    """True if ``value`` is within ``rel`` (relative) of a value of ``series``.

    Parameters
    ----------
    value : float
        A positive part value in base units (Ω, F, H).
    series : str
        ``"E6"`` … ``"E192"``.
    rel : float, optional
        Relative tolerance, non-negative (default 1e-3: loose enough for values
        written as ``4.7n`` or computed as ``0.1 * 47e-9``, tight enough that
        neighbouring E192 values, about 1.2 % apart, stay distinct). Float
        noise (1e-9 relative) is forgiven even with ``rel=0``.

    Returns
    -------
    bool

    Raises
    ------
    ValueError
        As :func:`nearest_preferred`, or if ``rel`` is negative or not finite.

    Examples
    --------
    >>> is_preferred(4.7e-9, "E24"), is_preferred(4.7e-9, "E96"), is_preferred(4.8e-9, "E24")
    (True, False, False)
    """
    rel = float(rel)
    if not math.isfinite(rel) or rel < 0.0:
        raise ValueError(f"rel: expected a non-negative finite number, got {rel!r}")
    below, above = nearest_preferred(value, series)
    return (math.isclose(value, below, rel_tol=rel)
            or math.isclose(value, above, rel_tol=rel))


def check_preferred(parts: list[tuple[str, str, float, float, object]]) -> list[Diagnostic]:
    """netlist-154 warnings for parts whose value is off the series their tolerance implies.

    Each part's series comes from :func:`series_for_tolerance`; parts looser than
    20 % imply no series and are not checked. A value counts as on-series by
    :func:`is_preferred` with its default ``rel``.

    Parameters
    ----------
    parts : list of (name, letter, value, tolerance, span)
        ``name`` as it should be reported (``"C3"``), ``letter`` ``R``, ``L`` or
        ``C`` (any case), ``value`` in Ω, H or F, ``tolerance`` as a fraction
        (0.05 = ±5 %), ``span`` the part's source position or None.

    Returns
    -------
    list of Diagnostic
        One ``netlist-154`` warning per off-series part, in input order, carrying the
        part's span.

    Raises
    ------
    ValueError
        If a letter is not R, L or C, or a value or tolerance is not positive
        and finite; the message names the part.

    Examples
    --------
    >>> [d.message for d in check_preferred([("C3", "C", 4.8e-9, 0.05, None)])]
    ['C3 = 4.8 nF is not an E24 value (5 % parts); nearest E24 values: 4.7 nF, 5.1 nF']
    >>> check_preferred([("R1", "R", 10e3, 0.01, None)])
    []
    """
    found: list[Diagnostic] = []
    for name, letter, value, tol, span in parts:
        unit = _UNITS.get(str(letter).upper())
        if unit is None:
            raise ValueError(f"parts: {name}: letter must be R, L or C, got {letter!r}")
        try:
            series = series_for_tolerance(tol)
            if series is None or is_preferred(value, series):
                continue
            below, above = nearest_preferred(value, series)
        except ValueError as err:
            raise ValueError(f"parts: {name}: {err}") from err
        message = (f"{name} = {_short(value, unit)} is not an {series} value "
                   f"({_percent(tol)} % parts); nearest {series} values: "
                   f"{_short(below, unit)}, {_short(above, unit)}")
        found.append(Diagnostic("netlist-154", message, span))
    return found


def _table(series: str) -> tuple[float, ...]:
    """The mantissas of ``series``; ValueError naming the known series otherwise."""
    try:
        return SERIES[series]
    except (KeyError, TypeError):
        raise ValueError(f"series: expected one of {', '.join(SERIES)}, "
                         f"got {series!r}") from None


def _positive(x: float, what: str) -> float:
    """``x`` as a float, checked positive and finite (ValueError naming ``what``)."""
    if isinstance(x, bool):
        raise ValueError(f"{what}: expected a number, got {x!r}")
    try:
        x = float(x)
    except (TypeError, ValueError):
        raise ValueError(f"{what}: expected a number, got {x!r}") from None
    if not math.isfinite(x) or x <= 0.0:
        raise ValueError(f"{what}: expected a positive finite number, got {x!r}")
    return x


def _decade(value: float) -> tuple[float, int]:
    """``(mantissa, exponent)`` with ``value = mantissa × 10**exponent``, mantissa in [1, 10)."""
    exponent = math.floor(math.log10(value))
    mantissa = value / 10.0 ** exponent
    # log10 of an exact power of ten can land a hair low (log10(1000) < 3 on some
    # platforms), and the division adds its own rounding: renormalise.
    if mantissa >= 10.0:
        mantissa, exponent = mantissa / 10.0, exponent + 1
    elif mantissa < 1.0:
        mantissa, exponent = mantissa * 10.0, exponent - 1
    return mantissa, exponent


def _scaled(mantissa: float, exponent: int) -> float:
    """The float nearest the decimal ``mantissa`` × 10**exponent (one rounding)."""
    return float(f"{mantissa!r}e{exponent}")


def _short(value: float, unit: str) -> str:
    """``value`` with an SI prefix and no more figures than it needs (``4.8 nF``)."""
    for digits in range(1, _MAX_DIGITS + 1):
        if math.isclose(float(f"{value:.{digits - 1}e}"), value, rel_tol=_EXACT_REL):
            break
    return format_si(value, unit, digits)


def _percent(tol: float) -> str:
    """A tolerance fraction as a percentage without float noise (0.05 → ``5``)."""
    return f"{float(tol) * 100.0:.6g}"
