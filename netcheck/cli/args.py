"""Command-line value types (``--jobs``, ``--shrink-db``, ``--cluster``), the
:class:`Renamed` action of an option's old spelling, and :func:`safe_text`, through which
everything printed that came from an input goes."""

from __future__ import annotations

import argparse
import math
import re

from ..netlist.source import printable

__all__ = ["safe_text", "job_count", "threshold", "cluster_address", "eng_value",
           "positive_int", "Renamed", "renamed_notes", "LINE_MAX", "LINES_MAX"]

#: the most characters of one printed line that carries text from an input
LINE_MAX = 1000
#: the most lines of one printed message (the rest are counted, not shown)
LINES_MAX = 60

def safe_text(text: str) -> str:
    """``text`` made safe to print: each line through :func:`netcheck.netlist.source.printable`
    (escapes shown, length bounded), at most :data:`LINES_MAX` lines.

    >>> print(safe_text("a.cir:1:1: error netlist-100: R1" + chr(27) + "]0;title" + chr(7)))
    a.cir:1:1: error netlist-100: R1\\x1b]0;title\\x07
    """
    lines = str(text).split("\n")
    out = [printable(ln, LINE_MAX) for ln in lines[:LINES_MAX]]
    if len(lines) > LINES_MAX:
        out.append(f"… ({len(lines) - LINES_MAX} more lines)")
    return "\n".join(out)


def eng_value(text: str) -> float:
    from ..netlist.units import UnitError, parse_quantity
    try:
        return parse_quantity(text)
    except UnitError as err:
        raise argparse.ArgumentTypeError(str(err)) from None


def _shown(text: str) -> str:
    return printable(repr(text), 60)


def positive_int(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{_shown(text)} is not a whole number") from None
    if value < 1:
        raise argparse.ArgumentTypeError(f"must be at least 1 (got {value})")
    return value


def job_count(text: str) -> int:
    """``--jobs``: a whole number of worker processes, at least 1."""
    return positive_int(text)


def threshold(text: str) -> float:
    """``--shrink-db``/``--shrink-rel``: a finite number, zero or more."""
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{_shown(text)} is not a number; give a finite "
                                         "number, zero or more") from None
    if not math.isfinite(value) or value < 0:
        raise argparse.ArgumentTypeError(f"{_shown(text)} is not accepted; give a finite "
                                         "number, zero or more")
    return value


class Renamed(argparse.Action):
    """The old spelling of a renamed option: still accepted (hidden from ``--help``), its
    value stored under the new option's name, and the use remembered so that the command
    can say once what the option is called now (:func:`renamed_notes`)."""

    def __init__(self, option_strings, dest, *, new: str, **kwargs) -> None:
        kwargs.setdefault("default", argparse.SUPPRESS)  # the new option's default stands
        kwargs.setdefault("help", argparse.SUPPRESS)
        super().__init__(option_strings, dest, **kwargs)
        self.new = new

    def __call__(self, parser, namespace, values, option_string=None) -> None:
        setattr(namespace, self.dest, self.const if self.nargs == 0 else values)
        used = list(getattr(namespace, "renamed_options", None) or [])
        if (option_string, self.new) not in used:
            used.append((option_string, self.new))
        namespace.renamed_options = used


def renamed_notes(namespace: argparse.Namespace, command: str) -> list[str]:
    """One note per old option spelling used, naming the new one."""
    return [f"netcheck {command}: note: {old} is now called {new}; the old name still works "
            "but will be removed in a later version"
            for old, new in getattr(namespace, "renamed_options", None) or []]


_HOST = re.compile(r"^(?:\[[0-9A-Fa-f:.]+\]|[A-Za-z0-9](?:[A-Za-z0-9.-]{0,251}[A-Za-z0-9])?)$")


def cluster_address(text: str) -> str:
    """``--cluster``: ``tcp://HOST:PORT`` or ``tls://HOST:PORT`` and nothing else.

    >>> cluster_address("tcp://scheduler.quillmere.invalid:8786")
    'tcp://scheduler.quillmere.invalid:8786'
    """
    accepted = "give tcp://HOST:PORT or tls://HOST:PORT (a Dask scheduler address)"
    scheme, sep, rest = text.partition("://")
    if not sep or scheme not in ("tcp", "tls"):
        raise argparse.ArgumentTypeError(f"{_shown(text)} is not accepted: {accepted}")
    host, colon, port = rest.rpartition(":")
    if not colon or not _HOST.match(host) or not port.isascii() or not port.isdigit() \
            or not 1 <= int(port) <= 65535:
        raise argparse.ArgumentTypeError(f"{_shown(text)} is not accepted: {accepted}, "
                                         "with a port from 1 to 65535 and no path")
    return text
