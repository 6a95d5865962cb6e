"""The state of one ``check`` run: outputs planned and written, inputs read, specs judged.

Every failure is kept apart: a bad input or output is reported and counted (status 2),
a bug is reported with its traceback (status 3), and the rest of the run goes on.
"""

from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path
from typing import NamedTuple

from .args import safe_text
from .spec_files import not_regular
from ..netlist.source import printable

__all__ = ["CheckRun"]


class _Output(NamedTuple):
    option: str   # "--json"
    fmt: str      # renderer name
    path: str     # file path or "-"


class CheckRun:
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
        #: errors of the run itself (an unusable earlier result, git unable to say what
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
                                   code="run-401", path="--pdf"))
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
                    code="run-401", path=opt))
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
        from ..runs.affected import _spec_inputs

        self.guard.add_inputs(specs, "spec")
        for spec in specs:
            if not_regular(spec) is not None:
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
    def load_earlier_result(self) -> dict | None:
        """The earlier result of ``--compare-margins``, read before the run so a bad one is
        reported at once (the run goes on; there is then no comparison and the status is 2)."""
        if not self.args.compare_margins:
            return None
        from ..runs.ci import load_baseline
        from ..exceptions import NetcheckError

        self.guard.add_inputs([self.args.compare_margins], "earlier result")
        self._recheck_outputs()
        try:
            return load_baseline(self.args.compare_margins)
        except NetcheckError as err:
            self.run_error(f"--compare-margins {self.args.compare_margins}",
                           "Earlier result not usable: margins not compared", err)
            return None

    def affected_since(self, specs: list[str]) -> list[str]:
        """With --affected-since, the affected specs only.

        When git cannot say what changed (run-410), the error is carried into every report
        and *every* spec is checked: skipping specs on a failed comparison could hide a
        failure.
        """
        rev = self.args.affected_since
        if rev is None:
            return specs
        from ..runs.ci import affected_specs
        from ..exceptions import NetcheckError

        try:
            affected = affected_specs(specs, rev, ".", root=self.args.root)
        except NetcheckError as err:
            self.run_error(f"--affected-since {rev}",
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
            why = not_regular(spec)
            if why is not None:
                items.append(error_result(spec, NetcheckError(f"cannot read spec: {why}",
                                                              code="netlist-117", path=spec)))
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
            results.append(error_result(m, SpecError("no such file or folder", code="spec-200",
                                                     path=m)))
        if found_none:
            for p in self.args.paths:
                results.append(error_result(p, SpecError(
                    "no spec files found (a spec is a .toml file with a 'netlist' key)",
                    code="spec-200", path=p)))
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

    def compare(self, result, earlier: dict | None):
        """Compare with the earlier result (if one was read); the report, or None."""
        if earlier is None:
            return None
        from ..runs.ci import compare_baseline
        from ..exceptions import NetcheckError
        from ..render.jsonreport import to_dict

        try:
            return compare_baseline(to_dict(result), earlier, self.args.shrink_db,
                                    self.args.shrink_rel, only_specs=self.only)
        except NetcheckError as err:
            self.run_error(f"--compare-margins {self.args.compare_margins}",
                           "Earlier result not usable: margins not compared", err)
            return None

    def show_shrunk(self, report) -> bool:
        """Print the margins that shrank (if compared); True when one did."""
        if report is None:
            return False
        for d in report.drifted:
            print(safe_text(f"margin shrank: {d.describe()}"))
        n = report.compared
        print(f"margins compared with {printable(self.args.compare_margins)}: {n} margin"
              f"{'s' if n != 1 else ''}, {len(report.drifted)} shrank by more than allowed")
        return report.has_drift
