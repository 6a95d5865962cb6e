"""Reading spec tables: :class:`SpecReader` (typed values with key paths in every
error) and the :class:`Sweep` they are judged over."""

from __future__ import annotations

import difflib
import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..exceptions import TEXT_MAX, SpecError
from ..netlist.source import printable
from ..netlist.units import UnitError, parse_relative, parse_value, relative_unit
from .guard import check_text, whole_number

__all__ = ["SpecReader", "Sweep", "SWEEP_KEYS", "shown_value"]

SWEEP_KEYS = {"start": "Hz", "stop": "Hz", "points_per_decade": "count"}


@dataclass(frozen=True, slots=True)
class Sweep:
    """Log-spaced sweep: ``points_per_decade`` points per decade, both ends included."""

    start_hz: float
    stop_hz: float
    points_per_decade: int = 100

    def grid(self) -> np.ndarray:
        """The sweep frequencies, Hz (read-only)."""
        decades = math.log10(self.stop_hz / self.start_hz)
        n = max(2, int(round(decades * self.points_per_decade)) + 1)
        f = np.logspace(math.log10(self.start_hz), math.log10(self.stop_hz), n)
        f[0], f[-1] = self.start_hz, self.stop_hz
        f.flags.writeable = False
        return f



class SpecReader:
    """Typed access to one TOML table, with key paths in every error."""

    def __init__(self, table: dict, where: str, path: str, known: dict[str, str]) -> None:
        self.table, self.where, self.path, self.known = table, where, path, known
        if not isinstance(table, dict):
            self.fail("", f"expected a table, got {type(table).__name__}")
        for key in table:
            if key not in known:
                close = difflib.get_close_matches(key, list(known), n=1, cutoff=0.6)
                hint = f"; did you mean {close[0]!r}?" if close else \
                    f"; known keys: {', '.join(sorted(known))}"
                self.fail(key, f"unknown key {key!r}{hint}", code="spec-201")

    def key_path(self, key: str) -> str:
        """``limits[3].band`` style path of ``key``."""
        if not key:
            return self.where or "(top level)"
        return f"{self.where}.{key}" if self.where else key

    def fail(self, key: str, message: str, code: str = "spec-202") -> None:
        """Raise a SpecError located at ``key``.

        The message is bounded (:data:`netcheck.exceptions.TEXT_MAX` characters, a cut
        marked), since it may quote a value from the spec and travels whole into the
        JSON, JUnit and SARIF outputs.
        """
        where = self.key_path(key)
        raise SpecError(printable(f"{where}: {message}", TEXT_MAX), code=code,
                        path=self.path, where=where)

    def has(self, key: str) -> bool:
        """True if ``key`` is present."""
        return key in self.table

    def raw(self, key: str, default: Any = None) -> Any:
        """The value as TOML gave it."""
        return self.table.get(key, default)

    def text(self, key: str, default: str | None = None, required: bool = False) -> str | None:
        """A non-empty string value, within its length budget (spec-205).

        :data:`MAX_TEXT_CHARS` characters, :data:`MAX_PATH_CHARS` for a path
        (:func:`netcheck.spec.guard.check_text`); a whole spec has every text checked
        as it is read (:func:`read_toml`), this covers tables built otherwise.
        """
        if key not in self.table:
            if required:
                self.fail(key, "missing (required)")
            return default
        value = self.table[key]
        if not isinstance(value, str) or not value.strip():
            self.fail(key, f"expected a non-empty string, got {value!r}")
        check_text(value, self.key_path(key), self.path)
        return value

    def flag(self, key: str, default: bool = False) -> bool:
        """A boolean value."""
        value = self.table.get(key, default)
        if not isinstance(value, bool):
            self.fail(key, f"expected true or false, got {value!r}")
        return value

    def number(self, key: str, default: float | None = None, required: bool = False,
               positive: bool = False, value: Any = None, label: str | None = None) -> float | None:
        """A number or engineering-notation string (``"38k"``)."""
        if value is None:
            if key not in self.table:
                if required:
                    self.fail(key, "missing (required)")
                return default
            value = self.table[key]
        what = label or key
        if isinstance(value, str):
            try:
                relative = relative_unit(value)
            except UnitError:
                relative = None
            if relative is not None:
                self.fail(key, f"{value!r} is relative; {what} takes an absolute value "
                               "(percent, ppm and ppb apply only where a tolerance is asked "
                               "for)")
        try:
            out = parse_value(value, what)
        except UnitError as err:
            msg = str(err)
            self.fail(key, msg[len(what) + 2:] if msg.startswith(f"{what}: ") else msg)
        if positive and out <= 0:
            self.fail(key, f"must be > 0, got {value!r}")
        return out

    def integer(self, key: str, default: int, minimum: int = 1) -> int:
        """A whole number ≥ ``minimum``: a TOML integer, or a whole-valued float (``1e4``).

        A float such as ``1e9`` is the whole number it writes, so it meets the budget
        of its key (spec-205, with the number and the budget) like ``1000000000`` does,
        not a type error; ``7.5`` is refused as not whole.
        """
        value = self.table.get(key, default)
        whole = whole_number(value)
        if whole is None or whole < minimum:
            self.fail(key, f"expected a whole number >= {minimum}, got {value!r}")
        return whole

    def percent_or_value(self, key: str, reference: float, floor: float = 0.0,
                         unit: str = "") -> float | None:
        """A tolerance relative to ``reference`` (``"1%"``, ``"20ppm"``, ``"5ppb"``) or an
        absolute value (``"20"``, ``"1.5k"``); returns the absolute.

        Percent, ppm and ppb are units of their own, never engineering prefixes: before
        them, ``"20ppm"`` was read as 20 pico. An absolute value below ``floor`` (such
        as ``"20p"`` for a frequency, 2e-11) is refused as the likely typo it is.
        """
        if key not in self.table:
            return None
        value = self.table[key]
        if isinstance(value, str):
            try:
                found = relative_unit(value)
            except UnitError as err:
                self.fail(key, str(err))
            if found is not None:
                number, divisor = found
                if number <= 0:
                    self.fail(key, f"must be > 0, got {value!r}")
                return abs(reference) * number / divisor
        out = self.number(key, positive=True)
        if out is not None and out < floor:
            self.fail(key, f"{value!r} is {out:g} {unit}, below the smallest meaningful value "
                           f"({floor:g} {unit}); for a relative tolerance write a unit: "
                           "'1%', '20ppm' or '5ppb'")
        return out

    def relative(self, key: str, value: Any = None) -> float | None:
        """A relative quantity as a fraction: ``0.01``, ``"1%"``, ``"50ppm"``, ``"10ppb"``
        (an engineering suffix such as ``"5p"`` is refused: it has no meaning here)."""
        if value is None:
            if key not in self.table:
                return None
            value = self.table[key]
        try:
            return parse_relative(value, key)
        except UnitError as err:
            msg = str(err)
            self.fail(key, msg[len(key) + 2:] if msg.startswith(f"{key}: ") else msg)

    def bounds(self, key: str, positive: bool = False, required: bool = False,
               ends: tuple[str, str] = ("min", "max")
               ) -> tuple[float | None, float | None] | None:
        """``[min, max]`` or ``{min = .., max = ..}`` (either side may be open in table form)."""
        if key not in self.table:
            if required:
                self.fail(key, "missing (required)")
            return None
        value = self.table[key]
        if isinstance(value, list):
            if len(value) != 2:
                self.fail(key, f"expected [min, max], got {len(value)} values")
            lo_raw, hi_raw = value
        elif isinstance(value, dict):
            extra = set(value) - {"min", "max"}
            if extra or not value:
                self.fail(key, "expected a table with min and/or max")
            lo_raw, hi_raw = value.get("min"), value.get("max")
        else:
            self.fail(key, f"expected [min, max] or {{min = ..., max = ...}}, got {value!r}")
        lo = None if lo_raw is None else self.number(key, value=lo_raw, label=ends[0])
        hi = None if hi_raw is None else self.number(key, value=hi_raw, label=ends[1])
        if positive and any(v is not None and v <= 0 for v in (lo, hi)):
            self.fail(key, "values must be > 0")
        if lo is not None and hi is not None and lo > hi:
            self.fail(key, f"{ends[0]} {shown_value(lo_raw)} is above {ends[1]} {shown_value(hi_raw)}")
        return lo, hi

    def band(self, key: str, sweep: Sweep, required: bool = True) -> tuple[float, float] | None:
        """A frequency band ``[lo, hi]`` that must lie inside the sweep."""
        b = self.bounds(key, positive=True, required=required, ends=("start", "stop"))
        if b is None:
            return None
        lo, hi = b
        if lo is None or hi is None:
            self.fail(key, "a band needs both ends")
        if lo == hi:
            self.fail(key, "band is empty (start equals stop)")
        tol = 1e-9
        if lo < sweep.start_hz * (1 - tol) or hi > sweep.stop_hz * (1 + tol):
            self.fail(key, f"band {shown_value(lo)}–{shown_value(hi)} Hz is outside the sweep "
                           f"{shown_value(sweep.start_hz)}–{shown_value(sweep.stop_hz)} Hz")
        return max(lo, sweep.start_hz), min(hi, sweep.stop_hz)

    def choice(self, key: str, options: tuple[str, ...], default: str) -> str:
        """One of ``options``."""
        value = self.table.get(key, default)
        if value not in options:
            self.fail(key, f"expected one of {', '.join(repr(o) for o in options)}, got {value!r}")
        return value


def shown_value(v: Any) -> str:
    """A value as the user would write it: strings as given, numbers as ``50k``, ``2.5``."""
    if isinstance(v, str):
        return v
    from ..netlist.units import format_si
    num, _, prefix = format_si(float(v), "", 6).partition(" ")
    if "." in num:
        num = num.rstrip("0").rstrip(".")
    return num + ("meg" if prefix == "M" else "u" if prefix == "µ" else prefix)
