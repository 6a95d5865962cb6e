"""The ``netcheck check`` sub-command (wired in by :mod:`netcheck.cli`).

What a broken input costs: a spec, path or variant that cannot be used becomes an error
result (reported, every other spec still judged, status 2); an output that cannot be
written is reported and every other output is still written (status 2); a bug in
netcheck while checking one spec, or while writing one output, is reported with its
traceback and everything else is still written (status 3). Outputs are checked before
the run: an output that would replace an input, a device or a FIFO is refused at once.

This module holds the options and the course of a run (:func:`run_check`); the spec
files are found by :mod:`netcheck.cli.spec_files`, and the state of the run (outputs,
errors, judging) is a :class:`~netcheck.cli.check_run.CheckRun`.
"""

from __future__ import annotations

import argparse
import datetime as _dt
import os
import sys
import time
from pathlib import Path
from typing import Callable

from .check_run import CheckRun
from .spec_files import SCAN_MAX_BYTES, find_specs

__all__ = ["add_check_parser", "run_check", "find_specs", "created_utc", "SCAN_MAX_BYTES",
           "MAX_JOBS_PER_CPU"]

#: --jobs is capped at this many worker processes per CPU
MAX_JOBS_PER_CPU = 4

#: (option, renderer, attribute) of every single-file output of ``check``
FILE_OUTPUTS = (("--json", "json", "json"), ("--junit", "junit", "junit"),
                ("--sarif", "sarif", "sarif"), ("--summary-md", "markdown", "summary_md"),
                ("--pdf-combined", "pdf", "pdf_combined"))


def add_check_parser(sub, common: Callable[[argparse.ArgumentParser], None]) -> None:
    """Register ``check`` and its options."""
    from .args import Renamed, cluster_address, job_count, threshold

    ck = sub.add_parser("check", help="judge spec files against their netlists",
                        description="Judge every limit of every spec; exit 0 when every limit is met, "
                        "1 when a limit is missed or could not be measured, 2 when an input is bad.")
    ck.add_argument("paths", nargs="+", metavar="SPEC", help="spec files or directories")
    ck.add_argument("--json", metavar="PATH", help="write the JSON result ('-' = stdout)")
    ck.add_argument("--junit", metavar="PATH", help="write JUnit XML")
    ck.add_argument("--sarif", metavar="PATH", help="write SARIF 2.1.0")
    ck.add_argument("--summary-md", metavar="PATH", help="write a Markdown summary")
    ck.add_argument("--pdf", metavar="DIR", help="write one PDF report per spec into DIR")
    ck.add_argument("--pdf-combined", metavar="FILE", help="write one PDF for all specs")
    ck.add_argument("--jobs", type=job_count, metavar="N", default=None,
                    help="local worker processes, at least 1 (default: number of CPUs; "
                    f"at most {MAX_JOBS_PER_CPU} per CPU are started)")
    ck.add_argument("--cluster", type=cluster_address, metavar="ADDRESS",
                    help="run on an existing Dask distributed scheduler "
                    "(tcp://HOST:PORT or tls://HOST:PORT)")
    ck.add_argument("--affected-since", metavar="REV",
                    help="check only the specs a change since git revision REV affects: "
                    "those whose spec, netlist, included files or variant table changed")
    ck.add_argument("--compare-margins", metavar="RESULT.json",
                    help="compare every margin with an earlier --json result and list the "
                    "margins that shrank")
    ck.add_argument("--shrink-db", type=threshold, default=0.5, metavar="DB",
                    help="with --compare-margins: a dB margin has shrunk when it fell by more "
                    "than DB (default 0.5)")
    ck.add_argument("--shrink-rel", type=threshold, default=0.1, metavar="FRACTION",
                    help="with --compare-margins: any other margin has shrunk when it fell by "
                    "more than FRACTION of its earlier value (default 0.1)")
    ck.add_argument("--fail-on-shrink", action="store_true",
                    help="exit 4 when a margin shrank (and no limit was missed)")
    # the earlier spellings, still accepted with a note naming the new one
    for old, new, kwargs in (
            ("--changed-since", "--affected-since", {"dest": "affected_since"}),
            ("--baseline", "--compare-margins", {"dest": "compare_margins"}),
            ("--drift-db", "--shrink-db", {"dest": "shrink_db", "type": threshold}),
            ("--drift-rel", "--shrink-rel", {"dest": "shrink_rel", "type": threshold}),
            ("--fail-on-drift", "--fail-on-shrink",
             {"dest": "fail_on_shrink", "nargs": 0, "const": True})):
        ck.add_argument(old, action=Renamed, new=new, **kwargs)
    ck.add_argument("-v", "--verbose", action="store_true", help="show every caution")
    ck.add_argument("--color", choices=("auto", "always", "never"), default="auto",
                    help="colour the terminal table: auto (only on a terminal, and not when "
                    "NO_COLOR is set), always, or never (default auto)")
    common(ck)



def created_utc() -> str:
    """Report time: from SOURCE_DATE_EPOCH when set (reproducible builds), else now.

    The command line has already refused a value that is not a whole number of
    seconds (and dropped an empty one); a value that still cannot be used here means now.
    """
    epoch = os.environ.get("SOURCE_DATE_EPOCH", "").strip()
    t = None
    if epoch.isascii() and epoch.isdigit():
        try:
            t = _dt.datetime.fromtimestamp(int(epoch), _dt.timezone.utc)
        except (OverflowError, OSError, ValueError):
            t = None
    if t is None:
        t = _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0)
    return t.strftime("%Y-%m-%dT%H:%M:%SZ")


def _use_color(choice: str) -> bool:
    if choice == "always":
        return True
    if choice == "never" or os.environ.get("NO_COLOR"):
        return False
    return sys.stdout.isatty()


def _with_provenance(results: tuple) -> tuple:
    """Record each spec folder's git commit and dirty state in its result (``extra.git``)."""
    import dataclasses

    from ..runs.provenance import git_record

    out, cache = [], {}
    for r in results:
        key = (str(Path(r.spec).parent), tuple(p for p, _ in r.inputs))
        if key not in cache:
            cache[key] = git_record(key[0], key[1])
        out.append(dataclasses.replace(r, extra=r.extra + (("git", cache[key]),)))
    return tuple(out)


def _workers(args: argparse.Namespace, say: Callable[[str], None]) -> int | None:
    """The local worker count: --jobs, capped at MAX_JOBS_PER_CPU per CPU (with a note)."""
    if args.jobs is None:
        return None
    cpus = os.cpu_count() or 1
    cap = MAX_JOBS_PER_CPU * cpus
    if args.jobs > cap:
        say(f"netcheck check: note: --jobs {args.jobs} is more than {MAX_JOBS_PER_CPU} per CPU "
            f"({cpus} CPU{'s' if cpus != 1 else ''}); using at most {cap} worker processes")
        return cap
    return args.jobs



def run_check(args: argparse.Namespace) -> int:
    """Run ``check``: judge, render every requested output, return the exit code.

    Every requested output is written whatever happened to the specs (an output that
    was refused or failed is reported). Status: 3 when a bug in netcheck cost a result
    or an output, else 2 when an input, argument or output was bad, else 1 when a limit
    failed or could not be measured, else 4 when a margin shrank and ``--fail-on-shrink``
    was given, else 0.
    """
    from .. import __version__
    from .exitcodes import BAD_INPUT, FAIL, INTERNAL, MARGIN_SHRANK, OK
    from ..result import CheckResult, Status

    run = CheckRun(args)
    from .args import renamed_notes
    for note in renamed_notes(args, "check"):
        print(note, file=sys.stderr)  # even with --quiet: a CI log must learn of it
    run.plan_outputs(FILE_OUTPUTS)
    if run.wants_pdf():  # say what is missing before any work is done
        from ..report.pdf import require_libraries
        require_libraries()
    workers = _workers(args, run.note)
    earlier = run.load_earlier_result()
    notes: list[str] = []
    specs, missing = find_specs(args.paths, notes, args.root)
    for n in notes:
        run.note(n)
    found_none = not specs and not missing
    specs = run.affected_since(specs)
    run.check_outputs_before(specs)
    t0 = time.perf_counter()
    results = run.judge(specs, missing, found_none, workers)
    if results:
        try:
            results = _with_provenance(results)
        except Exception:  # noqa: BLE001 - the results stand without their git record
            run.bug("recording the git state")
    checked = len(results)
    result = CheckResult(results, __version__, created_utc())
    shrunk = run.compare(result, earlier)  # before the reports: its errors go in them
    if run.run_errors:
        results = tuple(run.run_errors) + results
        result = CheckResult(results, __version__, result.created_utc)
    elapsed = time.perf_counter() - t0
    run.show_table(result, _use_color(args.color))  # ends with the run's headline
    said = {id(r) for r in run.run_errors}  # those were said when they happened
    for s in results:
        if s.error and id(s) not in said:
            run.error_text(s.error)
    run.write_outputs(result)
    shrank = run.show_shrunk(shrunk)
    if checked:  # the last line, under the headline and what followed it
        try:
            sys.stdout.flush()
        except OSError:  # standard output closed: the note still goes to stderr
            pass
        print(f"\nchecked {checked} spec result{'s' if checked != 1 else ''} in "
              f"{elapsed:.1f} s", file=sys.stderr)
    if run.internal:
        return INTERNAL
    if run.bad_input or any(s.error for s in results):
        return BAD_INPUT
    if result.status is not Status.PASS:
        return FAIL
    return MARGIN_SHRANK if shrank and args.fail_on_shrink else OK
