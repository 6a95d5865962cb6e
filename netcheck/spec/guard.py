"""Budgets and the design root of spec files: checks made before any work is done.

Re-exported by :mod:`netcheck.spec`; :mod:`netcheck.runs.batch` uses the same checks for
variant tables and netlist globs. Budget errors are spec-205, paths that leave the design
root spec-204 (docs/spec-format.md#budgets, #design-root). The budgets cover the sweep,
the nesting and table counts of the TOML, and the length of every text (a title or a
name reaches every report): :data:`MAX_TEXT_CHARS`, :data:`MAX_PATH_CHARS` for paths,
and :data:`MAX_STRING_WRITTEN` for a string or bare key as written, which is checked
before the TOML reader runs.
"""

from __future__ import annotations

import math
import os
import re
from collections.abc import Iterator
from pathlib import Path

from ..exceptions import SpecError
from ..netlist.source import printable

__all__ = ["MAX_SWEEP_POINTS", "MIN_SWEEP_POINTS", "MAX_FREQUENCY_HZ", "MIN_FREQUENCY_HZ",
           "MAX_NESTING", "MAX_LIMITS", "MAX_TEXT_CHARS", "MAX_PATH_CHARS", "PATH_KEYS",
           "MAX_STRING_WRITTEN", "long_string", "key_path_at", "text_budget",
           "validate_sweep", "check_count", "check_text", "check_text_lengths",
           "whole_number", "nesting_depth", "table_depth", "design_root",
           "resolve_design_root", "inside_root", "confine"]

#: Budgets, checked before any work is done (spec-205; docs/spec-format.md#budgets).
#: The most points a sweep grid may have (8 bytes a point and far more per solve).
MAX_SWEEP_POINTS = 1_000_000
#: The fewest: both ends and at least one frequency between them.
MIN_SWEEP_POINTS = 3
#: The highest frequency a sweep may reach, Hz (1 PHz: far above any circuit model).
MAX_FREQUENCY_HZ = 1e15
#: The lowest frequency a sweep may start at, Hz (1 µHz).
MIN_FREQUENCY_HZ = 1e-6
#: The deepest nesting of arrays and tables a spec may have (a real spec needs about 5).
MAX_NESTING = 64
#: The most ``[[limits]]`` tables, and the most ``[[stress]]`` tables, of one spec.
MAX_LIMITS = 10_000
#: The most characters of one text value or key of a spec (a title, a limit or variant
#: name, a node, source or part name): every one of them reaches the reports, and a
#: real one is a line or two.
MAX_TEXT_CHARS = 1_000
#: The most characters of a path or file pattern a spec names (:data:`PATH_KEYS`): the
#: longest path most systems accept (PATH_MAX).
MAX_PATH_CHARS = 4_096
#: The keys whose text is a path or a file pattern, with :data:`MAX_PATH_CHARS` as budget
#: (an array under one of them, such as ``variants.netlists``, counts as the key).
PATH_KEYS = frozenset({"netlist", "root", "variants.table", "variants.netlists"})
#: The longest string literal a spec may hold as written, quotes and escapes included,
#: checked before the TOML reader runs: ten times :data:`MAX_PATH_CHARS`, so no string
#: within its budget comes near it (an escape writes one character in at most ten).
MAX_STRING_WRITTEN = 10 * MAX_PATH_CHARS


def _points(start_hz: float, stop_hz: float, points_per_decade: int) -> int:
    """Points of the grid :meth:`Sweep.grid` builds (without building it)."""
    decades = math.log10(stop_hz / start_hz)
    per = min(points_per_decade, 10**18)  # a huge whole number is still over budget
    return max(2, int(round(decades * per)) + 1)


def whole_number(value: object) -> int | None:
    """``value`` as an int when it is a whole number (``200``, or a float such as ``2e2``).

    None for anything else (a bool, ``7.5``, text, NaN or an infinity). TOML writes
    ``1e9`` as a float; it is still the whole number 1,000,000,000, and judged as one.

    >>> whole_number(200), whole_number(2e2), whole_number(7.5), whole_number(True)
    (200, 200, None, None)
    """
    if isinstance(value, bool):
        return None
    if isinstance(value, int):
        return value
    if isinstance(value, float) and math.isfinite(value) and value.is_integer():
        return int(value)
    return None


def validate_sweep(start_hz: float, stop_hz: float, points_per_decade: int) -> None:
    """Refuse a sweep that is malformed or over budget, before any grid is built.

    Raises
    ------
    SpecError
        spec-202 for a value that is not a finite number or a whole number (a whole-valued
        float such as ``1e9`` is judged as the whole number it is), or a start not
        below the stop; spec-205 for a frequency outside [:data:`MIN_FREQUENCY_HZ`,
        :data:`MAX_FREQUENCY_HZ`] or a grid of fewer than :data:`MIN_SWEEP_POINTS` or more
        than :data:`MAX_SWEEP_POINTS` points. ``where`` names the sweep key
        (``sweep.stop``); the message stands alone, so a command-line front end can show
        it for its own option.

    Examples
    --------
    >>> validate_sweep(1e3, 1e6, 100)
    >>> validate_sweep(1e3, 1e308, 100)
    Traceback (most recent call last):
    ...
    netcheck.exceptions.SpecError: sweep.stop: error spec-205: stop 1e+308 Hz is above the highest sweep frequency, 1e+15 Hz
    """
    def fail(key: str, message: str, code: str = "spec-205") -> None:
        raise SpecError(message, code=code, where=f"sweep.{key}")

    for key, value in (("start", start_hz), ("stop", stop_hz)):
        if isinstance(value, bool) or not isinstance(value, (int, float)) \
                or not math.isfinite(value) or value <= 0:
            fail(key, f"{key} must be a finite frequency above 0 Hz, got {value!r}", "spec-202")
    if start_hz < MIN_FREQUENCY_HZ:
        fail("start", f"start {start_hz:g} Hz is below the lowest sweep frequency, "
                      f"{MIN_FREQUENCY_HZ:g} Hz")
    if stop_hz > MAX_FREQUENCY_HZ:
        fail("stop", f"stop {stop_hz:g} Hz is above the highest sweep frequency, "
                     f"{MAX_FREQUENCY_HZ:g} Hz")
    if start_hz >= stop_hz:
        fail("start", f"start {start_hz:g} Hz is not below stop {stop_hz:g} Hz", "spec-202")
    ppd = whole_number(points_per_decade)
    if ppd is None or ppd < 1:
        fail("points_per_decade", f"points_per_decade must be a whole number >= 1, "
                                  f"got {points_per_decade!r}", "spec-202")
    n = _points(start_hz, stop_hz, ppd)
    decades = math.log10(stop_hz / start_hz)
    over = f"{start_hz:g}–{stop_hz:g} Hz ({decades:.3g} decades) at {ppd} points per decade"
    if n > MAX_SWEEP_POINTS:
        fail("points_per_decade", f"{over} gives {n:,} grid points, over the budget of "
                                  f"{MAX_SWEEP_POINTS:,}; lower points_per_decade or narrow "
                                  "the sweep (narrow features are found between grid points)")
    if n < MIN_SWEEP_POINTS:
        need = math.ceil((MIN_SWEEP_POINTS - 1.5) / decades)
        fail("points_per_decade", f"{over} gives only {n} grid points, fewer than the "
                                  f"{MIN_SWEEP_POINTS} a sweep needs; raise points_per_decade "
                                  f"to at least {need}")


def check_count(tables: object, key: str, path: str) -> None:
    """Refuse more than :data:`MAX_LIMITS` tables in the array ``key`` (spec-205)."""
    if isinstance(tables, list) and len(tables) > MAX_LIMITS:
        raise SpecError(f"{key}: {len(tables):,} [[{key}]] tables, over the budget of "
                        f"{MAX_LIMITS:,} a spec", code="spec-205", path=path, where=key)


def text_budget(where: str) -> tuple[int, str]:
    """(budget, what it is called) of the text at key path ``where``."""
    key = where.split("[", 1)[0]
    if key in PATH_KEYS:
        return MAX_PATH_CHARS, "a path or file pattern"
    return MAX_TEXT_CHARS, "one text value of a spec (a title, a name)"


def check_text(value: object, where: str, path: str) -> None:
    """Refuse text at key path ``where`` longer than its budget (spec-205).

    :data:`MAX_PATH_CHARS` for the keys in :data:`PATH_KEYS`, :data:`MAX_TEXT_CHARS`
    for any other. The message names the key and the length, never the text itself.
    Anything that is not text passes.
    """
    if not isinstance(value, str):
        return
    budget, what = text_budget(where)
    if len(value) > budget:
        raise SpecError(f"{where}: {len(value):,} characters, over the budget of {budget:,} "
                        f"characters for {what}; shorten it", code="spec-205", path=path,
                        where=where)


def check_text_lengths(doc: dict, path: str) -> None:
    """Refuse any text value or key of a decoded spec longer than its budget (spec-205).

    Every string and every key at any depth is checked, in the order written, before
    any of them is used: titles and names reach every report (terminal, JSON, JUnit,
    SARIF, Markdown, PDF), where a text of megabytes would cost minutes and gigabytes.
    The error's ``where`` is the key path (``limits[2].name``); a key that is itself too
    long is reported at the table holding it, with its first characters.

    >>> check_text_lengths({"title": "Quillmere", "limits": [{"name": "x" * 1001}]}, "q.toml")
    Traceback (most recent call last):
    ...
    netcheck.exceptions.SpecError: q.toml: error spec-205: limits[0].name: 1,001 characters, over the budget of 1,000 characters for one text value of a spec (a title, a name); shorten it
    """
    stack: list[tuple[object, str]] = [(doc, "")]
    while stack:
        value, where = stack.pop()
        if isinstance(value, dict):
            items = []
            for key, item in value.items():
                if len(key) > MAX_TEXT_CHARS:
                    at = where or "(top level)"
                    raise SpecError(
                        f"{at}: a key of {len(key):,} characters ({printable(key, 40)}), over "
                        f"the budget of {MAX_TEXT_CHARS:,} characters for one key of a spec; "
                        "shorten it", code="spec-205", path=path, where=where or None)
                items.append((item, f"{where}.{key}" if where else key))
            stack.extend(reversed(items))
        elif isinstance(value, list):
            stack.extend(reversed([(item, f"{where}[{i}]") for i, item in enumerate(value)]))
        else:
            check_text(value, where, path)


# a table header at the start of a line: [name] or [[name]]
_HEADER = re.compile(r"^[ \t]*(\[\[?)[ \t]*([^\]\n]*?)[ \t]*\]", re.M)
# the tokens that matter for nesting: string and comment openers, and brackets
_TOKEN = re.compile(r'''["'#\[\]{}]''')  # one character class: searched fast
# where each kind of string ends, from just after its opening quotes
# (each is one character class repeated, then the rarer escapes or lone quotes each
# followed by the class again: scanning a long string keeps no backtracking state, where
# an alternation repeated per character made the matcher take 1 GB for an 8 MiB string)
_STRING_END = {
    '"': re.compile(r'[^"\\\n]*(?:\\.[^"\\\n]*)*"'),
    "'": re.compile(r"[^'\n]*'"),
    '"""': re.compile(r'[^"\\]*(?:(?:\\.|"(?!""))[^"\\]*)*"{3,5}', re.S),  # up to 2 quotes end it
    "'''": re.compile(r"[^']*(?:'(?!'')[^']*)*'{3,5}", re.S),
}


def _tokens(text: str) -> Iterator[tuple[str, int, int]]:
    """(token, start, end) of each bracket, string literal and comment of TOML ``text``.

    In order. A string's token is its opening quotes and ``end`` the offset just past
    its closing ones; a comment's token is ``#`` and ``end`` its line's end. An
    unterminated one-line string runs to its line's end; an unterminated multi-line
    string ends the scan (the TOML reader reports both).
    """
    pos, n = 0, len(text)
    while pos < n:
        m = _TOKEN.search(text, pos)
        if m is None:
            return
        start = m.start()
        tok = m.group()
        if tok in "\"'" and text.startswith(tok * 3, start):
            tok *= 3
        pos = start + len(tok)
        if tok == "#":
            nl = text.find("\n", pos)
            pos = n if nl < 0 else nl
        elif tok in _STRING_END:
            found = _STRING_END[tok].match(text, pos)
            if found is not None:
                pos = found.end()
            elif len(tok) == 3:
                return
            else:  # an unterminated one-line string: skip to its line's end
                nl = text.find("\n", pos)
                pos = n if nl < 0 else nl
        yield tok, start, pos


def nesting_depth(text: str, budget: int = MAX_NESTING) -> tuple[int, int]:
    """(deepest nesting of arrays and inline tables, offset where ``budget`` was passed).

    A linear scan that skips strings and comments, cheap enough to run before the TOML
    reader (which recurses once per level and runs out of stack on a bomb of 100,000
    nested arrays). The offset is -1 when the budget is kept. An unterminated
    multi-line string ends the scan (the TOML reader reports it).

    >>> nesting_depth('a = [[1], {b = "[[["}] # [[[')
    (2, -1)
    >>> nesting_depth("a = [[[1]]]", budget=2)
    (3, 6)
    """
    depth = deepest = 0
    over = -1
    for tok, start, _ in _tokens(text):
        if tok in ("[", "{"):
            depth += 1
            if depth > deepest:
                deepest = depth
                if depth > budget and over < 0:
                    over = start
        elif tok in ("]", "}"):
            depth = max(0, depth - 1)
    return deepest, over


def long_string(text: str, budget: int = MAX_STRING_WRITTEN) -> tuple[int, int, str]:
    r"""(offset, length, ``"string"`` or ``"key"``) of the first string literal (quotes
    included) or bare key longer than ``budget`` characters as written, or (-1, 0, "").

    The same linear scan as :func:`nesting_depth`, run before the TOML reader, which
    takes seconds to decode a string or a key of megabytes (and a spec is read more than
    once). Only text outside strings and comments is searched for bare keys, and only a
    stretch of it longer than ``budget``.

    >>> long_string('title = "Quillmere" # ' + "x" * 50, budget=20)
    (-1, 0, '')
    >>> long_string('a = 1\nname = "' + "n" * 30 + '"', budget=20)
    (13, 32, 'string')
    >>> long_string("[t]\n" + "k" * 30 + " = 1", budget=20)
    (4, 30, 'key')
    """
    long_bare = re.compile(r"(?<![A-Za-z0-9_-])[A-Za-z0-9_-]{%d,}" % (budget + 1))

    def bare(lo: int, hi: int) -> tuple[int, int, str] | None:
        # only a run's first character can start a match: linear in hi - lo
        m = long_bare.search(text, lo, hi) if hi - lo > budget else None
        return (m.start(), m.end() - m.start(), "key") if m else None

    previous = 0
    for tok, start, end in _tokens(text):
        found = bare(previous, start)
        if found:
            return found
        if tok in _STRING_END and end - start > budget:
            return start, end - start, "string"
        previous = end
    return bare(previous, len(text)) or (-1, 0, "")


def key_path_at(text: str, offset: int) -> str:
    r"""The key path (``limits[2].name``) of the value written at ``offset``, as well as
    the text before it shows: the table header above it and the key on its line.

    For messages only: a value that does not start on its key's line (in a multi-line
    array) is named by its table alone.

    >>> key_path_at('[sweep]\nstart = "1"\n[[limits]]\n[[limits]]\nname = "x"', 50)
    'limits[1].name'
    """
    line_start = text.rfind("\n", 0, offset) + 1
    section, arrays = "", {}
    for m in _HEADER.finditer(text, 0, line_start):
        name = ".".join(p.strip().strip("\"'") for p in m.group(2).split("."))
        if m.group(1) == "[[":
            arrays[name] = arrays.get(name, -1) + 1
            section = f"{name}[{arrays[name]}]"
        else:
            section = name
    head = text[line_start:offset]
    key = head.split("=", 1)[0].strip().strip("\"'") if "=" in head else ""
    return ".".join(p for p in (section, key) if p)


def table_depth(doc: dict) -> int:
    """Deepest nesting of tables and arrays below a decoded document (iterative).

    >>> table_depth({"a": {"b": [1, [2]]}, "c": 1})
    3
    """
    deepest, stack = 0, [(doc, 0)]
    while stack:
        value, depth = stack.pop()
        deepest = max(deepest, depth)
        if depth > MAX_NESTING:
            return depth
        children = value.values() if isinstance(value, dict) else value
        stack.extend((v, depth + 1) for v in children if isinstance(v, (dict, list)))
    return deepest


def resolve_design_root(spec_path: str | Path, explicit: str | Path | None = None
                        ) -> tuple[Path, str]:
    """(resolved design root, how it was chosen) for the spec at ``spec_path``."""
    if explicit is not None:
        return Path(os.path.realpath(explicit)), "given with --root"
    folder = Path(os.path.realpath(Path(spec_path).parent))
    for above in (folder, *folder.parents):
        if os.path.lexists(above / ".git"):
            return above, "the top of the git work tree holding the spec"
    try:
        cwd: Path | None = Path(os.path.realpath(os.getcwd()))
    except OSError:
        cwd = None
    if cwd is not None and folder.is_relative_to(cwd):
        return cwd, "the current folder, which holds the spec"
    return folder, "the spec's own folder"


def design_root(spec_path: str | Path, explicit: str | Path | None = None) -> Path:
    """The folder every path the spec at ``spec_path`` names must resolve inside.

    ``explicit`` (the command line's ``--root DIR``) when given; otherwise the top of
    the git work tree holding the spec (the nearest folder at or above the spec's with
    a ``.git`` entry; git is not run); otherwise the current folder when it holds the
    spec; otherwise the spec's own folder. Returned resolved (symlinks followed).
    """
    return resolve_design_root(spec_path, explicit)[0]


def inside_root(path: str | Path, root: str | Path) -> bool:
    """True when ``path`` resolves (symlinks followed) inside the resolved ``root``."""
    real = Path(os.path.realpath(path))
    return real.is_relative_to(Path(os.path.realpath(root)))


def confine(written: str, base: Path, key: str, spec_path: str, root: Path, why: str,
            shown: str | None = None) -> Path:
    """``base / written``, refused with spec-204 when it resolves outside ``root``.

    The message names the key and the path as written (``shown`` when given, such as
    the glob that matched it), never anything read from the file.
    """
    target = base / written
    try:
        real = Path(os.path.realpath(target))
    except (ValueError, OSError) as err:  # a NUL character, an unusable path
        raise SpecError(f"{key}: {printable(shown or written)!r} is not a usable path ({err})",
                        code="spec-202", path=spec_path, where=key) from None
    if not real.is_relative_to(root):
        raise SpecError(
            f"{key}: {printable(shown or written)!r} resolves outside the design root "
            f"{root} ({why}); every file a spec names must be inside it: move the file "
            "in, or name a wider root with --root DIR", code="spec-204", path=spec_path,
            where=key)
    return target
