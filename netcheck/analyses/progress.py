"""Progress of long analyses, reported to whoever displays it (the terminal bar of ``check``).

An analysis calls :func:`report` as it goes; nothing happens unless a display has been
installed with :func:`reporting` in the same process (worker processes report nothing,
the batch display counts their finished jobs instead).

>>> seen = []
>>> with reporting(lambda label, done, total: seen.append((label, done, total))):
...     report("Monte Carlo", 500, 2000)
>>> report("Monte Carlo", 2000, 2000)  # no display installed: ignored
>>> seen
[('Monte Carlo', 500, 2000)]
"""

from __future__ import annotations

import time
from contextlib import contextmanager
from contextvars import ContextVar
from typing import IO, Callable, Iterator

from ..netlist.source import printable

__all__ = ["Report", "reporting", "report", "active", "TerminalBar"]

#: ``callback(label, done, total)``
Report = Callable[[str, int, int], None]

_current: ContextVar[Report | None] = ContextVar("netcheck_progress", default=None)


@contextmanager
def reporting(callback: Report) -> Iterator[None]:
    """Send :func:`report` calls made inside the block to ``callback``."""
    token = _current.set(callback)
    try:
        yield
    finally:
        _current.reset(token)


def report(label: str, done: int, total: int) -> None:
    """Tell the display (if any) that ``done`` of ``total`` units of ``label`` are finished."""
    callback = _current.get()
    if callback is not None:
        callback(label, done, total)


def active() -> bool:
    """Whether a display is listening (long loops may then work in smaller steps)."""
    return _current.get() is not None


class TerminalBar:
    """A one-line progress display for a terminal (nothing is drawn on CI logs).

    Called with (done, total) as spec results finish, and through :mod:`netcheck.analyses.progress`
    with (label, done, total) by long analyses inside a spec run in this process (a
    Monte Carlo run, the worst-case corners).
    """

    WIDTH = 30

    def __init__(self, stream: IO[str], show_jobs: bool) -> None:
        self.stream = stream
        self.t0 = time.perf_counter()
        self.show_jobs = show_jobs
        self.jobs = ""
        self.inner = ""
        self.drawn = 0

    def _bar(self, done: int, total: int) -> str:
        fill = int(self.WIDTH * done / max(total, 1))
        return f"[{'#' * fill}{'.' * (self.WIDTH - fill)}] {done}/{total}"

    def _draw(self) -> None:
        line = " · ".join(p for p in (self.jobs, self.inner) if p)
        line = f"{printable(line)} {time.perf_counter() - self.t0:5.1f} s"
        self.stream.write("\r" + line.ljust(self.drawn))
        self.stream.flush()
        self.drawn = max(self.drawn, len(line))

    def __call__(self, done: int, total: int) -> None:
        self.inner = ""
        if self.show_jobs:
            self.jobs = f"{self._bar(done, total)} specs"
            self._draw()

    def analysis(self, label: str, done: int, total: int) -> None:
        self.inner = f"{label} {self._bar(done, total)}" if done < total else ""
        self._draw()

    def close(self) -> None:
        if self.drawn:
            self.stream.write("\r" + " " * self.drawn + "\r")
            self.stream.flush()
