"""Executors that run many jobs: in this process, in local worker processes or on Dask.

A worker process that dies costs only the job it was running (run-420); results come back
in the jobs' order (:func:`run_all`).
"""

from __future__ import annotations

import os
import signal
import sys
import threading
import time
from typing import Callable, Iterable, Protocol, Sequence

from ..exceptions import NetcheckError, SpecError
from ..result import SpecResult
from .jobs import run_job
from .variant_table import Job

__all__ = ["Executor", "SerialExecutor", "LocalExecutor", "DaskExecutor", "run_all",
           "lost_result", "Progress"]


Progress = Callable[[int, int], None]


def _tick(progress: Progress | None, done: int, total: int) -> None:
    if progress is not None:
        progress(done, total)


class Executor(Protocol):
    """Maps :func:`~netcheck.runs.jobs.run_job` over jobs and returns results in the jobs' order.

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
    """The run-420 result of a job whose worker process was lost."""
    from ..analyses.nominal import error_result

    err = NetcheckError(f"worker process lost: {how}; the job was not checked (a job that "
                        "runs out of memory is killed by the system: lower its sweep "
                        "points or Monte Carlo samples)", code="run-420", path=job.spec)
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
    an run-420 result. ``task`` is the function run per job (run_job, or a stand-in).
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

    A job whose worker dies (KilledWorker) or that the cluster loses becomes an run-420
    result, any other exception from its future an internal-500 result; the other jobs run
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
                            code="spec-200") from err
        from concurrent.futures import CancelledError

        from ..analyses.nominal import failure_result

        try:
            client = Client(self.address, timeout="20s", set_as_default=False)
        except (OSError, ValueError, TypeError) as err:
            raise SpecError(f"cannot reach the Dask scheduler at {self.address!r}: {err}",
                            code="spec-200") from None
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
