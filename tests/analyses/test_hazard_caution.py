"""The hazardous-voltage caution appears only where a result warrants it, once per output.

A 1 V RC low-pass has no resonance: no part sees more than the input, so no output
carries a hazard caution. A 1 V series RLC band-pass with Q ≈ 12 at 40 kHz puts about
Q times the input across its capacitor at resonance, so it gets one, naming C1 and the
magnification.
"""

from __future__ import annotations

import io
import json
import math
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest

from netcheck.analyses.hazard import MAGNIFICATION_MIN, magnification_caution, magnifications
from netcheck.cli import FAIL, OK
from netcheck.cli import main as netcheck_main
from netcheck import read_netlist
from netcheck.result import HAZARD_CAUTION, MODEL_STATEMENT

TWO_PI = 2.0 * math.pi

# Series RLC band-pass, output across R: V1 → L1 → C1 → R1 → ground.
F0 = 40e3                                  # Hz
L_S = 10e-3                                # H
C_S = 1.0 / ((TWO_PI * F0) ** 2 * L_S)     # ω0 = 1/√(LC) → C = 1/(ω0² L) ≈ 1.583 nF
Q_TARGET = 12.0
R_S = TWO_PI * F0 * L_S / Q_TARGET         # Q = ω0 L / R → R ≈ 209.4 Ω
W0 = 1.0 / math.sqrt(L_S * C_S)
# closed form, series RLC: |V_C / V_in| at ω0 is 1/(ω0 R C) = Q
Q_CLOSED = 1.0 / (W0 * R_S * C_S)
# closed form, series RLC: |V_C / V_in| = 1/|1 − ω²LC + jωRC| peaks at ω² = ω0²(1 − 1/(2Q²)),
# where it is Q / √(1 − 1/(4Q²)); a sampled maximum lies between Q and that
Q_PEAK = Q_CLOSED / math.sqrt(1.0 - 1.0 / (4.0 * Q_CLOSED ** 2))

RLC = (f"series RLC band-pass, Q 12 at 40 kHz\nV1 in 0 AC 1\nL1 in a {L_S!r}\n"
       f"C1 a out {C_S!r}\nR1 out 0 {R_S!r}\n.end\n")
# RC low-pass, 1 kHz: |V_C / V_in| = 1/|1 + jωRC| ≤ 1 at every frequency (closed form)
RC = "RC low-pass, 1 kHz\nV1 in 0 AC 1\nR1 in out 1k\nC1 out 0 159.15n\n.end\n"


def spec_text(netlist: str, title: str, lo: str, hi: str) -> str:
    return (f'title = "{title}"\nnetlist = "{netlist}"\nsource = "V1"\noutput = "out"\n'
            f'[sweep]\nstart = "{lo}"\nstop = "{hi}"\npoints_per_decade = 50\n'
            '[[limits]]\nkind = "gain"\nband = ["' + lo + '", "' + hi + '"]\nmax_db = 1\n')


@pytest.fixture
def design(tmp_path: Path) -> dict[str, Path]:
    (tmp_path / "rlc.cir").write_text(RLC)
    (tmp_path / "rc.cir").write_text(RC)
    out = {"rlc": tmp_path / "rlc.toml", "rc": tmp_path / "rc.toml",
           "rlc2": tmp_path / "rlc2.toml"}
    out["rlc"].write_text(spec_text("rlc.cir", "RLC band-pass", "4k", "400k"))
    out["rlc2"].write_text(spec_text("rlc.cir", "RLC band-pass again", "10k", "100k"))
    out["rc"].write_text(spec_text("rc.cir", "RC low-pass", "10", "100k"))
    return out


def run(capsys, tmp_path: Path, *specs: Path) -> dict[str, str]:
    """``netcheck check`` with every machine output; returns each output's text."""
    paths = {k: tmp_path / f"out.{k}" for k in ("json", "junit", "sarif", "md")}
    code = netcheck_main(["check", *map(str, specs), "--jobs", "1",
                          "--json", str(paths["json"]), "--junit", str(paths["junit"]),
                          "--sarif", str(paths["sarif"]), "--summary-md", str(paths["md"])])
    assert code in (OK, FAIL)
    texts = {k: p.read_text("utf-8") for k, p in paths.items()}
    texts["terminal"] = capsys.readouterr().out
    return texts


def test_rc_lowpass_has_no_hazard_caution_anywhere(capsys, tmp_path, design):
    out = run(capsys, tmp_path, design["rc"])
    for name, text in out.items():
        assert "hazardous voltage" not in text, name
        assert "the input voltage" not in text, name
    doc = json.loads(out["json"])
    assert [c for s in doc["specs"] for c in s["cautions"]
            if c["severity"] == "caution"] == []
    sarif = json.loads(out["sarif"])
    assert "cautions" not in sarif["runs"][0].get("properties", {})
    assert all(el.text is None or "caution" not in el.text
               for el in ET.fromstring(out["junit"]).iter("system-out"))
    # closed form, RC low-pass: |V_C / V_in| ≤ 1, so the largest magnification is ≤ 1
    ratios = dict((n, r) for n, r, _ in magnifications(
        read_netlist(RC).ac("V1", "out", freqs=[10.0, 1e3, 1e5])))
    assert ratios["C1"] == pytest.approx(1.0, rel=1e-4)   # at 10 Hz, ωRC ≈ 0.01


def test_series_rlc_gets_it_naming_the_capacitor_and_q(capsys, tmp_path, design):
    out = run(capsys, tmp_path, design["rlc"])
    doc = json.loads(out["json"])
    (hazard,) = [c for c in doc["specs"][0]["cautions"] if c["severity"] == "caution"]
    assert hazard["code"] == "analysis-voltage"
    # C1 and L1 see the same |V| at ω0 (closed form, series RLC: |V_L| = |V_C| = Q·|V_in|);
    # below ω0 the capacitor's is the larger, so C1 leads
    assert hazard["message"].startswith("C1 sees ")
    ratio = float(hazard["message"].split("C1 sees ", 1)[1].split("×", 1)[0])
    assert Q_CLOSED == pytest.approx(12.0, rel=1e-12)
    assert Q_CLOSED - 0.05 <= ratio <= Q_PEAK + 0.05      # one decimal printed
    assert "the input voltage at 40.0 kHz" in hazard["message"] or \
        "the input voltage at 39.9 kHz" in hazard["message"]
    assert "L1 " in hazard["message"]
    # the general caution once per output
    assert out["terminal"].count(HAZARD_CAUTION) == 1
    assert out["terminal"].count("C1 sees ") == 1
    assert out["md"].count(HAZARD_CAUTION) == 1
    assert out["junit"].count(HAZARD_CAUTION) == 1
    remarks = json.loads(out["sarif"])["runs"][0]["properties"]["cautions"]
    assert [r["code"] for r in remarks] == ["analysis-voltage", "analysis-hazard"]


def test_magnification_matches_the_closed_form():
    # the solution on the grid and at the pole frequency (f0 itself for this circuit, as
    # |p| = ω0 for a series RLC, closed form): the largest |V_C / V_in| lies between the
    # value at ω0, Q, and the true peak, Q / √(1 − 1/(4Q²))
    resp = read_netlist(RLC).ac("V1", "out", freqs=[10e3, 20e3, 30e3, 50e3, 100e3])
    seeds = [F0 * math.sqrt(1.0 - 1.0 / (4.0 * Q_CLOSED ** 2)), F0]  # |Im p| and |p| / 2π
    ratios = {n: (r, f) for n, r, f in magnifications(resp, seeds)}
    assert Q_CLOSED * (1 - 1e-9) <= ratios["C1"][0] <= Q_PEAK * (1 + 1e-9)
    assert Q_CLOSED * (1 - 1e-9) <= ratios["L1"][0] <= Q_PEAK * (1 + 1e-9)
    assert set(ratios) == {"C1", "L1"}    # resistors and sources are not reactive parts
    assert MAGNIFICATION_MIN == 10.0
    caution = magnification_caution(resp, (), seeds)
    assert caution is not None and caution.severity == "caution"


def test_a_current_stimulus_has_no_input_voltage():
    resp = read_netlist(RLC.replace("V1 in 0 AC 1", "I1 0 in AC 1")).ac(
        "I1", "out", freqs=[10e3, F0, 100e3])
    assert magnifications(resp) == []
    assert magnification_caution(resp, ()) is None


def test_once_in_a_two_spec_run(capsys, tmp_path, design):
    out = run(capsys, tmp_path, design["rlc"], design["rc"])
    term = out["terminal"]
    assert term.count(HAZARD_CAUTION) == 1
    # once, just above the run's headline (which ends the table output)
    assert term.rstrip().splitlines()[-3:] == [f"Caution: {HAZARD_CAUTION}", "",
                                               "✓ 2 specs: both limits met"]
    assert term.count("C1 sees ") == 1           # the RLC's finding, with its spec only
    # two specs that both warrant it: each names its own parts, the caution still once
    out = run(capsys, tmp_path, design["rlc"], design["rlc2"])
    for name in ("terminal", "md", "junit", "sarif"):
        assert out[name].count(HAZARD_CAUTION) == 1, name
    assert out["terminal"].count("C1 sees ") == 2


def _pdf_words(*specs: Path) -> str:
    from pypdf import PdfReader

    from netcheck.analyses.nominal import check_spec
    from netcheck.report import pdf
    from netcheck.result import CheckResult

    result = CheckResult(tuple(check_spec(str(s)) for s in specs), "0")
    stream = io.BytesIO()
    pdf.render(result, stream)
    pages = PdfReader(io.BytesIO(stream.getvalue())).pages
    return " ".join(" ".join((p.extract_text() or "").split()) for p in pages)


def test_pdf_says_it_once_and_only_when_warranted(design):
    pytest.importorskip("weasyprint")
    rc = _pdf_words(design["rc"])
    statement = " ".join(MODEL_STATEMENT.split())
    assert rc.count(statement) == 1                         # the model statement, once
    assert "hazardous voltages" not in rc and "the input voltage" not in rc
    both = _pdf_words(design["rlc"], design["rc"])
    assert both.count(statement) == 1
    assert both.count("licensed practice at hazardous voltages") == 1
    assert both.count("C1 sees ") == 1                      # the RLC's finding, once
