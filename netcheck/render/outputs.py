"""The one place output files are written: ``-`` is stdout, files are replaced atomically.

An output never takes the place of something the user keeps. :func:`open_output`
refuses (``run-401``) a path that is a folder, a device, a FIFO or a socket, a name with a
design file's suffix (:data:`DESIGN_SUFFIXES`), an existing CSV table netcheck did not
write, and, given an
:class:`OutputGuard`, a path that names one of the run's inputs (by its path, the file
a link leads to, or its device and inode number) or another output of the same run. A
file is written under a temporary ``.NAME.*.part`` name in the same folder and renamed
over ``NAME`` only when complete, keeping the permission bits (and, when run as root,
the owner) of the file it replaces; on any error or interruption the temporary file is
removed, so a half-written report never sits under the final name and an existing file
is left as it was.
"""

from __future__ import annotations

import contextlib
import io
import os
import stat
import sys
import tempfile
import threading
from collections.abc import Iterable, Iterator
from pathlib import Path
from typing import IO

from ..exceptions import RenderError
from ..netlist.source import display_path, printable

__all__ = ["open_output", "OutputGuard", "check_output_path", "remove_partial_files",
           "new_file_mode", "check_not_design_file", "Stopped", "request_stop", "stop_requested", "raise_if_stopped"]

#: temporary files being written now (removed by :func:`remove_partial_files` on exit)
_PENDING: set[str] = set()
_PENDING_LOCK = threading.Lock()

#: the signal that asked the run to stop (SIGINT or SIGTERM), once one has arrived
_STOP: list[int] = []


class Stopped(BaseException):
    """The run was asked to stop by a signal (``signum``); no output is completed after it.

    A BaseException, so that ordinary error handling does not take it for a failure of
    one output. Some libraries catch every exception while they draw (an image inside a
    PDF, for example) and so can swallow it; the stop is therefore also *remembered*
    (:func:`request_stop`), and :func:`open_output` checks it before an output is
    renamed into place.
    """

    def __init__(self, signum: int) -> None:
        super().__init__(signum)
        self.signum = signum


def request_stop(signum: int) -> None:
    """Remember that the run must stop (called from the signal handlers)."""
    if not _STOP:
        _STOP.append(signum)


def stop_requested() -> int | None:
    """The signal that asked the run to stop, or None."""
    return _STOP[0] if _STOP else None


def raise_if_stopped() -> None:
    """Raise :class:`Stopped` when a stop was requested (even if it was swallowed)."""
    if _STOP:
        raise Stopped(_STOP[0])


def clear_stop() -> None:
    """Forget a stop request (the start of a new run in the same process: tests)."""
    _STOP.clear()


def _refused(path: str | os.PathLike, message: str) -> RenderError:
    shown = printable(str(path))
    return RenderError(f"output refused: {message}", code="run-401", path=shown)



#: suffixes of design files (specs, netlists, includes, model libraries): an output never
#: takes such a name, whether or not a file of that name exists, and whether or not this
#: run reads it (a design file of another spec, or one skipped by a filter, is still the
#: user's work)
DESIGN_SUFFIXES = frozenset({".toml", ".cir", ".ckt", ".net", ".netlist", ".sp", ".spi",
                             ".spice", ".lib", ".inc", ".mod", ".sub", ".subckt", ".cmp",
                             ".asc", ".sch"})

#: the first line of every CSV file netcheck writes (``sweep --csv``); an existing CSV
#: file that does not start with it (a variants table, a measurement) is not replaced
CSV_HEADER = "frequency_hz,magnitude_db,phase_deg,group_delay_s"


def _design_file(path: str | os.PathLike, st: os.stat_result | None) -> str | None:
    """Why ``path`` may be a design file the user keeps (so no output may replace it)."""
    suffix = Path(path).suffix.lower()
    if suffix in DESIGN_SUFFIXES:
        return (f"a {suffix} name is a design file's (spec, netlist or library); "
                "netcheck writes reports only: give the output a name of its own, such as "
                "result.json")
    if suffix in (".csv", ".tsv") and st is not None and stat.S_ISREG(st.st_mode):
        try:
            with open(path, "rb") as fh:
                head = fh.read(len(CSV_HEADER) + 2)
        except OSError:
            head = b""
        if not head.decode("utf-8", "replace").startswith(CSV_HEADER):
            return ("this existing table was not written by netcheck (a variants table or "
                    "a measurement?), so it is not replaced: choose another path, or remove "
                    "it first")
    return None


def check_not_design_file(path: str | os.PathLike) -> None:
    """Refuse (``run-401``) an output path that may be a design file the user keeps: a
    name with a design file's suffix (:data:`DESIGN_SUFFIXES`), or an existing CSV
    table that netcheck did not write. ``-`` always passes."""
    if str(path) == "-":
        return
    why = _design_file(path, _stat_or_none(Path(path)))
    if why is not None:
        raise _refused(path, why)


def _stat_or_none(target: Path) -> os.stat_result | None:
    """``os.stat(target)``, None when nothing is there; other failures are run-400."""
    try:
        return os.stat(target)
    except FileNotFoundError:
        return None
    except OSError as err:
        raise _cannot(target, err.strerror or str(err)) from None


def _cannot(path: str | os.PathLike, message: str) -> RenderError:
    return RenderError(f"cannot write output: {message}", code="run-400",
                       path=printable(str(path)))


def _kind(mode: int) -> str:
    if stat.S_ISDIR(mode):
        return "a folder"
    if stat.S_ISFIFO(mode):
        return "a FIFO (named pipe)"
    if stat.S_ISCHR(mode) or stat.S_ISBLK(mode):
        return "a device"
    if stat.S_ISSOCK(mode):
        return "a socket"
    return "not a regular file"


def _names(path: str | os.PathLike) -> set[str]:
    """Ways to name one file: its normalised absolute path, and with links resolved."""
    absolute = os.path.normpath(os.path.abspath(os.fspath(path)))
    try:
        return {absolute, os.path.realpath(absolute)}
    except (OSError, ValueError):
        return {absolute}


def _identity(path: str | os.PathLike) -> tuple[int, int] | None:
    try:
        st = os.stat(path)
    except (OSError, ValueError):
        return None
    return st.st_dev, st.st_ino


class OutputGuard:
    """What the outputs of one run may not be: its inputs, and each other.

    Inputs are remembered by name (absolute, and with links resolved) and, when they
    exist, by (device, inode), so a hard link or a symbolic link to an input is
    recognised as that input.

    Examples
    --------
    >>> guard = OutputGuard(["designs/lp.toml"], what="spec")
    >>> guard.check("designs/../designs/lp.toml")
    Traceback (most recent call last):
    ...
    netcheck.exceptions.RenderError: ...run-401: output refused: this file is an input ...
    >>> guard.check("designs/result.json")
    """

    def __init__(self, inputs: Iterable[str | os.PathLike] = (), what: str = "input") -> None:
        self._by_name: dict[str, str] = {}
        self._by_id: dict[tuple[int, int], str] = {}
        self._outputs: dict[str, str] = {}
        self.add_inputs(inputs, what)

    def add_inputs(self, paths: Iterable[str | os.PathLike], what: str = "input") -> None:
        """Remember ``paths`` as inputs of the run (``what`` names them in messages)."""
        for p in paths:
            if not p or str(p) == "-":
                continue
            label = f"{what} {printable(display_path(os.fspath(p)))}"
            for name in _names(p):
                self._by_name.setdefault(name, label)
            ident = _identity(p)
            if ident is not None:
                self._by_id.setdefault(ident, label)

    def claim(self, path: str | os.PathLike, option: str) -> None:
        """Check ``path`` as an output of ``option`` and reserve it for that option.

        Raises
        ------
        RenderError
            ``run-401`` when it is an input, or another option already writes it.
        """
        self.check(path)
        if str(path) == "-":
            return
        for name in _names(path):
            other = self._outputs.get(name)
            if other is not None and other != option:
                raise _refused(path, f"{other} already writes this file; give each output "
                                     "its own path")
        for name in _names(path):
            self._outputs[name] = option

    def check(self, path: str | os.PathLike) -> None:
        """Raise ``run-401`` if ``path`` is one of the inputs (``-`` always passes)."""
        if str(path) == "-":
            return
        for name in _names(path):
            label = self._by_name.get(name)
            if label is not None:
                raise _refused(path, f"this file is an input of the run ({label}); "
                                     "choose another path")
        ident = _identity(path)
        label = self._by_id.get(ident) if ident is not None else None
        if label is not None:
            raise _refused(path, f"this file is the same file as an input of the run "
                                 f"({label}, through a link); choose another path")


def check_output_path(path: str | os.PathLike, folder: bool = False) -> None:
    """Check, before any work is done, that ``path`` can be an output.

    ``folder`` is true for an output folder (``--pdf DIR``). Refused (``run-401``): an
    existing path that is a device, FIFO or socket, or a folder where a file is wanted
    (or a file where a folder is wanted). Not writable (``run-400``): a missing parent
    that cannot be created because a file stands in its way, or a folder without write
    permission.

    Raises
    ------
    RenderError
    """
    if str(path) == "-":
        return
    target = Path(path)
    st = _stat_or_none(target)
    if st is not None:
        if folder:
            if not stat.S_ISDIR(st.st_mode):
                raise _refused(path, f"a folder is needed here, and this path is "
                                     f"{'a file' if stat.S_ISREG(st.st_mode) else _kind(st.st_mode)}")
            writable = target
        elif not stat.S_ISREG(st.st_mode):
            raise _refused(path, f"this path is {_kind(st.st_mode)}; netcheck writes only "
                                 "regular files")
        else:
            writable = target.parent
    else:
        writable = target.parent
    # the nearest folder that exists must be a folder and writable
    probe = writable if str(writable) else Path(".")
    while True:
        try:
            pst = os.stat(probe)
        except FileNotFoundError:
            if probe.parent == probe:
                break
            probe = probe.parent
            continue
        except OSError as err:
            raise _cannot(path, f"{printable(str(probe))}: {err.strerror or err}") from None
        if not stat.S_ISDIR(pst.st_mode):
            raise _cannot(path, f"{printable(str(probe))} is not a folder")
        if not os.access(probe, os.W_OK | os.X_OK):
            raise _cannot(path, f"folder {printable(str(probe))} is not writable")
        break


_UMASK_LOCK = threading.Lock()


def new_file_mode() -> int:
    """Permission bits of a new output file: ``0o666`` less the process umask."""
    with _UMASK_LOCK:
        mask = os.umask(0o022)
        os.umask(mask)
    return 0o666 & ~mask


def remove_partial_files() -> None:
    """Remove the temporary files of writes still in progress (for an abrupt exit)."""
    with _PENDING_LOCK:
        pending = list(_PENDING)
        _PENDING.clear()
    for tmp in pending:
        with contextlib.suppress(OSError):
            os.unlink(tmp)


@contextlib.contextmanager
def _stdout(binary: bool) -> Iterator[IO]:
    if binary:
        sys.stdout.flush()
        yield sys.stdout.buffer
        sys.stdout.buffer.flush()
    else:
        yield sys.stdout
        sys.stdout.flush()


@contextlib.contextmanager
def open_output(path: str | os.PathLike, binary: bool = False, *,
                guard: OutputGuard | None = None) -> Iterator[IO]:
    """Yield a stream for ``path``; on success the file appears complete under its name.

    ``-`` means standard output. Otherwise the data goes to a temporary file in the
    same directory (created if needed), which is renamed over ``path`` only when the
    block finishes without error; on error or interruption it is removed, so a
    half-written report never sits under the final name and an existing file is left
    as it was. A replaced file keeps its permission bits; a new one gets ``0o666``
    less the umask.

    Parameters
    ----------
    path : str or path-like
        Output file, or ``-``.
    binary : bool
        Yield a binary stream (PDF) instead of UTF-8 text.
    guard : OutputGuard, optional
        The run's inputs: a path naming one of them is refused.

    Raises
    ------
    RenderError
        ``run-401`` when the path is a folder, device, FIFO or socket, or an input of
        the run; ``run-400`` when the directory or file cannot be written.
    """
    if str(path) == "-":
        with _stdout(binary) as stream:
            yield stream
        return
    target = Path(path)
    st = _stat_or_none(target)
    if st is not None and not stat.S_ISREG(st.st_mode):
        raise _refused(target, f"this path is {_kind(st.st_mode)}; netcheck writes only "
                               "regular files")
    if guard is not None:
        guard.check(target)
    check_not_design_file(target)
    tmp = None
    try:
        try:
            target.parent.mkdir(parents=True, exist_ok=True)
            fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".part",
                                       dir=target.parent)
        except OSError as err:
            raise _cannot(target, err.strerror or str(err)) from None
        with _PENDING_LOCK:
            _PENDING.add(tmp)
        with os.fdopen(fd, "wb" if binary else "w", **({} if binary else
                                                       {"encoding": "utf-8",
                                                        "newline": "\n"})) as stream:
            yield stream
            stream.flush()
            os.fsync(stream.fileno())
        _settle_mode(tmp, st)
        raise_if_stopped()  # a stop swallowed while the output was drawn still counts
        os.replace(tmp, target)
        with _PENDING_LOCK:
            _PENDING.discard(tmp)
        tmp = None
    except OSError as err:
        if isinstance(err, RenderError):
            raise
        raise _cannot(target, err.strerror or str(err)) from None
    finally:
        if tmp is not None:
            with contextlib.suppress(OSError):
                os.unlink(tmp)
            with _PENDING_LOCK:
                _PENDING.discard(tmp)


def _settle_mode(tmp: str, old: os.stat_result | None) -> None:
    """Give the finished file the mode (and owner, as root) of the file it replaces."""
    if old is None:
        os.chmod(tmp, new_file_mode())
        return
    os.chmod(tmp, stat.S_IMODE(old.st_mode) & 0o777)
    if hasattr(os, "geteuid") and os.geteuid() == 0 and \
            (old.st_uid, old.st_gid) != (0, 0):
        with contextlib.suppress(OSError):
            os.chown(tmp, old.st_uid, old.st_gid)


def text_buffer() -> io.StringIO:
    """A text buffer for renderers tested without files."""
    return io.StringIO()
