"""Spec files (TOML, read with tomllib) → a validated, frozen Spec."""

from __future__ import annotations

import dataclasses
import difflib
import math
import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from ._spec_guard import (MAX_FREQUENCY_HZ, MAX_LIMITS, MAX_NESTING, MAX_PATH_CHARS,
                          MAX_SWEEP_POINTS, MAX_TEXT_CHARS, MIN_FREQUENCY_HZ,
                          MIN_SWEEP_POINTS, check_count, check_text, check_text_lengths,
                          confine, design_root, inside_root, key_path_at, long_string,
                          nesting_depth, resolve_design_root, table_depth, text_budget,
                          validate_sweep, whole_number)
from .exceptions import TEXT_MAX, SpecError
from .source import UNUSABLE_CODE, SourceFile, printable, read_text
from .units import UnitError, parse_relative, parse_value, relative_unit

__all__ = ["Sweep", "Spec", "load_spec", "parse_spec", "read_toml", "validate_sweep",
           "design_root", "inside_root", "SpecReader", "TOP_KEYS", "locate",
           "MAX_SWEEP_POINTS", "MIN_SWEEP_POINTS", "MAX_FREQUENCY_HZ", "MIN_FREQUENCY_HZ",
           "MAX_NESTING", "MAX_LIMITS", "MAX_TEXT_CHARS", "MAX_PATH_CHARS", "part_models"]


#: Top-level keys of a spec and what they hold (for docs, did-you-mean and the loader).
TOP_KEYS: dict[str, str] = {
    "title": "report title (default: the netlist's title line)",
    "netlist": "netlist path, relative to the spec file",
    "source": "independent source giving the stimulus",
    "output": "output node, or [positive, negative] for a differential output",
    "root": "design root that .include may not leave (relative to the spec file)",
    "allow_negative": "accept negative R, L, C values",
    "sweep": "sweep table: start, stop, points_per_decade",
    "limits": "array of limit tables",
    "tolerances": "part tolerances",
    "analysis": "nominal / worst case / Monte Carlo settings",
    "stress": "array of part-stress limits",
    "variants": "variant family",
    "part_models": "subcircuits that each model one physical part (names, globs allowed), "
                   "e.g. [\"QX10\"]: no E-series lint inside, stress judged at the ports",
}
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


@dataclass(frozen=True, slots=True)
class Spec:
    """A validated spec file."""

    path: str
    title: str
    netlist: str
    source: str
    output: tuple[str, str]
    sweep: Sweep
    limits: tuple[Any, ...]
    root: str | None = None
    allow_negative: bool = False
    text: str = field(default="", repr=False)
    tables: tuple[tuple[str, Any], ...] = field(default=(), repr=False)
    design_root: str | None = None
    #: subcircuit names (fnmatch globs, case-insensitive) that each model one physical part
    part_models: tuple[str, ...] = ()

    def table(self, key: str) -> Any:
        """A raw top-level table handled by another module (tolerances, stress...)."""
        return dict(self.tables).get(key)


_LONE_CR = re.compile(r"\r(?!\n)")


def _lone_cr(text: str, path: str) -> None:
    """Refuse a carriage return that is not part of a CR LF pair (NC117).

    TOML ends lines with LF or CR LF only, so a spec saved with classic Mac OS line
    ends (a lone CR) would otherwise get the TOML reader's bare "invalid statement".
    """
    found = _LONE_CR.search(text)
    if found is None:
        return
    pos = found.start()
    line = text.count("\n", 0, pos) + 1
    column = pos - (text.rfind("\n", 0, pos) + 1) + 1
    raise SpecError("the spec has lone carriage-return (CR) line ends (classic Mac OS); "
                    "TOML reads LF or CR LF line ends only: save the file with LF or CR LF "
                    "line ends", SourceFile(path, text).span(line, column),
                    code=UNUSABLE_CODE, path=path)


def _decode(text: str, path: str) -> dict:
    """The TOML document of ``text``, its budgets checked.

    Lone-CR line ends are refused (NC117), and nesting and string literals over their
    budgets (NC205), before the TOML reader runs; text values and keys over their length
    budget after it (NC205, located at the key:
    :func:`netcheck._spec_guard.check_text_lengths`).
    """
    _lone_cr(text, path)
    depth, over = nesting_depth(text)
    if over >= 0:
        line = text.count("\n", 0, over) + 1
        column = over - (text.rfind("\n", 0, over) + 1) + 1
        raise SpecError(f"arrays and inline tables nest {depth} deep, over the nesting "
                        f"budget of {MAX_NESTING}", SourceFile(path, text).span(line, column),
                        code="NC205", path=path)
    at, length, kind = long_string(text)
    if at >= 0:
        where = key_path_at(text, at)
        budget, what = text_budget(where) if kind == "string" else \
            (MAX_TEXT_CHARS, "one key of a spec")
        line = text.count("\n", 0, at) + 1
        column = at - (text.rfind("\n", 0, at) + 1) + 1
        raise SpecError(f"{where + ': ' if where else ''}a {kind} of {length:,} characters as "
                        f"written, over the budget of {budget:,} characters for {what}; "
                        "shorten it", SourceFile(path, text).span(line, column), code="NC205",
                        path=path, where=where or None)
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        raise _toml_error(path, text, err) from None
    except RecursionError:
        raise SpecError(f"the TOML nests too deeply to read (nesting budget {MAX_NESTING})",
                        code="NC205", path=path) from None
    depth = table_depth(doc)
    if depth > MAX_NESTING:
        raise SpecError(f"tables nest more than {MAX_NESTING} deep (dotted keys or table "
                        f"headers), over the nesting budget of {MAX_NESTING}", code="NC205",
                        path=path)
    try:
        check_text_lengths(doc, path)
    except SpecError as err:
        raise locate(err, text) from None
    return doc


def read_toml(path: str | Path) -> dict:
    """The decoded TOML document of the file at ``path`` (a spec, or a candidate spec).

    Read through :func:`netcheck.source.read_text` (a regular file within the size
    budget, UTF-8); lone-CR line ends and nesting deeper than :data:`MAX_NESTING` are
    refused before the TOML reader runs, text longer than its budget
    (:data:`MAX_TEXT_CHARS`, :data:`MAX_PATH_CHARS` for paths) after it.

    Raises
    ------
    SpecError
        Naming the file: unreadable or unusable (NC117, lone-CR line ends among them),
        not TOML (with line and column), nested too deeply or text too long (NC205).
    """
    return _decode(read_text(path, SpecError, "spec"), str(path))


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
                self.fail(key, f"unknown key {key!r}{hint}", code="NC201")

    def key_path(self, key: str) -> str:
        """``limits[3].band`` style path of ``key``."""
        if not key:
            return self.where or "(top level)"
        return f"{self.where}.{key}" if self.where else key

    def fail(self, key: str, message: str, code: str = "NC202") -> None:
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
        """A non-empty string value, within its length budget (NC205).

        :data:`MAX_TEXT_CHARS` characters, :data:`MAX_PATH_CHARS` for a path
        (:func:`netcheck._spec_guard.check_text`); a whole spec has every text checked
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
        of its key (NC205, with the number and the budget) like ``1000000000`` does,
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
            self.fail(key, f"{ends[0]} {_show(lo_raw)} is above {ends[1]} {_show(hi_raw)}")
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
            self.fail(key, f"band {_show(lo)}–{_show(hi)} Hz is outside the sweep "
                           f"{_show(sweep.start_hz)}–{_show(sweep.stop_hz)} Hz")
        return max(lo, sweep.start_hz), min(hi, sweep.stop_hz)

    def choice(self, key: str, options: tuple[str, ...], default: str) -> str:
        """One of ``options``."""
        value = self.table.get(key, default)
        if value not in options:
            self.fail(key, f"expected one of {', '.join(repr(o) for o in options)}, got {value!r}")
        return value


def _show(v: Any) -> str:
    """A value as the user would write it: strings as given, numbers as ``50k``, ``2.5``."""
    if isinstance(v, str):
        return v
    from .units import format_si
    num, _, prefix = format_si(float(v), "", 6).partition(" ")
    if "." in num:
        num = num.rstrip("0").rstrip(".")
    return num + ("meg" if prefix == "M" else "u" if prefix == "µ" else prefix)


def _key_position(text: str, where: str) -> tuple[int, int, int] | None:
    """(line, column, width) of the key at ``where`` (``limits[3].band``, ``sweep.start``...).

    ``where`` is a key path as :meth:`SpecReader.key_path` builds it; ``name[i]`` is the
    i-th ``[[name]]`` table.

    A key that is not written (a missing one) points at the header of its table, and
    a table-level path (``limits[3]``) at the table header; a missing top-level key at
    the first line. None when the path cannot be found in ``text``.
    """
    nested = _nested_key_position(text, where)
    if nested is not None:
        return nested
    head, _, key = where.partition(".")
    array, bracket, number = head.partition("[")
    if bracket and number.endswith("]") and number[:-1].isdigit():
        table: tuple[str, int] = (array, int(number[:-1]))   # limits[3], stress[0]
    elif key and head in TOP_KEYS:
        table = (head, 0)
    elif where in ("", "(top level)"):
        return (1, 1, 1)
    else:
        table, key = ("", 0), head
    section: tuple[str, int] = ("", 0)
    arrays: dict[str, int] = {}
    header = None
    for number, line in enumerate(text.splitlines(), 1):
        stripped = line.strip()
        column = len(line) - len(line.lstrip()) + 1
        if stripped.startswith("["):
            double = stripped.startswith("[[")
            name = stripped.strip("[").split("]")[0].strip()
            if double:
                arrays[name] = arrays.get(name, -1) + 1
            section = (name, arrays[name] if double else 0)
            if section == table:
                header = (number, column, len(stripped.split("]")[0]) + (2 if double else 1))
            continue
        name = stripped.split("=")[0].strip().strip("\"'")
        if section == table and "=" in stripped and name == key:
            return (number, column, len(key))
        if section == ("", 0) and table != ("", 0) and name == table[0] and "=" in stripped:
            return (number, column, len(name))   # an inline table or array at the top
    if header is not None:
        return header
    return (1, 1, 1) if table == ("", 0) else None


def _nested_key_position(text: str, where: str) -> tuple[int, int, int] | None:
    """Position of a key two or more levels down (``tolerances.parts.R1``), or None.

    Tries the deepest table header first (``[tolerances.parts]`` holding ``R1 = ``),
    then the line of each enclosing key (``parts = { R1 = ... }`` in ``[tolerances]``,
    or a dotted ``parts.R1 = `` there). Array paths (``limits[2].x``) are left to the
    general search.
    """
    segments = where.split(".")
    if len(segments) < 3 or "[" in where:
        return None
    for cut in range(len(segments) - 1, 0, -1):
        section, key = ".".join(segments[:cut]), segments[cut]
        dotted = ".".join(segments[cut:])
        current = ""
        for number, line in enumerate(text.splitlines(), 1):
            stripped = line.strip()
            if stripped.startswith("["):
                header = stripped.strip("[").split("]")[0]
                current = ".".join(part.strip().strip("\"'") for part in header.split("."))
                continue
            if current != section or "=" not in stripped:
                continue
            name = stripped.split("=")[0].strip()
            if name.strip("\"'") in (key, dotted) or name.replace('"', "").replace(
                    "'", "") == dotted:
                column = len(line) - len(line.lstrip()) + 1
                return (number, column, len(name))
    return None


def locate(err: SpecError, text: str) -> SpecError:
    """``err`` with a span at the key its ``where`` names (unchanged if it has a span).

    The message keeps its key path, so the span replaces the path-style location and
    the error reads ``spec.toml:12:1: error NC202: limits[3].band: ...``.
    """
    if err.span is not None or not err.where or not err.path:
        return err
    pos = _key_position(text, err.where)
    if pos is None:
        return err
    line, column, width = pos
    span = SourceFile(err.path, text).span(line, column, column + width)
    return SpecError(err.message, span, code=err.code, where=err.where, path=err.path)


def _toml_error(path: str, text: str, err: tomllib.TOMLDecodeError) -> SpecError:
    msg = str(err)
    line = col = None
    head, sep, tail = msg.rpartition("(at line ")
    if sep:
        nums = tail.rstrip(")").split(", column ")
        if len(nums) == 2 and all(n.isdigit() for n in nums):
            line, col = int(nums[0]), int(nums[1])
            msg = head.strip()
    span = SourceFile(path, text).span(line, col) if line else None
    return SpecError(f"not valid TOML: {msg}", span, code="NC200", path=path)


def limit_lines(text: str) -> list[int]:
    """1-based line of each ``[[limits]]`` header, in order (for locating results)."""
    out = []
    for i, line in enumerate(text.splitlines(), 1):
        stripped = line.strip()
        if stripped.startswith("[[") and stripped[2:].split("]]")[0].strip() == "limits":
            out.append(i)
    return out


def parse_spec(text: str, path: str = "<spec>", design_root: str | None = None) -> Spec:
    """Validate spec ``text`` (the TOML of a spec file at ``path``).

    Every path the spec names (``netlist``, ``root``) must resolve inside the design
    root (see :func:`design_root`; ``design_root`` is the explicit one, ``--root``).

    Raises
    ------
    SpecError
        With the key path (``limits[3].band: ...``) or the TOML position.
    """
    from .limits import build_limit

    doc = _decode(text, path)
    try:
        return _build(doc, text, path, build_limit, design_root)
    except SpecError as err:
        raise locate(err, text) from None


def _build(doc: dict, text: str, path: str, build_limit: Any,
           explicit_root: str | None = None) -> Spec:
    """The Spec of a decoded TOML document (errors carry key paths, not yet spans)."""
    top = SpecReader(doc, "", path, TOP_KEYS)
    base = Path(path).parent
    root_dir, why = resolve_design_root(path, explicit_root)
    netlist = top.text("netlist", required=True)
    confine(netlist, base, "netlist", path, root_dir, why)
    source = top.text("source", required=True)
    out_raw = top.raw("output")
    if out_raw is None:
        top.fail("output", "missing (required)")
    if isinstance(out_raw, str) and out_raw.strip():
        output = (out_raw, "0")
    elif (isinstance(out_raw, list) and len(out_raw) == 2
          and all(isinstance(x, str) and x.strip() for x in out_raw)):
        output = (out_raw[0], out_raw[1])
    else:
        top.fail("output", f"expected a node name or [positive, negative], got {out_raw!r}")
    if output[0].strip().lower() == output[1].strip().lower():
        what = "ground" if output[1] == "0" else f"node {output[0]!r} twice"
        top.fail("output", f"measures {what} against itself: that voltage is zero at every "
                 "frequency, so no limit could be judged")
    sw_table = top.raw("sweep")
    if sw_table is None:
        top.fail("sweep", "missing (required): give start, stop and points_per_decade")
    sw = SpecReader(sw_table, "sweep", path, SWEEP_KEYS)
    start = sw.number("start", required=True, positive=True)
    stop = sw.number("stop", required=True, positive=True)
    if start >= stop:
        sw.fail("start", f"start {_show(sw.raw('start'))} is not below stop {_show(sw.raw('stop'))}")
    ppd = sw.integer("points_per_decade", 100, minimum=2)
    try:
        validate_sweep(start, stop, ppd)
    except SpecError as err:
        sw.fail((err.where or "").removeprefix("sweep."), err.message, code=err.code)
    sweep = Sweep(start, stop, ppd)
    raw_limits = top.raw("limits", [])
    if not isinstance(raw_limits, list):
        top.fail("limits", "expected an array of tables ([[limits]])")
    check_count(raw_limits, "limits", path)
    lines = limit_lines(text)
    limits = []
    first: dict[str, int] = {}  # result name → index of the limit that gives it
    for i, table in enumerate(raw_limits):
        line = lines[i] if i < len(lines) else None
        lim = build_limit(table, i, path, sweep, line)
        taken = [n for n in lim.result_names() if n in first]
        if taken and "name" not in table:
            # a default name that is already taken: the later limit says where it is
            lim = dataclasses.replace(lim, name=f"{lim.name} (limits[{i}])")
            taken = [n for n in lim.result_names() if n in first]
        if taken:
            j = first[taken[0]]
            at = f" (line {lines[j]})" if j < len(lines) else ""
            keys = {"kind": "", "name": "", **type(lim).KEYS}
            SpecReader(table, f"limits[{i}]", path, keys).fail(
                "name", f"this limit's result {taken[0]!r} has the name of a result of "
                f"limits[{j}]{at}; results are told apart by name (tolerance analyses, "
                "JUnit, baselines), so give each limit its own")
        first.update((n, i) for n in lim.result_names())
        limits.append(lim)
    root = top.text("root")
    if root:
        confine(root, base, "root", path, root_dir, why)
    tables = tuple((k, doc[k]) for k in ("tolerances", "analysis", "stress", "variants")
                   if k in doc)
    return Spec(
        path=path, title=top.text("title", default="") or "",
        netlist=str(base / netlist), source=source, output=output, sweep=sweep,
        limits=tuple(limits), root=str(base / root) if root else None,
        allow_negative=top.flag("allow_negative"), text=text, tables=tables,
        design_root=str(root_dir), part_models=_part_models(top, path))


def _part_models(top: SpecReader, path: str) -> tuple[str, ...]:
    """The ``part_models`` key: one subcircuit name or an array of them (globs allowed)."""
    key = "part_models"
    raw = top.raw(key)
    if raw is None:
        return ()
    items = [raw] if isinstance(raw, str) else raw
    if not isinstance(items, list):
        top.fail(key, f"expected a subcircuit name or an array of them, e.g. [\"QX10\"], "
                      f"got {type(raw).__name__}")
    if len(items) > MAX_LIMITS:
        top.fail(key, f"{len(items):,} names, over the budget of {MAX_LIMITS:,} a spec",
                 code="NC205")
    for i, item in enumerate(items):
        if not isinstance(item, str) or not item.strip():
            top.fail(key, f"entry {i + 1}: expected a subcircuit name, got {item!r}")
        check_text(item, key, path)
    return tuple(item.strip() for item in items)


def part_models(spec: Spec, netlist: Any) -> frozenset[str]:
    """The subcircuits of ``netlist`` that ``spec.part_models`` names, lower case.

    Each entry is a subcircuit name or an fnmatch glob over the names the netlist's
    ``.subckt`` lines define (at any depth), case-insensitive. An entry that names no
    subcircuit of the netlist is an error: a misspelt model name would otherwise leave
    its internals judged as parts without a word.

    Raises
    ------
    SpecError
        NC203 at ``part_models``, naming the entry, the netlist and what it defines.
    """
    if not spec.part_models:
        return frozenset()
    import fnmatch

    from .elaborate import subckt_names

    defined = subckt_names(netlist)
    lower = {name.lower(): name for name in defined}
    out: set[str] = set()
    for entry in spec.part_models:
        hits = fnmatch.filter(lower, entry.lower())
        if not hits:
            shown = ", ".join(printable(n, 60) for n in defined[:10])
            more = f" and {len(defined) - 10:,} more" if len(defined) > 10 else ""
            known = f"it defines {shown}{more}" if defined else "it defines no subcircuit"
            raise SpecError(printable(
                f"part_models: no subcircuit {entry!r} in the netlist "
                f"{Path(spec.netlist).name} ({known}); name the .subckt of each part model",
                TEXT_MAX), code="NC203", path=spec.path, where="part_models")
        out.update(hits)
    return frozenset(out)


def load_spec(path: str | Path, design_root: str | None = None) -> Spec:
    """Read and validate the spec file at ``path`` (see :func:`parse_spec`).

    The file is read through :func:`netcheck.source.read_text` and decoded as
    :func:`read_toml` does (nesting over budget refused before the TOML reader runs).
    """
    return parse_spec(read_text(path, SpecError, "spec"), str(path), design_root)
