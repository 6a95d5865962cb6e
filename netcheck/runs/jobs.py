"""Specs into jobs, one per variant, and one job checked: what every worker runs.

:func:`expand_jobs` turns each spec into one :class:`~netcheck.runs.variant_table.Job`,
or one per variant of a spec that declares ``[variants]`` (table rows, sets and
netlist globs); :func:`run_job` checks one, reusing the specs and netlists the worker
parsed for earlier variants. Neither ever raises.
"""

from __future__ import annotations

import dataclasses
import glob
import os
from collections import Counter, OrderedDict
from pathlib import Path
from typing import Sequence

from ..spec.guard import confine, resolve_design_root
from ..exceptions import NetcheckError, SpecError
from ..result import SpecResult
from ..netlist.source import printable
from ..spec.load import load_spec, locate
from ..spec.reader import SpecReader
from ..spec.variants import VARIANT_KEYS, Variants, parse_variants
from .variant_table import MAX_VARIANT_ROWS, Job, read_variant_table, shown_names, variant_error

__all__ = ["Job", "expand_jobs", "run_job", "read_variant_table", "VARIANT_KEYS",
           "MAX_VARIANT_ROWS", "MAX_VARIANTS", "MAX_GLOB_MATCHES"]

#: Budgets (spec-205, docs/spec-format.md#budgets; rows of one table:
#: :data:`~netcheck.runs.variant_table.MAX_VARIANT_ROWS`): variants of one spec (table
#: rows, sets and netlists together),
MAX_VARIANTS = 100_000
#: and files the ``netlists`` globs of one spec may match.
MAX_GLOB_MATCHES = 10_000


def _glob_netlists(spec_path: str, patterns: list[str], root: Path, why: str,
                   design_root: str | None) -> list[Job]:
    """A Job per file the ``variants.netlists`` patterns match, all inside the design root."""
    base = Path(spec_path).parent
    key = "variants.netlists"
    jobs: list[Job] = []
    listed = 0  # every entry the patterns match, folders too, counts toward the budget
    for pattern in patterns:
        parts = Path(pattern).parts
        magic = next((i for i, p in enumerate(parts) if glob.has_magic(p)), len(parts))
        if ".." in parts[magic:]:
            raise variant_error(spec_path, key, f"{printable(pattern)!r}: '..' after a "
                                "wildcard could leave the design root; write the folder "
                                "out", "spec-204")
        # the fixed folder of the pattern must be inside before anything is listed
        confine(str(Path(*parts[:magic])) if magic else ".", base, key, spec_path, root, why,
                shown=pattern)
        matches = []
        for m in glob.iglob(str(base / pattern)):
            listed += 1
            if listed > MAX_GLOB_MATCHES:
                raise variant_error(spec_path, key, f"{printable(pattern)!r} matches more "
                                    f"than {MAX_GLOB_MATCHES:,} files, over the budget of "
                                    f"{MAX_GLOB_MATCHES:,} netlists a spec", "spec-205")
            if not os.path.isdir(m):
                matches.append(m)
        if not matches:
            raise variant_error(spec_path, key, f"{printable(pattern)!r} matches no file")
        for m in sorted(matches):
            confine(m, Path(), key, spec_path, root, why, shown=f"{pattern} → {m}")
            jobs.append(Job(spec_path, Path(m).stem, (), m, design_root=design_root))
    return jobs


def _variant_jobs(spec_path: str, table: object, design_root: str | None = None) -> list[Job]:
    """The jobs of the ``[variants]`` table of the spec at ``spec_path`` (SpecError if bad):
    ``table`` is the spec's :class:`~netcheck.spec.variants.Variants` (or the raw table,
    checked here the way the spec loader checks it)."""
    variants = table if isinstance(table, Variants) else parse_variants(table, spec_path)
    rd = SpecReader({}, "variants", spec_path, VARIANT_KEYS)
    root, why = resolve_design_root(spec_path, design_root)
    jobs: list[Job] = []
    if variants.table is not None:
        csv_path = confine(variants.table, Path(spec_path).parent, "variants.table",
                           spec_path, root, why)
        jobs += read_variant_table(spec_path, csv_path, design_root)
    jobs += [Job(spec_path, s.name, s.params, design_root=design_root) for s in variants.sets]
    patterns = list(variants.netlists)
    jobs += _glob_netlists(spec_path, patterns, root, why, design_root)
    if len(jobs) > MAX_VARIANTS:
        rd.fail("", f"{len(jobs):,} variants, over the budget of {MAX_VARIANTS:,} a spec",
                code="spec-205")
    dupes = sorted(n for n, count in Counter(j.variant for j in jobs).items() if count > 1)
    if dupes:
        rd.fail("", f"variant names must be unique; repeated: {shown_names(dupes)}")
    return jobs


def expand_jobs(spec_paths: Sequence[str], design_root: str | None = None,
                allow_negative: bool = False, plot_detail: bool = True
                ) -> list[Job | SpecResult]:
    """One Job per spec, or per variant of a spec that declares ``[variants]``.

    Never raises: a spec whose variants are broken, over a budget or outside the design
    root (``design_root``: the explicit root, ``--root``) yields an error SpecResult in
    its place; running out of memory run-421, a bug internal-500. ``allow_negative`` (the command
    line's ``--allow-negative``) accepts negative R, L and C values in every job, as a
    spec's own ``allow_negative = true`` does for that spec.
    """
    out = _expand_jobs(spec_paths, design_root)
    if allow_negative or not plot_detail:
        out = [dataclasses.replace(j, allow_negative=allow_negative, plot_detail=plot_detail)
               if isinstance(j, Job) else j for j in out]
    return out


def _expand_jobs(spec_paths: Sequence[str], design_root: str | None
                 ) -> list[Job | SpecResult]:
    from ..analyses.nominal import error_result, failure_result

    out: list[Job | SpecResult] = []
    for path in spec_paths:
        path = str(path)
        try:
            try:
                spec = load_spec(path, design_root)
            except NetcheckError:
                out.append(Job(path, design_root=design_root))  # check_spec reports it
                continue
            if spec.variants is None:
                out.append(Job(path, design_root=design_root))
                continue
            try:
                jobs = _variant_jobs(path, spec.variants, design_root)
            except SpecError as err:
                out.append(error_result(path, locate(err, spec.text)))
                continue
            out.extend(jobs or [Job(path, design_root=design_root)])
        except Exception as exc:  # noqa: BLE001 - exhaustion or a bug costs this spec only
            out.append(failure_result(path, exc))
    return out


#: parsed specs and netlists a worker keeps for the next variants (most recent last)
_CACHE: OrderedDict[tuple, tuple] = OrderedDict()
_CACHE_ENTRIES = 32


def _stamp(path: str) -> tuple[int, int] | None:
    try:
        st = os.stat(path)
    except (OSError, ValueError):
        return None
    return st.st_mtime_ns, st.st_size


def _remember(key: tuple, value: tuple) -> tuple:
    _CACHE[key] = value
    _CACHE.move_to_end(key)
    while len(_CACHE) > _CACHE_ENTRIES:
        _CACHE.popitem(last=False)
    return value


def _cached_inputs(job: Job) -> tuple[object, object]:
    """The job's parsed spec and netlist, reused by the variants a worker runs.

    Entries are keyed by path and checked against every file's modification time and
    size, includes too, so an edited file is read again; the cache keeps the most recent
    :data:`_CACHE_ENTRIES` files. Anything that fails to load returns None and is loaded
    (and reported) by check_spec itself.
    """
    from ..netlist.parse import load_netlist

    try:
        key = ("spec", job.spec, job.design_root)
        hit = _CACHE.get(key)
        if hit is None or hit[0] != _stamp(job.spec):
            hit = _remember(key, (_stamp(job.spec), load_spec(job.spec, job.design_root)))
        spec = hit[1]
        netlist = job.netlist or spec.netlist
        if job.netlist is not None:
            return spec, None  # check_spec confines and reads a family member itself
        key = ("netlist", netlist, spec.root)
        hit = _CACHE.get(key)
        if hit is None or any(_stamp(p) != st for p, st in hit[0]):
            parsed = load_netlist(netlist, spec.root)
            stamps = tuple((src.path, _stamp(src.path)) for src in parsed.sources)
            hit = _remember(key, (stamps, parsed))
        return spec, hit[1]
    except NetcheckError:
        return None, None


def run_job(job: Job) -> SpecResult:
    """Check one job (the function workers run); never raises.

    A variant from a CSV table lists the table among the result's inputs (path and the
    SHA-256 of the whole table) and among its source texts only its header and its own
    row, with the row's line in ``extra["variant_row"]``, so reports can prove which
    values were used without each variant carrying the whole table.
    """
    import dataclasses

    from ..analyses.nominal import check_spec, failure_result

    try:
        spec, parsed = _cached_inputs(job)
        result = check_spec(job.spec, dict(job.overrides) or None, job.variant, spec=spec,
                            netlist=job.netlist, parsed=parsed, design_root=job.design_root,
                            allow_negative=job.allow_negative, plot_detail=job.plot_detail)
        if job.table is not None:
            where = {"table": job.table, "row": job.row, "sha256": job.table_sha256}
            result = dataclasses.replace(
                result, inputs=result.inputs + ((job.table, job.table_sha256),),
                source_text=result.source_text + ((job.table, job.row_text),),
                extra=result.extra + (("variant_row", where),))
        return result
    except Exception as exc:  # noqa: BLE001 - exhaustion or a bug costs this job only
        return failure_result(job.spec, exc, job.variant)
