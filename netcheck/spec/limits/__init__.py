"""Limit kinds: each parses its table of the spec and judges one measurement, with a
margin; all are registered in one table, :data:`LIMITS`, keyed by their ``kind``."""

from __future__ import annotations

from .kinds import *  # noqa: F401,F403
from .kinds import __all__  # noqa: F401
