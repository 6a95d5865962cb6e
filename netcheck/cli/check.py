"""The ``netcheck check`` sub-command (wired in by :mod:`netcheck.cli`).

What a broken input costs: a spec, path or variant that cannot be used becomes an error
result (reported, every other spec still judged, status 2); an output that cannot be
written is reported and every other output is still written (status 2); a bug in
netcheck while checking one spec, or while writing one output, is reported with its
traceback and everything else is still written (status 3). Outputs are checked before
the run: an output that would replace an input, a device or a FIFO is refused at once.
"""

from __future__ import annotations

import argparse
import datetime as _dt
import os
import stat
import sys
import time
from pathlib import Path
from typing import Callable, NamedTuple

from ..netlist import source as _source
from .args import safe_text
from ..netlist.source import printable

__all__ = ["add_check_parser", "run_check", "find_specs", "created_utc", "SCAN_MAX_BYTES",
           "MAX_JOBS_PER_CPU"]

#: the most bytes of a ``.toml`` file read while scanning a folder for specs (the spec
#: loader's own limit); a larger file is not read, and is named in a warning
SCAN_MAX_BYTES = getattr(_source, "FILE_MAX_BYTES", 16 * 2**20)

#: --jobs is capped at this many worker processes per CPU
MAX_JOBS_PER_CPU = 4

#: (option, renderer, attribute) of every single-file output of ``check``
FILE_OUTPUTS = (("--json", "json", "json"), ("--junit", "junit", "junit"),
                ("--sarif", "sarif", "sarif"), ("--summary-md", "markdown", "summary_md"),
                ("--pdf-combined", "pdf", "pdf_combined"))


def add_check_parser(sub, common: Callable[[argparse.ArgumentParser], None]) -> None:
    """Register ``check`` and its options."""
    from .args import cluster_address, job_count, threshold

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
    ck.add_argument("--jobs", type=job_count, metavar="N", default=None,
                    help="local worker processes, at least 1 (default: number of CPUs; "
                    f"at most {MAX_JOBS_PER_CPU} per CPU are started)")
    ck.add_argument("--cluster", type=cluster_address, metavar="ADDRESS",
                    help="run on an existing Dask distributed scheduler "
                    "(tcp://HOST:PORT or tls://HOST:PORT)")
    ck.add_argument("--changed-since", metavar="REV",
                    help="check only specs whose spec, netlist or included files changed since "
                    "git revision REV")
    ck.add_argument("--baseline", metavar="PATH",
                    help="compare margins with an earlier --json result")
    ck.add_argument("--drift-db", type=threshold, default=0.5, metavar="DB",
                    help="flag a dB margin that fell by more than DB (default 0.5)")
    ck.add_argument("--drift-rel", type=threshold, default=0.1, metavar="FRACTION",
                    help="flag another margin that fell by more than FRACTION of its "
                    "baseline value (default 0.1)")
    ck.add_argument("--fail-on-drift", action="store_true",
                    help="exit 4 when a margin drifted (and nothing failed)")
    ck.add_argument("-v", "--verbose", action="store_true", help="show every caution")
    ck.add_argument("--color", choices=("auto", "always", "never"), default="auto")
    common(ck)


_TOO_BIG = "too big"


def _toml_declares_netlist(path: str) -> bool | None | str:
    """Whether the TOML file at ``path`` has a top-level ``netlist`` key.

    None when that cannot be told without the loader (not a regular file, not UTF-8,
    not TOML, nested too deeply): such a file is listed so that the loader reports what
    is wrong with it. ``_TOO_BIG`` for a file over :data:`SCAN_MAX_BYTES`, which is not
    read. Nothing but a regular file is ever opened.
    """
    import tomllib

    try:
        if not stat.S_ISREG(os.stat(path).st_mode):
            return None
        flags = os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOCTTY", 0) \
            | getattr(os, "O_CLOEXEC", 0)
        fd = os.open(path, flags)
    except (OSError, ValueError):
        return None
    try:
        st = os.fstat(fd)
        if not stat.S_ISREG(st.st_mode):
            return None
        if st.st_size > SCAN_MAX_BYTES:
            return _TOO_BIG
        chunks, size = [], 0
        while size <= SCAN_MAX_BYTES:
            chunk = os.read(fd, 1 << 16)
            if not chunk:
                break
            chunks.append(chunk)
            size += len(chunk)
    except OSError:
        return None
    finally:
        os.close(fd)
    if size > SCAN_MAX_BYTES:  # it grew while it was read
        return _TOO_BIG
    try:
        doc = tomllib.loads(b"".join(chunks).decode("utf-8"))
    except (UnicodeDecodeError, tomllib.TOMLDecodeError, RecursionError, MemoryError,
            ValueError):
        return None
    return isinstance(doc, dict) and "netlist" in doc


def _walk_toml(folder: Path, notes: list[str] | None) -> list[Path]:
    """Every ``*.toml`` entry under ``folder`` that is not a folder (links to folders are
    not followed, so a link loop cannot hold the scan)."""
    found: list[Path] = []

    def unreadable(err: OSError) -> None:
        if notes is not None:
            notes.append(f"{printable(str(err.filename or folder))}: warning: folder cannot "
                         f"be read ({err.strerror or err}); specs in it are not checked")

    for top, _dirs, files in os.walk(folder, onerror=unreadable, followlinks=False):
        found.extend(Path(top) / name for name in files if name.endswith(".toml"))
    return sorted(found)


def find_specs(paths: list[str], notes: list[str] | None = None,
               root: str | None = None) -> tuple[list[str], list[str]]:
    """Spec files named or found (recursively, ``*.toml`` declaring ``netlist``) in ``paths``.

    Returns the spec paths (sorted within each directory) and paths that do not exist.
    A ``.toml`` file met in a folder is opened only when it resolves inside the design
    root (``root``, the command line's ``--root``, else the one
    :func:`netcheck.spec.guard.resolve_design_root` chooses for it): a link from the
    scanned folder to a file elsewhere (``env.toml -> /proc/self/environ``) is named in
    ``notes`` and never read, so nothing of it can be quoted in a report. It is opened
    only when it is a regular file, and at most :data:`SCAN_MAX_BYTES` of it is read;
    one that cannot be read or parsed (a FIFO, a device, broken or too deeply nested
    TOML) is listed, so the check reports it. Files over that size and folders that
    cannot be read are named in ``notes``. A file named on the command line is the
    user's explicit choice and is listed as named.
    """
    from ..spec.guard import inside_root, resolve_design_root

    specs, missing = [], []
    for p in paths:
        path = Path(p)
        try:
            is_dir = path.is_dir()
            exists = is_dir or path.exists()
        except (OSError, ValueError):
            is_dir, exists = False, False
        if is_dir:
            for f in _walk_toml(path, notes):
                try:
                    where, _why = resolve_design_root(f, root)
                    inside = inside_root(f, where)
                except (OSError, ValueError):
                    inside = False
                if not inside:
                    if notes is not None:
                        notes.append(f"{printable(str(f))}: warning: a link to a file outside "
                                     "the design root; not read and not checked (name it on "
                                     "the command line, or widen the root with --root DIR, "
                                     "to check it)")
                    continue
                found = _toml_declares_netlist(str(f))
                if found is _TOO_BIG:
                    if notes is not None:
                        notes.append(f"{printable(str(f))}: warning: larger than "
                                     f"{SCAN_MAX_BYTES} bytes, so not read and not checked "
                                     "as a spec")
                elif found is not False:
                    specs.append(str(f))
        elif exists:
            specs.append(str(path))
        else:
            missing.append(p)
    return list(dict.fromkeys(specs)), missing


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


class _Output(NamedTuple):
    option: str   # "--json"
    fmt: str      # renderer name
    path: str     # file path or "-"


def _not_regular(path: str) -> str | None:
    """Why ``path`` cannot be read as a spec without opening it, or None when it can."""
    try:
        mode = os.stat(path).st_mode
    except OSError:
        return None  # the loader reports a file that cannot be read in its own words
    if stat.S_ISREG(mode):
        return None
    kind = ("a folder" if stat.S_ISDIR(mode) else "a FIFO (named pipe)" if stat.S_ISFIFO(mode)
            else "a device" if stat.S_ISCHR(mode) or stat.S_ISBLK(mode) else "a socket"
            if stat.S_ISSOCK(mode) else "a special file")
    return f"it is {kind}, not a regular file; it was not read"


class _Run:
    """The state of one ``check`` run: what to write, and what went wrong so far."""

    def __init__(self, args: argparse.Namespace) -> None:
        from ..render.outputs import OutputGuard

        self.args = args
        self.bad_input = False
        self.internal = False
        self.outputs: list[_Output] = []
        self.pdf_dir: str | None = args.pdf
        self.guard = OutputGuard()
        self.only: set[str] | None = None
        #: errors of the run itself (an unusable baseline, git unable to say what
        #: changed), as error results, so that every report shows them
        self.run_errors: list = []

    # -- messages ---------------------------------------------------------------------
    def note(self, text: str) -> None:
        """A warning or note (not shown with --quiet)."""
        if not self.args.quiet:
            print(safe_text(text), file=sys.stderr)

    def error_text(self, text: str) -> None:
        """An error message from an input (already counted elsewhere)."""
        print(safe_text(text), file=sys.stderr)

    def error(self, err: Exception) -> None:
        """A bad input or an output that cannot be written: say so; the status becomes 2."""
        from ..exceptions import NetcheckError

        self.bad_input = True
        self.error_text(err.format() if isinstance(err, NetcheckError) else str(err))

    def run_error(self, what: str, title: str, err: Exception) -> None:
        """An error of the run itself (not of one spec): said now, and carried into every
        report as an error result named ``what`` (so no report can read as a pass)."""
        from ..analyses.nominal import error_result

        self.error(err)
        self.run_errors.append(error_result(what, err, title=title))

    def bug(self, what: str, exc: BaseException | None = None) -> None:
        """A bug in netcheck: print the traceback and carry on; the status becomes 3."""
        import traceback

        from .. import __version__

        self.internal = True
        if exc is None:
            traceback.print_exc()
        else:
            traceback.print_exception(exc)
        print(f"netcheck {__version__}: internal error while {what} (the traceback above is "
              "a bug in netcheck, not a problem with your files; please report it); the "
              "other results and outputs are still written", file=sys.stderr)

    # -- outputs ----------------------------------------------------------------------
    def plan_outputs(self, table: tuple[tuple[str, str, str], ...]) -> None:
        """Check every requested output that can be checked before the run; refuse the
        ones that cannot be written (each is reported, the others are kept)."""
        from ..exceptions import RenderError
        from ..render.outputs import check_output_path

        args = self.args
        to_stdout = [opt for opt, _, attr in table if getattr(args, attr) == "-"]
        if self.pdf_dir == "-":
            self.error(RenderError("output refused: --pdf writes one file per spec into a "
                                   "folder; standard output ('-') cannot hold them (use "
                                   "--pdf-combined - for one PDF on standard output)",
                                   code="NC401", path="--pdf"))
            self.pdf_dir = None
        for opt, fmt, attr in table:
            path = getattr(args, attr)
            if not path:
                continue
            if path == "-" and len(to_stdout) > 1:
                self.error(RenderError(
                    f"output refused: {' and '.join(to_stdout)} "
                    f"{'both' if len(to_stdout) == 2 else 'all'} ask for standard output "
                    "('-'); only one output can go there, give the others file paths",
                    code="NC401", path=opt))
                continue
            try:
                check_output_path(path)
                self.guard.claim(path, opt)
            except RenderError as err:
                self.error(err)
                continue
            self.outputs.append(_Output(opt, fmt, path))
        if self.pdf_dir:
            try:
                check_output_path(self.pdf_dir, folder=True)
            except RenderError as err:
                self.error(err)
                self.pdf_dir = None

    def wants_pdf(self) -> bool:
        """Whether a PDF output is still to be written."""
        return self.pdf_dir is not None or any(o.fmt == "pdf" for o in self.outputs)

    def _recheck_outputs(self) -> None:
        from ..exceptions import RenderError
        from ..render.outputs import check_not_design_file

        kept = []
        for o in self.outputs:
            try:
                self.guard.check(o.path)
                check_not_design_file(o.path)
            except RenderError as err:
                self.error(err)
                continue
            kept.append(o)
        self.outputs = kept

    def check_outputs_before(self, specs: list[str]) -> None:
        """Refuse at once an output that names a file the run will read (a spec, its
        netlist, an include, a variant table), as far as that is known before the run,
        or that may be a design file the run does not read (a ``.cir`` or ``.toml`` name,
        a CSV table netcheck did not write)."""
        if not self.outputs:
            return
        from ..runs.changed_since import _spec_inputs

        self.guard.add_inputs(specs, "spec")
        for spec in specs:
            if _not_regular(spec) is not None:
                continue
            try:
                files = _spec_inputs(spec, self.args.root).files
            except Exception:  # noqa: BLE001 - the run itself reports what is wrong
                continue
            self.guard.add_inputs(files, "input")
        self._recheck_outputs()

    def write_outputs(self, result) -> None:
        """Write every output still planned; one that fails does not stop the others."""
        from ..exceptions import NetcheckError, RenderError
        from ..render import RenderOptions, render_to

        for s in result.specs:
            self.guard.add_inputs((p for p, _ in s.inputs), "input")
        plain = RenderOptions(verbose=self.args.verbose)
        for o in self.outputs:
            try:
                render_to(o.fmt, result, o.path, plain, guard=self.guard)
            except NetcheckError as err:
                self.error(err)
            except OSError as err:  # standard output closed, or full
                self.error(RenderError(f"cannot write output: {err.strerror or err}",
                                       path=f"{o.option} {o.path}"))
            except Exception:  # noqa: BLE001 - a bug: report it, write the others
                self.bug(f"writing {o.option} {printable(o.path)}")
        if self.pdf_dir:
            from ..report.pdf import render_per_spec

            def failed(path: Path, exc: BaseException) -> None:
                if isinstance(exc, NetcheckError):
                    self.error(exc)
                else:
                    self.bug(f"writing {printable(str(path))}", exc)
            try:
                render_per_spec(result, self.pdf_dir, plain, guard=self.guard, on_error=failed)
            except NetcheckError as err:
                self.error(err)
            except Exception:  # noqa: BLE001
                self.bug(f"writing --pdf {printable(self.pdf_dir)}")

    def show_table(self, result, color: bool) -> None:
        """The terminal table (on stderr when a document goes to stdout); none when
        nothing was checked."""
        from ..render import RenderOptions, get_renderer

        if not result.specs:
            return
        to_stdout = any(o.path == "-" for o in self.outputs)
        stream = sys.stderr if to_stdout else sys.stdout
        options = RenderOptions(color=color, verbose=self.args.verbose,
                                quiet=self.args.quiet)
        try:
            get_renderer("text")(result, stream, options)
            stream.flush()
        except BrokenPipeError:  # the reader went away: the outputs are still written
            os.dup2(os.open(os.devnull, os.O_WRONLY), stream.fileno())
        except Exception:  # noqa: BLE001
            self.bug("showing the result table")

    # -- inputs -----------------------------------------------------------------------
    def load_baseline(self) -> dict | None:
        """The baseline document, read before the run so a bad one is reported at once
        (the run goes on; there is then no comparison and the status is 2)."""
        if not self.args.baseline:
            return None
        from ..runs.ci import load_baseline
        from ..exceptions import NetcheckError

        self.guard.add_inputs([self.args.baseline], "baseline")
        self._recheck_outputs()
        try:
            return load_baseline(self.args.baseline)
        except NetcheckError as err:
            self.run_error(f"--baseline {self.args.baseline}",
                           "Baseline not usable: margins not compared", err)
            return None

    def changed_since(self, specs: list[str]) -> list[str]:
        """With --changed-since, the affected specs only.

        When git cannot say what changed (NC410), the error is carried into every report
        and *every* spec is checked: skipping specs on a failed comparison could hide a
        failure.
        """
        rev = self.args.changed_since
        if rev is None:
            return specs
        from ..runs.ci import affected_specs
        from ..exceptions import NetcheckError

        try:
            affected = affected_specs(specs, rev, ".", root=self.args.root)
        except NetcheckError as err:
            self.run_error(f"--changed-since {rev}",
                           "Changed files unknown: every spec checked", err)
            self.note("netcheck check: note: git could not say what changed, so every spec "
                      "is checked")
            return specs
        if not affected.paths:
            print(f"netcheck check: no spec is affected by the {len(affected.changed_files)} "
                  f"file(s) changed since {printable(rev)}; nothing to check")
        for path, why in affected.reasons().items():
            self.note(f"{path}: affected by {', '.join(why) or 'its own load error'}")
        self.only = set(affected.paths)
        return list(affected.paths)

    def _expand(self, spec: str) -> list:
        from ..runs.batch import expand_jobs
        from ..analyses.nominal import error_result
        from ..exceptions import INTERNAL_CODE, NetcheckError

        try:
            return list(expand_jobs([spec], design_root=self.args.root,
                                    allow_negative=self.args.allow_negative,
                                    plot_detail=self.wants_pdf()))
        except NetcheckError as err:
            return [error_result(spec, err)]
        except Exception as exc:  # noqa: BLE001
            self.bug(f"reading {printable(spec)}")
            return [error_result(spec, NetcheckError(
                f"internal error in netcheck: {type(exc).__name__}: {exc}",
                code=INTERNAL_CODE, path=spec))]

    def judge(self, specs: list[str], missing: list[str], found_none: bool,
              workers: int | None) -> tuple:
        """Every result, in order: the specs' (or their variants'), then the paths that
        named nothing. Whatever goes wrong becomes an error result."""
        from ..runs.batch import DaskExecutor, Job, LocalExecutor, run_all
        from ..analyses.nominal import error_result
        from ..exceptions import INTERNAL_CODE, NetcheckError, SpecError

        items: list = []
        for spec in specs:
            why = _not_regular(spec)
            if why is not None:
                items.append(error_result(spec, NetcheckError(f"cannot read spec: {why}",
                                                              code="NC117", path=spec)))
            else:
                items.extend(self._expand(spec))
        jobs = [it for it in items if isinstance(it, Job)]
        executor = DaskExecutor(self.args.cluster) if self.args.cluster else \
            LocalExecutor(workers)
        try:
            results = list(self._run_all(run_all, items, executor, len(jobs)))
        except NetcheckError as err:  # the executor itself failed (a cluster unreachable)
            results = [error_result(it.spec, err, variant=it.variant)
                       if isinstance(it, Job) else it for it in items]
        except Exception as exc:  # noqa: BLE001
            self.bug("checking the specs")
            bug = f"internal error in netcheck: {type(exc).__name__}: {exc}"
            results = [error_result(it.spec, NetcheckError(bug, code=INTERNAL_CODE,
                                                           path=it.spec), variant=it.variant)
                       if isinstance(it, Job) else it for it in items]
        for m in missing:
            results.append(error_result(m, SpecError("no such file or folder", code="NC200",
                                                     path=m)))
        if found_none:
            for p in self.args.paths:
                results.append(error_result(p, SpecError(
                    "no spec files found (a spec is a .toml file with a 'netlist' key)",
                    code="NC200", path=p)))
        if any(c.code == INTERNAL_CODE for r in results for c in r.cautions):
            self.internal = True
        return tuple(results)

    @staticmethod
    def _run_all(run_all, items: list, executor, n_jobs: int) -> tuple:
        if not sys.stderr.isatty():
            return run_all(items, executor)
        from ..analyses.progress import TerminalBar, reporting
        bar = TerminalBar(sys.stderr, show_jobs=n_jobs > 1)
        try:
            with reporting(bar.analysis):
                return run_all(items, executor, bar)
        finally:
            bar.close()

    def compare(self, result, baseline: dict | None):
        """Compare with the baseline (if one was read); the drift report, or None."""
        if baseline is None:
            return None
        from ..runs.ci import compare_baseline
        from ..exceptions import NetcheckError
        from ..render.jsonreport import to_dict

        try:
            return compare_baseline(to_dict(result), baseline, self.args.drift_db,
                                    self.args.drift_rel, only_specs=self.only)
        except NetcheckError as err:
            self.run_error(f"--baseline {self.args.baseline}",
                           "Baseline not usable: margins not compared", err)
            return None

    def show_drift(self, report) -> bool:
        """Print the drift report (if any); True when a margin drifted."""
        if report is None:
            return False
        for d in report.drifted:
            print(safe_text(f"drift: {d.describe()}"))
        print(f"baseline {printable(self.args.baseline)}: {report.compared} margins compared, "
              f"{len(report.drifted)} drifted")
        return report.has_drift


def run_check(args: argparse.Namespace) -> int:
    """Run ``check``: judge, render every requested output, return the exit code.

    Every requested output is written whatever happened to the specs (an output that
    was refused or failed is reported). Status: 3 when a bug in netcheck cost a result
    or an output, else 2 when an input, argument or output was bad, else 1 when a limit
    failed or could not be measured, else 4 for drift with ``--fail-on-drift``, else 0.
    """
    from .. import __version__
    from .exitcodes import BAD_INPUT, DRIFT, FAIL, INTERNAL, OK
    from ..result import CheckResult, Status

    run = _Run(args)
    run.plan_outputs(FILE_OUTPUTS)
    if run.wants_pdf():  # say what is missing before any work is done
        from ..report.pdf import require_libraries
        require_libraries()
    workers = _workers(args, run.note)
    baseline = run.load_baseline()
    notes: list[str] = []
    specs, missing = find_specs(args.paths, notes, args.root)
    for n in notes:
        run.note(n)
    found_none = not specs and not missing
    specs = run.changed_since(specs)
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
    drift = run.compare(result, baseline)  # before the reports: its errors go in them
    if run.run_errors:
        results = tuple(run.run_errors) + results
        result = CheckResult(results, __version__, result.created_utc)
    run.show_table(result, _use_color(args.color))
    if checked:
        print(f"checked {checked} spec result{'s' if checked != 1 else ''} in "
              f"{time.perf_counter() - t0:.1f} s", file=sys.stderr)
    said = {id(r) for r in run.run_errors}  # those were said when they happened
    for s in results:
        if s.error and id(s) not in said:
            run.error_text(s.error)
    run.write_outputs(result)
    drifted = run.show_drift(drift)
    if run.internal:
        return INTERNAL
    if run.bad_input or any(s.error for s in results):
        return BAD_INPUT
    if result.status is not Status.PASS:
        return FAIL
    return DRIFT if drifted and args.fail_on_drift else OK
