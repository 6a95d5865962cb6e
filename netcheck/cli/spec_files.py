"""The spec files named or found under the paths given to ``check``, read safely.

A folder is scanned for ``*.toml`` files that declare ``netlist``; a file met there is
opened only when it lies inside the design root and is a regular file (:func:`find_specs`).
"""

from __future__ import annotations

import os
import stat
from pathlib import Path

from ..netlist import source as _source
from ..netlist.source import printable

__all__ = ["find_specs", "not_regular", "SCAN_MAX_BYTES"]

#: the most bytes of a ``.toml`` file read while scanning a folder for specs (the spec
#: loader's own limit); a larger file is not read, and is named in a warning
SCAN_MAX_BYTES = getattr(_source, "FILE_MAX_BYTES", 16 * 2**20)

_TOO_BIG = "too big"


def _toml_declares_netlist(path: str) -> bool | None | str:
    """Whether the TOML file at ``path`` has a top-level ``netlist`` key.

    None when that cannot be told without the loader (not a regular file, not UTF-8,
    not TOML, nested too deeply): such a file is listed so that the loader reports what
    is wrong with it. ``_TOO_BIG`` for a file over :data:`SCAN_MAX_BYTES`, which is not
    read. Nothing but a regular file is ever opened.
    """
    import tomllib

    try:
        if not stat.S_ISREG(os.stat(path).st_mode):
            return None
        flags = os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOCTTY", 0) \
            | getattr(os, "O_CLOEXEC", 0)
        fd = os.open(path, flags)
    except (OSError, ValueError):
        return None
    try:
        st = os.fstat(fd)
        if not stat.S_ISREG(st.st_mode):
            return None
        if st.st_size > SCAN_MAX_BYTES:
            return _TOO_BIG
        chunks, size = [], 0
        while size <= SCAN_MAX_BYTES:
            chunk = os.read(fd, 1 << 16)
            if not chunk:
                break
            chunks.append(chunk)
            size += len(chunk)
    except OSError:
        return None
    finally:
        os.close(fd)
    if size > SCAN_MAX_BYTES:  # it grew while it was read
        return _TOO_BIG
    try:
        doc = tomllib.loads(b"".join(chunks).decode("utf-8"))
    except (UnicodeDecodeError, tomllib.TOMLDecodeError, RecursionError, MemoryError,
            ValueError):
        return None
    return isinstance(doc, dict) and "netlist" in doc


def _walk_toml(folder: Path, notes: list[str] | None) -> list[Path]:
    """Every ``*.toml`` entry under ``folder`` that is not a folder (links to folders are
    not followed, so a link loop cannot hold the scan)."""
    found: list[Path] = []

    def unreadable(err: OSError) -> None:
        if notes is not None:
            notes.append(f"{printable(str(err.filename or folder))}: warning: folder cannot "
                         f"be read ({err.strerror or err}); specs in it are not checked")

    for top, _dirs, files in os.walk(folder, onerror=unreadable, followlinks=False):
        found.extend(Path(top) / name for name in files if name.endswith(".toml"))
    return sorted(found)


def find_specs(paths: list[str], notes: list[str] | None = None,
               root: str | None = None) -> tuple[list[str], list[str]]:
    """Spec files named or found (recursively, ``*.toml`` declaring ``netlist``) in ``paths``.

    Returns the spec paths (sorted within each directory) and paths that do not exist.
    A ``.toml`` file met in a folder is opened only when it resolves inside the design
    root (``root``, the command line's ``--root``, else the one
    :func:`netcheck.spec.guard.resolve_design_root` chooses for it): a link from the
    scanned folder to a file elsewhere (``env.toml -> /proc/self/environ``) is named in
    ``notes`` and never read, so nothing of it can be quoted in a report. It is opened
    only when it is a regular file, and at most :data:`SCAN_MAX_BYTES` of it is read;
    one that cannot be read or parsed (a FIFO, a device, broken or too deeply nested
    TOML) is listed, so the check reports it. Files over that size and folders that
    cannot be read are named in ``notes``. A file named on the command line is the
    user's explicit choice and is listed as named.
    """
    from ..spec.guard import inside_root, resolve_design_root

    specs, missing = [], []
    for p in paths:
        path = Path(p)
        try:
            is_dir = path.is_dir()
            exists = is_dir or path.exists()
        except (OSError, ValueError):
            is_dir, exists = False, False
        if is_dir:
            for f in _walk_toml(path, notes):
                try:
                    where, _why = resolve_design_root(f, root)
                    inside = inside_root(f, where)
                except (OSError, ValueError):
                    inside = False
                if not inside:
                    if notes is not None:
                        notes.append(f"{printable(str(f))}: warning: a link to a file outside "
                                     "the design root; not read and not checked (name it on "
                                     "the command line, or widen the root with --root DIR, "
                                     "to check it)")
                    continue
                found = _toml_declares_netlist(str(f))
                if found is _TOO_BIG:
                    if notes is not None:
                        notes.append(f"{printable(str(f))}: warning: larger than "
                                     f"{SCAN_MAX_BYTES} bytes, so not read and not checked "
                                     "as a spec")
                elif found is not False:
                    specs.append(str(f))
        elif exists:
            specs.append(str(path))
        else:
            missing.append(p)
    return list(dict.fromkeys(specs)), missing


def not_regular(path: str) -> str | None:
    """Why ``path`` cannot be read as a spec without opening it, or None when it can."""
    try:
        mode = os.stat(path).st_mode
    except OSError:
        return None  # the loader reports a file that cannot be read in its own words
    if stat.S_ISREG(mode):
        return None
    kind = ("a folder" if stat.S_ISDIR(mode) else "a FIFO (named pipe)" if stat.S_ISFIFO(mode)
            else "a device" if stat.S_ISCHR(mode) or stat.S_ISBLK(mode) else "a socket"
            if stat.S_ISSOCK(mode) else "a special file")
    return f"it is {kind}, not a regular file; it was not read"
