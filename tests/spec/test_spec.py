"""Spec loader: the Spec it builds, and every spec error with its key path, span and code."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from netcheck.analyses.nominal import check_spec
from netcheck.exceptions import CODES, SpecError
from netcheck.spec.limits import LIMITS, CornerLimit, GainLimit, ResonanceLimit
from netcheck.result import Status
from netcheck.spec import Spec, Sweep, load_spec, parse_spec

HEAD = """\
title = "Quillmere Instruments test filter"
netlist = "filter.cir"
source = "VIN"
output = "out"

[sweep]
start = "1k"
stop = "100k"
points_per_decade = 50
"""

GAIN = """
[[limits]]
kind = "gain"
band = ["2k", "3k"]
max_db = 1
"""

#: A series RLC band-pass used where a spec must really be checked (f0 = 1/(2 pi sqrt(LC))).
NETLIST = """\
Quillmere Instruments test band-pass
VIN in 0 AC 1
L1 in a 10m
C1 a out 2.5n
R1 out 0 50
.end
"""


def fail(text: str, path: str = "q.toml") -> SpecError:
    """The SpecError that parsing ``text`` raises."""
    with pytest.raises(SpecError) as info:
        parse_spec(text, path)
    return info.value


def line_of(text: str, needle: str) -> int:
    """1-based number of the first line of ``text`` that starts with ``needle``."""
    return next(i for i, ln in enumerate(text.splitlines(), 1) if ln.startswith(needle))


class TestValidSpec:
    def test_fields(self):
        spec = parse_spec(HEAD + GAIN, "designs/q.toml")
        assert isinstance(spec, Spec)
        assert spec.title == "Quillmere Instruments test filter"
        assert Path(spec.netlist) == Path("designs/filter.cir")  # relative to the spec file
        assert (spec.source, spec.output) == ("VIN", ("out", "0"))  # ground is the default ref
        assert spec.sweep == Sweep(1e3, 1e5, 50)
        assert [type(lim) for lim in spec.limits] == [GainLimit]

    def test_limit_value_and_line(self):
        spec = parse_spec(HEAD + GAIN)
        lim = spec.limits[0]
        assert (lim.band, lim.min_db, lim.max_db, lim.reference) == ((2e3, 3e3), None, 1.0,
                                                                      "absolute")
        assert lim.line == line_of(HEAD + GAIN, "[[limits]]")
        assert lim.index == 0

    def test_differential_output_and_defaults(self):
        text = HEAD.replace('output = "out"', 'output = ["outp", "outn"]').replace(
            "points_per_decade = 50\n", "")
        spec = parse_spec(text)
        assert spec.output == ("outp", "outn")
        assert spec.sweep.points_per_decade == 100
        assert spec.limits == ()
        assert spec.allow_negative is False and spec.root is None

    @pytest.mark.parametrize("written, value", [
        ('"1meg"', 1e6), ('"4k7"', 4.7e3), ('"100kHz"', 1e5), ("250000", 2.5e5), ("2.5e5", 2.5e5)])
    def test_engineering_notation(self, written, value):
        spec = parse_spec(HEAD.replace('stop = "100k"', f"stop = {written}"))
        assert spec.sweep.stop_hz == value

    def test_sweep_grid(self):
        # 2 decades at 50 points per decade: 101 log-spaced points, both ends exact.
        f = parse_spec(HEAD).sweep.grid()
        assert f.size == 101
        assert (f[0], f[-1]) == (1e3, 1e5)
        np.testing.assert_allclose(np.diff(np.log10(f)), 1 / 50, rtol=1e-9)
        assert not f.flags.writeable

    def test_raw_tables_are_kept_for_other_stages(self):
        spec = parse_spec(HEAD + '\n[tolerances]\nparts = { R1 = "1%" }\n')
        assert spec.table("tolerances") == {"parts": {"R1": "1%"}}
        assert spec.table("stress") is None

    def test_load_spec_reads_the_file(self, tmp_path):
        path = tmp_path / "q.toml"
        path.write_text(HEAD + GAIN, encoding="utf-8")
        assert load_spec(path) == parse_spec(HEAD + GAIN, str(path))


class TestPercentages:
    def spec(self, tolerance: str) -> ResonanceLimit:
        text = HEAD + ('\n[[limits]]\nkind = "resonance"\ncenter = "40k"\n'
                       f"center_tolerance = {tolerance}\n")
        return parse_spec(text).limits[0]

    @pytest.mark.parametrize("written, hz", [('"2.5%"', 1000.0), ('"1 %"', 400.0),
                                            ('"400"', 400.0), ("400", 400.0), ('"0.4k"', 400.0)])
    def test_percent_of_the_centre_or_absolute(self, written, hz):
        lim = self.spec(written)
        assert lim.center == 40e3
        assert math.isclose(lim.center_tolerance, hz, rel_tol=1e-12)

    @pytest.mark.parametrize("written, message", [
        ('"abc%"', "'abc' before % is not a number"), ('"-1%"', "must be > 0"),
        ('"0%"', "must be > 0"), ('"nan%"', "'nan%' is not finite"), ("0", "must be > 0"),
        ('"-5ppm"', "must be > 0"), ('"20p"', "for a relative tolerance write a unit")])
    def test_bad_percentages(self, written, message):
        err = fail(HEAD + f'\n[[limits]]\nkind = "resonance"\ncenter = "40k"\n'
                          f"center_tolerance = {written}\n")
        assert (err.code, err.where) == ("spec-202", "limits[0].center_tolerance")
        assert message in err.message


class TestDidYouMean:
    def test_unknown_top_level_key(self):
        text = HEAD.replace("netlist =", "netlst =")
        err = fail(text)
        assert (err.code, err.where) == ("spec-201", "netlst")
        assert "unknown key 'netlst'; did you mean 'netlist'?" in err.message

    def test_unknown_limit_key(self):
        text = HEAD + GAIN.replace("max_db", "max_dB")
        err = fail(text)
        assert (err.code, err.where) == ("spec-201", "limits[0].max_dB")
        assert "did you mean 'max_db'?" in err.message

    def test_unknown_key_without_a_close_match_lists_the_known_ones(self):
        err = fail(HEAD.replace("points_per_decade", "ppd"))
        assert (err.code, err.where) == ("spec-201", "sweep.ppd")
        assert "known keys: points_per_decade, start, stop" in err.message

    def test_unknown_limit_kind(self):
        err = fail(HEAD + GAIN.replace('kind = "gain"', 'kind = "gian"'))
        assert (err.code, err.where) == ("spec-201", "limits[0].kind")
        assert "unknown limit kind 'gian'; did you mean 'gain'?" in err.message
        assert "corner, crossover, gain, group_delay" in err.message  # the kinds are listed

    def test_missing_limit_kind(self):
        err = fail(HEAD + GAIN.replace('kind = "gain"\n', ""))
        assert (err.code, err.where) == ("spec-202", "limits[0].kind")
        assert err.message.startswith("limits[0].kind: missing (required)")

    @pytest.mark.parametrize("kind", ['["gain"]', "3"])
    def test_limit_kind_of_the_wrong_type(self, kind):
        err = fail(HEAD + GAIN.replace('kind = "gain"', f"kind = {kind}"))
        assert (err.code, err.where) == ("spec-202", "limits[0].kind")


#: (case, TOML text, key path, code, text expected in the message)
ERRORS = [
    ("string expected", HEAD.replace('source = "VIN"', "source = 3"), "source", "spec-202",
     "expected a non-empty string, got 3"),
    ("number expected", HEAD + GAIN.replace("max_db = 1", 'max_db = "loud"'),
     "limits[0].max_db", "spec-202", "'loud' is not a number"),
    ("boolean is not a number", HEAD + GAIN.replace("max_db = 1", "max_db = true"),
     "limits[0].max_db", "spec-202", "expected a number"),
    ("not finite", HEAD + GAIN.replace("max_db = 1", "max_db = nan"), "limits[0].max_db",
     "spec-202", "nan is not finite"),
    ("whole number", HEAD.replace("points_per_decade = 50", "points_per_decade = 7.5"),
     "sweep.points_per_decade", "spec-202", "expected a whole number >= 2, got 7.5"),
    ("flag", "allow_negative = 1\n" + HEAD, "allow_negative", "spec-202", "expected true or false"),
    ("sweep not a table", HEAD.split("[sweep]")[0] + "sweep = 3\n", "sweep", "spec-202",
     "expected a table"),
    ("limits not an array", HEAD.replace("[sweep]", "limits = 3\n[sweep]"), "limits", "spec-202",
     "expected an array of tables"),
    ("limit not a table", HEAD.replace("[sweep]", "limits = [3]\n[sweep]"), "limits[0]",
     "spec-202", "expected a table"),
    ("output shape", HEAD.replace('output = "out"', 'output = ["a"]'), "output", "spec-202",
     "expected a node name or [positive, negative]"),
    ("choice", HEAD + '\n[[limits]]\nkind = "corner"\nrange = ["2k", "3k"]\nside = "up"\n',
     "limits[0].side", "spec-202", "expected one of 'auto', 'high', 'low', got 'up'"),
    ("bounds length", HEAD + '\n[[limits]]\nkind = "resonance"\nq = [1, 2, 3]\n', "limits[0].q",
     "spec-202", "expected [min, max], got 3 values"),
    ("inverted q", HEAD + '\n[[limits]]\nkind = "resonance"\nq = [12, 10]\n', "limits[0].q",
     "spec-202", "min 12 is above max 10"),
    ("inverted gain", HEAD + GAIN.replace("max_db = 1", "min_db = 3\nmax_db = 1"),
     "limits[0].min_db", "spec-202", "min_db 3 is above max_db 1"),
    ("inverted sweep", HEAD.replace('start = "1k"', 'start = "200k"'), "sweep.start", "spec-202",
     "start 200k is not below stop 100k"),
    ("empty band", HEAD + GAIN.replace('["2k", "3k"]', '["2k", "2000"]'), "limits[0].band",
     "spec-202", "band is empty"),
    ("band outside the sweep", HEAD + GAIN.replace('["2k", "3k"]', '["50k", "400k"]'),
     "limits[0].band", "spec-202", "band 50k–400k Hz is outside the sweep 1k–100k Hz"),
    ("band below the sweep", HEAD + GAIN.replace('["2k", "3k"]', '[500, "3k"]'),
     "limits[0].band", "spec-202", "outside the sweep"),
    ("negative frequency", HEAD + GAIN.replace('["2k", "3k"]', '["-2k", "3k"]'),
     "limits[0].band", "spec-202", "values must be > 0"),
    ("negative ripple", HEAD + '\n[[limits]]\nkind = "ripple"\nband = ["2k", "3k"]\n'
                               "max_db = -1\n", "limits[0].max_db", "spec-202",
     "must not be negative"),
    ("gain without bounds", HEAD + GAIN.replace("max_db = 1\n", ""), "limits[0]", "spec-202",
     "a gain limit needs min_db, max_db or both"),
    ("centre without tolerance", HEAD + '\n[[limits]]\nkind = "resonance"\ncenter = "40k"\n',
     "limits[0].center", "spec-202", "give center_tolerance too"),
    ("tolerance without centre",
     HEAD + '\n[[limits]]\nkind = "resonance"\ncenter_tolerance = "1%"\nq = [1, 2]\n',
     "limits[0].center_tolerance", "spec-202", "needs center"),
]

MISSING = [
    ("netlist", HEAD.replace('netlist = "filter.cir"\n', "")),
    ("source", HEAD.replace('source = "VIN"\n', "")),
    ("output", HEAD.replace('output = "out"\n', "")),
    ("sweep", HEAD.split("[sweep]")[0]),
    ("sweep.start", HEAD.replace('start = "1k"\n', "")),
    ("sweep.stop", HEAD.replace('stop = "100k"\n', "")),
    ("limits[0].band", HEAD + GAIN.replace('band = ["2k", "3k"]\n', "")),
    ("limits[0].max_db", HEAD + '\n[[limits]]\nkind = "ripple"\nband = ["2k", "3k"]\n'),
    ("limits[0].range", HEAD + '\n[[limits]]\nkind = "corner"\n'),
    ("limits[0].range_deg", HEAD + '\n[[limits]]\nkind = "phase"\nband = ["2k", "3k"]\n'),
]


class TestSpecErrors:
    @pytest.mark.parametrize("case, text, where, code, message", ERRORS,
                             ids=[e[0] for e in ERRORS])
    def test_error(self, case, text, where, code, message):
        err = fail(text)
        assert isinstance(err, ValueError)  # SpecError is also a ValueError
        assert (err.where, err.code) == (where, code)
        assert err.message.startswith(f"{where}: ")
        assert message in err.message

    @pytest.mark.parametrize("where, text", MISSING, ids=[m[0] for m in MISSING])
    def test_missing_required_key(self, where, text):
        err = fail(text)
        assert (err.where, err.code) == (where, "spec-202")
        assert err.message.startswith(f"{where}: missing (required)")

    def test_inverted_band_of_the_fourth_limit(self):
        text = HEAD + GAIN * 3 + GAIN.replace('["2k", "3k"]', '["50k", "40k"]')
        err = fail(text)
        assert (err.where, err.code) == ("limits[3].band", "spec-202")
        assert err.message == "limits[3].band: start 50k is above stop 40k"

    def test_format_points_at_the_key_once(self):
        text = HEAD + GAIN * 3 + GAIN.replace('["2k", "3k"]', '["50k", "40k"]')
        err = fail(text, "specs/q.toml")
        line = len(text.splitlines()) - 1  # the band line of the last limit
        head, source, caret = err.format().splitlines()
        assert head == (f"specs/q.toml:{line}:1: error spec-202: "
                        "limits[3].band: start 50k is above stop 40k")
        assert source.strip() == 'band = ["50k", "40k"]'
        assert caret.strip() == "^^^^"  # under the key "band"
        assert err.format().count("limits[3].band") == 1
        assert (err.span.line, err.span.column) == (line, 1)

    def test_missing_key_points_at_its_table(self):
        text = HEAD.replace('stop = "100k"\n', "")
        err = fail(text)
        assert err.span.line == line_of(text, "[sweep]")

    @pytest.mark.parametrize("snippet, line, column, what", [
        ("x = = 3\n", 11, 5, "Invalid value"),
        ('band = ["2k" "3k"]\n', 11, 14, "Unclosed array"),
    ])
    def test_bad_toml_has_line_and_column(self, snippet, line, column, what):
        err = fail(HEAD + "\n" + snippet)
        assert err.code == "spec-200"
        assert (err.span.line, err.span.column) == (line, column)
        head, source, caret = err.format().splitlines()
        assert head.startswith(f"q.toml:{line}:{column}: error spec-200: not valid TOML: ")
        assert what in head and "(at line" not in head
        assert source.strip() == snippet.strip()
        assert caret.index("^") == source.index(snippet.strip()) + column - 1

    def test_unreadable_and_undecodable_files(self, tmp_path):
        with pytest.raises(SpecError) as info:
            load_spec(tmp_path / "absent.toml")
        assert info.value.code == "spec-200" and "cannot read spec" in info.value.message
        bad = tmp_path / "latin1.toml"
        bad.write_bytes(b'title = "caf\xe9"\n')
        with pytest.raises(SpecError) as info:
            load_spec(bad)
        assert info.value.code == "spec-200" and "not UTF-8" in info.value.message

    def test_every_spec_code_is_documented(self):
        for code in ("spec-200", "spec-201", "spec-202", "spec-203"):
            assert code in CODES


class TestReferencesToTheNetlist:
    """Names the spec uses that the netlist does not have: error results with spec-203."""

    def check(self, tmp_path, source="VIN", output="out") -> object:
        (tmp_path / "filter.cir").write_text(NETLIST)
        spec = tmp_path / "q.toml"
        spec.write_text(HEAD.replace('"VIN"', f'"{source}"').replace('"out"', f'"{output}"')
                        + GAIN)
        return check_spec(str(spec))

    def test_known_names_pass(self, tmp_path):
        assert self.check(tmp_path).status is Status.PASS

    def test_unknown_source(self, tmp_path):
        res = self.check(tmp_path, source="VX")
        assert res.status is Status.ERROR and res.limits == ()
        assert "error spec-203" in res.error and "'VX'" in res.error
        assert [c.code for c in res.cautions] == ["spec-203"]
        assert res.cautions[0].message.startswith("source: ")

    def test_unknown_output_node(self, tmp_path):
        res = self.check(tmp_path, output="nowhere")
        assert res.status is Status.ERROR
        assert "error spec-203" in res.error and "'nowhere'" in res.error
        assert res.cautions[0].code == "spec-203"
        assert res.cautions[0].message.startswith("output: ")

    def test_broken_spec_becomes_an_error_result(self, tmp_path):
        spec = tmp_path / "q.toml"
        spec.write_text(HEAD.replace("netlist =", "netlst ="))
        res = check_spec(str(spec))
        assert res.status is Status.ERROR
        assert res.error.startswith(f"{spec}:2:1: error spec-201: netlst: unknown key")
        assert (res.cautions[0].code, res.cautions[0].line) == ("spec-201", 2)


def test_corner_defaults():
    spec = parse_spec(HEAD + '\n[[limits]]\nkind = "corner"\nrange = ["2k", "3k"]\n')
    lim = spec.limits[0]
    assert isinstance(lim, CornerLimit)
    assert (lim.range, lim.level_db, lim.side, lim.reference_db) == ((2e3, 3e3), None, "auto",
                                                                     None)
    assert lim.name == "corner (half-power)"


class TestSpecFormatDoc:
    """docs/spec-format.md cannot drift from the key tables the loader reads."""

    DOC = Path(__file__).resolve().parents[2] / "docs" / "spec-format.md"

    @staticmethod
    def key_table(keys: dict[str, str]) -> list[str]:
        """The Markdown table the doc shows for a limit kind, built from its KEYS."""
        rows = [f"| `{key}` | {text.replace('|', chr(92) + '|')} |" for key, text in keys.items()]
        return ["| key | meaning, unit |", "|---|---|", *rows]

    def text(self) -> str:
        return self.DOC.read_text("utf-8")

    def toml_blocks(self) -> list[str]:
        parts = self.text().split("```toml\n")[1:]
        return [p.split("```")[0] for p in parts]

    @pytest.mark.parametrize("kind", sorted(LIMITS))
    def test_every_limit_kind_has_its_generated_table(self, kind):
        doc = self.text()
        section = doc.split(f"### `{kind}`:")[1].split("\n### ")[0].split("\n## ")[0]
        assert "\n".join(self.key_table(LIMITS[kind].KEYS)) in section
        summary = LIMITS[kind].SUMMARY
        assert summary[0].upper() + summary[1:] + "." in section

    def test_every_other_key_is_named(self):
        from netcheck.runs import batch
        from netcheck.spec import stress
        from netcheck.spec import tolerances as tolerance
        from netcheck.spec import SWEEP_KEYS, TOP_KEYS

        doc = self.text()
        tables = [TOP_KEYS, SWEEP_KEYS, stress.KEYS, tolerance.TOLERANCE_KEYS,
                  tolerance.ANALYSIS_KEYS, batch.VARIANT_KEYS]
        missing = [k for t in tables for k in t if f"| `{k}` |" not in doc]
        assert missing == []

    def test_examples_are_valid_specs(self):
        blocks = self.toml_blocks()
        specs = [parse_spec(b, "specs/example.toml") for b in blocks if "netlist" in b]
        assert len(specs) == 6
        # the full example holds every kind its band-pass can carry; a band-pass has no
        # notch, no ports and one output, which have their own full examples (tested
        # below); noise and step have sections of their own (their snippets are parsed)
        assert {type(lim).kind for lim in specs[-1].limits} == set(LIMITS) - {
            "notch", "port", "crossover", "noise", "step"}
        # the worked examples of single limits read as limits of a spec over their sweep
        snippets = [b for b in blocks if "netlist" not in b and "[[limits]]" in b]
        assert len(snippets) >= 7
        for b in snippets:
            assert parse_spec('netlist = "x.cir"\nsource = "V"\noutput = "o"\n'
                              '[sweep]\nstart = "10"\nstop = "20meg"\n' + b,
                              "specs/example.toml").limits

    def test_notch_example_passes_on_its_netlist(self, tmp_path):
        # the notch section's spec on the twin-T it names, and the rows it shows
        block = next(b for b in self.toml_blocks() if 'kind = "notch"' in b)
        netlist = Path(__file__).resolve().parents[2] / "sample_netlists" / "hum_notch.cir"
        (tmp_path / "hum_notch.cir").write_bytes(netlist.read_bytes())
        spec = tmp_path / "notch.toml"
        spec.write_text(block.replace('"../sample_netlists/hum_notch.cir"', '"hum_notch.cir"'))
        result = check_spec(str(spec))
        assert result.error is None
        assert {r.status for r in result.limits} == {Status.PASS}
        shown = self.text().split('kind = "notch"')[1].split("```\n")[2].split("```")[0]
        for r in result.limits:
            f = r.figures
            assert f"{f.measured}" in shown and f"{f.margin}" in shown, r.name

    def test_port_example_is_the_sample_and_shows_its_rows(self):
        # the port section's spec is specs/qm_rf10_match.toml's first limits, and the rows
        # it shows are what the check prints for them
        block = next(b for b in self.toml_blocks() if 'kind = "port"' in b)
        sample = (Path(__file__).resolve().parents[2] / "specs" / "qm_rf10_match.toml")
        assert sample.read_text("utf-8").startswith(block)
        result = check_spec(str(sample))
        assert result.error is None
        shown = self.text().split('quantity = "transducer_gain"')[1].split("```\n")[2]
        nominal = [r for r in result.limits if not r.name.startswith("worst case")][:3]
        for r in nominal:
            assert r.status is Status.PASS
            f = r.figures
            assert f"{f.measured}" in shown and f"{f.margin}" in shown, r.name

    def test_full_example_passes_on_its_netlist(self, tmp_path):
        # the doc says so; the netlist path is relative to specs/
        full = self.toml_blocks()[-1]
        spec = tmp_path / "example.toml"
        # a copy beside the spec: a path out of the spec's design root would be refused
        netlist = Path(__file__).resolve().parents[2] / "sample_netlists" / "rx40k.cir"
        (tmp_path / "rx40k.cir").write_bytes(netlist.read_bytes())
        spec.write_text(full.replace('"../sample_netlists/rx40k.cir"', '"rx40k.cir"'))
        result = check_spec(str(spec))
        assert result.error is None
        assert {r.status for r in result.limits} == {Status.PASS}
        assert len(result.limits) == 15

    def test_error_example_is_what_netcheck_prints(self):
        text = HEAD + GAIN * 3 + GAIN.replace('["2k", "3k"]', '["50k", "40k"]')
        shown = fail(text, "specs/rx40k.toml").format().splitlines()
        doc = self.text()
        example = doc.split("```text\n")[1].split("```")[0].splitlines()
        assert example[0].split(": error ")[1] == shown[0].split(": error ")[1]
        assert example[1:] == shown[1:]


def test_locate_points_other_stages_errors_at_their_key():
    # other stages (stress, tolerances) read raw tables and may locate their errors too
    from netcheck.spec import locate

    text = HEAD + '\n[[stress]]\nparts = "C*"\n\n[[stress]]\nparts = "L*"\nmax_curent = 1\n'
    err = locate(SpecError("stress[1].max_curent: unknown key", code="spec-201", path="q.toml",
                           where="stress[1].max_curent"), text)
    assert (err.span.line, err.span.column) == (line_of(text, "max_curent"), 1)
    assert err.format().startswith(f"q.toml:{line_of(text, 'max_curent')}:1: error spec-201: "
                                   "stress[1].max_curent: unknown key")
    assert (err.where, err.code) == ("stress[1].max_curent", "spec-201")
    # a missing key of the second [[stress]] table points at its header
    err = locate(SpecError("stress[1].max_voltage: missing", path="q.toml",
                           where="stress[1].max_voltage"), text)
    assert err.span.line == len(HEAD.splitlines()) + 5
    # an error that already has a span, or no key path, is returned as it is
    plain = SpecError("cannot read spec", path="q.toml")
    assert locate(plain, text) is plain


class TestResultNames:
    """Results are told apart by name (tolerance analyses, JUnit, baselines)."""

    def test_repeated_default_names_are_told_apart(self):
        spec = parse_spec(HEAD + GAIN + GAIN, "q.toml")
        names = [lim.name for lim in spec.limits]
        assert names[1] == f"{names[0]} (limits[1])"

    def test_a_given_name_may_not_repeat(self):
        text = HEAD + GAIN.replace('kind = "gain"', 'kind = "gain"\nname = "flat"') * 2
        err = fail(text)
        assert err.where == "limits[1].name" and "limits[0]" in err.message
        second = [i for i, ln in enumerate(text.splitlines(), 1) if ln == 'name = "flat"'][1]
        assert err.span.line == second

    def test_a_name_may_not_repeat_a_sub_result_of_another_limit(self):
        text = HEAD + """
[[limits]]
kind = "group_delay"
name = "delay"
band = ["2k", "3k"]
max_variation = 1e-3

[[limits]]
kind = "gain"
name = "delay: variation"
band = ["2k", "3k"]
max_db = 1
"""
        err = fail(text)
        assert err.where == "limits[1].name" and "'delay: variation'" in err.message
