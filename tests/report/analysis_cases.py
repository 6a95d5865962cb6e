"""Results behind the tolerance, stress and family report tests.

Built the same way in the test process and in a second interpreter (run as a script), so
that the two renders can be compared byte for byte. Run as
``python tests/report/analysis_cases.py FOLDER OUT``: checks the cases in FOLDER (the
tolerance spec copy written by :func:`write_tolerance_spec`) and writes
``OUT/tolerance.pdf`` and ``OUT/family.bin`` (the family document's HTML and plots).
"""

from __future__ import annotations

import dataclasses
import re
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
CREATED = "2026-01-01T00:00:00Z"
SAMPLES = 200  # the shipped spec asks for 2000; 200 keep the tests fast

#: stress tables added to the tolerance spec copy, so that one report shows V, A and W rows
EXTRA_STRESS = """
[[stress]]
parts = "L*"
max_current = "0.5"

[[stress]]
parts = "RSENSE"
max_power = "2"
"""

#: the repository state as the CLI records it; with it the report asks git nothing, so a
#: commit made while the tests run cannot change the bytes between two renders
GIT = {"commit": "0" * 40, "dirty": False, "changed_inputs": [],
       "text": f"commit {'0' * 40}; working tree clean"}


def tolerance_spec(folder: Path, samples: int = SAMPLES, **replace: str) -> Path:
    """A copy of specs/rx40k_tolerance.toml with fewer samples, its netlist copied beside it.

    (A spec outside a work tree may name only files inside its own folder.)
    """
    text = (ROOT / "specs" / "rx40k_tolerance.toml").read_text("utf-8")
    text = re.sub(r'^netlist = ".*"$', 'netlist = "rx40k.cir"', text, flags=re.M)
    text = re.sub(r"^samples = \d+$", f"samples = {samples}", text, flags=re.M)
    for old, new in replace.items():
        assert old in text, old
        text = text.replace(old, new)
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "rx40k.cir").write_bytes((ROOT / "sample_netlists" / "rx40k.cir").read_bytes())
    path = folder / "rx40k_tolerance.toml"
    path.write_text(text, "utf-8")
    return path


def write_tolerance_spec(folder: Path) -> Path:
    """The tolerance case: Q limit tightened so that some samples fail, plus stress tables."""
    path = tolerance_spec(folder, **{"q = [10, 14]": "q = [11.9, 14]",
                                     "yield_min = 0.95": "yield_min = 0.9"})
    path.write_text(path.read_text("utf-8") + EXTRA_STRESS, "utf-8")
    return path


def recorded(result):
    """``result`` with the fixed git state in every spec's extra."""
    specs = tuple(dataclasses.replace(s, extra=s.extra + (("git", GIT),)) for s in result.specs)
    return dataclasses.replace(result, specs=specs)


def tolerance_case(folder: Path):
    """CheckResult of the tolerance spec written in ``folder``."""
    from netcheck.analyses.nominal import check_spec
    from netcheck.result import CheckResult

    spec = check_spec(str(folder / "rx40k_tolerance.toml"))
    return recorded(CheckResult((spec,), "0.1.0", CREATED))


def family_case():
    """CheckResult of every variant of specs/rx40k_family.toml."""
    from netcheck.runs import batch
    from netcheck.result import CheckResult

    jobs = batch.expand_jobs([str(ROOT / "specs" / "rx40k_family.toml")])
    return recorded(CheckResult(tuple(batch.run_all(jobs, batch.SerialExecutor())), "0.1.0",
                                CREATED))


def family_html(result) -> bytes:
    """The family document as the report's HTML and its embedded plots, as one byte string."""
    from netcheck.report import pdf

    html, resources = pdf.render_html(result)
    parts = [html.encode("utf-8")]
    for url in sorted(resources):
        parts += [url.encode("utf-8"), resources[url][0]]
    return b"\0".join(parts)


def main(argv: list[str]) -> None:
    """Write the tolerance report as PDF and the family document as HTML + plots.

    weasyprint's own reproducibility (same HTML, same PDF bytes) is checked by
    test_pdf.py; the family's PDF is left out here to keep the suite fast.
    """
    sys.path.insert(0, str(ROOT))
    from netcheck.report import pdf

    folder, out = Path(argv[0]), Path(argv[1])
    out.mkdir(parents=True, exist_ok=True)
    (out / "tolerance.pdf").write_bytes(pdf.render_bytes(tolerance_case(folder)))
    (out / "family.bin").write_bytes(family_html(family_case()))


if __name__ == "__main__":
    main(sys.argv[1:])
