"""The ``netcheck check`` sub-command (wired in by :mod:`netcheck.cli`)."""

from __future__ import annotations

import argparse
from typing import Callable


def add_check_parser(sub, common: Callable[[argparse.ArgumentParser], None]) -> None:
    """Register ``check``."""
    ck = sub.add_parser("check", help="judge spec files against their netlists")
    ck.add_argument("paths", nargs="+", metavar="SPEC", help="spec files or directories")
    common(ck)


def run_check(args: argparse.Namespace) -> int:
    """Run ``check`` (filled in by the spec checker)."""
    raise NotImplementedError("netcheck check is not available yet")
