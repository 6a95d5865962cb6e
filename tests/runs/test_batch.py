"""Variant families and executors: every way of running gives the same results."""

from __future__ import annotations

import dataclasses
import os
from pathlib import Path

import pytest

from netcheck.runs.batch import Job, LocalExecutor, SerialExecutor, expand_jobs, run_all
from netcheck.analyses.nominal import check_spec
from netcheck.result import Status

NETLIST = """Quillmere test family: series RLC band-pass
.param rs=10
.param lval=2.2m
.param fc=40k
.param cval={1/((2*pi*fc)^2*lval)}
V1 in 0 AC 1
R1 in a {rs}
L1 a b {lval}
C1 b out {cval}
R2 out 0 47
"""

SPEC = """title = "family"
netlist = "f.cir"
source = "V1"
output = "out"
[sweep]
start = "1k"
stop = "1meg"
points_per_decade = 50
[variants]
table = "f.csv"
[[limits]]
kind = "resonance"
center = "40k"
center_tolerance = "5%"
q = [5, 20]
"""


@pytest.fixture
def family(tmp_path: Path) -> Path:
    (tmp_path / "f.cir").write_text(NETLIST)
    rows = ["name,fc,rs"] + [f"v{i:02d},{36 + 0.4 * i:.1f}k,{5 + i}" for i in range(20)]
    (tmp_path / "f.csv").write_text("\n".join(rows) + "\n")
    spec = tmp_path / "f.toml"
    spec.write_text(SPEC)
    return spec


def test_family_of_20_equals_single_runs(family):
    items = expand_jobs([str(family)])
    assert [j.variant for j in items] == [f"v{i:02d}" for i in range(20)]
    results = run_all(items, SerialExecutor())
    for job, res in zip(items, results):
        single = check_spec(str(family), dict(job.overrides), job.variant)
        # the family result also names the CSV table among its inputs, with its own row
        # (where it is in the table); all else is equal
        assert res.inputs[:-1] == single.inputs and res.inputs[-1][0].endswith("f.csv")
        assert res.extra[-1] == ("variant_row", {"table": res.inputs[-1][0],
                                                 "row": int(job.variant[1:]) + 2,
                                                 "sha256": res.inputs[-1][1]})
        assert dataclasses.replace(res, inputs=single.inputs, source_text=single.source_text,
                                   extra=single.extra) == single
        assert res.variant == job.variant
    # the variants really differ: the centre moves with fc (f0 = 1/(2 pi sqrt(LC)), textbook)
    centres = [r.measurement("f_center_hz") for r in results]
    assert centres == sorted(centres) and centres[0] == pytest.approx(36e3, rel=1e-9)
    # centre limit 40 k ± 5 % = 38 k .. 42 k: fc = 36.0 .. 37.6 k fail, 38.0 .. 43.6 k
    # pass up to 42 k
    statuses = {r.variant: r.status for r in results}
    expected = {f"v{i:02d}": Status.PASS if 38e3 <= (36 + 0.4 * i) * 1e3 <= 42e3 + 1
                else Status.FAIL for i in range(20)}
    assert statuses == expected


def test_two_local_workers_equal_serial(family):
    items = expand_jobs([str(family)])
    assert run_all(items, LocalExecutor(2)) == run_all(items, SerialExecutor())


def test_bad_variant_does_not_stop_the_others(family, tmp_path):
    csv = tmp_path / "f.csv"
    csv.write_text("name,fc,nosuch\nok,40k,1\n")
    results = run_all(expand_jobs([str(family)]), SerialExecutor())
    assert results[0].status is Status.ERROR
    assert "nosuch" in results[0].error
    csv.write_text("name,fc\ngood,40k\nbad,0\n")
    results = run_all(expand_jobs([str(family)]), SerialExecutor())
    assert [r.status for r in results] == [Status.PASS, Status.ERROR]


def test_broken_table_is_an_error_result(family, tmp_path):
    (tmp_path / "f.csv").write_text("label,fc\nx,1k\n")
    (res,) = run_all(expand_jobs([str(family)]), SerialExecutor())
    assert res.status is Status.ERROR and "header must be name" in res.error


def test_dask_local_cluster_equals_serial(family):
    distributed = pytest.importorskip("distributed")
    from netcheck.runs.batch import DaskExecutor

    # the nanny sets PYTHONHASHSEED, thread counts and more in this process's environment,
    # which child processes of later tests would inherit: put it back afterwards
    saved = dict(os.environ)
    try:
        _run_on_local_cluster(distributed, DaskExecutor, family)
    finally:
        os.environ.clear()
        os.environ.update(saved)


def _run_on_local_cluster(distributed, DaskExecutor, family) -> None:
    items = [j for j in expand_jobs([str(family)])][:6]
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=None, host="127.0.0.1") as cluster:
        got = run_all(items, DaskExecutor(cluster.scheduler_address))
    assert got == run_all(items, SerialExecutor())


def test_job_is_plain_data():
    job = Job("a.toml", "v", (("fc", 1.0),))
    assert dataclasses.replace(job) == job


def test_family_matrix_in_text_report(family):
    import io

    from netcheck.render.text import render
    from netcheck.result import CheckResult

    results = run_all(expand_jobs([str(family)]), SerialExecutor())
    out = io.StringIO()
    render(CheckResult(results, "0", ""), out)
    text = out.getvalue()
    block = text[text.index("\nfamily ") + 1:]
    assert "20 variants" in block
    rows = block.splitlines()[2:22]
    assert [r.split()[0] for r in rows] == [f"v{i:02d}" for i in range(20)]
    # verdicts are words in every cell, not colour alone
    assert rows[0].split()[1] == "FAIL" and "FAIL -" in rows[0]
    assert rows[10].split()[1] == "PASS" and "PASS +" in rows[10]
