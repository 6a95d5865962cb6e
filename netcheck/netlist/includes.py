"""Where an ``.include`` or ``.lib`` points, checked; include chains; unselected sections.

An include is known by its file and the ``.lib`` section read from it (none for a whole
file), so a library may select one of its own sections (``.lib models.lib typical`` inside
``models.lib``) while a section that comes back to itself, directly or through other
files, is still an include cycle (netlist-104).
"""

from __future__ import annotations

import re
from pathlib import Path

from ..exceptions import Diagnostic, NetlistSyntaxError
from .source import printable, quoted
from .syntax import Directive, Field

__all__ = ["IncludeKey", "arrows", "chain_text", "display", "include_path",
           "unselected_sections", "SECTIONS_SHOWN"]

#: one link of an include chain: the resolved file and the ``.lib`` section read from it
#: (lower case), or None for the whole file
IncludeKey = tuple[Path, "str | None"]
#: the most section names one netlist-163 note lists; the rest are counted
SECTIONS_SHOWN = 8

_DRIVE = re.compile(r"^[A-Za-z]:[\\/]")


def arrows(names: tuple[str, ...] | list[str]) -> str:
    """Names joined with arrows, escaped and bounded; the middle of a long chain left out."""
    shown = [printable(n, 60) for n in names]
    if len(shown) > 8:
        shown = shown[:3] + [f"… {len(shown) - 6} more …"] + shown[-3:]
    return " -> ".join(shown)


def chain_text(chain: tuple[IncludeKey, ...]) -> str:
    """File names of an include chain, each with the section read from it."""
    return arrows([p.name if sec is None else f"{p.name} section {sec}" for p, sec in chain])


def display(path: Path) -> str:
    """``path`` as messages and the list of files read show it (relative to the working
    directory when it is below it)."""
    try:
        return str(path.relative_to(Path.cwd()))
    except ValueError:
        return str(path)


def include_path(st: Directive, here: Path, chain: tuple[IncludeKey, ...], root: Path,
                 diags: list[Diagnostic]) -> tuple[IncludeKey, Field]:
    """The file and section an ``.include`` (or ``.lib FILE [SECTION]``) names, checked:
    one name, inside ``root``, no cycle. Windows separators and letter case are resolved
    with a warning (netlist-159, added to ``diags``)."""
    most = 2 if st.name == "lib" else 1
    if not 1 <= len(st.fields) <= most or not isinstance(st.fields[0], Field):
        raise NetlistSyntaxError('.include takes one file name, e.g. .include "parts.lib"; '
                                 '.lib takes a file and a section name', st.span,
                                 code="netlist-104")
    target = st.fields[0]
    name = target.expr_text
    if not name.strip():
        raise NetlistSyntaxError('empty file name in .include; give the file to include, '
                                 'e.g. .include "parts.lib"', target.span, code="netlist-104")
    if Path(name).is_absolute() or name.startswith("~") or _DRIVE.match(name):
        raise NetlistSyntaxError(f"absolute include path {quoted(name)} refused; give a path "
                                 "relative to the including file", target.span, code="netlist-104")
    try:
        path = (here / name.replace("\\", "/")).resolve()
        found = path.exists()
        if not found:
            path, found = _case_insensitive(here, name.replace("\\", "/"), path)
        if found and path != (here / name).resolve():
            diags.append(Diagnostic(
                "netlist-159", f"include {quoted(name)} read as "
                f"{quoted(display(path), 400)} (Windows separators or letter case "
                "differ from the file system): write the path as it is on disk",
                target.span))
    except (OSError, ValueError, RuntimeError) as err:
        # a NUL byte, a name too long for the OS, a symbolic-link loop
        raise NetlistSyntaxError(f"include path {quoted(name)} cannot be used: "
                                 f"{quoted(str(err))}", target.span, code="netlist-104") from None
    if not path.is_relative_to(root):
        raise NetlistSyntaxError(f"include {quoted(name)} leaves the design root "
                                 f"{quoted(str(root), 400)}; use --root to widen it",
                                 target.span, code="netlist-104")
    section = st.fields[1].expr_text if len(st.fields) == 2 else None
    key = (path, section.lower() if section is not None else None)
    if key in chain:
        cycle = chain_text(chain[chain.index(key):] + (key,))
        raise NetlistSyntaxError(f"include cycle: {cycle}", target.span, code="netlist-104")
    if not found:
        raise NetlistSyntaxError(f"included file {quoted(name)} not found (looked for "
                                 f"{quoted(str(path), 400)})", target.span, code="netlist-104")
    return key, target


def _case_insensitive(here: Path, name: str, path: Path) -> tuple[Path, bool]:
    """``name`` under ``here`` matched one part at a time ignoring letter case."""
    cur = here
    for part in Path(name).parts:
        if part in (".", ".."):
            cur = cur / part
            continue
        try:
            match = next((p for p in cur.iterdir() if p.name.lower() == part.lower()), None)
        except OSError:
            return path, False
        if match is None:
            return path, False
        cur = match
    return cur.resolve(), True


def unselected_sections(defined: dict[Path | None, list[Field]],
                        asked: set[tuple[Path | None, str]]) -> list[Diagnostic]:
    """One netlist-163 note per file that defines ``.lib`` sections (``defined``, by file)
    of which no ``.lib FILE SECTION`` of the netlist selected any (``asked``: file and
    lower-case section), naming them up to :data:`SECTIONS_SHOWN`. A file one of whose
    sections was selected says nothing: choosing one corner of a library is the point."""
    out = []
    chosen = {path for path, _ in asked}
    for path, heads in defined.items():
        if path in chosen:
            continue
        skipped: dict[str, Field] = {}
        for head in heads:
            if (path, head.text.lower()) not in asked:
                skipped.setdefault(head.text.lower(), head)
        if not skipped:
            continue
        names = [printable(h.text, 40) for h in skipped.values()]
        if len(names) > SECTIONS_SHOWN:
            names[SECTIONS_SHOWN - 1:] = [f"and {len(names) - SECTIONS_SHOWN + 1:,} more"]
        where = printable(path.name, 60) if path is not None else "the netlist"
        select = printable(path.name, 60) if path is not None else "FILE"
        out.append(Diagnostic(
            "netlist-163", f".lib section{'s' if len(skipped) > 1 else ''} {', '.join(names)} "
            f"of {where} not read: a section is read only when a '.lib {select} SECTION' "
            "card selects it", next(iter(skipped.values())).span, "note"))
    return out
