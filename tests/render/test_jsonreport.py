"""JSON renderer: the fixed netcheck.result/1 keys, the JSON Schema, numbers and a gold file.

Outside source: documents are validated against docs/result.schema.json with the
``jsonschema`` package (JSON Schema draft 2020-12).
"""

from __future__ import annotations

import io
import json
import math
from pathlib import Path

import jsonschema
import pytest

from netcheck.analyses.nominal import check_spec
from netcheck.render import RenderOptions, get_renderer, render_to
from netcheck.render.jsonreport import SCHEMA, render, to_dict
from netcheck.result import CheckResult, LimitResult, SpecResult, Status

from .sample import compare_gold, sample_result

ROOT = Path(__file__).resolve().parents[2]
SCHEMA_FILE = ROOT / "docs" / "result.schema.json"

TOP_KEYS = {"schema", "tool_version", "specs"}
SPEC_KEYS = {"spec", "netlist", "title", "status", "limits", "measurements"}
LIMIT_KEYS = {"name", "kind", "status", "measured", "limit", "margin", "unit", "at_hz"}
MEASUREMENT_KEYS = {"f_peak_hz", "peak_gain_db", "f_low_hz", "f_high_hz", "bandwidth_hz", "q",
                    "f_center_hz"}


def dumps(result: CheckResult) -> str:
    buf = io.StringIO()
    render(result, buf, RenderOptions())
    return buf.getvalue()


@pytest.fixture(scope="module")
def validator() -> jsonschema.Draft202012Validator:
    schema = json.loads(SCHEMA_FILE.read_text("utf-8"))
    jsonschema.Draft202012Validator.check_schema(schema)
    return jsonschema.Draft202012Validator(schema)


@pytest.fixture(scope="module")
def real(tmp_path_factory) -> dict:
    """JSON of a real run: every shipped spec, the failing one and a broken one."""
    broken = tmp_path_factory.mktemp("broken") / "broken.toml"
    broken.write_text('netlst = "x.cir"\n')
    paths = sorted(str(p) for p in (ROOT / "specs").glob("*.toml"))
    paths += [str(ROOT / "specs" / "failing" / "rx40k_revA.toml"), str(broken)]
    result = CheckResult(tuple(check_spec(p) for p in paths), "0.1.0", "2026-03-14T09:26:53Z")
    return json.loads(dumps(result))


def by_title(doc: dict, start: str) -> dict:
    return next(s for s in doc["specs"] if s["title"].startswith(start))


def test_gold():
    compare_gold("result.json", dumps(sample_result()))


def test_registered_as_json():
    assert get_renderer("json") is render


class TestContract:
    def test_top_level(self, real):
        assert TOP_KEYS <= set(real)
        assert real["schema"] == SCHEMA == "netcheck.result/1"
        assert real["tool_version"] == "0.1.0"

    def test_spec_and_limit_keys(self, real):
        for spec in real["specs"]:
            assert SPEC_KEYS <= set(spec), spec["spec"]
            for lim in spec["limits"]:
                assert LIMIT_KEYS <= set(lim), lim["name"]
                assert len(lim["limit"]) == 2

    def test_measurements_of_a_resonance(self, real):
        rx = by_title(real, "Transducer receive filter, 40 kHz, rev B")
        assert set(rx["measurements"]) == MEASUREMENT_KEYS
        m = rx["measurements"]
        assert math.isclose(m["q"], m["f_center_hz"] / m["bandwidth_hz"], rel_tol=1e-12)
        assert math.isclose(m["bandwidth_hz"], m["f_high_hz"] - m["f_low_hz"], rel_tol=1e-12)

    def test_failing_spec(self, real):
        spec = by_title(real, "Transducer receive filter, 40 kHz, rev A")
        assert spec["status"] == "fail"
        bw = next(lim for lim in spec["limits"] if lim["name"] == "resonance: bandwidth")
        assert (bw["kind"], bw["status"], bw["unit"], bw["limit"]) == (
            "resonance", "fail", "Hz", [3000.0, 4000.0])
        assert bw["margin"] < 0 and math.isclose(bw["margin"], 4000.0 - bw["measured"],
                                                 rel_tol=1e-12)

    def test_broken_spec(self, real):
        spec = next(s for s in real["specs"] if s["spec"].endswith("broken.toml"))
        assert spec["status"] == "error" and spec["limits"] == [] and spec["measurements"] == {}
        assert "error spec-201" in spec["error"]

    def test_everything_validates_against_the_schema(self, real, validator):
        validator.validate(real)
        validator.validate(to_dict(sample_result()))

    def test_schema_rejects_a_document_without_the_contract(self, real, validator):
        bad = json.loads(json.dumps(real))
        del bad["specs"][0]["limits"][0]["margin"]
        assert not validator.is_valid(bad)
        bad = dict(real, schema="netcheck.result/2")
        assert not validator.is_valid(bad)


class TestNumbers:
    def spec(self, **values) -> CheckResult:
        fields = dict(measured=1.5, lower=None, upper=2.0, margin=0.5, at_hz=1e3)
        fields.update(values)
        lim = LimitResult("g", "gain", Status.PASS, fields["measured"], fields["lower"],
                          fields["upper"], fields["margin"], "dB", fields["at_hz"])
        return CheckResult((SpecResult("q.toml", "q.cir", "Quillmere numbers", Status.PASS,
                                       limits=(lim,), measurements=(("q", math.nan),)),),
                           "0.1.0")

    def limit(self, **values) -> dict:
        return json.loads(dumps(self.spec(**values)))["specs"][0]["limits"][0]

    def test_plain_values_round_trip_exactly(self):
        lim = self.limit(measured=0.1 + 0.2, margin=-1e-300)
        assert lim["measured"] == 0.1 + 0.2 and lim["margin"] == -1e-300
        assert lim["limit"] == [None, 2.0] and lim["at_hz"] == 1e3

    def test_infinities_and_nan(self, validator):
        lim = self.limit(measured=math.inf, margin=-math.inf, lower=-math.inf, at_hz=math.inf)
        assert (lim["measured"], lim["margin"], lim["limit"][0]) == ("inf", "-inf", "-inf")
        assert lim["at_hz"] is None
        assert self.limit(measured=math.nan)["measured"] is None
        doc = json.loads(dumps(self.spec(measured=math.inf)))
        assert doc["specs"][0]["measurements"] == {"q": None}
        validator.validate(doc)

    def test_error_limit(self):
        lim = self.limit(measured=None, margin=None, at_hz=None)
        assert (lim["measured"], lim["margin"], lim["at_hz"]) == (None, None, None)


def test_cautions_of_the_spec_and_of_the_run():
    doc = to_dict(sample_result())
    assert [c["code"] for c in doc["specs"][3]["cautions"]] == ["analysis-voltage", "netlist-154", "analysis-302"]
    assert doc["cautions"] == [{"code": "netlist-150", "severity": "warning",
                                "message": "unknown directive .temp ignored",
                                "path": "sample_netlists/lib/quillmere_opamps.lib",
                                "line": 3, "column": 1}]


def test_reproducible_and_sorted():
    first, second = dumps(sample_result()), dumps(sample_result())
    assert first == second
    assert first == json.dumps(json.loads(first), indent=2, sort_keys=True,
                               ensure_ascii=False) + "\n"


def test_render_to_a_file_and_to_stdout(tmp_path, capsys):
    path = tmp_path / "out" / "result.json"
    render_to("json", sample_result(), str(path))
    assert json.loads(path.read_text("utf-8")) == to_dict(sample_result())
    render_to("json", sample_result(), "-")
    assert json.loads(capsys.readouterr().out) == to_dict(sample_result())
