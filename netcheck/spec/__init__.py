"""Spec file (TOML) → a validated, frozen :class:`Spec`: sweep, output, limits (one
kind per file under :mod:`.limits`), part stress (:mod:`.stress`), tolerances and
analysis settings (:mod:`.tolerances`), budgets and the design root (:mod:`.guard`)."""

from __future__ import annotations

from .load import *  # noqa: F401,F403
from .load import __all__  # noqa: F401
from .load import SWEEP_KEYS, confine, resolve_design_root  # noqa: F401,E402
