"""Families of variants and running many checks: local worker processes or Dask distributed.

One broken input never costs the others: :func:`expand_jobs` and :func:`run_job` never
raise, every spec and variant is judged or becomes its own error result, and a worker
process that dies costs only the job it was running (NC420).
"""

from __future__ import annotations

import csv
import dataclasses
import glob
import hashlib
import io
import os
import signal
import sys
import threading
import time
from collections import Counter, OrderedDict
from dataclasses import dataclass
from pathlib import Path
from typing import Callable, Iterable, Protocol, Sequence

from ..spec.guard import confine, resolve_design_root
from ..exceptions import NetcheckError, SpecError
from ..result import SpecResult
from ..netlist.source import printable
from ..spec.load import load_spec, locate
from ..spec.reader import SpecReader
from ..netlist.units import UnitError, parse_value

__all__ = ["Job", "expand_jobs", "run_job", "read_variant_table", "Executor",
           "SerialExecutor", "LocalExecutor", "DaskExecutor", "VARIANT_KEYS",
           "MAX_VARIANT_ROWS", "MAX_VARIANTS", "MAX_GLOB_MATCHES"]

VARIANT_KEYS = {"table": "CSV file next to the spec: header name,<param>,...; one variant a row",
                "set": "array of {name, params = {param = value}} tables",
                "netlists": "list of netlist paths or globs sharing this spec (relative to it)"}

#: Budgets (NC205, docs/spec-format.md#budgets): rows of one variants table,
MAX_VARIANT_ROWS = 100_000
#: variants of one spec (table rows, sets and netlists together),
MAX_VARIANTS = 100_000
#: and files the ``netlists`` globs of one spec may match.
MAX_GLOB_MATCHES = 10_000


@dataclass(frozen=True, slots=True)
class Job:
    """One unit of work: a spec, optionally one variant of it.

    A variant from a CSV table carries its own row, not the table: ``row`` (the line
    it starts on), ``row_text`` (the header line and its own lines, as written) and the
    SHA-256 of the whole table, computed once for all its rows.
    """

    spec: str
    variant: str | None = None
    overrides: tuple[tuple[str, float], ...] = ()
    netlist: str | None = None
    table: str | None = None
    design_root: str | None = None
    row: int | None = None
    row_text: str = ""
    table_sha256: str = ""
    allow_negative: bool = False
    #: store exactly evaluated plot points with the curves (only a PDF draws them)
    plot_detail: bool = True


def _variant_error(path: str, where: str, message: str, code: str = "NC202") -> SpecError:
    return SpecError(f"{where}: {message}", code=code, path=path, where=where)


def _names(names: list[str], most: int = 10) -> str:
    """Names for a message: each bounded, at most ``most`` of them."""
    shown = ", ".join(printable(n, 60) for n in names[:most])
    return shown + (f" and {len(names) - most} more" if len(names) > most else "")


def _read_table_text(spec_path: str, csv_path: Path) -> str:
    """The table's text, through the guarded reader; a clear error naming the file."""
    from ..netlist.source import read_text

    try:
        text = read_text(csv_path, SpecError, "variants table")
    except NetcheckError as err:
        hint = ("; save the table as UTF-8 (a spreadsheet's 'CSV UTF-8' format, or "
                "iconv -f latin1 -t utf-8)") if "not UTF-8 text" in err.message else ""
        raise _variant_error(spec_path, "variants.table", f"{csv_path}: {err.message}{hint}",
                             code=err.code if err.code != "NC200" else "NC202") from None
    return text.removeprefix("\ufeff")  # the byte-order mark spreadsheets write


def read_variant_table(spec_path: str, csv_path: str | Path,
                       design_root: str | None = None) -> list[Job]:
    """One Job per row of a variants CSV table (header ``name,<param>,...``).

    The table is read through :func:`netcheck.netlist.source.read_text` (a regular file within
    the size budget, UTF-8); each job keeps its own row and the table's SHA-256, so
    memory stays linear in the number of rows.

    Raises
    ------
    SpecError
        At ``variants.table``, naming the file and its line: unreadable or not UTF-8,
        a bad header or cell, a field over csv's size limit, more than
        :data:`MAX_VARIANT_ROWS` rows (NC205).
    """
    csv_path = Path(csv_path)
    text = _read_table_text(spec_path, csv_path)
    digest = hashlib.sha256(text.encode("utf-8")).hexdigest()
    fail = lambda line, msg, code="NC202": _variant_error(  # noqa: E731
        spec_path, "variants.table", f"{csv_path}:{line}: {msg}", code)
    seen: list[str] = []

    def lines() -> Iterable[str]:
        for line in io.StringIO(text, newline=""):
            seen.append(line)
            yield line

    reader = csv.reader(lines(), strict=True)  # a stray quote is an error, not a merge
    header: list[str] | None = None
    header_text = ""
    jobs: list[Job] = []
    line = 0
    while True:
        first = reader.line_num + 1
        seen.clear()
        try:
            row = next(reader)
        except StopIteration:
            break
        except csv.Error as err:
            raise fail(reader.line_num or first, f"not readable as CSV ({err}); a cell over "
                       f"{csv.field_size_limit() // 1024} KiB or a stray quote or NUL "
                       "character is not a table of parameter values") from None
        line = first
        if not any(c.strip() for c in row):
            continue
        raw = "".join(seen).rstrip("\r\n")
        if header is None:
            header = [h.strip() for h in row]
            header_text = raw
            if header[0].lower() != "name" or len(header) < 2:
                raise fail(line, "header must be name,<param>,<param>...")
            params = [h.lower() for h in header[1:]]
            twice = sorted(k for k, n in Counter(params).items() if n > 1)
            if "" in params or twice:
                raise fail(line, "every column after name needs its own parameter name"
                           + (f"; repeated: {_names(twice)}" if twice else ""))
            continue
        if len(jobs) >= MAX_VARIANT_ROWS:
            raise fail(line, f"more than {MAX_VARIANT_ROWS:,} variant rows, over the budget "
                       f"of {MAX_VARIANT_ROWS:,} rows a table; split the family", "NC205")
        if len(row) != len(header):
            raise fail(line, f"{len(row)} fields, header has {len(header)}")
        name = row[0].strip()
        if not name:
            raise fail(line, "the variant has no name (first column)")
        values = []
        for key, cell in zip(header[1:], row[1:]):
            try:
                values.append((key.lower(), parse_value(cell.strip(), key)))
            except UnitError as err:
                raise fail(line, str(err)) from None
        jobs.append(Job(spec_path, name, tuple(values), table=str(csv_path),
                        design_root=design_root, row=line,
                        row_text=f"{header_text}\n{raw}", table_sha256=digest))
    if header is None:
        raise fail(1, "header must be name,<param>,<param>... (the table is empty)")
    return jobs


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
            raise _variant_error(spec_path, key, f"{printable(pattern)!r}: '..' after a "
                                 "wildcard could leave the design root; write the folder "
                                 "out", "NC204")
        # the fixed folder of the pattern must be inside before anything is listed
        confine(str(Path(*parts[:magic])) if magic else ".", base, key, spec_path, root, why,
                shown=pattern)
        matches = []
        for m in glob.iglob(str(base / pattern)):
            listed += 1
            if listed > MAX_GLOB_MATCHES:
                raise _variant_error(spec_path, key, f"{printable(pattern)!r} matches more "
                                     f"than {MAX_GLOB_MATCHES:,} files, over the budget of "
                                     f"{MAX_GLOB_MATCHES:,} netlists a spec", "NC205")
            if not os.path.isdir(m):
                matches.append(m)
        if not matches:
            raise _variant_error(spec_path, key, f"{printable(pattern)!r} matches no file")
        for m in sorted(matches):
            confine(m, Path(), key, spec_path, root, why, shown=f"{pattern} → {m}")
            jobs.append(Job(spec_path, Path(m).stem, (), m, design_root=design_root))
    return jobs


def _variant_jobs(spec_path: str, table: object, design_root: str | None = None) -> list[Job]:
    rd = SpecReader(table, "variants", spec_path, VARIANT_KEYS)
    root, why = resolve_design_root(spec_path, design_root)
    jobs: list[Job] = []
    if rd.has("table"):
        written = rd.text("table")
        csv_path = confine(written, Path(spec_path).parent, "variants.table", spec_path,
                           root, why)
        jobs += read_variant_table(spec_path, csv_path, design_root)
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
        jobs.append(Job(spec_path, name, values, design_root=design_root))
    patterns = rd.raw("netlists", [])
    if isinstance(patterns, str):
        patterns = [patterns]
    if not isinstance(patterns, list) or not all(isinstance(p, str) and p.strip()
                                                 for p in patterns):
        rd.fail("netlists", f"expected a list of paths or globs, got {patterns!r:.80}")
    jobs += _glob_netlists(spec_path, patterns, root, why, design_root)
    if len(jobs) > MAX_VARIANTS:
        rd.fail("", f"{len(jobs):,} variants, over the budget of {MAX_VARIANTS:,} a spec",
                code="NC205")
    dupes = sorted(n for n, count in Counter(j.variant for j in jobs).items() if count > 1)
    if dupes:
        rd.fail("", f"variant names must be unique; repeated: {_names(dupes)}")
    return jobs


def expand_jobs(spec_paths: Sequence[str], design_root: str | None = None,
                allow_negative: bool = False, plot_detail: bool = True
                ) -> list[Job | SpecResult]:
    """One Job per spec, or per variant of a spec that declares ``[variants]``.

    Never raises: a spec whose variants are broken, over a budget or outside the design
    root (``design_root``: the explicit root, ``--root``) yields an error SpecResult in
    its place; running out of memory NC421, a bug NC500. ``allow_negative`` (the command
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
            table = spec.table("variants")
            if table is None:
                out.append(Job(path, design_root=design_root))
                continue
            try:
                jobs = _variant_jobs(path, table, design_root)
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
    """Runs jobs one after another in this process (``task``: run_job, or a stand-in)."""

    def __init__(self, task: Callable[[Job], SpecResult] = run_job) -> None:
        self.task = task

    def map(self, jobs: Sequence[Job], progress: Progress | None = None) -> list[SpecResult]:
        from ..analyses.nominal import failure_result

        out = []
        for job in jobs:
            try:
                out.append(self.task(job))
            except Exception as exc:  # noqa: BLE001 - a task other than run_job may raise
                out.append(failure_result(job.spec, exc, job.variant))
            _tick(progress, len(out), len(jobs))
        return out


def lost_result(job: Job, how: str) -> SpecResult:
    """The NC420 result of a job whose worker process was lost."""
    from ..analyses.nominal import error_result

    err = NetcheckError(f"worker process lost: {how}; the job was not checked (a job that "
                        "runs out of memory is killed by the system: lower its sweep "
                        "points or Monte Carlo samples)", code="NC420", path=job.spec)
    return error_result(job.spec, err, job.netlist or "", variant=job.variant)


# --- local worker processes -------------------------------------------------------------

_PR_SET_PDEATHSIG = 1  # linux/prctl.h
#: per round, a flag per job set by the worker: 0 not started, 1 running, 2 finished
_FLAGS = None


def _die_with_parent(parent: int | None) -> None:
    """Make this worker end when the process that started it ends, however it ends.

    On Linux the kernel kills the worker when its parent dies (prctl PR_SET_PDEATHSIG);
    everywhere a daemon thread ends it when its parent changes. ``parent`` is the pid
    the worker's parent must have; a different one means it already died.
    """
    if sys.platform.startswith("linux"):
        try:
            import ctypes
            libc = ctypes.CDLL(None, use_errno=True)
            libc.prctl(_PR_SET_PDEATHSIG, int(signal.SIGKILL), 0, 0, 0)
        except (OSError, AttributeError, ValueError):  # no libc prctl: the thread remains
            pass
    ppid = os.getppid()
    if parent is not None and ppid != parent:
        os._exit(1)

    def watch() -> None:
        while os.getppid() == ppid:
            time.sleep(0.5)
        os._exit(1)

    threading.Thread(target=watch, name="netcheck-parent-watch", daemon=True).start()


def _worker_init(parent: int | None, flags: object) -> None:
    global _FLAGS
    _FLAGS = flags
    _die_with_parent(parent)


def _run_flagged(k: int, job: Job, task: Callable[[Job], SpecResult]) -> SpecResult:
    if _FLAGS is not None:
        _FLAGS[k] = 1
    result = task(job)
    if _FLAGS is not None:
        _FLAGS[k] = 2
    return result


class LocalExecutor:
    """Runs jobs in ``workers`` local processes; results come back in job order.

    Workers end with this process (even when it is killed). A worker that dies costs
    only its job: the jobs it did not finish are run again in a fresh pool, the one it
    was running alone in a pool of its own; a job that kills its worker there too gets
    an NC420 result. ``task`` is the function run per job (run_job, or a stand-in).
    """

    def __init__(self, workers: int | None = None,
                 task: Callable[[Job], SpecResult] = run_job) -> None:
        self.workers = workers or os.cpu_count() or 1
        self.task = task

    def map(self, jobs: Sequence[Job], progress: Progress | None = None) -> list[SpecResult]:
        jobs = list(jobs)
        if self.workers <= 1 or len(jobs) <= 1:
            return SerialExecutor(self.task).map(jobs, progress)
        results: list[SpecResult | None] = [None] * len(jobs)
        count = 0

        def finish(i: int, result: SpecResult) -> None:
            nonlocal count
            results[i], count = result, count + 1
            _tick(progress, count, len(jobs))

        todo, suspects = list(range(len(jobs))), []
        while todo or suspects:
            alone = not todo
            batch = suspects if alone else todo
            before = count
            lost = self._round(jobs, batch, 1 if alone else self.workers, finish)
            running = [i for i, flag in lost if flag == 1]
            rest = [i for i, flag in lost if flag != 1]
            if alone:
                for i in running:  # killed its worker a second time, alone
                    finish(i, lost_result(jobs[i], "the job's worker died twice, the "
                                                   "second time running it alone"))
                if lost and not running and count == before:  # no worker runs at all
                    for i in rest:
                        finish(i, lost_result(jobs[i], "no worker process could run it"))
                    rest = []
                suspects = rest
            elif lost and not running and count == before:
                todo, suspects = [], suspects + rest  # no progress: one at a time
            else:
                todo, suspects = rest, suspects + running
        return results  # type: ignore[return-value]

    def _round(self, jobs: list[Job], batch: list[int], workers: int,
               finish: Callable[[int, SpecResult], None]) -> list[tuple[int, int]]:
        """Run ``batch`` in a fresh pool; (job index, flag) of the jobs a dead worker lost."""
        import multiprocessing
        from concurrent.futures import ProcessPoolExecutor, as_completed
        from concurrent.futures.process import BrokenProcessPool

        from ..analyses.nominal import failure_result

        ctx = multiprocessing.get_context()
        flags = ctx.RawArray("b", len(batch))
        parent = None if ctx.get_start_method() == "forkserver" else os.getpid()
        pool = ProcessPoolExecutor(max_workers=min(workers, len(batch)), mp_context=ctx,
                                   initializer=_worker_init, initargs=(parent, flags))
        lost = []
        try:
            futures = {pool.submit(_run_flagged, k, jobs[i], self.task): (k, i)
                       for k, i in enumerate(batch)}
            for future in as_completed(futures):
                k, i = futures[future]
                try:
                    finish(i, future.result())
                except BrokenProcessPool:
                    lost.append((i, flags[k]))
                except Exception as exc:  # noqa: BLE001 - the task raised: this job only
                    finish(i, failure_result(jobs[i].spec, exc, jobs[i].variant))
        except BaseException:  # interrupted: stop the workers now, not after their jobs
            for proc in list((getattr(pool, "_processes", None) or {}).values()):
                proc.kill()
            pool.shutdown(wait=False, cancel_futures=True)
            raise
        pool.shutdown(wait=True, cancel_futures=True)
        return sorted(lost)


class DaskExecutor:
    """Runs jobs on an existing Dask distributed scheduler at ``address``.

    A job whose worker dies (KilledWorker) or that the cluster loses becomes an NC420
    result, any other exception from its future an NC500 result; the other jobs run
    on. A bad address or an unreachable scheduler is a SpecError before any job runs.
    """

    def __init__(self, address: str, task: Callable[[Job], SpecResult] = run_job) -> None:
        self.address = address
        self.task = task

    def map(self, jobs: Sequence[Job], progress: Progress | None = None) -> list[SpecResult]:
        try:
            from distributed import Client, KilledWorker
        except ImportError as err:  # pragma: no cover - depends on the install
            raise SpecError("--cluster needs Dask distributed, which is not installed: run "
                            "pip install '.[cluster]' in the netcheck checkout",
                            code="NC200") from err
        from concurrent.futures import CancelledError

        from ..analyses.nominal import failure_result

        try:
            client = Client(self.address, timeout="20s", set_as_default=False)
        except (OSError, ValueError, TypeError) as err:
            raise SpecError(f"cannot reach the Dask scheduler at {self.address!r}: {err}",
                            code="NC200") from None
        try:
            futures = client.map(self.task, list(jobs), pure=False)
            out = []
            for job, future in zip(jobs, futures):  # in job order: the display advances
                try:
                    out.append(future.result())
                except KilledWorker as exc:
                    out.append(lost_result(job, f"its Dask worker died ({exc})"))
                except (OSError, CancelledError) as exc:
                    out.append(lost_result(job, f"the Dask cluster lost it "
                                                f"({type(exc).__name__}: {exc})"))
                except Exception as exc:  # noqa: BLE001 - costs this job only
                    out.append(failure_result(job.spec, exc, job.variant))
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
