"""JUnit XML renderer: schema validity, counts, escaping and a gold file.

Outside source: the output is validated against tests/data/junit.xsd, netcheck's own
XSD for the common JUnit XML dialect (see the provenance comment in that file and
tests/data/README.md), with the ``xmlschema`` package.
"""

from __future__ import annotations

import io
import xml.etree.ElementTree as ET

import pytest
import xmlschema

from netcheck.render import RenderOptions, get_renderer
from netcheck.render.junitreport import render, xml_text
from netcheck.result import HAZARD_CAUTION, CheckResult, LimitResult, SpecResult, Status

from .sample import DATA, HAZARD, HOSTILE_TITLE, RX_SPEC, compare_gold, sample_result


@pytest.fixture(scope="module")
def schema() -> xmlschema.XMLSchema:
    return xmlschema.XMLSchema(str(DATA / "junit.xsd"))


def junit(result: CheckResult) -> str:
    buf = io.StringIO()
    render(result, buf, RenderOptions())
    return buf.getvalue()


def suites(text: str) -> list[ET.Element]:
    return ET.fromstring(text.encode("utf-8")).findall("testsuite")


class TestSchema:
    def test_sample_is_valid(self, schema):
        schema.validate(junit(sample_result()))

    def test_empty_run_is_valid(self, schema):
        text = junit(CheckResult(specs=(), tool_version="0.1.0"))
        schema.validate(text)
        root = ET.fromstring(text)
        assert root.tag == "testsuites"
        assert [root.get(k) for k in ("tests", "failures", "errors", "skipped")] == ["0"] * 4

    def test_schema_rejects_a_testcase_without_name(self, schema):
        # The XSD has teeth: a document our renderer must never produce is refused.
        bad = '<testsuites><testsuite name="x" tests="1"><testcase/></testsuite></testsuites>'
        with pytest.raises(xmlschema.XMLSchemaValidationError):
            schema.validate(bad)

    def test_registry_finds_the_renderer(self):
        assert get_renderer("junit") is render


class TestStructure:
    def test_totals(self):
        root = ET.fromstring(junit(sample_result()).encode())
        # 3 notch variants × 4 limits + 6 receiver limits + 1 "spec" case for the low-pass.
        assert root.get("name") == "netcheck"
        assert root.get("tests") == "19"
        assert root.get("failures") == "3"   # 60hz notch depth, ripple, C4 voltage
        assert root.get("errors") == "2"     # group delay, low-pass spec
        assert root.get("skipped") == "1"    # economy variant's Q

    def test_one_suite_per_spec_result_with_counts(self):
        got = [(s.get("name"), s.get("tests"), s.get("failures"), s.get("errors"),
                s.get("skipped")) for s in suites(junit(sample_result()))]
        assert got == [
            ("Quillmere Instruments mains hum notch [50hz]", "4", "0", "0", "0"),
            ("Quillmere Instruments mains hum notch [60hz]", "4", "1", "0", "0"),
            ("Quillmere Instruments mains hum notch [60hz-economy]", "4", "0", "0", "1"),
            (xml_text(HOSTILE_TITLE), "6", "2", "1", "0"),
            ("Quillmere Instruments anti-alias low-pass", "1", "0", "1", "0"),
        ]

    def test_counts_match_children(self):
        for suite in suites(junit(sample_result())):
            cases = suite.findall("testcase")
            assert int(suite.get("tests")) == len(cases)
            for tag, attr in (("failure", "failures"), ("error", "errors"),
                              ("skipped", "skipped")):
                assert int(suite.get(attr)) == sum(len(c.findall(tag)) for c in cases)

    def test_testcase_names_and_classnames(self):
        rx = suites(junit(sample_result()))[3]
        got = [(c.get("classname"), c.get("name")) for c in rx.findall("testcase")]
        assert got[:3] == [(f"{RX_SPEC}.gain", "pass-band gain"),
                           (f"{RX_SPEC}.ripple", "ripple"),
                           (f"{RX_SPEC}.group_delay", "group delay")]

    def test_failure_message_and_body(self):
        rx = suites(junit(sample_result()))[3]
        failure = rx.find("testcase[@name='ripple']/failure")
        expected = "measured 1.300 dB, limit ≤ 1.000 dB, margin -0.300 dB at 41.250 kHz"
        assert failure.get("message") == expected
        assert failure.text.splitlines() == [
            expected, "peak of the upper section exceeds the allowance"]

    def test_error_and_skipped(self):
        found = suites(junit(sample_result()))
        err = found[3].find("testcase[@name='group delay']/error")
        assert err.get("message") == ("no sweep points inside the 39k…37k band "
                                      "(band is reversed)")
        skip = found[2].find("testcase[@name='q']/skipped")
        assert skip.get("message").startswith("no half-power points")
        assert found[0].find("testcase/failure") is None
        assert found[0].find("testcase/skipped") is None

    def test_spec_level_error_is_one_spec_testcase(self):
        lowpass = suites(junit(sample_result()))[4]
        (case,) = lowpass.findall("testcase")
        assert (case.get("classname"), case.get("name")) == (
            "specs/quillmere_sk_lowpass.toml.spec", "spec")
        err = case.find("error")
        assert "error analysis-300: singular circuit" in err.get("message")
        assert "\n" not in err.get("message")
        assert err.text.splitlines()[1].strip() == "C3 n3 n4 ``1n``"

    def test_properties(self):
        notch = suites(junit(sample_result()))[1]
        props = [(p.get("name"), p.get("value")) for p in notch.find("properties")]
        assert props == [("spec", "specs/quillmere_hum_notch.toml"),
                         ("netlist", "sample_netlists/hum_notch.cir"),
                         ("title", "Quillmere Instruments mains hum notch"),
                         ("variant", "60hz"), ("netcheck.version", "0.1.0")]

    def test_cautions_in_system_out(self):
        found = suites(junit(sample_result()))
        assert found[3].find("system-out").text.splitlines() == [
            f"caution analysis-voltage: {HAZARD.message}",
            "sample_netlists/rx40k.cir:22:1: warning netlist-154: R7 = 4.75k is off the E24 series",
            "warning analysis-302: matrix badly conditioned near 38.0 kHz; result kept",
            "sample_netlists/lib/quillmere_opamps.lib:3:1: warning netlist-150: "
            "unknown directive .temp ignored",
            # once per document, with the first spec that warrants it
            f"Caution: {HAZARD_CAUTION}",
        ]
        assert junit(sample_result()).count(HAZARD_CAUTION) == 1
        assert "caution" not in found[0].find("system-out").text
        assert found[4].find("system-out").text.splitlines()[0] == (
            "sample_netlists/sk_lowpass.cir:7:1: error analysis-300: "
            "singular circuit: node 'n3' has no path to ground at DC")

    def test_no_system_out_without_cautions(self):
        spec = SpecResult("s.toml", "n.cir", "t", Status.PASS)
        (suite,) = suites(junit(CheckResult(specs=(spec,), tool_version="0")))
        assert suite.find("system-out") is None

    def test_timestamp_only_from_created_utc(self):
        with_time = suites(junit(sample_result()))
        assert {s.get("timestamp") for s in with_time} == {"2026-03-14T09:26:53Z"}
        without = suites(junit(sample_result(created_utc="")))
        assert all("timestamp" not in s.attrib for s in without)

    def test_reproducible(self):
        assert junit(sample_result()) == junit(sample_result())

    def test_renderer_reports_limits_as_given(self):
        # A PASS spec status with a FAIL limit inside: the renderer does not re-judge
        # either; the testcase still carries its failure and the suite counts it.
        lim = LimitResult("gain", "gain", Status.FAIL, -3.5, -3.0, None, -0.5, "dB")
        spec = SpecResult("s.toml", "n.cir", "t", Status.PASS, limits=(lim,))
        (suite,) = suites(junit(CheckResult(specs=(spec,), tool_version="0")))
        assert suite.get("failures") == "1"
        assert suite.find("testcase/failure").get("message") == (
            "measured -3.500 dB, limit ≥ -3.000 dB, margin -0.500 dB")


class TestEscaping:
    @pytest.mark.parametrize(("raw", "expected"), [
        ("\x00", "\\x00"),
        ("\x1b[31m", "\\x1b[31m"),
        ('<>&"', '<>&"'),              # legal characters pass; ElementTree escapes them
        ("tab\tnew\nline\r", "tab\tnew\nline\r"),
        ("\x7f\x85é€😀", "\x7f\x85é€😀"),  # legal in XML 1.0
        ("\ud800", "\\ud800"),         # lone surrogate
        ("\ufffe\uffff", "\\ufffe\\uffff"),
    ])
    def test_xml_text(self, raw, expected):
        assert xml_text(raw) == expected

    def test_hostile_title_round_trips(self, schema):
        title = "ctl \x00 esc \x1b[31m markup <>&\" | end"
        lim = LimitResult("gain <lo>", "gain", Status.FAIL, 1.0, None, 0.0, -1.0, "dB",
                          message="bad \x07 bell & <tag>")
        spec = SpecResult("a&b.toml", "n.cir", title, Status.FAIL, limits=(lim,),
                          variant='v"1"')
        text = junit(CheckResult(specs=(spec,), tool_version="0"))
        schema.validate(text)
        assert "\x00" not in text and "\x1b" not in text and "\x07" not in text
        (suite,) = suites(text)
        assert suite.get("name") == 'ctl \\x00 esc \\x1b[31m markup <>&" | end [v"1"]'
        case = suite.find("testcase")
        assert case.get("classname") == "a&b.toml.gain"
        assert case.get("name") == "gain <lo>"
        assert case.find("failure").text.splitlines()[1] == "bad \\x07 bell & <tag>"


def test_gold():
    compare_gold("junit.xml", junit(sample_result()), ET.canonicalize)
