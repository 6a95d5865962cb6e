"""The command line: ``netcheck check`` and ``netcheck sweep``, and the named exit
codes (:mod:`.exitcodes`). The only place that prints or exits. Importing it loads
neither numpy nor the report libraries."""

from __future__ import annotations

from .args import cluster_address, job_count, safe_text, threshold
from .exitcodes import BAD_INPUT, MARGIN_SHRANK, FAIL, INTERNAL, INTERRUPTED, OK, TERMINATED
from .main import build_parser, main

__all__ = ["main", "build_parser", "OK", "FAIL", "BAD_INPUT", "INTERNAL", "MARGIN_SHRANK",
           "INTERRUPTED", "TERMINATED", "safe_text", "job_count", "threshold",
           "cluster_address"]
