"""Markdown summary renderer: layout, ordering, family matrix, escaping and a gold file.

Outside source: the table and escape rules checked here are those of the GitHub Flavored
Markdown spec (tables extension: a ``|`` inside a cell must be written ``\\|``) and
CommonMark §2.4 (any ASCII punctuation may be backslash-escaped).
"""

from __future__ import annotations

import io

import pytest

from netcheck.render import RenderOptions, get_renderer
from netcheck.render.markdown import md_text, render
from netcheck.result import HAZARD_CAUTION, Caution, CheckResult, LimitResult, SpecResult, Status

from .sample import compare_gold, sample_result


def markdown(result: CheckResult) -> str:
    buf = io.StringIO()
    render(result, buf, RenderOptions())
    return buf.getvalue()


def cells(row: str) -> list[str]:
    """Split a GFM table row at unescaped pipes (what a GFM renderer does)."""
    out, cur, i = [], "", 0
    body = row.strip()[1:-1]
    while i < len(body):
        if body[i] == "\\" and i + 1 < len(body):
            cur += body[i:i + 2]
            i += 2
            continue
        if body[i] == "|":
            out.append(cur.strip())
            cur = ""
        else:
            cur += body[i]
        i += 1
    out.append(cur.strip())
    return out


def section(text: str, heading_start: str) -> list[str]:
    lines = text.splitlines()
    start = next(i for i, line in enumerate(lines) if line.startswith(heading_start))
    end = next((i for i in range(start + 1, len(lines)) if lines[i].startswith("#")),
               len(lines))
    return lines[start:end]


def test_registry_finds_the_renderer():
    assert get_renderer("markdown") is render


class TestHeadline:
    def test_verdict_in_words(self):
        first = markdown(sample_result()).splitlines()[0]
        assert first == ("## ! 5 specs: 3 of 17 limits missed, 1 could not be measured (worst: "
                         "group delay could not be measured in specs/quillmere\\_rx40k.toml); "
                         "1 not applicable; 1 spec not checked")

    def test_pass_and_fail_wording(self):
        ok = LimitResult("g", "gain", Status.PASS, 0.0, -1.0, 1.0, 1.0, "dB")
        bad = LimitResult("g", "gain", Status.FAIL, 2.0, -1.0, 1.0, -1.0, "dB")
        passing = CheckResult((SpecResult("s", "n", "t", Status.PASS, (ok,)),), "0")
        failing = CheckResult((SpecResult("s", "n", "t", Status.FAIL, (bad,)),), "0")
        assert markdown(passing).startswith("## ✓ 1 spec: 1 limit met\n")
        assert markdown(failing).startswith("## ✗ 1 spec: 1 of 1 limit missed (g -1.000 dB in s)\n")
        assert "### ✗ t — 1 of 1 limit missed (g -1.000 dB)\n" in markdown(failing)

    def test_counts_sentence(self):
        lines = markdown(sample_result()).splitlines()
        assert lines[2] == ("5 specs checked: 2 PASS, 1 FAIL, 2 ERROR. "
                            "18 limits: 13 PASS, 3 FAIL, 1 ERROR, 1 SKIP.")
        assert lines[4] == "_netcheck 0.1.0, 2026-03-14T09:26:53Z_"

    def test_no_time_without_created_utc(self):
        assert "_netcheck 0.1.0_" in markdown(sample_result(created_utc="")).splitlines()


class TestSpecTables:
    def test_most_severe_first_then_spec_order(self):
        rx = section(markdown(sample_result()), "### ! RX-40k")
        rows = [cells(line) for line in rx if line.startswith("| ")][1:]
        assert [(r[0], r[1]) for r in rows] == [
            ("ERROR", "group delay"), ("FAIL", "ripple"), ("FAIL", "C4 voltage"),
            ("PASS", "pass-band gain"), ("PASS", "input impedance"), ("PASS", "phase at 40k")]

    def test_skipped_before_passed(self):
        heading = "### ✓ Quillmere Instruments mains hum notch \\[60hz-economy"
        eco = section(markdown(sample_result()), heading)
        rows = [cells(line) for line in eco if line.startswith("| ")][1:]
        assert [r[0] for r in rows] == ["SKIP", "PASS", "PASS", "PASS"]

    def test_row_values(self):
        rx = section(markdown(sample_result()), "### ! RX-40k")
        rows = {cells(line)[1]: cells(line) for line in rx if line.startswith("| ")}
        assert rows["ripple"] == ["FAIL", "ripple", "1.300 dB", "≤ 1.000 dB", "-0.300 dB",
                                  "41.250 kHz"]
        assert rows["group delay"] == ["ERROR", "group delay", "—", "≤ 200.0 µs", "—", "—"]
        assert rows["input impedance"][2:5] == ["9.870 kΩ", "≥ 4.700 kΩ", "+5.170 kΩ"]

    def test_header_and_alignment_rows_have_six_cells(self):
        rx = section(markdown(sample_result()), "### ! RX-40k")
        table = [line for line in rx if line.startswith("|")]
        assert cells(table[0]) == ["Status", "Limit", "Measured", "Allowed", "Margin", "At"]
        assert all(len(cells(line)) == 6 for line in table)

    def test_notes_for_non_passing_limits(self):
        rx = section(markdown(sample_result()), "### ! RX-40k")
        assert "- ERROR group delay: no sweep points inside the 39k…37k band " \
               "(band is reversed)" in rx

    def test_spec_level_error_in_a_fence_that_holds(self):
        lp = section(markdown(sample_result()), "### ! Quillmere Instruments anti-alias")
        start = lp.index("```text")
        assert lp[start + 2] == "    C3 n3 n4 ``1n``"
        assert lp[start + 4] == "```"
        # Three backticks inside the text force a longer fence.
        spec = SpecResult("s", "n", "t", Status.ERROR, error="a ``` b")
        text = markdown(CheckResult((spec,), "0"))
        assert "````text\na ``` b\n````" in text

    def test_no_colour_or_html(self):
        text = markdown(sample_result())
        assert "\x1b" not in text and "<span" not in text and "<font" not in text


class TestFamilyMatrix:
    def test_matrix_of_variants_by_limit(self):
        fam = section(markdown(sample_result()), "### Family: specs/quillmere\\_hum\\_notch.toml")
        rows = [cells(line) for line in fam if line.startswith("| ")]
        assert rows == [
            ["Variant", "Verdict", "notch depth", "pass-band flatness", "centre", "q"],
            ["50hz", "PASS", "PASS +6.200 dB", "PASS +0.420 dB", "PASS +1.300 Hz", "PASS +2.100"],
            ["60hz", "FAIL", "FAIL -1.300 dB", "PASS +0.420 dB", "PASS +1.100 Hz", "PASS +1.900"],
            ["60hz-economy", "PASS", "PASS +1.050 dB", "PASS +0.420 dB", "PASS +1.100 Hz",
             "SKIP"],
        ]

    def test_only_for_specs_with_several_variants(self):
        text = markdown(sample_result())
        assert text.count("### Family:") == 1
        one = SpecResult("a.toml", "n", "t", Status.PASS, variant="only")
        assert "### Family:" not in markdown(CheckResult((one, one), "0"))

    def test_missing_limit_is_a_dash(self):
        g = LimitResult("g", "gain", Status.PASS, 0.0, -1.0, 1.0, 1.0, "dB")
        d = LimitResult("d", "group_delay", Status.FAIL, 3e-4, None, 2e-4, -1e-4, "s")
        a = SpecResult("f.toml", "n", "t", Status.PASS, (g,), variant="a")
        b = SpecResult("f.toml", "n", "t", Status.FAIL, (g, d), variant="b")
        fam = section(markdown(CheckResult((a, b), "0")), "### Family:")
        rows = [cells(line) for line in fam if line.startswith("| ")]
        assert rows[1] == ["a", "PASS", "PASS +1.000 dB", "—"]
        assert rows[2] == ["b", "FAIL", "PASS +1.000 dB", "FAIL -100.0 µs"]


class TestCautions:
    def test_each_caution_once_with_its_specs(self):
        cau = section(markdown(sample_result()), "## Cautions")
        items = [line for line in cau if line.startswith("- ")]
        assert items[0] == ("- sample\\_netlists/lib/quillmere\\_opamps.lib:3:1: warning netlist-150: "
                            "unknown directive .temp ignored")
        assert items[1].startswith("- sample\\_netlists/hum\\_notch.cir:14:9: warning netlist-152: "
                                   "node 'tap' has one connection (")
        assert items[1].count("Quillmere Instruments mains hum notch") == 3
        # the receiver's hazard caution is a finding like the others, with its spec
        assert items[2].startswith("- caution analysis-voltage: L2 sees 14.2× the input voltage")
        assert items[4].startswith("- warning analysis-302: matrix badly conditioned")
        assert items[5].startswith("- sample\\_netlists/sk\\_lowpass.cir:7:1: error analysis-300: ")
        assert len(items) == 6

    def test_hazard_caution_once_at_the_end(self):
        text = markdown(sample_result())
        assert text.count("singular circuit") == 2      # the error block and the caution
        assert text.count(md_text(HAZARD_CAUTION)) == 1
        assert text.splitlines()[-1] == f"> Caution: {md_text(HAZARD_CAUTION)}"

    def test_no_hazard_caution_unless_a_spec_warrants_it(self):
        plain = SpecResult("a.toml", "n.cir", "A", Status.PASS)
        assert "Caution" not in markdown(CheckResult((plain, plain), "0"))

    def test_labels_left_out_when_every_spec_has_it(self):
        c = Caution("netlist-152", "node x has one connection", path="n.cir", line=2, column=1)
        a = SpecResult("a.toml", "n.cir", "A", Status.PASS, cautions=(c,))
        b = SpecResult("b.toml", "n.cir", "B", Status.PASS, cautions=(c,))
        text = markdown(CheckResult((a, b), "0"))
        assert "- n.cir:2:1: warning netlist-152: node x has one connection\n" in text

    def test_no_section_without_cautions(self):
        spec = SpecResult("s", "n", "t", Status.PASS)
        assert "Cautions" not in markdown(CheckResult((spec,), "0"))

    def test_position_without_column(self):
        spec = SpecResult("s", "n", "t", Status.PASS,
                          cautions=(Caution("netlist-150", "unknown directive .temp", path="n.cir",
                                            line=4),))
        assert "- n.cir:4: warning netlist-150: unknown directive .temp\n" in markdown(
            CheckResult((spec,), "0"))


class TestEscaping:
    @pytest.mark.parametrize(("raw", "expected"), [
        ("a|b", "a\\|b"),
        ("*x* _y_ `z`", "\\*x\\* \\_y\\_ \\`z\\`"),
        ("[link](http://q)", "\\[link\\](http://q)"),
        ("<b>&amp;", "\\<b\\>\\&amp;"),
        ("~~s~~ $m$ \\", "\\~\\~s\\~\\~ \\$m\\$ \\\\"),
        ("two\nlines\r\n", "two lines  "),
        ("\x1b[31m\x00", "\\x1b\\[31m\\x00"),
        ("Quillmere 4k7 Ω …", "Quillmere 4k7 Ω …"),
    ])
    def test_md_text(self, raw, expected):
        assert md_text(raw) == expected

    def test_pipe_in_user_text_keeps_table_shape(self):
        lim = LimitResult("gain | lo", "gain", Status.FAIL, 1.0, None, 0.0, -1.0, "dB")
        spec = SpecResult("s", "n", "title | with | pipes", Status.FAIL, (lim,))
        text = markdown(CheckResult((spec,), "0"))
        row = next(line for line in text.splitlines() if line.startswith("| FAIL"))
        assert cells(row) == ["FAIL", "gain \\| lo", "1.000 dB", "≤ 0.000 dB", "-1.000 dB", "—"]
        assert "### ✗ title \\| with \\| pipes — 1 of 1 limit missed (gain \\| lo -1.000 dB)" in text


def test_reproducible():
    assert markdown(sample_result()) == markdown(sample_result())


def test_gold():
    compare_gold("summary.md", markdown(sample_result()))
