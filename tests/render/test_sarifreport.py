"""SARIF renderer: schema validity, results, rules, locations and a gold file.

Outside source: the log is validated with ``jsonschema`` against the OASIS SARIF 2.1.0
JSON schema (errata 01), vendored as tests/data/sarif-schema-2.1.0.json; where that copy
came from is in tests/data/README.md.
"""

from __future__ import annotations

import copy
import hashlib
import io
import json

import jsonschema
import pytest

from netcheck.render import RenderOptions, get_renderer
from netcheck.render.sarifreport import SRCROOT, build_log, render
from netcheck.result import HAZARD_CAUTION, Caution, CheckResult, LimitResult, SpecResult, Status

from .sample import (DATA, HAZARD, LINT_NODE, LP_SPEC, NOTCH_NET, NOTCH_SPEC, RX_NET, RX_SPEC,
                     compare_gold, sample_result)


#: Checksum of the vendored OASIS schema, as recorded in tests/data/README.md.
SCHEMA_SHA256 = "c3b4bb2d6093897483348925aaa73af03b3e3f4bd4ca38cef26dcb4212a2682e"


@pytest.fixture(scope="module")
def validator() -> jsonschema.Draft4Validator:
    # The OASIS SARIF 2.1.0 schema (errata 01) is JSON Schema draft-04.
    schema = json.loads((DATA / "sarif-schema-2.1.0.json").read_text(encoding="utf-8"))
    jsonschema.Draft4Validator.check_schema(schema)
    return jsonschema.Draft4Validator(schema)


def sarif_text(result: CheckResult) -> str:
    buf = io.StringIO()
    render(result, buf, RenderOptions())
    return buf.getvalue()


def sarif(result: CheckResult) -> dict:
    return json.loads(sarif_text(result))


def errors_of(validator, log) -> list[str]:
    return [f"{list(e.absolute_path)}: {e.message}" for e in validator.iter_errors(log)]


class TestSchema:
    def test_vendored_schema_is_unchanged(self):
        data = (DATA / "sarif-schema-2.1.0.json").read_bytes()
        assert hashlib.sha256(data).hexdigest() == SCHEMA_SHA256
        assert SCHEMA_SHA256 in (DATA / "README.md").read_text(encoding="utf-8")

    def test_sample_is_valid(self, validator):
        assert errors_of(validator, sarif(sample_result())) == []

    def test_all_pass_run_is_valid_and_empty(self, validator):
        lim = LimitResult("gain", "gain", Status.PASS, 0.1, -1.0, 1.0, 0.9, "dB", line=3)
        spec = SpecResult("s.toml", "n.cir", "t", Status.PASS, limits=(lim,))
        log = sarif(CheckResult(specs=(spec,), tool_version="0.1.0"))
        assert errors_of(validator, log) == []
        assert log["runs"][0]["results"] == []
        assert log["runs"][0]["tool"]["driver"]["rules"] == []

    def test_schema_rejects_a_result_without_message(self, validator):
        # The schema has teeth: break one result and validation reports it.
        log = sarif(sample_result())
        broken = copy.deepcopy(log)
        del broken["runs"][0]["results"][0]["message"]
        assert errors_of(validator, broken)

    def test_registry_finds_the_renderer(self):
        assert get_renderer("sarif") is render


class TestResults:
    def test_header(self):
        log = sarif(sample_result())
        assert log["version"] == "2.1.0"
        (run,) = log["runs"]
        assert run["tool"]["driver"]["name"] == "netcheck"
        assert run["tool"]["driver"]["version"] == "0.1.0"
        assert "informationUri" not in run["tool"]["driver"]

    def test_one_result_per_failing_or_erroring_limit_and_caution(self):
        results = sarif(sample_result())["runs"][0]["results"]
        got = [(r["ruleId"], r["level"]) for r in results]
        assert got == [
            ("netlist-152", "warning"),         # notch netlist lint, written once for 3 variants
            ("limit-gain", "error"),      # 60hz notch depth
            ("limit-ripple", "error"),
            ("analysis-301", "error"),           # group delay could not be measured
            ("limit-stress", "error"),
            ("netlist-154", "warning"),
            ("analysis-302", "warning"),         # no position: placed at the spec file
            ("run-unchecked", "error"),  # the low-pass could not be checked ...
            ("analysis-300", "error"),           # ... and why, at the netlist line
            ("netlist-150", "warning"),         # run-wide caution with a position
        ]

    def test_rules_are_exactly_those_used_and_indexed(self):
        run = sarif(sample_result())["runs"][0]
        rules = run["tool"]["driver"]["rules"]
        ids = [r["id"] for r in rules]
        assert ids == sorted({r["ruleId"] for r in run["results"]})
        for res in run["results"]:
            assert rules[res["ruleIndex"]]["id"] == res["ruleId"]
        by_id = {r["id"]: r for r in rules}
        assert by_id["analysis-301"]["shortDescription"]["text"] == "Measurement could not be made."
        assert by_id["limit-gain"]["defaultConfiguration"]["level"] == "error"

    def test_limit_location_and_message(self):
        results = sarif(sample_result())["runs"][0]["results"]
        ripple = next(r for r in results if r["ruleId"] == "limit-ripple")
        assert ripple["locations"] == [{"physicalLocation": {
            "artifactLocation": {"uri": RX_SPEC, "uriBaseId": SRCROOT},
            "region": {"startLine": 11}}}]
        text = ripple["message"]["text"]
        assert "limit 'ripple' is not met: measured 1.300 dB, limit ≤ 1.000 dB, " \
               "margin -0.300 dB at 41.250 kHz." in text
        assert ripple["properties"]["margin"] == -0.3
        assert ripple["properties"]["measured"] == 1.3

    def test_failure_of_a_variant_names_it(self):
        results = sarif(sample_result())["runs"][0]["results"]
        gain = next(r for r in results if r["ruleId"] == "limit-gain")
        assert gain["message"]["text"].startswith(
            "Quillmere Instruments mains hum notch [60hz]: limit 'notch depth'")
        assert gain["properties"]["variant"] == "60hz"
        assert gain["locations"][0]["physicalLocation"]["artifactLocation"]["uri"] == NOTCH_SPEC

    def test_caution_located_in_netlist(self):
        results = sarif(sample_result())["runs"][0]["results"]
        lint = [r for r in results if r["ruleId"] in ("netlist-152", "netlist-154")]
        assert [r["locations"][0]["physicalLocation"] for r in lint] == [
            {"artifactLocation": {"uri": NOTCH_NET, "uriBaseId": SRCROOT},
             "region": {"startLine": 14, "startColumn": 9}},
            {"artifactLocation": {"uri": RX_NET, "uriBaseId": SRCROOT},
             "region": {"startLine": 22, "startColumn": 1}},
        ]
        assert lint[0]["message"]["text"] == LINT_NODE.message

    def test_unchecked_spec_and_run_caution(self):
        results = sarif(sample_result())["runs"][0]["results"]
        unchecked = next(r for r in results if r["ruleId"] == "run-unchecked")
        assert unchecked["locations"][0]["physicalLocation"] == {
            "artifactLocation": {"uri": LP_SPEC, "uriBaseId": SRCROOT}}
        assert "error analysis-300: singular circuit" in unchecked["message"]["text"]
        library = next(r for r in results if r["ruleId"] == "netlist-150")
        assert library["locations"][0]["physicalLocation"]["region"] == {
            "startLine": 3, "startColumn": 1}

    def test_unlocated_notes_go_to_run_properties_once(self):
        run = sarif(sample_result())["runs"][0]
        assert {"analysis-voltage", "analysis-hazard"}.isdisjoint(r["ruleId"] for r in run["results"])
        # the receiver's own hazard caution, then the general one once for the document
        # (the receiver warrants it; the notch variants do not)
        assert run["properties"]["cautions"] == [
            {"code": "analysis-voltage", "severity": "caution", "message": HAZARD.message},
            {"code": "analysis-hazard", "severity": "caution", "message": HAZARD_CAUTION}]

    def test_no_hazard_caution_unless_a_spec_warrants_it(self):
        plain = SpecResult("a.toml", "n.cir", "A", Status.PASS)
        run = sarif(CheckResult((plain, plain), "0"))["runs"][0]
        assert "properties" not in run

    def test_run_wide_warning_without_position_is_a_property(self):
        result = CheckResult(specs=(), tool_version="0",
                             cautions=(Caution("analysis-302", "slow", "warning"),))
        run = build_log(result)["runs"][0]
        assert run["results"] == []
        assert run["properties"]["cautions"] == [
            {"code": "analysis-302", "severity": "warning", "message": "slow"}]

    def test_passing_and_skipped_limits_give_no_result(self):
        results = sarif(sample_result())["runs"][0]["results"]
        names = {r.get("properties", {}).get("limit") for r in results}
        assert names.isdisjoint({"pass-band gain", "pass-band flatness", "centre", "q"})

    def test_control_characters_are_visible(self):
        text = sarif_text(sample_result())
        assert "\\u001b" not in text and "\\u0000" not in text
        results = json.loads(text)["runs"][0]["results"]
        ripple = next(r for r in results if r["ruleId"] == "limit-ripple")
        assert ripple["message"]["text"].startswith(
            'RX-40k front end <rev "B"> & | *draft* \\x1b[31mred\\x00: ')

    def test_reproducible_and_sorted(self):
        text = sarif_text(sample_result())
        assert text == sarif_text(sample_result())
        assert text == json.dumps(json.loads(text), indent=2, sort_keys=True,
                                  ensure_ascii=False) + "\n"

    def test_created_utc_only_when_set(self):
        assert sarif(sample_result())["runs"][0]["properties"]["createdUtc"] == (
            "2026-03-14T09:26:53Z")
        assert "createdUtc" not in sarif(sample_result(created_utc=""))["runs"][0]["properties"]
        assert "properties" not in build_log(CheckResult(specs=(), tool_version="0"))["runs"][0]


class TestUris:
    @pytest.mark.parametrize(("path", "expected"), [
        ("specs/a.toml", {"uri": "specs/a.toml", "uriBaseId": SRCROOT}),
        ("./specs/a.toml", {"uri": "specs/a.toml", "uriBaseId": SRCROOT}),
        ("specs/../nets/a.cir", {"uri": "nets/a.cir", "uriBaseId": SRCROOT}),
        ("specs\\win dows\\a.toml", {"uri": "specs/win%20dows/a.toml", "uriBaseId": SRCROOT}),
        ("odd:name.toml", {"uri": "odd%3Aname.toml", "uriBaseId": SRCROOT}),
        ("/abs/dir/a b.toml", {"uri": "file:///abs/dir/a%20b.toml"}),
        ("C:\\work\\a.toml", {"uri": "file:///C:/work/a.toml"}),
    ])
    def test_artifact_location(self, path, expected, validator):
        lim = LimitResult("g", "gain", Status.FAIL, 1.0, None, 0.0, -1.0, "dB", line=2)
        spec = SpecResult(path, "n.cir", "t", Status.FAIL, limits=(lim,))
        log = build_log(CheckResult(specs=(spec,), tool_version="0"))
        assert errors_of(validator, log) == []
        loc = log["runs"][0]["results"][0]["locations"][0]["physicalLocation"]
        assert loc["artifactLocation"] == expected

    def test_caution_without_line_has_no_region(self):
        spec = SpecResult("s.toml", "n.cir", "t", Status.PASS,
                          cautions=(Caution("netlist-150", "unknown directive", path="n.cir"),))
        (res,) = build_log(CheckResult(specs=(spec,), tool_version="0"))["runs"][0]["results"]
        assert res["locations"][0]["physicalLocation"] == {
            "artifactLocation": {"uri": "n.cir", "uriBaseId": SRCROOT}}


def test_gold():
    compare_gold("sarif.json", sarif_text(sample_result()))
