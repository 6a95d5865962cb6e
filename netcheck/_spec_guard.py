"""Budgets and the design root of spec files: checks made before any work is done.

Re-exported by :mod:`netcheck.spec`; :mod:`netcheck.batch` uses the same checks for
variant tables and netlist globs. Budget errors are NC205, paths that leave the design
root NC204 (docs/spec-format.md#budgets, #design-root).
"""

from __future__ import annotations

import math
import os
import re
from pathlib import Path

from .exceptions import SpecError
from .source import printable

__all__ = ["MAX_SWEEP_POINTS", "MIN_SWEEP_POINTS", "MAX_FREQUENCY_HZ", "MIN_FREQUENCY_HZ",
           "MAX_NESTING", "MAX_LIMITS", "validate_sweep", "check_count", "nesting_depth",
           "table_depth", "design_root", "resolve_design_root", "inside_root", "confine"]

#: Budgets, checked before any work is done (NC205; docs/spec-format.md#budgets).
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


def _points(start_hz: float, stop_hz: float, points_per_decade: int) -> int:
    """Points of the grid :meth:`Sweep.grid` builds (without building it)."""
    decades = math.log10(stop_hz / start_hz)
    per = min(points_per_decade, 10**18)  # a huge whole number is still over budget
    return max(2, int(round(decades * per)) + 1)


def validate_sweep(start_hz: float, stop_hz: float, points_per_decade: int) -> None:
    """Refuse a sweep that is malformed or over budget, before any grid is built.

    Raises
    ------
    SpecError
        NC202 for a value that is not a finite number or a whole number, or a start not
        below the stop; NC205 for a frequency outside [:data:`MIN_FREQUENCY_HZ`,
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
    netcheck.exceptions.SpecError: sweep.stop: error NC205: stop 1e+308 Hz is above the highest sweep frequency, 1e+15 Hz
    """
    def fail(key: str, message: str, code: str = "NC205") -> None:
        raise SpecError(message, code=code, where=f"sweep.{key}")

    for key, value in (("start", start_hz), ("stop", stop_hz)):
        if isinstance(value, bool) or not isinstance(value, (int, float)) \
                or not math.isfinite(value) or value <= 0:
            fail(key, f"{key} must be a finite frequency above 0 Hz, got {value!r}", "NC202")
    if start_hz < MIN_FREQUENCY_HZ:
        fail("start", f"start {start_hz:g} Hz is below the lowest sweep frequency, "
                      f"{MIN_FREQUENCY_HZ:g} Hz")
    if stop_hz > MAX_FREQUENCY_HZ:
        fail("stop", f"stop {stop_hz:g} Hz is above the highest sweep frequency, "
                     f"{MAX_FREQUENCY_HZ:g} Hz")
    if start_hz >= stop_hz:
        fail("start", f"start {start_hz:g} Hz is not below stop {stop_hz:g} Hz", "NC202")
    ppd = points_per_decade
    if isinstance(ppd, bool) or not isinstance(ppd, int) or ppd < 1:
        fail("points_per_decade", f"points_per_decade must be a whole number >= 1, "
                                  f"got {ppd!r}", "NC202")
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
    """Refuse more than :data:`MAX_LIMITS` tables in the array ``key`` (NC205)."""
    if isinstance(tables, list) and len(tables) > MAX_LIMITS:
        raise SpecError(f"{key}: {len(tables):,} [[{key}]] tables, over the budget of "
                        f"{MAX_LIMITS:,} a spec", code="NC205", path=path, where=key)


# the tokens that matter for nesting: string and comment openers, and brackets
_TOKEN = re.compile(r'"""|' + "'''" + r'''|["'#\[\]{}]''')
# where each kind of string ends, from just after its opening quotes
_STRING_END = {
    '"': re.compile(r'(?:[^"\\\n]|\\.)*"'),
    "'": re.compile(r"[^'\n]*'"),
    '"""': re.compile(r'(?:[^"\\]|\\.|"(?!""))*"{3,5}', re.S),  # up to 2 quotes end it
    "'''": re.compile(r"(?:[^']|'(?!''))*'{3,5}", re.S),
}


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
    pos, n = 0, len(text)
    while pos < n:
        m = _TOKEN.search(text, pos)
        if m is None:
            break
        tok, pos = m.group(), m.end()
        if tok in ("[", "{"):
            depth += 1
            if depth > deepest:
                deepest = depth
                if depth > budget and over < 0:
                    over = m.start()
        elif tok in ("]", "}"):
            depth = max(0, depth - 1)
        elif tok == "#":
            nl = text.find("\n", pos)
            pos = n if nl < 0 else nl
        else:
            found = _STRING_END[tok].match(text, pos)
            if found is not None:
                pos = found.end()
            elif len(tok) == 3:
                break
            else:  # an unterminated one-line string: skip to its line's end
                nl = text.find("\n", pos)
                pos = n if nl < 0 else nl
    return deepest, over


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
    """``base / written``, refused with NC204 when it resolves outside ``root``.

    The message names the key and the path as written (``shown`` when given, such as
    the glob that matched it), never anything read from the file.
    """
    target = base / written
    try:
        real = Path(os.path.realpath(target))
    except (ValueError, OSError) as err:  # a NUL character, an unusable path
        raise SpecError(f"{key}: {printable(shown or written)!r} is not a usable path ({err})",
                        code="NC202", path=spec_path, where=key) from None
    if not real.is_relative_to(root):
        raise SpecError(
            f"{key}: {printable(shown or written)!r} resolves outside the design root "
            f"{root} ({why}); every file a spec names must be inside it: move the file "
            "in, or name a wider root with --root DIR", code="NC204", path=spec_path,
            where=key)
    return target
