"""The operating point in the result: the JSON block, the region and stability cautions,
and the PDF section's data, for circuits with devices and polynomial sources.

References: the common-emitter stage's collector current is checked against the
hand estimate of its divider bias (Sedra & Smith's textbook procedure, quoted from
memory: Vb from the divider with the base current, Ic = β·Ib); the unstable stage's pole
is worked out by nodal analysis in a comment; the JSON block is validated against
docs/result.schema.json (JSON Schema 2020-12, the jsonschema package).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import jsonschema
import pytest

from netcheck.cli import FAIL, OK
from netcheck.cli import main as netcheck_main

ROOT = Path(__file__).resolve().parents[2]
SCHEMA = json.loads((ROOT / "docs" / "result.schema.json").read_text("utf-8"))

CE = """Quillmere QM-41 common-emitter stage
VCC vcc 0 DC 12
VIN in 0 AC 1
C1 in b 10u
R1 vcc b 100k
R2 b 0 22k
RC vcc c {rc}
RE e 0 1k
CE e 0 100u
Q1 c b e qm_n
.model qm_n NPN(IS=1e-15 BF=200 VAF=100 CJE=10p CJC=3p TF=0.3n)
"""
SPEC = """title = "{title}"
netlist = "{netlist}"
source = "{source}"
output = "{output}"

[sweep]
start = "10"
stop = "100k"
points_per_decade = 10

[[limits]]
kind = "gain"
band = ["1k", "10k"]
min_db = -100
"""


def check(tmp_path: Path, capsys, netlist: str, source: str, output: str
          ) -> tuple[dict, str]:
    (tmp_path / "d.cir").write_text(netlist)
    (tmp_path / "d.toml").write_text(SPEC.format(title="QM stage", netlist="d.cir",
                                                 source=source, output=output))
    out = tmp_path / "r.json"
    code = netcheck_main(["check", str(tmp_path / "d.toml"), "--jobs", "1", "--json", str(out)])
    assert code in (OK, FAIL)
    doc = json.loads(out.read_text("utf-8"))
    jsonschema.validate(doc, SCHEMA)
    return doc["specs"][0], capsys.readouterr().out


def test_the_block_of_a_common_emitter_stage(tmp_path, capsys):
    spec, terminal = check(tmp_path, capsys, CE.format(rc="4.7k"), "VIN", "c")
    op = spec["operating_point"]
    assert op["method"] == "Newton" and op["temperature_c"] == 27.0
    (q1,) = op["devices"]
    assert (q1["name"], q1["kind"], q1["region"]) == ("Q1", "npn", "forward-active")
    figures = {q["name"]: q["value"] for q in q1["quantities"]}
    # hand estimate (textbook divider bias): Thevenin 12·22/122 = 2.164 V behind
    # 100k‖22k = 18.03 kΩ; Vbe ≈ 0.72 V; Ic = β(Vth − Vbe)/(Rth + (β+1)·RE) with β ≈ 200
    estimate = 200 * (12 * 22 / 122 - 0.72) / (100e3 * 22e3 / 122e3 + 201 * 1e3)
    assert figures["Ic"] == pytest.approx(estimate, rel=0.05)
    # gm = Ic/Vt (Vt = kT/q at 300.15 K): the small-signal figure of the same bias
    vt = 1.380649e-23 * 300.15 / 1.602176634e-19
    assert figures["gm"] == pytest.approx(figures["Ic"] / vt, rel=1e-3)
    volts = {n["node"]: n["volts"] for n in op["nodes"]}
    assert volts["vcc"] == 12.0 and volts["c"] == pytest.approx(12 - 4.7e3 * figures["Ic"],
                                                                 rel=1e-9)
    assert "analysis-307" not in terminal and "analysis-309" not in terminal


def test_a_saturated_transistor_is_named(tmp_path, capsys):
    # RC = 47k cannot carry the ~1.3 mA the base divider asks for from 12 V: saturated
    spec, terminal = check(tmp_path, capsys, CE.format(rc="47k"), "VIN", "c")
    assert spec["operating_point"]["devices"][0]["region"] == "saturated"
    (caution,) = [c for c in spec["cautions"] if c["code"] == "analysis-307"]
    assert caution["severity"] == "warning"
    assert caution["message"].startswith("Q1 (npn) is saturated at the operating point, "
                                         "not forward-active")
    assert "d.cir:10:1: warning analysis-307: Q1 (npn) is saturated" in terminal


def test_a_conducting_diode_gets_a_note(tmp_path, capsys):
    netlist = ("Quillmere QM-40 diode attenuator\nV1 in 0 DC 0 AC 1\nVB bias 0 DC 5\n"
               "R1 bias a 4.3k\nR2 in a 1k\nD1 a 0 qm_d\n.model qm_d D(IS=1e-14)\n")
    spec, _ = check(tmp_path, capsys, netlist, "V1", "a")
    (caution,) = [c for c in spec["cautions"] if c["code"] == "analysis-307"]
    assert caution["severity"] == "note" and caution["message"].startswith("D1 conducts")


def test_an_unstable_operating_point_is_named_with_its_pole(tmp_path, capsys):
    # node x: (x − 0)/RI + (x − 4x)/RF + sCx = 0 with RI = RF = 1k → x(−2/1k + sC) = 0:
    # one pole at s = +2/(1k·1µ) = 2000 rad/s, s/2π = 318.31 Hz; DC: −2x/1k = 0, x = 0
    netlist = ("Quillmere QM-46 positive feedback\nV1 in 0 AC 1\nRI in x 1k\n"
               "E1 out 0 POLY(1) x 0 0 4\nRF out x 1k\nC1 x 0 1u\n")
    spec, terminal = check(tmp_path, capsys, netlist, "V1", "out")
    (caution,) = [c for c in spec["cautions"] if c["code"] == "analysis-309"]
    pole = 2.0 / (1e3 * 1e-6) / (2 * math.pi)
    assert f"s/2π = {pole:.4g} + j0 Hz" in caution["message"]
    assert "warning analysis-309" in terminal
    # with gain 0.5: x/1k + (x − 0.5x)/1k + sCx = x(1.5/1k + sC) = 0, the pole at
    # s = −1500 rad/s, in the left half-plane: no caution
    stable = netlist.replace("0 0 4", "0 0 0.5")
    spec, _ = check(tmp_path, capsys, stable, "V1", "out")
    assert not [c for c in spec["cautions"] if c["code"] == "analysis-309"]


def test_a_circuit_without_devices_has_no_block(tmp_path, capsys):
    netlist = "Quillmere QM-47 RC\nV1 in 0 AC 1\nR1 in out 1k\nC1 out 0 100n\n"
    spec, _ = check(tmp_path, capsys, netlist, "V1", "out")
    assert "operating_point" not in spec


def test_the_pdf_section_data(tmp_path, capsys):
    from netcheck.report.view_bias import bias_view
    from netcheck.result import SpecResult, Status

    spec, _ = check(tmp_path, capsys, CE.format(rc="4.7k"), "VIN", "c")
    result = SpecResult("d.toml", "d.cir", "QM", Status.PASS,
                        extra=(("operating_point", spec["operating_point"]),))
    view = bias_view(result)
    (row,) = view["devices"]
    assert (row["name"], row["kind"], row["region"]) == ("Q1", "NPN", "forward-active")
    assert "rπ" in row["figures"] and "Cμ" in row["figures"]
    assert view["method"] == "Newton's method from zero"
    assert [n["node"] for n in view["nodes"]] == [n["node"] for n in
                                                  spec["operating_point"]["nodes"]]


def test_monte_carlo_names_a_transistor_that_leaves_its_region(tmp_path, capsys):
    # RC = 6.8k: Ic ≈ 1.32 mA (the hand estimate above) leaves Vce ≈ 12 − 1.32m·7.8k ≈
    # 1.7 V at nominal, forward-active; ±30 % resistors push some samples into saturation
    # (the ends that raise Ic·RC) — each sample is solved at its own operating point
    (tmp_path / "d.cir").write_text(CE.format(rc="6.8k"))
    (tmp_path / "d.toml").write_text(
        SPEC.format(title="QM stage", netlist="d.cir", source="VIN", output="c")
        + '\n[tolerances]\ndefault = { R = "30%" }\n'
        + '[analysis]\nmode = ["nominal", "monte_carlo"]\nsamples = 200\nseed = 5\n')
    out = tmp_path / "r.json"
    code = netcheck_main(["check", str(tmp_path / "d.toml"), "--jobs", "1", "--json", str(out)])
    assert code in (OK, FAIL)
    doc = json.loads(out.read_text("utf-8"))
    jsonschema.validate(doc, SCHEMA)
    spec = doc["specs"][0]
    assert spec["operating_point"]["devices"][0]["region"] == "forward-active"
    (regions,) = spec["tolerance"]["monte_carlo"]["device_regions"]
    counts = regions["counts"]
    assert sum(counts.values()) == 200 and 0 < counts["saturated"] < 200
    first = regions["first_other_values"]
    # the first saturated sample re-solved by hand: the Thevenin divider bias, as above
    vth = 12 * first["R2"] / (first["R1"] + first["R2"])
    rth = first["R1"] * first["R2"] / (first["R1"] + first["R2"])
    ic = 200 * (vth - 0.72) / (rth + 201 * first["RE"])
    assert 12 - ic * first["RC"] - ic * first["RE"] < 0.6  # Vce low: saturation is right
    terminal = capsys.readouterr().out
    n = counts["saturated"]
    assert (f"warning analysis-307: Q1 (npn) leaves the forward-active region in {n} of "
            "200 Monte Carlo samples") in terminal
