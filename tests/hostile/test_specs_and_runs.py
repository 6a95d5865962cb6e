"""Hostile specs, variant families and runs: one broken input never costs the others.

Every hostile input is built here, in tmp_path. Anything that could exhaust memory or
time without the guards runs in a child interpreter with a timeout and an address-space
limit (``run_isolated``), so a regression fails this test instead of the machine.
"""

from __future__ import annotations

import hashlib
import importlib.util
import json
import os
import resource
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest

from netcheck.runs import jobs as batch
from netcheck.runs.batch import (DaskExecutor, Job, LocalExecutor, SerialExecutor, expand_jobs,
                            run_all, run_job)
from netcheck.analyses.nominal import TRACEBACK_MAX, check_spec
from netcheck.exceptions import CODES, INTERNAL_CODE, SpecError
from netcheck.result import Status
from netcheck.spec import (MAX_FREQUENCY_HZ, MAX_LIMITS, MAX_NESTING, MAX_SWEEP_POINTS,
                           MIN_FREQUENCY_HZ, MIN_SWEEP_POINTS, design_root, load_spec,
                           parse_spec, read_toml, validate_sweep)

REPO = Path(__file__).resolve().parents[2]

#: first-order RC low-pass, corner 1/(2 pi R C) = 1.001 kHz (textbook closed form)
RC = """Quillmere Instruments RC low-pass
.param rval=1k
V1 in 0 AC 1
R1 in out {rval}
C1 out 0 159n
.end
"""

#: a corner limit the RC meets (900 Hz .. 1.1 kHz)
SPEC = """netlist = "{netlist}"
source = "V1"
output = "out"
[sweep]
start = "10"
stop = "100k"
points_per_decade = {ppd}
[[limits]]
kind = "corner"
range = ["900", "1100"]
"""


def write(path: Path, text: str | bytes) -> Path:
    path.parent.mkdir(parents=True, exist_ok=True)
    if isinstance(text, bytes):
        path.write_bytes(text)
    else:
        path.write_text(text, encoding="utf-8")
    return path


def spec_file(folder: Path, name: str = "good", netlist: str = "rc.cir", ppd: int = 20,
              extra: str = "") -> Path:
    """A spec ``name``.toml in ``folder`` (with rc.cir beside it) plus ``extra`` TOML."""
    if not (folder / "rc.cir").exists():
        write(folder / "rc.cir", RC)
    return write(folder / f"{name}.toml", SPEC.format(netlist=netlist, ppd=ppd) + extra)


def codes(result) -> set[str]:
    return {c.code for c in result.cautions}


def run_isolated(code: str, cwd: Path, timeout: float = 180,
                 memory: int = 3 * 2**30) -> list:
    """Run ``code`` in a child interpreter (this checkout first on its path) with
    ``memory`` bytes of address space; returns the JSON it prints last."""
    env = {**os.environ, "PYTHONPATH": os.pathsep.join([str(REPO), str(REPO / "tests")]),
           "OPENBLAS_NUM_THREADS": "1", "OMP_NUM_THREADS": "1", "MKL_NUM_THREADS": "1"}

    def limit() -> None:
        resource.setrlimit(resource.RLIMIT_AS, (memory, memory))

    proc = subprocess.run([sys.executable, "-c", textwrap.dedent(code)], cwd=cwd, env=env,
                          capture_output=True, text=True, timeout=timeout, preexec_fn=limit)
    assert proc.returncode == 0, proc.stderr[-3000:]
    return json.loads(proc.stdout.strip().splitlines()[-1])


#: prints [status, codes, error] of every result of the specs named in ARGS
RUN_ALL = """
import json
from netcheck.runs.batch import SerialExecutor, expand_jobs, run_all
out = [[r.status.value, sorted(c.code for c in r.cautions), r.error or ""]
       for r in run_all(expand_jobs(ARGS), SerialExecutor())]
print(json.dumps(out))
"""


# ---------------------------------------------------------------------------------------
# one broken input never costs the others
# ---------------------------------------------------------------------------------------

class TestOneBadInputCostsOnlyItself:
    def test_billion_points_per_decade_beside_a_good_spec(self, tmp_path):
        # 4 decades at 1e9 points per decade: a 4e9-point grid (32 GB of frequencies)
        spec_file(tmp_path)
        spec_file(tmp_path, "huge", ppd=1_000_000_000)
        (good, huge) = run_isolated(RUN_ALL.replace("ARGS", "['good.toml', 'huge.toml']"),
                                    tmp_path)
        assert good[0] == "pass"
        assert huge[0] == "error" and "spec-205" in huge[1]
        assert "huge.toml:7:" in huge[2] and "4,000,000,001 grid points" in huge[2]
        assert f"{MAX_SWEEP_POINTS:,}" in huge[2]

    def test_toml_bomb_beside_a_good_spec(self, tmp_path):
        spec_file(tmp_path)
        n = 100_000
        write(tmp_path / "bomb.toml", 'netlist = "rc.cir"\nx = ' + "[" * n + "]" * n + "\n")
        items = expand_jobs([str(tmp_path / "good.toml"), str(tmp_path / "bomb.toml")])
        good, bomb = run_all(items, SerialExecutor())
        assert good.status is Status.PASS
        assert bomb.status is Status.ERROR and codes(bomb) == {"spec-205"}
        assert "bomb.toml:2:" in bomb.error and f"budget of {MAX_NESTING}" in bomb.error
        assert "Traceback" not in bomb.error

    def test_latin1_variants_table(self, tmp_path):
        spec_file(tmp_path)
        spec_file(tmp_path, "fam", extra='[variants]\ntable = "fam.csv"\n')
        write(tmp_path / "fam.csv", "name,rval\nrésistance-basse,1k\n".encode("latin-1"))
        items = expand_jobs([str(tmp_path / "fam.toml"), str(tmp_path / "good.toml")])
        fam, good = run_all(items, SerialExecutor())
        assert good.status is Status.PASS
        assert fam.status is Status.ERROR and "fam.csv" in fam.error
        assert "not UTF-8" in fam.error and "save the table as UTF-8" in fam.error
        assert "variants.table" in fam.error

    def test_table_cell_over_the_csv_field_limit(self, tmp_path):
        spec_file(tmp_path, "fam", extra='[variants]\ntable = "fam.csv"\n')
        write(tmp_path / "fam.csv", "name,rval\na,1k\nb," + "9" * 200_000 + "\n")
        (fam,) = run_all(expand_jobs([str(tmp_path / "fam.toml")]), SerialExecutor())
        assert fam.status is Status.ERROR and codes(fam) == {"spec-202"}
        assert "fam.csv:3:" in fam.error and "128 KiB" in fam.error
        assert "9" * 1000 not in fam.error

    @pytest.mark.parametrize("value, words", [
        ("5", "expected a list of paths or globs, got 5"),
        ("[5]", "expected a list of paths or globs"),
        ('[""]', "expected a list of paths or globs"),
        ("{ a = 1 }", "expected a list of paths or globs"),
    ])
    def test_variants_netlists_of_the_wrong_type(self, tmp_path, value, words):
        spec_file(tmp_path)
        spec_file(tmp_path, "fam", extra=f"[variants]\nnetlists = {value}\n")
        items = expand_jobs([str(tmp_path / "fam.toml"), str(tmp_path / "good.toml")])
        fam, good = run_all(items, SerialExecutor())
        assert good.status is Status.PASS
        assert fam.status is Status.ERROR and words in fam.error
        assert "fam.toml:12:1: error spec-202: variants.netlists" in fam.error

    def test_an_exception_inside_a_check_is_an_internal_error_result(self, tmp_path,
                                                                      monkeypatch):
        import netcheck.analyses.nominal as evaluate

        spec_file(tmp_path)
        spec_file(tmp_path, "other")

        def broken(spec, circuit, *args, **kwargs):
            if spec.path.endswith("other.toml"):
                raise ZeroDivisionError("stand-in for a bug deep in a check")
            return real(spec, circuit, *args, **kwargs)

        real = evaluate.evaluate
        monkeypatch.setattr(evaluate, "evaluate", broken)
        items = expand_jobs([str(tmp_path / "other.toml"), str(tmp_path / "good.toml")])
        other, good = run_all(items, SerialExecutor())
        assert good.status is Status.PASS
        assert other.status is Status.ERROR and codes(other) == {INTERNAL_CODE}
        # the contract with the command line: the error ends with the traceback
        head, _, trace = other.error.partition("\n")
        assert "error internal-500: internal error in netcheck (a bug), ZeroDivisionError" in head
        assert trace.startswith("Traceback") and trace.rstrip().endswith(
            "ZeroDivisionError: stand-in for a bug deep in a check")
        assert "in broken" in trace

    def test_a_long_traceback_is_cut_to_its_last_characters(self, tmp_path, monkeypatch):
        import netcheck.analyses.nominal as evaluate

        def broken(*args, **kwargs):
            raise ValueError("bottom " + "q" * 3 * TRACEBACK_MAX + " end")

        monkeypatch.setattr(evaluate, "evaluate", broken)
        res = check_spec(str(spec_file(tmp_path)))
        head, _, trace = res.error.partition("\n")
        assert len(head) < 600  # the message quotes the start of the exception's text
        assert TRACEBACK_MAX <= len(trace) <= TRACEBACK_MAX + 10
        assert trace.endswith("q" * 100 + " end")

    @pytest.mark.parametrize("exc", [MemoryError, RecursionError])
    def test_exhaustion_is_nc421_without_a_traceback(self, tmp_path, monkeypatch, exc):
        import netcheck.analyses.nominal as evaluate

        def exhausted(*args, **kwargs):
            raise exc()

        monkeypatch.setattr(evaluate, "evaluate", exhausted)
        spec = spec_file(tmp_path)
        (res,) = run_all(expand_jobs([str(spec)]), SerialExecutor())
        assert res.status is Status.ERROR and codes(res) == {"run-421"}
        assert "Traceback" not in res.error and exc.__name__ in res.error

    def test_expand_jobs_never_raises(self, tmp_path, monkeypatch):
        spec_file(tmp_path)
        spec_file(tmp_path, "fam", extra='[variants]\ntable = "fam.csv"\n')
        write(tmp_path / "fam.csv", "name,rval\na,1k\n")

        def broken(*args, **kwargs):
            raise KeyError("stand-in for a bug while expanding variants")

        monkeypatch.setattr(batch, "_variant_jobs", broken)
        fam, good = expand_jobs([str(tmp_path / "fam.toml"), str(tmp_path / "good.toml")])
        assert isinstance(good, Job)
        assert fam.status is Status.ERROR and codes(fam) == {INTERNAL_CODE}
        assert fam.error.rstrip().endswith("'stand-in for a bug while expanding variants'")

    def test_run_job_never_raises(self, tmp_path, monkeypatch):
        def broken(job):
            raise TypeError("stand-in for a bug in the worker's cache")

        monkeypatch.setattr(batch, "_cached_inputs", broken)
        res = run_job(Job(str(spec_file(tmp_path))))
        assert res.status is Status.ERROR and codes(res) == {INTERNAL_CODE}


# ---------------------------------------------------------------------------------------
# worker processes
# ---------------------------------------------------------------------------------------

KILLERS = '''
import os
import signal
from pathlib import Path

from netcheck.runs.batch import run_job


def kill_boom(job):
    """Kill the worker on the variant named boom (every time); run the others."""
    if job.variant == "boom":
        os.kill(os.getpid(), signal.SIGKILL)
    return run_job(job)


def kill_once(job):
    """Kill the worker the first time the variant named flaky runs."""
    marker = Path(job.spec).parent / "flaky-was-killed"
    if job.variant == "flaky" and not marker.exists():
        marker.write_text("")
        os.kill(os.getpid(), signal.SIGKILL)
    return run_job(job)
'''


@pytest.fixture
def killers(tmp_path, monkeypatch):
    """A module of stand-in tasks that kill their worker process (importable by workers)."""
    folder = tmp_path / "killers"
    write(folder / "qm_killers.py", KILLERS)
    monkeypatch.syspath_prepend(str(folder))
    monkeypatch.setenv("PYTHONPATH", os.pathsep.join(
        [str(folder), str(REPO), os.environ.get("PYTHONPATH", "")]))
    spec = importlib.util.spec_from_file_location("qm_killers", folder / "qm_killers.py")
    module = importlib.util.module_from_spec(spec)
    monkeypatch.setitem(sys.modules, "qm_killers", module)
    spec.loader.exec_module(module)
    return module


@pytest.fixture
def own_environ():
    """Restore os.environ afterwards: a LocalCluster's nanny sets PYTHONHASHSEED, thread
    counts and more in this process's environment, which later child processes inherit."""
    saved = dict(os.environ)
    yield
    os.environ.clear()
    os.environ.update(saved)


@pytest.fixture
def family(tmp_path) -> Path:
    """Eight variants of the RC (R from 900 to 1.2 k: corners 1.11 kHz .. 834 Hz)."""
    rows = ["name,rval"] + [f"{name},{r}" for name, r in
                            [("a", "900"), ("b", "950"), ("boom", "1k"), ("c", "1.05k"),
                             ("flaky", "1.1k"), ("d", "1.15k"), ("e", "1.2k"), ("f", "1k")]]
    write(tmp_path / "fam.csv", "\n".join(rows) + "\n")
    return spec_file(tmp_path, "fam", extra='[variants]\ntable = "fam.csv"\n')


class TestWorkers:
    def test_a_job_that_kills_its_worker_costs_only_itself(self, family, killers):
        jobs = expand_jobs([str(family)])
        got = run_all(jobs, LocalExecutor(2, task=killers.kill_boom))
        want = run_all(jobs, SerialExecutor())
        assert [r.variant for r in got] == [j.variant for j in jobs]
        for job, res, ref in zip(jobs, got, want):
            if job.variant == "boom":
                assert res.status is Status.ERROR and codes(res) == {"run-420"}
                assert "worker process lost" in res.error
            else:
                assert res == ref

    def test_a_worker_killed_once_is_run_again(self, family, killers):
        jobs = expand_jobs([str(family)])
        got = run_all(jobs, LocalExecutor(3, task=killers.kill_once))
        assert (family.parent / "flaky-was-killed").exists()
        assert got == run_all(jobs, SerialExecutor())

    def test_dask_killed_worker_costs_only_its_job(self, family, killers, own_environ):
        distributed = pytest.importorskip("distributed")
        import dask

        jobs = expand_jobs([str(family)])
        # tasks queued on the scheduler, one at a time per worker, and one retry: the
        # job that kills its worker dies twice, and no other job is ever running beside it
        with dask.config.set({"distributed.scheduler.allowed-failures": 1,
                              "distributed.scheduler.worker-saturation": 1.0}):
            with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                          dashboard_address=None, host="127.0.0.1") as cl:
                got = run_all(jobs, DaskExecutor(cl.scheduler_address,
                                                 task=killers.kill_boom))
        want = run_all(jobs, SerialExecutor())
        assert [r.variant for r in got] == [j.variant for j in jobs]
        for job, res, ref in zip(jobs, got, want):
            if job.variant == "boom":
                assert codes(res) == {"run-420"} and "Dask worker died" in res.error
            else:
                assert res == ref

    @pytest.mark.parametrize("address", ["no-port-here", "xyz://qm-cluster:1"])
    def test_dask_bad_address_is_a_clear_error(self, family, address):
        pytest.importorskip("distributed")
        with pytest.raises(SpecError) as info:
            DaskExecutor(address).map(expand_jobs([str(family)]))
        assert "cannot reach the Dask scheduler" in info.value.message
        assert address in info.value.message


SLOW = """
[tolerances]
default = { R = "1%", C = "5%" }
[analysis]
mode = ["monte_carlo"]
samples = 1000000
memory_mib = 200
"""


def _descendants(pid: int) -> list[int]:
    """Every process below ``pid`` (from /proc: parent pid is field 4 of stat)."""
    parents: dict[int, int] = {}
    for entry in os.listdir("/proc"):
        if entry.isdigit():
            try:
                stat = Path(f"/proc/{entry}/stat").read_text()
            except OSError:
                continue
            parents[int(entry)] = int(stat.rsplit(")", 1)[1].split()[1])
    found, frontier = [], [pid]
    while frontier:
        kids = [p for p, pp in parents.items() if pp in frontier]
        found += kids
        frontier = kids
    return found


def _alive(pid: int) -> bool:
    try:
        state = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
    except OSError:
        return False
    return state != "Z"


@pytest.mark.skipif(not Path("/proc/self/stat").exists(), reason="needs /proc")
@pytest.mark.parametrize("sig", [signal.SIGKILL, signal.SIGTERM], ids=["SIGKILL", "SIGTERM"])
def test_workers_end_with_the_main_process(tmp_path, sig):
    specs = [spec_file(tmp_path, f"slow{i}", extra=SLOW) for i in range(4)]
    env = {**os.environ, "PYTHONPATH": str(REPO), "OPENBLAS_NUM_THREADS": "1"}
    main = subprocess.Popen([sys.executable, "-m", "netcheck", "check", "--jobs", "2",
                             *map(str, specs)], cwd=tmp_path, env=env,
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    workers: list[int] = []
    try:
        deadline = time.monotonic() + 60
        while len(workers) < 2 and time.monotonic() < deadline and main.poll() is None:
            time.sleep(0.2)
            workers = _descendants(main.pid)
        assert len(workers) >= 2, "the workers did not start"
        time.sleep(1.0)  # well into their first Monte Carlo run
        workers = _descendants(main.pid)
        main.send_signal(sig)
        main.wait(timeout=30)
        deadline = time.monotonic() + 10
        while any(map(_alive, workers)) and time.monotonic() < deadline:
            time.sleep(0.1)
        assert not [p for p in workers if _alive(p)], "workers outlived the main process"
        # nothing holds the output pipes any more: reading them ends
        main.stdout.read()
        main.stderr.read()
    finally:
        for pid in [main.pid, *workers]:
            try:
                os.kill(pid, signal.SIGKILL)
            except OSError:
                pass
        main.wait(timeout=30)
        main.stdout.close()
        main.stderr.close()


# ---------------------------------------------------------------------------------------
# budgets
# ---------------------------------------------------------------------------------------

class TestSweepBudgets:
    @pytest.mark.parametrize("start, stop, ppd, key, words", [
        (10.0, 1e5, 1_000_000_000, "points_per_decade", "4,000,000,001 grid points"),
        (1e3, 1e6, 333_334, "points_per_decade", "1,000,003 grid points"),
        (1e3, 1e308, 100, "stop", "stop 1e+308 Hz is above the highest sweep frequency"),
        (1e3, 2e15, 10, "stop", "1e+15 Hz"),
        (1e-9, 1e3, 10, "start", "start 1e-09 Hz is below the lowest sweep frequency"),
        (39.5e3, 40.5e3, 50, "points_per_decade", "gives only 2 grid points"),
    ])
    def test_over_budget_is_nc205_with_the_number_and_the_budget(self, start, stop, ppd,
                                                                 key, words):
        with pytest.raises(SpecError) as info:
            validate_sweep(start, stop, ppd)
        err = info.value
        assert err.code == "spec-205" and err.where == f"sweep.{key}"
        assert words in err.message

    def test_too_few_points_says_what_would_do(self):
        with pytest.raises(SpecError) as info:
            validate_sweep(39.5e3, 40.5e3, 50)
        need = int(info.value.message.rsplit("at least ", 1)[1])
        validate_sweep(39.5e3, 40.5e3, need)  # the advice is enough
        with pytest.raises(SpecError):
            validate_sweep(39.5e3, 40.5e3, need - 1)  # and not more than needed

    @pytest.mark.parametrize("start, stop, ppd", [
        (float("nan"), 1e3, 10), (1.0, float("inf"), 10), (-1.0, 1e3, 10),
        (1e3, 1e3, 10), (2e3, 1e3, 10), (1.0, 1e3, 0), (1.0, 1e3, True), (1.0, 1e3, 2.5),
    ])
    def test_malformed_is_nc202(self, start, stop, ppd):
        with pytest.raises(SpecError) as info:
            validate_sweep(start, stop, ppd)
        assert info.value.code == "spec-202"

    def test_the_edges_are_inside(self):
        validate_sweep(MIN_FREQUENCY_HZ, MAX_FREQUENCY_HZ, 20)
        validate_sweep(1e3, 1e6, 333_333)  # round(3 * 333333) + 1 = 1,000,000 points
        validate_sweep(1e3, 1.1e3, 48)  # round(0.0414 * 48) + 1 = MIN_SWEEP_POINTS
        assert MIN_SWEEP_POINTS == 3

    def test_stop_at_1e308_in_a_spec_is_located(self, tmp_path):
        # without the budget this reached the solver and ended in a linear-algebra error
        write(tmp_path / "rc.cir", RC)
        text = SPEC.format(netlist="rc.cir", ppd=20).replace('stop = "100k"', "stop = 1e308")
        res = check_spec(str(write(tmp_path / "far.toml", text)))
        assert res.status is Status.ERROR and codes(res) == {"spec-205"}
        assert res.error.startswith(f"{tmp_path / 'far.toml'}:6:1: error spec-205: sweep.stop:")


class TestNesting:
    def test_the_budget_and_one_more(self):
        head = SPEC.format(netlist="rc.cir", ppd=20)
        inner = "x = " + "[" * MAX_NESTING + "]" * MAX_NESTING + "\n"
        err = pytest.raises(SpecError, parse_spec, inner + head, "q.toml").value
        assert err.code == "spec-201"  # read, then refused as an unknown key
        deeper = "x = " + "[" * (MAX_NESTING + 1) + "]" * (MAX_NESTING + 1) + "\n"
        err = pytest.raises(SpecError, parse_spec, deeper + head, "q.toml").value
        assert err.code == "spec-205" and err.span.line == 1
        assert err.span.column == 5 + MAX_NESTING

    def test_brackets_in_strings_and_comments_do_not_count(self, tmp_path):
        # 900 brackets: far over the nesting budget, within the 1,000-character text
        # budget of a title or name (MAX_TEXT_CHARS)
        many = "[" * 900
        text = (f'title = "{many}"\n# {many}\n' + SPEC.format(netlist="rc.cir", ppd=20)
                + f"[[limits]]\nkind = 'gain'\nname = '''{many}\n'''\nband = ['10', '20']\n"
                f'max_db = 1\n[[limits]]\nkind = "gain"\nname = """{many}\\"""\n"""\n'
                "band = ['10', '20']\nmax_db = 2\n")
        res = check_spec(str(spec_file(tmp_path, "s")))
        spec = parse_spec(text, str(tmp_path / "s.toml"))
        assert res.status is Status.PASS
        assert spec.title == many and len(spec.limits) == 3

    def test_deep_dotted_keys_are_refused(self):
        text = "a" + ".a" * 200 + " = 1\n" + SPEC.format(netlist="rc.cir", ppd=20)
        err = pytest.raises(SpecError, parse_spec, text, "q.toml").value
        assert err.code == "spec-205" and "tables nest more than" in err.message

    def test_read_toml_names_the_file(self, tmp_path):
        bomb = write(tmp_path / "deep.toml", "a = " + "{b = " * 10_000 + "1" + "}" * 10_000)
        err = pytest.raises(SpecError, read_toml, bomb).value
        assert err.code == "spec-205" and str(err).startswith(f"{bomb}:1:")
        assert read_toml(spec_file(tmp_path))["sweep"]["points_per_decade"] == 20


class TestTableCountBudgets:
    def test_limits(self):
        one = "[[limits]]\nkind = 'gain'\nband = ['10', '20']\nmax_db = 1\n"
        head = SPEC.format(netlist="rc.cir", ppd=20)
        # the head has one limit already
        assert len(parse_spec(head + one * (MAX_LIMITS - 1), "q.toml").limits) == MAX_LIMITS
        err = pytest.raises(SpecError, parse_spec, head + one * MAX_LIMITS, "q.toml").value
        assert err.code == "spec-205" and "10,001 [[limits]] tables" in err.message

    def test_stress(self):
        from netcheck.spec.stress import parse_stress

        table = {"source_amplitude": "1", "parts": "C*", "max_voltage": "5"}
        assert len(parse_stress([table] * MAX_LIMITS, "q.toml")) == MAX_LIMITS
        err = pytest.raises(SpecError, parse_stress, [table] * (MAX_LIMITS + 1), "q.toml").value
        assert err.code == "spec-205" and f"budget of {MAX_LIMITS:,}" in err.message


class TestFamilyBudgets:
    def test_table_rows(self, tmp_path):
        # in a child: without the budget, 100,001 variants are expanded (and their names
        # compared pairwise) before anything is checked
        rows = batch.MAX_VARIANT_ROWS + 1
        write(tmp_path / "big.csv", "name,rval\n" + "".join(f"v{i},1k\n" for i in range(rows)))
        spec_file(tmp_path, "fam", extra='[variants]\ntable = "big.csv"\n')
        code = """
            import json
            from netcheck.runs.batch import expand_jobs
            items = expand_jobs(["fam.toml"])
            print(json.dumps([[getattr(i, "error", None) or "",
                               sorted(c.code for c in getattr(i, "cautions", ()))]
                              for i in items[:3]]))
            """
        (error, found), = run_isolated(code, tmp_path, timeout=60)
        assert found == ["spec-205"]
        assert f"big.csv:{rows + 1}: more than 100,000 variant rows" in error

    def test_glob_matches(self, tmp_path, monkeypatch):
        monkeypatch.setattr(batch, "MAX_GLOB_MATCHES", 5)
        for i in range(6):
            write(tmp_path / "nets" / f"v{i}.cir", RC)
        spec = spec_file(tmp_path, "fam", extra='[variants]\nnetlists = ["nets/*.cir"]\n')
        (res,) = expand_jobs([str(spec)])
        assert codes(res) == {"spec-205"} and "matches more than 5 files" in res.error
        monkeypatch.setattr(batch, "MAX_GLOB_MATCHES", 6)
        assert [j.variant for j in expand_jobs([str(spec)])] == [f"v{i}" for i in range(6)]

    def test_monte_carlo_memory_is_capped_by_the_machine(self, tmp_path):
        # 1e8 samples with memory_mib = 1e9: without a cap the run draws 1e8 samples of
        # every part, far more than the 1.5 GiB of address space the child may use
        spec_file(tmp_path, "mc", extra='[tolerances]\ndefault = { R = "1%", C = "5%" }\n'
                  '[analysis]\nmode = ["monte_carlo"]\nsamples = 100000000\n'
                  "memory_mib = 1000000000\n")
        spec_file(tmp_path)
        code = RUN_ALL.replace("ARGS", "['mc.toml', 'good.toml']") + (
            "from netcheck.spec.tolerances import parse_analysis\n"
            "a = parse_analysis({'memory_mib': 10**9}, 'x.toml')\n"
            "print(json.dumps(out + [[a.memory_mib, a.requested_mib]]))\n")
        mc, good, (used, requested) = run_isolated(code, tmp_path, memory=3 * 2**29)
        assert good[0] == "pass"
        assert mc[0] == "error" and mc[1] == ["spec-205"]
        assert "memory_mib = 1000000000 (capped at" in mc[2]
        assert requested == 10**9 and 16 <= used <= 3 * 2**29 // 2**20 // 2


# ---------------------------------------------------------------------------------------
# the design root
# ---------------------------------------------------------------------------------------

SECRET = "Quillmere private calibration key QK-7731"

#: a valid netlist outside the design root whose content must never be shown
OUTSIDE = f"* {SECRET}\n" + RC.split("\n", 1)[1]


@pytest.fixture
def outside(tmp_path) -> Path:
    """tmp/outside/x.cir (a netlist with a secret) and tmp/design/ holding the specs."""
    write(tmp_path / "outside" / "x.cir", OUTSIDE)
    write(tmp_path / "outside" / "fam.csv", f"name,rval\n{SECRET},1k\n")
    (tmp_path / "design").mkdir()
    return tmp_path / "design"


def assert_refused(res, key: str) -> None:
    assert res.status is Status.ERROR and codes(res) == {"spec-204"}, res.error
    assert f"spec-204: {key}:" in res.error
    assert SECRET not in res.error
    assert all(SECRET not in text for _, text in res.source_text)


class TestDesignRoot:
    @pytest.mark.parametrize("netlist", ["../outside/x.cir", "OUTSIDE_ABS"])
    def test_netlist_outside(self, outside, netlist):
        netlist = netlist.replace("OUTSIDE_ABS", str(outside.parent / "outside" / "x.cir"))
        res = check_spec(str(spec_file(outside, netlist=netlist)))
        assert_refused(res, "netlist")
        assert res.error.split(": error")[0].endswith("good.toml:1:1")

    def test_symlink_inside_pointing_outside(self, outside):
        (outside / "x.cir").symlink_to(outside.parent / "outside" / "x.cir")
        assert_refused(check_spec(str(spec_file(outside, netlist="x.cir"))), "netlist")

    def test_root_key_outside(self, outside):
        spec = spec_file(outside)
        spec.write_text('root = ".."\n' + spec.read_text())
        assert_refused(check_spec(str(spec)), "root")

    @pytest.mark.parametrize("extra, key", [
        ('[variants]\ntable = "../outside/fam.csv"\n', "variants.table"),
        ('[variants]\nnetlists = ["../outside/*.cir"]\n', "variants.netlists"),
        ('[variants]\nnetlists = ["/*/../../*.cir"]\n', "variants.netlists"),
        ('[variants]\nnetlists = ["*/../../outside/*.cir"]\n', "variants.netlists"),
        ('[variants]\nnetlists = ["lnk/*.cir"]\n', "variants.netlists"),
        ('[variants]\nnetlists = ["nets/*.cir"]\n', "variants.netlists"),
    ])
    def test_variant_paths_outside(self, outside, extra, key):
        (outside / "lnk").symlink_to(outside.parent / "outside")
        write(outside / "nets" / "in.cir", RC)
        (outside / "nets" / "out.cir").symlink_to(outside.parent / "outside" / "x.cir")
        items = expand_jobs([str(spec_file(outside, "fam", extra=extra))])
        assert len(items) == 1
        assert_refused(items[0], key)

    def test_git_work_tree_is_the_root(self, tmp_path, monkeypatch):
        repo = tmp_path / "repo"
        (repo / ".git").mkdir(parents=True)  # a work tree's marker; git is not run
        write(repo / "nets" / "rc.cir", RC)
        spec = spec_file(repo / "specs", netlist="../nets/rc.cir")
        monkeypatch.chdir(tmp_path / "..")
        assert design_root(spec) == repo.resolve()
        assert check_spec(str(spec)).status is Status.PASS

    def test_current_folder_holding_the_spec_is_the_root(self, tmp_path, monkeypatch):
        write(tmp_path / "nets" / "rc.cir", RC)
        spec = spec_file(tmp_path / "specs", netlist="../nets/rc.cir")
        monkeypatch.chdir(tmp_path)
        assert check_spec("specs/good.toml").status is Status.PASS
        monkeypatch.chdir(tmp_path / "nets")  # a folder that does not hold the spec
        assert design_root(spec) == spec.parent.resolve()
        assert codes(check_spec(str(spec))) == {"spec-204"}

    def test_explicit_root(self, tmp_path, monkeypatch):
        write(tmp_path / "nets" / "rc.cir", RC)
        spec = spec_file(tmp_path / "specs", netlist="../nets/rc.cir")
        monkeypatch.chdir(tmp_path / "nets")
        assert codes(check_spec(str(spec))) == {"spec-204"}
        assert check_spec(str(spec), design_root=str(tmp_path)).status is Status.PASS
        (job,) = expand_jobs([str(spec)], design_root=str(tmp_path))
        assert job.design_root == str(tmp_path)
        assert run_job(job).status is Status.PASS
        assert codes(check_spec(str(spec), design_root=str(spec.parent))) == {"spec-204"}
        assert load_spec(spec, str(tmp_path)).design_root == str(tmp_path.resolve())

    def test_a_netlist_handed_to_check_spec_is_confined_too(self, outside):
        res = check_spec(str(spec_file(outside)), netlist=str(outside.parent / "outside" /
                                                               "x.cir"), variant="v")
        assert_refused(res, "variants.netlists")

    def test_shipped_samples_from_the_checkout_and_from_a_copy(self, tmp_path, monkeypatch):
        specs = sorted(p for p in (REPO / "specs").glob("*.toml"))
        for spec in specs:
            assert not {"spec-204"} & codes(check_spec(str(spec))), spec
        # a clone elsewhere (a .git entry marks the work tree), checked from outside it
        clone = tmp_path / "clone"
        for folder in ("specs", "sample_netlists"):
            for f in (REPO / folder).rglob("*"):
                if f.is_file():
                    write(clone / f.relative_to(REPO), f.read_bytes())
        write(clone / ".git", "gitdir: ../elsewhere\n")  # a linked work tree's .git file
        monkeypatch.chdir(tmp_path)
        for spec in specs:
            res = check_spec(str(clone / "specs" / spec.name))
            assert not {"spec-204"} & codes(res), res.error


# ---------------------------------------------------------------------------------------
# the variants table
# ---------------------------------------------------------------------------------------

class TestVariantTable:
    def test_each_variant_carries_its_own_row_not_the_table(self, tmp_path):
        rows = [f"v{i:04d},{1 + i / 1000:.3f}k" for i in range(2000)]
        text = "name,rval\n" + "\n".join(rows) + "\n"
        write(tmp_path / "fam.csv", text)
        spec = spec_file(tmp_path, "fam", extra='[variants]\ntable = "fam.csv"\n')
        jobs = expand_jobs([str(spec)])
        assert len(jobs) == 2000
        digest = hashlib.sha256(text.encode()).hexdigest()
        for k in (7, 1500):
            res = run_job(jobs[k])
            table = dict(res.source_text)[str(tmp_path / "fam.csv")]
            assert table == f"name,rval\n{rows[k]}"
            assert dict(res.inputs)[str(tmp_path / "fam.csv")] == digest
            assert res.extra_value("variant_row") == {
                "table": str(tmp_path / "fam.csv"), "row": k + 2, "sha256": digest}

    def test_byte_order_mark_crlf_quotes_and_blank_lines(self, tmp_path):
        table = '\ufeffname,rval\r\n\r\n"low, quoted",900\r\n"two\nlines",1.1k\r\n'
        write(tmp_path / "fam.csv", table.encode("utf-8"))
        spec = spec_file(tmp_path, "fam", extra='[variants]\ntable = "fam.csv"\n')
        low, two = expand_jobs([str(spec)])
        assert (low.variant, low.overrides, low.row) == ("low, quoted", (("rval", 900.0),), 3)
        assert (two.variant, two.row) == ("two\nlines", 4)
        assert two.row_text == 'name,rval\n"two\nlines",1.1k'

    @pytest.mark.parametrize("table, words", [
        ("", "fam.csv:1: header must be name"),
        ("name,rval,RVAL\na,1,2\n", "fam.csv:1: every column after name needs its own "
                                    "parameter name; repeated: rval"),
        ("name,\na,1\n", "fam.csv:1: every column after name"),
        ("name,rval\n,1k\n", "fam.csv:2: the variant has no name"),
        ("name,rval\na,1k\nb,1k,3\n", "fam.csv:3: 3 fields, header has 2"),
        ("name,rval\na,1k\na,2k\n", "variant names must be unique; repeated: a"),
        ("name,rval\na,1\x00k\n", "fam.csv:2:"),
        ('name,rval\na,"1k\n', "fam.csv:"),
    ])
    def test_bad_tables_name_the_file_and_line(self, tmp_path, table, words):
        write(tmp_path / "fam.csv", table)
        spec = spec_file(tmp_path, "fam", extra='[variants]\ntable = "fam.csv"\n')
        (res,) = expand_jobs([str(spec)])
        assert res.status is Status.ERROR and words in res.error, res.error
        assert set(codes(res)) <= set(CODES) and "Traceback" not in res.error

    def test_a_fifo_as_table_is_refused_without_blocking(self, tmp_path):
        import threading

        fifo = tmp_path / "fam.csv"
        os.mkfifo(fifo)
        done = threading.Event()

        def unblock() -> None:  # should the reader block, end its read after 10 s
            if not done.wait(10):
                fd = os.open(fifo, os.O_WRONLY | os.O_NONBLOCK)
                os.write(fd, b"name,rval\nvia-a-fifo,1k\n")
                os.close(fd)

        watchdog = threading.Thread(target=unblock, daemon=True)
        watchdog.start()
        spec = spec_file(tmp_path, "fam", extra='[variants]\ntable = "fam.csv"\n')
        try:
            (res,) = expand_jobs([str(spec)])
        finally:
            done.set()
            watchdog.join()
        assert not isinstance(res, Job), "the FIFO was read"
        assert res.status is Status.ERROR and "fam.csv" in res.error
