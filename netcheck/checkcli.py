"""The ``netcheck check`` sub-command (wired in by :mod:`netcheck.cli`)."""

from __future__ import annotations

import argparse
import datetime as _dt
import os
import sys
import time
from pathlib import Path
from typing import Callable

__all__ = ["add_check_parser", "run_check", "find_specs", "created_utc"]


def add_check_parser(sub, common: Callable[[argparse.ArgumentParser], None]) -> None:
    """Register ``check`` and its options."""
    ck = sub.add_parser("check", help="judge spec files against their netlists",
                        description="Judge every limit of every spec; exit 0 when all pass, "
                        "1 when a limit fails, 2 when an input is bad.")
    ck.add_argument("paths", nargs="+", metavar="SPEC", help="spec files or directories")
    ck.add_argument("--json", metavar="PATH", help="write the JSON result ('-' = stdout)")
    ck.add_argument("--junit", metavar="PATH", help="write JUnit XML")
    ck.add_argument("--sarif", metavar="PATH", help="write SARIF 2.1.0")
    ck.add_argument("--summary-md", metavar="PATH", help="write a Markdown summary")
    ck.add_argument("--pdf", metavar="DIR", help="write one PDF report per spec into DIR")
    ck.add_argument("--pdf-combined", metavar="FILE", help="write one PDF for all specs")
    ck.add_argument("--jobs", type=int, metavar="N", default=None,
                    help="local worker processes (default: number of CPUs)")
    ck.add_argument("--cluster", metavar="ADDRESS",
                    help="run on an existing Dask distributed scheduler (tcp://host:8786)")
    ck.add_argument("--changed-since", metavar="REV",
                    help="check only specs whose spec, netlist or included files changed since "
                    "git revision REV")
    ck.add_argument("--baseline", metavar="PATH",
                    help="compare margins with an earlier --json result")
    ck.add_argument("--drift-db", type=float, default=0.5, metavar="DB",
                    help="flag a dB margin that fell by more than DB (default 0.5)")
    ck.add_argument("--drift-rel", type=float, default=0.1, metavar="FRACTION",
                    help="flag another margin that fell by more than FRACTION of its "
                    "baseline value (default 0.1)")
    ck.add_argument("--fail-on-drift", action="store_true",
                    help="exit 4 when a margin drifted (and nothing failed)")
    ck.add_argument("-v", "--verbose", action="store_true", help="show every caution")
    ck.add_argument("--color", choices=("auto", "always", "never"), default="auto")
    common(ck)


def find_specs(paths: list[str]) -> tuple[list[str], list[str]]:
    """Spec files named or found (recursively, ``*.toml`` declaring ``netlist``) in ``paths``.

    Returns the spec paths (sorted within each directory) and paths that do not exist.
    """
    import tomllib

    specs, missing = [], []
    for p in paths:
        path = Path(p)
        if path.is_dir():
            for f in sorted(path.rglob("*.toml")):
                try:
                    doc = tomllib.loads(f.read_text("utf-8"))
                except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError):
                    specs.append(str(f))  # let the loader report what is wrong with it
                    continue
                if "netlist" in doc:
                    specs.append(str(f))
        elif path.exists():
            specs.append(str(path))
        else:
            missing.append(p)
    return list(dict.fromkeys(specs)), missing


def created_utc() -> str:
    """Report time: from SOURCE_DATE_EPOCH when set (reproducible builds), else now."""
    epoch = os.environ.get("SOURCE_DATE_EPOCH")
    if epoch and epoch.strip().isdigit():
        t = _dt.datetime.fromtimestamp(int(epoch), _dt.timezone.utc)
    else:
        t = _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0)
    return t.strftime("%Y-%m-%dT%H:%M:%SZ")


def _use_color(choice: str) -> bool:
    if choice == "always":
        return True
    if choice == "never" or os.environ.get("NO_COLOR"):
        return False
    return sys.stdout.isatty()


class _Progress:
    """A one-line progress display for a terminal (nothing is drawn on CI logs).

    Called with (done, total) as spec results finish, and through :mod:`netcheck.progress`
    with (label, done, total) by long analyses inside a spec run in this process (a
    Monte Carlo run, the worst-case corners).
    """

    WIDTH = 30

    def __init__(self, stream, show_jobs: bool) -> None:
        self.stream = stream
        self.t0 = time.perf_counter()
        self.show_jobs = show_jobs
        self.jobs = ""
        self.inner = ""
        self.drawn = 0

    def _bar(self, done: int, total: int) -> str:
        fill = int(self.WIDTH * done / max(total, 1))
        return f"[{'#' * fill}{'.' * (self.WIDTH - fill)}] {done}/{total}"

    def _draw(self) -> None:
        line = " · ".join(p for p in (self.jobs, self.inner) if p)
        line = f"{line} {time.perf_counter() - self.t0:5.1f} s"
        self.stream.write("\r" + line.ljust(self.drawn))
        self.stream.flush()
        self.drawn = max(self.drawn, len(line))

    def __call__(self, done: int, total: int) -> None:
        self.inner = ""
        if self.show_jobs:
            self.jobs = f"{self._bar(done, total)} specs"
            self._draw()

    def analysis(self, label: str, done: int, total: int) -> None:
        self.inner = f"{label} {self._bar(done, total)}" if done < total else ""
        self._draw()

    def close(self) -> None:
        if self.drawn:
            self.stream.write("\r" + " " * self.drawn + "\r")
            self.stream.flush()


def _with_provenance(results: tuple) -> tuple:
    """Record each spec folder's git commit and dirty state in its result (``extra.git``)."""
    import dataclasses

    from .provenance import git_record

    out, cache = [], {}
    for r in results:
        key = (str(Path(r.spec).parent), tuple(p for p, _ in r.inputs))
        if key not in cache:
            cache[key] = git_record(key[0], key[1])
        out.append(dataclasses.replace(r, extra=r.extra + (("git", cache[key]),)))
    return tuple(out)


def run_check(args: argparse.Namespace) -> int:
    """Run ``check``: judge, render every requested output, return the exit code."""
    from . import __version__
    from .cli import BAD_INPUT, DRIFT, FAIL, OK
    from .render import RenderOptions, get_renderer, render_to
    from .result import CheckResult, Status

    if args.pdf or args.pdf_combined:  # say what is missing before any work is done
        from .report.pdf import require_libraries
        require_libraries()
    specs, missing = find_specs(args.paths)
    for m in missing:
        print(f"{m}: error NC200: no such file or directory", file=sys.stderr)
    if not specs and not missing:
        print("netcheck check: no spec files found (a spec is a .toml file with a "
              "'netlist' key)", file=sys.stderr)
        return BAD_INPUT
    if args.changed_since:
        from .ci import affected_specs
        affected = affected_specs(specs, args.changed_since, ".", root=args.root)
        if not affected.paths:
            print(f"netcheck check: no spec is affected by the {len(affected.changed_files)} "
                  f"file(s) changed since {args.changed_since}; nothing to check")
            return OK
        for path, why in affected.reasons().items():
            print(f"{path}: affected by {', '.join(why)}", file=sys.stderr)
        specs = list(affected.paths)
    only = set(specs) if args.changed_since else None
    from .batch import DaskExecutor, LocalExecutor, expand_jobs, run_all
    items = expand_jobs(specs)
    executor = DaskExecutor(args.cluster) if args.cluster else LocalExecutor(args.jobs)
    t0 = time.perf_counter()
    if sys.stderr.isatty():
        from .progress import reporting
        bar = _Progress(sys.stderr, show_jobs=len(items) > 1)
        try:
            with reporting(bar.analysis):
                results = run_all(items, executor, bar)
        finally:
            bar.close()
    else:
        results = run_all(items, executor)
    results = _with_provenance(results)
    result = CheckResult(results, __version__, created_utc())
    options = RenderOptions(color=_use_color(args.color), verbose=args.verbose)
    to_stdout = "-" in (args.json, args.junit, args.sarif, args.summary_md, args.pdf_combined)
    # a document written to stdout keeps stdout to itself; the table goes to stderr
    table_stream = sys.stderr if to_stdout else sys.stdout
    get_renderer("text")(result, table_stream, options)
    print(f"checked {len(results)} spec result{'s' if len(results) != 1 else ''} in "
          f"{time.perf_counter() - t0:.1f} s", file=sys.stderr)
    for s in results:
        if s.error:
            print(s.error, file=sys.stderr)
    plain = RenderOptions(verbose=args.verbose)
    for fmt, path in (("json", args.json), ("junit", args.junit), ("sarif", args.sarif),
                      ("markdown", args.summary_md), ("pdf", args.pdf_combined)):
        if path:
            render_to(fmt, result, path, plain)
    if args.pdf:
        from .report.pdf import render_per_spec
        render_per_spec(result, args.pdf, plain)
    drifted = False
    if args.baseline:
        from .ci import compare_baseline, load_baseline
        from .render.jsonreport import to_dict
        report = compare_baseline(to_dict(result), load_baseline(args.baseline),
                                  args.drift_db, args.drift_rel, only_specs=only)
        for d in report.drifted:
            print(f"drift: {d.describe()}")
        print(f"baseline {args.baseline}: {report.compared} margins compared, "
              f"{len(report.drifted)} drifted")
        drifted = report.has_drift
    if missing or result.status is Status.ERROR and any(s.error for s in results):
        return BAD_INPUT
    if result.status is not Status.PASS:
        return FAIL
    return DRIFT if drifted and args.fail_on_drift else OK
