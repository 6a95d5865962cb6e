"""The ``netcheck`` command: argument parsing, output and named exit codes."""

from __future__ import annotations

import argparse
import json
import os
import sys
import time
from collections.abc import Sequence

from . import __version__
from .exceptions import Diagnostic, NetcheckError

__all__ = ["main", "OK", "FAIL", "BAD_INPUT", "INTERNAL", "DRIFT"]

#: every limit passed (or the sweep ran)
OK = 0
#: at least one limit failed
FAIL = 1
#: bad input: a netlist, spec or argument could not be used
BAD_INPUT = 2
#: a bug in netcheck (the traceback is kept)
INTERNAL = 3
#: every limit passed but a margin drifted from the baseline (with --fail-on-drift)
DRIFT = 4

DOCS = "docs/errors.md#"


def _eng(text: str) -> float:
    from .units import UnitError, parse_quantity
    try:
        return parse_quantity(text)
    except UnitError as err:
        raise argparse.ArgumentTypeError(str(err)) from None


def _positive_int(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number") from None
    if value < 1:
        raise argparse.ArgumentTypeError("must be at least 1")
    return value


def build_parser() -> argparse.ArgumentParser:
    """The argument parser (exposed for documentation and tests)."""
    ap = argparse.ArgumentParser(prog="netcheck", description=(
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
    sw.add_argument("--start", required=True, type=_eng, metavar="F", help="start, Hz (10k)")
    sw.add_argument("--stop", required=True, type=_eng, metavar="F", help="stop, Hz (1meg)")
    sw.add_argument("--ppd", required=True, type=_positive_int, metavar="N",
                    help="points per decade")
    out = sw.add_mutually_exclusive_group()
    out.add_argument("--csv", metavar="PATH", help="write CSV ('-' for stdout)")
    out.add_argument("--json", metavar="PATH", help="write JSON ('-' for stdout)")
    _common(sw)

    from .checkcli import add_check_parser
    add_check_parser(sub, _common)
    return ap


def _common(p: argparse.ArgumentParser) -> None:
    p.add_argument("--root", metavar="DIR",
                   help="design root that .include may not leave (default: netlist's folder)")
    p.add_argument("--allow-negative", action="store_true",
                   help="accept negative R, L and C values (behavioural models)")
    p.add_argument("-q", "--quiet", action="store_true", help="no warnings, summary only")


def print_diagnostics(diags: Sequence[Diagnostic], quiet: bool = False) -> None:
    """Lint warnings to stderr, compiler-style."""
    if quiet:
        return
    for d in diags:
        print(d.format(), file=sys.stderr)


def _sweep(args: argparse.Namespace) -> int:
    import numpy as np

    from .elaborate import read_netlist
    from .outputs import open_output
    from .solve import solve
    from .assemble import assemble

    if not (0 < args.start < args.stop):
        print(f"netcheck sweep: error: need 0 < --start < --stop (got {args.start:g}, "
              f"{args.stop:g})", file=sys.stderr)
        return BAD_INPUT
    t0 = time.perf_counter()
    circuit = read_netlist(args.netlist, root=args.root, allow_negative=args.allow_negative)
    system = assemble(circuit, args.source, args.node, args.ref)
    src = circuit.element(args.source)
    diags = list(circuit.diagnostics)
    if not getattr(src, "has_ac", True):
        diags.append(Diagnostic("NC153", f"stimulus {src.name} has no AC value; the response "
                                "is computed per unit stimulus", src.span))
    print_diagnostics(diags, args.quiet)
    from .spec import Sweep
    f = np.array(Sweep(args.start, args.stop, args.ppd).grid())
    resp = solve(system, f)
    elapsed = time.perf_counter() - t0
    mag, ph, gd = resp.magnitude_db, resp.phase_deg, resp.group_delay_s
    if args.csv:
        with open_output(args.csv) as out:
            out.write("frequency_hz,magnitude_db,phase_deg,group_delay_s\n")
            for row in zip(f, mag, ph, gd):
                out.write(",".join(repr(float(v)) for v in row) + "\n")
    elif args.json:
        doc = {"schema": "netcheck.sweep/1", "tool_version": __version__,
               "netlist": args.netlist, "source": system.source, "node": args.node,
               "ref": args.ref, "method": resp.method,
               "frequency_hz": f.tolist(), "magnitude_db": [_num(v) for v in mag],
               "phase_deg": ph.tolist(), "group_delay_s": [_num(v) for v in gd]}
        with open_output(args.json) as out:
            json.dump(doc, out, indent=1, sort_keys=True)
            out.write("\n")
    else:
        from .evaluate import ResponseCurve
        from .measure import MeasurementFailure, peak
        from .units import format_si
        k = int(np.nanargmax(mag))
        f_pk, g_pk, how = float(f[k]), float(mag[k]), "grid"
        try:  # the true peak, refined between grid points on the exact response
            pk = peak(ResponseCurve.of(resp))
            f_pk, g_pk, how = pk.frequency_hz, pk.value, "refined"
        except (MeasurementFailure, ValueError):
            pass
        unit = "dB (V/V)" if src.letter == "V" else "dB re 1 V/A"
        print(f"{circuit.title or args.netlist}")
        print(f"  peak gain {g_pk:.4f} {unit} at {format_si(f_pk, 'Hz', 7)} ({how})")
        print(f"  {f.size} points from {format_si(args.start, 'Hz')} to "
              f"{format_si(args.stop, 'Hz')} solved in {elapsed * 1e3:.1f} ms "
              f"({resp.method}, {system.size} unknowns)")
    return OK


def _num(v: float) -> float | None:
    import math
    return None if not math.isfinite(v) else float(v)


def main(argv: Sequence[str] | None = None) -> int:
    """Run netcheck; return the exit code (see module constants)."""
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        if args.command == "sweep":
            return _sweep(args)
        from .checkcli import run_check
        return run_check(args)
    except NetcheckError as err:
        print(err.format(), file=sys.stderr)
        return BAD_INPUT
    except KeyboardInterrupt:
        print("netcheck: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return OK
    except Exception:  # a bug in netcheck: keep the traceback, say so, exit 3
        import traceback
        traceback.print_exc()
        print(f"netcheck {__version__}: internal error (the traceback above is a bug in "
              "netcheck, not a problem with your files; please report it)", file=sys.stderr)
        return INTERNAL
