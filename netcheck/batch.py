"""Families of variants and running many checks: local worker processes or Dask distributed."""

from __future__ import annotations

import csv
import glob
import io
import os
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass
from pathlib import Path
from typing import Callable, Iterable, Protocol, Sequence

from .exceptions import SpecError
from .result import SpecResult
from .spec import SpecReader, load_spec, locate
from .units import UnitError, parse_value

__all__ = ["Job", "expand_jobs", "run_job", "Executor", "SerialExecutor", "LocalExecutor",
           "DaskExecutor", "VARIANT_KEYS"]

VARIANT_KEYS = {"table": "CSV file next to the spec: header name,<param>,...; one variant a row",
                "set": "array of {name, params = {param = value}} tables",
                "netlists": "list of netlist paths or globs sharing this spec (relative to it)"}


@dataclass(frozen=True, slots=True)
class Job:
    """One unit of work: a spec, optionally one variant of it."""

    spec: str
    variant: str | None = None
    overrides: tuple[tuple[str, float], ...] = ()
    netlist: str | None = None
    table: str | None = None


def _variant_error(path: str, where: str, message: str) -> SpecError:
    return SpecError(f"{where}: {message}", code="NC202", path=path, where=where)


def _read_table(spec_path: str, table: str) -> list[Job]:
    csv_path = Path(spec_path).parent / table
    try:
        text = csv_path.read_text("utf-8")
    except OSError as err:
        raise _variant_error(spec_path, "variants.table",
                             f"cannot read {csv_path}: {err.strerror or err}") from None
    rows = list(csv.reader(io.StringIO(text)))
    rows = [r for r in rows if any(c.strip() for c in r)]
    if not rows or rows[0][0].strip().lower() != "name" or len(rows[0]) < 2:
        raise _variant_error(spec_path, "variants.table",
                             f"{csv_path}:1: header must be name,<param>,<param>...")
    header = [h.strip() for h in rows[0]]
    jobs = []
    for i, row in enumerate(rows[1:], 2):
        if len(row) != len(header):
            raise _variant_error(spec_path, "variants.table",
                                 f"{csv_path}:{i}: {len(row)} fields, header has {len(header)}")
        values = []
        for key, cell in zip(header[1:], row[1:]):
            try:
                values.append((key.lower(), parse_value(cell.strip(), key)))
            except UnitError as err:
                raise _variant_error(spec_path, "variants.table",
                                     f"{csv_path}:{i}: {err}") from None
        jobs.append(Job(spec_path, row[0].strip(), tuple(values), table=str(csv_path)))
    return jobs


def _variant_jobs(spec_path: str, table: object) -> list[Job]:
    rd = SpecReader(table, "variants", spec_path, VARIANT_KEYS)
    jobs: list[Job] = []
    if rd.has("table"):
        jobs += _read_table(spec_path, rd.text("table"))
    sets = rd.raw("set", [])
    if not isinstance(sets, list):
        rd.fail("set", "expected an array of tables ([[variants.set]])")
    for i, entry in enumerate(sets):
        sub = SpecReader(entry, f"variants.set[{i}]", spec_path, {"name": "", "params": ""})
        name = sub.text("name", required=True)
        params = sub.raw("params", {})
        if not isinstance(params, dict):
            sub.fail("params", "expected a table of parameter = value")
        values = tuple((k.lower(), sub.number("params", value=v, label=f"params.{k}"))
                       for k, v in params.items())
        jobs.append(Job(spec_path, name, values))
    for pattern in rd.raw("netlists", []) or []:
        if not isinstance(pattern, str):
            rd.fail("netlists", "expected a list of paths or globs")
        base = Path(spec_path).parent
        matches = sorted(glob.glob(str(base / pattern)))
        if not matches:
            rd.fail("netlists", f"{pattern!r} matches no file")
        for m in matches:
            jobs.append(Job(spec_path, Path(m).stem, (), m))
    names = [j.variant for j in jobs]
    dupes = sorted({n for n in names if names.count(n) > 1})
    if dupes:
        rd.fail("", f"variant names must be unique; repeated: {', '.join(dupes)}")
    return jobs


def expand_jobs(spec_paths: Sequence[str]) -> list[Job | SpecResult]:
    """One Job per spec, or per variant of a spec that declares ``[variants]``.

    A spec whose variant table is broken yields an error SpecResult in its place.
    """
    from .evaluate import error_result

    out: list[Job | SpecResult] = []
    for path in spec_paths:
        try:
            spec = load_spec(path)
        except SpecError:
            out.append(Job(path))  # check_spec reports the error in full
            continue
        table = spec.table("variants")
        if table is None:
            out.append(Job(path))
            continue
        try:
            jobs = _variant_jobs(path, table)
        except SpecError as err:
            out.append(error_result(path, locate(err, spec.text)))
            continue
        out.extend(jobs or [Job(path)])
    return out


_CACHE: dict[tuple, tuple] = {}


def _stamp(path: str) -> tuple[int, int] | None:
    try:
        st = os.stat(path)
    except OSError:
        return None
    return st.st_mtime_ns, st.st_size


def _cached_inputs(job: Job) -> tuple[object, object]:
    """The job's parsed spec and netlist, reused by the variants a worker runs.

    Entries are keyed by path and checked against every file's modification time and
    size, includes too, so an edited file is read again. Anything that fails to load
    returns None and is loaded (and reported) by check_spec itself.
    """
    from .exceptions import NetcheckError
    from .parse import load_netlist

    try:
        key = ("spec", job.spec)
        hit = _CACHE.get(key)
        if hit is None or hit[0] != _stamp(job.spec):
            _CACHE[key] = hit = (_stamp(job.spec), load_spec(job.spec))
        spec = hit[1]
        netlist = job.netlist or spec.netlist
        key = ("netlist", netlist, spec.root)
        hit = _CACHE.get(key)
        if hit is None or any(_stamp(p) != st for p, st in hit[0]):
            parsed = load_netlist(netlist, spec.root)
            stamps = tuple((src.path, _stamp(src.path)) for src in parsed.sources)
            _CACHE[key] = hit = (stamps, parsed)
        return spec, hit[1]
    except NetcheckError:
        return None, None


def run_job(job: Job) -> SpecResult:
    """Check one job (the function workers run; never raises for bad input).

    A variant from a CSV table lists the table among the result's inputs (path, SHA-256
    and text), so reports can prove which values were used.
    """
    import dataclasses
    import hashlib

    from .evaluate import check_spec
    spec, parsed = _cached_inputs(job)
    result = check_spec(job.spec, dict(job.overrides) or None, job.variant, spec=spec,
                        netlist=job.netlist, parsed=parsed)
    if job.table is not None:
        try:
            text = Path(job.table).read_text("utf-8")
        except (OSError, UnicodeDecodeError):
            return result
        digest = hashlib.sha256(text.encode("utf-8")).hexdigest()
        result = dataclasses.replace(result, inputs=result.inputs + ((job.table, digest),),
                                     source_text=result.source_text + ((job.table, text),))
    return result


Progress = Callable[[int, int], None]


def _tick(progress: Progress | None, done: int, total: int) -> None:
    if progress is not None:
        progress(done, total)


class Executor(Protocol):
    """Maps :func:`run_job` over jobs and returns results in the jobs' order.

    ``progress(done, total)`` is called as jobs finish (for a progress display).
    """

    def map(self, jobs: Sequence[Job], progress: Progress | None = None) -> list[SpecResult]:
        ...


class SerialExecutor:
    """Runs jobs one after another in this process."""

    def map(self, jobs: Sequence[Job], progress: Progress | None = None) -> list[SpecResult]:
        out = []
        for job in jobs:
            out.append(run_job(job))
            _tick(progress, len(out), len(jobs))
        return out


class LocalExecutor:
    """Runs jobs in ``workers`` local processes; results come back in job order."""

    def __init__(self, workers: int | None = None) -> None:
        self.workers = workers or os.cpu_count() or 1

    def map(self, jobs: Sequence[Job], progress: Progress | None = None) -> list[SpecResult]:
        if self.workers <= 1 or len(jobs) <= 1:
            return SerialExecutor().map(jobs, progress)
        chunk = max(1, len(jobs) // (4 * self.workers))
        out = []
        with ProcessPoolExecutor(max_workers=min(self.workers, len(jobs))) as pool:
            for result in pool.map(run_job, jobs, chunksize=chunk):
                out.append(result)
                _tick(progress, len(out), len(jobs))
        return out


class DaskExecutor:
    """Runs jobs on an existing Dask distributed scheduler at ``address``."""

    def __init__(self, address: str) -> None:
        self.address = address

    def map(self, jobs: Sequence[Job], progress: Progress | None = None) -> list[SpecResult]:
        try:
            from distributed import Client
        except ImportError as err:  # pragma: no cover - depends on the install
            raise SpecError("--cluster needs Dask distributed, which is not installed: run "
                            "pip install '.[cluster]' in the netcheck checkout",
                            code="NC200") from err
        try:
            client = Client(self.address, timeout="20s", set_as_default=False)
        except OSError as err:
            raise SpecError(f"cannot reach the Dask scheduler at {self.address}: {err}",
                            code="NC200") from None
        try:
            futures = client.map(run_job, list(jobs), pure=False)
            out = []
            for future in futures:  # in job order, so the display advances steadily
                out.append(future.result())
                _tick(progress, len(out), len(futures))
            return out
        finally:
            client.close()


def run_all(items: Iterable[Job | SpecResult], executor: Executor,
            progress: Progress | None = None) -> tuple[SpecResult, ...]:
    """Run the jobs among ``items`` with ``executor``, keeping the items' order."""
    items = list(items)
    jobs = [it for it in items if isinstance(it, Job)]
    done = iter(executor.map(jobs, progress))
    return tuple(next(done) if isinstance(it, Job) else it for it in items)
