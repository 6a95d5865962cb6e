"""The ``netcheck`` command: argument parsing, output and named exit codes.

Everything printed that came from an input (names, titles, paths, messages) goes
through :func:`safe_text`: control characters and bidirectional overrides are shown as
escapes, lines and line counts are bounded. A bad command-line value is an ``run-402``
error (status 2) that says what is accepted; SIGTERM ends the run like Ctrl-C, so no
temporary file is left behind.
"""

from __future__ import annotations

import argparse
import json
import math
import os
import signal
import stat
import sys
import time
from collections.abc import Sequence

from .. import __version__
from ..exceptions import Diagnostic, NetcheckError
from ..netlist.source import printable

from .args import eng_value, positive_int, safe_text
from .exitcodes import BAD_INPUT, INTERNAL, INTERRUPTED, OK, TERMINATED

__all__ = ["main", "build_parser"]

DOCS = "docs/errors.md#"

#: the latest SOURCE_DATE_EPOCH accepted (the last second of the year 9999)
EPOCH_MAX = 253402300799


class _Parser(argparse.ArgumentParser):
    """argparse with netcheck's error format: ``netcheck check: error run-402: ...``."""

    def error(self, message: str) -> None:  # type: ignore[override]
        self.print_usage(sys.stderr)
        self.exit(BAD_INPUT, f"{self.prog}: error run-402: {safe_text(message)}\n")


def build_parser() -> argparse.ArgumentParser:
    """The argument parser (exposed for documentation and tests)."""
    ap = _Parser(prog="netcheck", description=(
        "Prove that filter netlists meet their frequency-response spec."))
    ap.add_argument("--version", action="version", version=f"netcheck {__version__}")
    sub = ap.add_subparsers(dest="command", required=True, metavar="COMMAND")

    sw = sub.add_parser("sweep", help="frequency response of a netlist",
                        description="Solve a netlist over log-spaced frequencies.")
    sw.add_argument("netlist")
    sw.add_argument("--source", required=True, metavar="NAME",
                    help="independent V or I source giving the stimulus")
    sw.add_argument("--node", required=True, metavar="NODE", help="output node")
    sw.add_argument("--ref", default="0", metavar="NODE", help="reference node (default 0)")
    sw.add_argument("--start", type=eng_value, metavar="F",
                    help="start, Hz (10k); default: the netlist's .ac card")
    sw.add_argument("--stop", type=eng_value, metavar="F",
                    help="stop, Hz (1meg); default: the netlist's .ac card")
    sw.add_argument("--ppd", type=positive_int, metavar="N",
                    help="points per decade; default: the netlist's .ac card")
    out = sw.add_mutually_exclusive_group()
    out.add_argument("--csv", metavar="PATH", help="write CSV ('-' for stdout)")
    out.add_argument("--json", metavar="PATH", help="write JSON ('-' for stdout)")
    _common(sw)

    from .check import add_check_parser
    add_check_parser(sub, _common)
    return ap


def _common(p: argparse.ArgumentParser) -> None:
    if p.prog.endswith(" check"):
        p.add_argument("--root", metavar="DIR",
                       help="design root that every file a spec names must lie in (default: "
                       "the git work tree holding the spec, else the current folder if it "
                       "holds it, else the spec's folder)")
    else:
        p.add_argument("--root", metavar="DIR",
                       help="design root that .include may not leave (default: the "
                       "netlist's folder)")
    p.add_argument("--allow-negative", action="store_true",
                   help="accept negative R, L and C values (behavioural models)")
    p.add_argument("-q", "--quiet", action="store_true",
                   help="no warnings; of the result table, only the specs that did not pass "
                   "and the headline")


def print_diagnostics(diags: Sequence[Diagnostic], quiet: bool = False) -> None:
    """Lint warnings to stderr, compiler-style."""
    if quiet:
        return
    for d in diags:
        print(safe_text(d.format()), file=sys.stderr)


def _sweep_problem(start: float, stop: float, ppd: int) -> NetcheckError | None:
    """Why ``--start/--stop/--ppd`` cannot be swept (run-402, or the spec budgets' spec-205)."""
    if not (math.isfinite(start) and math.isfinite(stop) and 0 < start < stop):
        return NetcheckError(f"need 0 < --start < --stop, both finite (got {start:g}, "
                             f"{stop:g})", code="run-402", path="netcheck sweep")
    from ..spec.load import validate_sweep

    try:
        validate_sweep(start, stop, ppd)
    except NetcheckError as err:  # its words name spec keys; say which options they are
        return NetcheckError(f"{err.message} (the sweep of --start, --stop and --ppd)",
                             code=err.code, path="netcheck sweep")
    return None


def _sweep(args: argparse.Namespace) -> int:
    import numpy as np

    from ..netlist.elaborate import elaborate
    from ..netlist.parse import load_netlist
    from ..render.outputs import OutputGuard, check_not_design_file, check_output_path, open_output
    from ..mna.solve import solve
    from ..mna.assemble import assemble

    given = None not in (args.start, args.stop, args.ppd)
    if given:
        problem = _sweep_problem(args.start, args.stop, args.ppd)
        if problem is not None:
            print(safe_text(problem.format()), file=sys.stderr)
            return BAD_INPUT
    target = args.csv or args.json
    guard = OutputGuard([args.netlist], "netlist")
    if target:  # an output that cannot be written is refused before any work is done
        check_output_path(target)
        guard.check(target)
        check_not_design_file(target)
    t0 = time.perf_counter()
    netlist = load_netlist(args.netlist, root=args.root)
    if not given:
        problem = _default_sweep(args, netlist.ac)
        if problem is not None:
            print(safe_text(problem.format()), file=sys.stderr)
            return BAD_INPUT
    try:
        circuit = elaborate(netlist, args.allow_negative)
        system = assemble(circuit, args.source, args.node, args.ref)
    except NetcheckError:  # a title line that was a card explains many a missing part
        print_diagnostics([d for d in netlist.diagnostics if d.code == "netlist-157"],
                          args.quiet)
        raise
    src = circuit.element(args.source)
    diags = list(circuit.diagnostics)
    if not getattr(src, "has_ac", True):
        diags.append(Diagnostic("netlist-153", f"stimulus {src.name} has no AC value; the response "
                                "is computed per unit stimulus", src.span))
    print_diagnostics(diags, args.quiet)
    from ..spec.reader import Sweep
    f = np.array(Sweep(args.start, args.stop, args.ppd).grid())
    resp = solve(system, f)
    elapsed = time.perf_counter() - t0
    mag, ph, gd = resp.magnitude_db, resp.phase_deg, resp.group_delay_s
    guard.add_inputs((src_file.path for src_file in getattr(circuit, "sources", ())),
                     "included file")
    if args.csv:
        with open_output(args.csv, guard=guard) as out:
            out.write("frequency_hz,magnitude_db,phase_deg,group_delay_s\n")
            for row in zip(f, mag, ph, gd):
                out.write(",".join(repr(float(v)) for v in row) + "\n")
    elif args.json:
        doc = {"schema": "netcheck.sweep/1", "tool_version": __version__,
               "netlist": args.netlist, "source": system.source, "node": args.node,
               "ref": args.ref, "method": resp.method,
               "frequency_hz": f.tolist(), "magnitude_db": [_num(v) for v in mag],
               "phase_deg": ph.tolist(), "group_delay_s": [_num(v) for v in gd]}
        with open_output(args.json, guard=guard) as out:
            json.dump(doc, out, indent=1, sort_keys=True)
            out.write("\n")
    else:
        from ..analyses.nominal import ResponseCurve
        from ..measure.measurements import MeasurementFailure, peak
        from ..netlist.units import format_si
        k = int(np.nanargmax(mag))
        f_pk, g_pk, how = float(f[k]), float(mag[k]), "grid"
        try:  # the true peak, refined between grid points on the exact response
            pk = peak(ResponseCurve.of(resp))
            f_pk, g_pk, how = pk.frequency_hz, pk.value, "refined"
        except (MeasurementFailure, ValueError):
            pass
        unit = "dB (V/V)" if src.letter == "V" else "dB re 1 V/A"
        print(printable(circuit.title or args.netlist))
        print(f"  peak gain {g_pk:.4f} {unit} at {format_si(f_pk, 'Hz', 7)} ({how})")
        print(f"  {f.size} points from {format_si(args.start, 'Hz')} to "
              f"{format_si(args.stop, 'Hz')} solved in {elapsed * 1e3:.1f} ms "
              f"({resp.method}, {system.size} unknowns)")
    return OK


def _default_sweep(args: argparse.Namespace, ac) -> NetcheckError | None:
    """Fill --start/--stop/--ppd not given from the netlist's own ``.ac`` card (a
    netlist-164 note says so); the flags given win. The problem, if the sweep still cannot be made."""
    if ac is None:
        missing = ", ".join(f"--{k}" for k in ("start", "stop", "ppd")
                            if getattr(args, k) is None)
        return NetcheckError(f"give {missing}: the netlist has no .ac card to take the sweep "
                             "from", code="run-402", path="netcheck sweep")
    from ..netlist.units import format_si
    start, stop, ppd = ac.log_grid()
    where = "'ac' command in its .control block" if ac.in_control else ".ac card"
    how = {"dec": "", "oct": f" ({ac.points} per octave as {ppd} per decade)",
           "lin": f" ({ac.points} linear points as a log grid of {ppd} per decade)"}[ac.kind]
    args.start = start if args.start is None else args.start
    args.stop = stop if args.stop is None else args.stop
    args.ppd = ppd if args.ppd is None else args.ppd
    print_diagnostics([Diagnostic(
        "netlist-164", f"sweep taken from the netlist's {where}: "
        f"{format_si(args.start, 'Hz')} to {format_si(args.stop, 'Hz')}, {args.ppd} points "
        f"per decade{how}; --start, --stop and --ppd override it", ac.span, "note")],
        args.quiet)
    return _sweep_problem(args.start, args.stop, args.ppd)


def _num(v: float) -> float | None:
    import math
    return None if not math.isfinite(v) else float(v)


def _install_stop_handlers() -> dict[int, object]:
    """Turn SIGTERM and SIGINT into :class:`netcheck.render.outputs.Stopped` in this process.

    Each handler first *records* the stop (:func:`netcheck.render.outputs.request_stop`), then
    raises, so ``finally`` blocks clean up; a library that swallows the exception (some
    drawing code catches everything) cannot make the run carry on as if nothing had
    happened: no output is renamed into place after a stop, and the exit status is
    128 + the signal. A worker process forked from this one gets the default action
    back and is ended by the signal as usual. Outside the main thread nothing is
    installed. Returns the previous handlers.
    """
    import threading

    from ..render.outputs import Stopped, request_stop

    if threading.current_thread() is not threading.main_thread():
        return {}
    main_pid = os.getpid()

    def handler(signum: int, frame: object) -> None:
        if os.getpid() != main_pid:
            signal.signal(signum, signal.SIG_DFL)
            os.kill(os.getpid(), signum)
            return
        request_stop(signum)
        raise Stopped(signum)

    previous: dict[int, object] = {}
    for signum in (signal.SIGTERM, signal.SIGINT):
        try:
            previous[signum] = signal.signal(signum, handler)
        except (ValueError, OSError):
            pass
    return previous


def _stopped_status(signum: int) -> int:
    if signum == signal.SIGTERM:
        print("netcheck: stopped by SIGTERM; no output was completed after it",
              file=sys.stderr)
        return TERMINATED
    print("netcheck: interrupted; no output was completed after it", file=sys.stderr)
    return INTERRUPTED


def _settle_source_date_epoch(quiet: bool) -> NetcheckError | None:
    """Check ``SOURCE_DATE_EPOCH`` once for the whole run.

    Empty (what a failed ``$(git log ...)`` gives): removed from the environment, so no
    library that reads it (the report clock, matplotlib, font subsetting, numpy) fails
    on it, with one warning line. Not a whole number of seconds, negative, or after the
    year 9999: an ``run-402`` error, returned.
    """
    raw = os.environ.get("SOURCE_DATE_EPOCH")
    if raw is None:
        return None
    value = raw.strip()
    if not value:
        del os.environ["SOURCE_DATE_EPOCH"]
        if not quiet:
            print("netcheck: warning: SOURCE_DATE_EPOCH is set but empty; it is ignored and "
                  "reports carry the current time", file=sys.stderr)
        return None
    if value.isascii() and value.isdigit():
        if int(value) <= EPOCH_MAX:
            return None
        why = "is after the year 9999"
    elif value[:1] == "-" and value[1:].isascii() and value[1:].isdigit():
        why = "is negative"
    else:
        why = "is not a whole number"
    return NetcheckError(f"SOURCE_DATE_EPOCH={printable(repr(raw), 60)} {why}; give the "
                         "report time as whole seconds since 1970-01-01 UTC (for example "
                         "the commit time, git log -1 --format=%ct), or leave it unset",
                         code="run-402", path="netcheck")


def _root_problem(root: str | None) -> NetcheckError | None:
    """Why ``--root DIR`` cannot be the design root (run-402), or None."""
    if root is None:
        return None
    why = None
    if not root:
        why = "is empty"
    else:
        try:
            st = os.stat(root)
        except FileNotFoundError:
            why = "does not exist"
        except (OSError, ValueError) as err:
            why = f"cannot be used ({getattr(err, 'strerror', None) or err})"
        else:
            if not stat.S_ISDIR(st.st_mode):
                why = "is not a folder"
    if why is None:
        return None
    return NetcheckError(f"--root {printable(repr(root), 120)} {why}; give the folder that "
                         "holds the design (every file a spec names must be inside it)",
                         code="run-402", path="netcheck")


def main(argv: Sequence[str] | None = None) -> int:
    """Run netcheck; return the exit code (see module constants)."""
    parser = build_parser()
    args = parser.parse_args(argv)
    problem = _settle_source_date_epoch(bool(getattr(args, "quiet", False)))
    if problem is not None:
        print(safe_text(problem.format()), file=sys.stderr)
        return BAD_INPUT
    from ..render.outputs import Stopped, clear_stop, stop_requested

    clear_stop()
    problem = _root_problem(getattr(args, "root", None))
    if problem is not None:
        print(safe_text(problem.format()), file=sys.stderr)
        return BAD_INPUT
    previous = _install_stop_handlers()
    try:
        if args.command == "sweep":
            status = _sweep(args)
        else:
            from .check import run_check
            status = run_check(args)
        signum = stop_requested()  # a stop that some library swallowed
        return status if signum is None else _stopped_status(signum)
    except NetcheckError as err:
        print(safe_text(err.format()), file=sys.stderr)
        return BAD_INPUT
    except KeyboardInterrupt:
        return _stopped_status(signal.SIGINT)
    except Stopped as stop:
        return _stopped_status(stop.signum)
    except BrokenPipeError:
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return OK
    except Exception:  # a bug in netcheck: keep the traceback, say so, exit 3
        import traceback
        traceback.print_exc()
        print(f"netcheck {__version__}: internal error (the traceback above is a bug in "
              "netcheck, not a problem with your files; please report it)", file=sys.stderr)
        return INTERNAL
    finally:
        from ..render.outputs import remove_partial_files
        for signum in previous:  # a second signal must not interrupt the clean-up
            _set_handler(signum, signal.SIG_IGN)
        remove_partial_files()
        for signum, handler in previous.items():
            _set_handler(signum, handler)


def _set_handler(signum: int, handler: object) -> None:
    try:
        signal.signal(signum, handler)  # type: ignore[arg-type]
    except (ValueError, OSError, TypeError):
        pass
