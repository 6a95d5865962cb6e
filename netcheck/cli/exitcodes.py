"""The exit statuses of the ``netcheck`` command, by name (docs/ci.md lists them)."""

from __future__ import annotations

__all__ = ["OK", "FAIL", "BAD_INPUT", "INTERNAL", "MARGIN_SHRANK", "INTERRUPTED", "TERMINATED"]

#: every limit passed (or the sweep ran)
OK = 0
#: at least one limit failed
FAIL = 1
#: bad input: a netlist, spec or argument could not be used
BAD_INPUT = 2
#: a bug in netcheck (the traceback is kept)
INTERNAL = 3
#: every limit passed but a margin shrank against the earlier result (with --fail-on-shrink)
MARGIN_SHRANK = 4
#: stopped by Ctrl-C (128 + SIGINT) or by SIGTERM (128 + SIGTERM)
INTERRUPTED, TERMINATED = 130, 143
