"""PDF report benchmark: one single-spec report against ``check`` without a PDF.

Run from the repository root::

    python benchmarks/bench_pdf.py [--repeat N] [--cold N]

Measured side by side in one run (median of interleaved repeats, after a warm-up):

(a) ``check_spec`` on ``specs/rx40k.toml``: what ``netcheck check`` does without a PDF;
(b) the PDF report of that one result (plots, HTML, layout, fonts), written to memory;
(c) both together: what ``--pdf`` adds to a check, per spec, once the libraries are loaded.

Then the reports with the further analyses, again side by side (each result checked once,
outside the timing):

(d) ``specs/rx40k_tolerance.toml`` (Monte Carlo, 2000 samples; worst case; stress): the
    tolerance section with its histogram and the envelope on both gain plots;
(e) the combined report of the ``specs/rx40k_family.toml`` family (4 variants): the family
    overview with the overlay figures, then every variant's own report.

Both are also given per page, beside (b) per page, since their size grows with the spec.

Then, in fresh interpreters (median of ``--cold`` runs), the first report of a process
including the imports of matplotlib, jinja2 and weasyprint, beside a fresh interpreter
that only checks. Target: a single-spec report under 1.5 s (b). The target is printed
beside the figure; nothing is asserted.
"""

from __future__ import annotations

import argparse
import io
import os
import statistics
import subprocess
import sys
import time

import _harness  # noqa: F401  (puts the repository root on sys.path)

from netcheck import __version__
from netcheck.analyses.nominal import check_spec
from netcheck.report import pdf
from netcheck.result import CheckResult

SPEC = str(_harness.REPO_ROOT / "specs" / "rx40k.toml")
TOLERANCE_SPEC = str(_harness.REPO_ROOT / "specs" / "rx40k_tolerance.toml")
FAMILY_SPEC = str(_harness.REPO_ROOT / "specs" / "rx40k_family.toml")
TARGET_S = 1.5

_COLD = """
import sys, time
t0 = time.perf_counter()
from netcheck.analyses.nominal import check_spec
from netcheck.result import CheckResult
r = CheckResult((check_spec(sys.argv[1]),), "0", "2026-01-01T00:00:00Z")
t1 = time.perf_counter()
if sys.argv[2] == "pdf":
    from netcheck.report import pdf
    pdf.render_bytes(r)
print(time.perf_counter() - t0, time.perf_counter() - t1)
"""


def cold(mode: str, runs: int) -> tuple[float, float]:
    """Median seconds in a fresh interpreter: (whole script, the part after the check)."""
    totals, tails = [], []
    for _ in range(runs):
        out = subprocess.run([sys.executable, "-c", _COLD, SPEC, mode], capture_output=True,
                             text=True, check=True, cwd=_harness.REPO_ROOT,
                             env={**os.environ, "PYTHONPATH": str(_harness.REPO_ROOT)})
        total, tail = (float(x) for x in out.stdout.split())
        totals.append(total)
        tails.append(tail)
    return statistics.median(totals), statistics.median(tails)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=5)
    ap.add_argument("--cold", type=int, default=3)
    args = ap.parse_args()
    _harness.header("PDF report: one spec (specs/rx40k.toml)")

    result = CheckResult((check_spec(SPEC),), __version__, "2026-01-01T00:00:00Z")
    pages = "?"
    if _has("pypdf"):
        from pypdf import PdfReader
        pages = len(PdfReader(io.BytesIO(pdf.render_bytes(result))).pages)
    cases = {
        "(a) check, no PDF": lambda: check_spec(SPEC),
        "(b) one-spec PDF": lambda: pdf.render_bytes(result),
        "(c) check + PDF": lambda: pdf.render_bytes(
            CheckResult((check_spec(SPEC),), __version__, "2026-01-01T00:00:00Z")),
    }
    t = _harness.compare(cases, args.repeat)
    width = max(map(len, t))
    for name, timing in t.items():
        print(f"{name:<{width}}  {_harness.fmt_timing(timing)}")
    ratio = t["(b) one-spec PDF"].median / t["(a) check, no PDF"].median
    print(f"\nreport: {pages} pages, A4; PDF / check = {ratio:.1f}x")
    cpu = statistics.median(_cpu_seconds(lambda: pdf.render_bytes(result))
                            for _ in range(args.repeat))
    print(f"CPU time of (b): {cpu:.2f} s per report (process time; wall time above also "
          "counts waiting for the CPU on a loaded machine)")
    b = t["(b) one-spec PDF"].median
    print(f"target: single-spec report under {TARGET_S:g} s -> {b:.2f} s wall, "
          f"{_harness.verdict(b < TARGET_S)}; {cpu:.2f} s CPU, {_harness.verdict(cpu < TARGET_S)}")

    analyses(args.repeat, result)

    if args.cold:
        print(f"\nfresh interpreter, median of {args.cold} (imports included):")
        check_total, _ = cold("check", args.cold)
        pdf_total, pdf_tail = cold("pdf", args.cold)
        print(f"  check only            {_harness.fmt_seconds(check_total)}")
        print(f"  check + first PDF     {_harness.fmt_seconds(pdf_total)}  (the PDF part, with "
              f"its imports: {_harness.fmt_seconds(pdf_tail).strip()})")


def analyses(repeat: int, single: CheckResult) -> None:
    """(d) the tolerance report and (e) the family report, beside (b), also per page."""
    from netcheck.runs import batch

    created = "2026-01-01T00:00:00Z"
    tol = CheckResult((check_spec(TOLERANCE_SPEC),), __version__, created)
    jobs = batch.expand_jobs([FAMILY_SPEC])
    fam = CheckResult(tuple(batch.run_all(jobs, batch.SerialExecutor())), __version__, created)
    results = {"(b) one-spec PDF": single, "(d) tolerance PDF": tol,
               f"(e) family PDF, {len(fam.specs)} variants": fam}
    pages = {name: _pages(r) for name, r in results.items()}
    print("\nfurther analyses, side by side:")
    t = _harness.compare({name: (lambda r=r: pdf.render_bytes(r)) for name, r in results.items()},
                         repeat)
    width = max(map(len, t))
    for name, timing in t.items():
        per = f"{timing.median / pages[name]:.3f} s per page" if isinstance(pages[name], int) \
            else ""
        print(f"{name:<{width}}  {_harness.fmt_timing(timing)}  {pages[name]} pages, {per}")
    b = t["(b) one-spec PDF"].median
    for name in list(t)[1:]:
        print(f"  {name} / (b) = {t[name].median / b:.1f}x")


def _pages(result: CheckResult) -> int | str:
    if not _has("pypdf"):
        return "?"
    from pypdf import PdfReader
    return len(PdfReader(io.BytesIO(pdf.render_bytes(result))).pages)


def _cpu_seconds(fn) -> float:
    t0 = time.process_time()
    fn()
    return time.process_time() - t0


def _has(module: str) -> bool:
    try:
        __import__(module)
    except ImportError:
        return False
    return True


if __name__ == "__main__":
    main()
