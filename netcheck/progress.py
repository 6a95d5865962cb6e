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

from contextlib import contextmanager
from contextvars import ContextVar
from typing import Callable, Iterator

__all__ = ["Report", "reporting", "report", "active"]

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
