"""CI integration: which specs a change affects, and the margins that shrank since an
earlier result.

Two pure library pieces the ``check`` command builds on:

* :func:`affected_specs` asks git which files changed since a revision and returns the
  specs whose spec file, netlist, included files or variant inputs are among them.
* :func:`compare_baseline` compares two ``netcheck.result/1`` documents limit by limit
  and reports every margin that shrank by more than a threshold, even while it passes
  (``check --compare-margins``; the Python names keep the word "baseline" for the earlier
  result).

Errors: :class:`GitError` (code ``run-410``) when git cannot answer (not a repository,
unknown revision, git missing or too slow); :class:`BaselineError` (code ``run-411``)
when an earlier result file is unreadable, not JSON, or not a netcheck result.
"""

from __future__ import annotations

from .baseline import (BaselineError, DriftReport, LimitDrift, LimitRef, SpecRef, compare_baseline,
                        load_baseline, validate_result)
from .affected import GIT_TIMEOUT_S, AffectedSpec, AffectedSpecs, GitError, affected_specs

__all__ = [
    "GitError", "BaselineError", "AffectedSpec", "AffectedSpecs", "affected_specs",
    "SpecRef", "LimitRef", "LimitDrift", "DriftReport", "compare_baseline",
    "load_baseline", "validate_result", "GIT_TIMEOUT_S",
]
