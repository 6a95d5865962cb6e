"""Families of variants and running many checks: local worker processes or Dask distributed.

One broken input never costs the others: :func:`expand_jobs` and :func:`run_job` never
raise, every spec and variant is judged or becomes its own error result, and a worker
process that dies costs only the job it was running (run-420).

The names live in :mod:`netcheck.runs.variant_table` (:class:`Job`, the CSV table),
:mod:`netcheck.runs.jobs` (specs and their variants into jobs, :func:`run_job`) and
:mod:`netcheck.runs.executors` (serial, local processes, Dask; :func:`run_all`); they
are re-exported here.
"""

from __future__ import annotations

from .executors import DaskExecutor, Executor, LocalExecutor, SerialExecutor, run_all
from .jobs import MAX_GLOB_MATCHES, MAX_VARIANTS, VARIANT_KEYS, expand_jobs, run_job
from .variant_table import MAX_VARIANT_ROWS, Job, read_variant_table

__all__ = ["Job", "expand_jobs", "run_job", "read_variant_table", "Executor",
           "SerialExecutor", "LocalExecutor", "DaskExecutor", "VARIANT_KEYS",
           "MAX_VARIANT_ROWS", "MAX_VARIANTS", "MAX_GLOB_MATCHES", "run_all"]
