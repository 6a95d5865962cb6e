"""docs/methods.md, the one document the report cites for its methods: a section for every
kind of result, every link resolving, and its numbers the ones the code uses."""

from __future__ import annotations

import math
import re
from pathlib import Path

import pytest

from netcheck.analyses import stress, worstcase
from netcheck.measure import detail
from netcheck.mna import polezero, solve
from netcheck.report.context import METHODS_STATEMENT, methods_section
from netcheck.spec.limits import LIMITS

DOCS = Path(__file__).resolve().parents[2] / "docs"
METHODS = DOCS / "methods.md"

#: kinds of result a PDF detail can carry besides the limit kinds, and the section each
#: cites (written here by hand, so a renamed anchor fails the test)
OTHER_KINDS = {"stress": "stress", "worst_case": "worst-case", "yield": "monte-carlo"}


def anchors(path: Path) -> set[str]:
    return set(re.findall(r'<a id="([^"]+)"></a>', path.read_text("utf-8")))


def section(anchor: str) -> str:
    """The text of the section under ``<a id="anchor">``, up to the next anchor."""
    text = METHODS.read_text("utf-8")
    return text.split(f'<a id="{anchor}"></a>')[1].split("<a id=")[0]


@pytest.mark.parametrize("kind", sorted(LIMITS))
def test_every_limit_kind_has_its_section(kind):
    # a new kind in netcheck.spec.limits.registry fails here until methods.md explains it
    anchor = LIMITS[kind].methods_anchor()
    assert anchor == kind.replace("_", "-")
    assert anchor in anchors(METHODS)
    body = section(anchor)
    assert body.lstrip().startswith("## "), "the anchor must stand right above its heading"
    assert f"(`{kind}`)" in body.splitlines()[1], "the heading names the TOML kind"


def test_the_sections_the_brief_names_exist():
    # the anchors the PDF and spec-format.md cite, written out by hand
    expected = {"gain", "ripple", "resonance", "corner", "group-delay", "phase", "impedance",
                "stress", "worst-case", "monte-carlo", "not-in-the-model", "references",
                "definitions", "circuit-model", "engines", "sweep-grid", "refinement"}
    assert expected <= anchors(METHODS)


@pytest.mark.parametrize("kind", sorted(OTHER_KINDS))
def test_other_result_kinds_cite_their_section(kind):
    assert methods_section(kind) == OTHER_KINDS[kind]
    assert OTHER_KINDS[kind] in anchors(METHODS)


def test_unknown_kind_cites_nothing():
    assert methods_section("no_such_kind") is None


@pytest.mark.parametrize("kind", sorted(LIMITS))
def test_method_statement_is_one_line(kind):
    # shown in the PDF as "METHOD — methods.md#anchor" on one line of the detail column
    # (about 90 characters of 8 pt DejaVu Sans there: measured on the sample reports)
    text = LIMITS[kind].METHOD
    assert text and "\n" not in text and text == text.strip()
    assert len(f"{text} — methods.md#{LIMITS[kind].methods_anchor()}") <= 92


@pytest.mark.parametrize("doc", ["methods.md", "spec-format.md", "errors.md"])
def test_links_into_methods_resolve(doc):
    text = (DOCS / doc).read_text("utf-8")
    links = re.findall(r"\]\(methods\.md#([^)\s]+)\)", text)
    if doc == "methods.md":
        links += re.findall(r"\]\(#([^)\s]+)\)", text)
    assert links
    assert sorted(set(links) - anchors(METHODS)) == []
    spec_links = re.findall(r"\]\(spec-format\.md#([^)\s]+)\)", text)
    assert sorted(set(spec_links) - anchors(DOCS / "spec-format.md")) == []


def test_spec_format_points_every_kind_to_its_section():
    text = (DOCS / "spec-format.md").read_text("utf-8")
    for kind in LIMITS:
        part = text.split(f"### `{kind}`:")[1].split("\n### ")[0].split("\n<a id=")[0]
        anchor = LIMITS[kind].methods_anchor()
        assert f"How it is measured: [methods.md#{anchor}](methods.md#{anchor})." in part


def test_spec_format_keeps_no_numerical_method():
    # moved to methods.md: spec-format.md says what a user writes, not how it is solved
    text = (DOCS / "spec-format.md").read_text("utf-8")
    for moved in ("Brent", "Arnoldi", "generalized eigenvalues", "J. Am. Stat. Assoc.",
                  "2^(P−1)"):
        assert moved not in text, moved


def test_half_power_level():
    # 10·log10 2 dB, the drop at |H| = |H_peak|/√2 (definition of half power; computed here)
    assert f"{10 * math.log10(2):.4f} dB" == "3.0103 dB"
    assert "10·log10 2 ≈ 3.0103 dB" in section("definitions")
    assert "√(f_low·f_high)" in section("definitions")


def test_numbers_are_the_ones_the_code_uses():
    # every number methods.md states about the solver is the constant the code runs with
    assert solve.DENSE_MAX == 300 and "(up to 300 unknowns)" in section("engines")
    assert solve.PZ_MIN_POINTS == 40 and "sweeps of 40 points or more" in section("engines")
    assert polezero.CHECK_TOL == 1e-8 and "relative error of 10⁻⁸" in section("engines")
    assert worstcase.MAX_CORNER_PARTS == 12 and worstcase.MAX_CORNER_PARTS_SPARSE == 6
    assert "With up to 12 toleranced parts (6 on the sparse path)" in section("worst-case")
    assert stress.MAX_SEEDS == 6 and "up to 6 of the grid's local maxima" in section("stress")
    assert detail.TOL_DB == 0.05 and detail.TOL_DEG == 0.5 and detail.MAX_POINTS == 2000
    assert "0.05 dB (0.5° in phase)" in section("drawn-curves")
    assert "2,000 extra points" in section("drawn-curves")


def test_references_cover_every_citation():
    text = METHODS.read_text("utf-8")
    refs = section("references")
    cited = re.findall(r"\[([A-Z][a-z]+)[^\]]*?(\d{4})", text.split(
        '<a id="references"></a>')[0])
    assert len({c for c in cited}) >= 10  # Ho … Wilson: the citations the text makes
    for name, year in cited:
        assert name in refs and year in refs, (name, year)


def test_the_report_cites_the_document():
    assert "docs/methods.md" in METHODS_STATEMENT
