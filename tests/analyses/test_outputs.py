"""Several named outputs in one spec ([outputs], a limit's ``output``, the ``crossover`` kind).

References (each named beside its check):
* 2nd-order Butterworth low-pass and high-pass sections of one f0: |H(j2πf0)| = 1/√2 for
  both, so the pair crosses at f0, 20·log10(1/√2) = −3.0103 dB down (Butterworth
  response, any filter handbook, e.g. Zverev, *Handbook of Filter Synthesis*, 1967; from
  memory). Passive LC sections into a load R: LP = 1/(s²LC + sL/R + 1), HP = s²LC/(same),
  Q = R·√(C/L) (nodal analysis, written out here).
* the state-variable (summing amplifier + two integrators) filter with ideal op-amps:
  HP = −s²τ²/D, BP = sτ/D, LP = −1/D, D = s²τ² + 3k·sτ + 1, τ = RI·C, k = RB/(RA + RB)
  (nodal analysis of the sample's circuit, derived in the sample's comments and here);
  evaluated with scipy.signal.freqs.
* Monte Carlo and worst case: the crossover of each drawn part set, computed here from
  the closed forms by scipy.optimize.brentq, independently of netcheck.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from scipy import signal
from scipy.optimize import brentq

from netcheck.analyses.nominal import check_spec
from netcheck.exceptions import SpecError
from netcheck.render.jsonreport import to_dict
from netcheck.result import CheckResult, Status
from netcheck.spec import parse_spec

ROOT = Path(__file__).resolve().parents[2]
SAMPLE = ROOT / "specs" / "qm_sv1_split.toml"
SV_NETLIST = ROOT / "sample_netlists" / "qm_sv1_split.cir"

# a 2nd-order Butterworth two-way split at 2 kHz into 8 Ω (LP: series L1, shunt C1;
# HP: series C2, shunt L2), both driven by one ideal source
R, F0 = 8.0, 2000.0
W0 = 2 * math.pi * F0
L = math.sqrt(2) * R / W0          # Q = R·√(C/L) = 1/√2
C = 1 / (math.sqrt(2) * R * W0)
PAIR = f"""two-way split
V1 in 0 AC 1
L1 in lp {L!r}
C1 lp 0 {C!r}
RLP lp 0 {R!r}
C2 in hp {C!r}
L2 hp 0 {L!r}
RHP hp 0 {R!r}
.end
"""


def lp_hp_gains(f, l1=L, c1=C, l2=L, c2=C, r_lp=R, r_hp=R):
    """|LP|, |HP| of the pair (nodal analysis of the two sections, written out here)."""
    s = 2j * np.pi * np.asarray(f, float)
    lp = 1 / (s * s * l1 * c1 + s * l1 / r_lp + 1)
    hp = s * s * l2 * c2 / (s * s * l2 * c2 + s * l2 / r_hp + 1)
    return np.abs(lp), np.abs(hp)


def pair_crossover(**parts) -> float:
    """The crossover of the pair with ``parts``, by brentq on |LP| − |HP| in ln f."""
    return math.exp(brentq(lambda x: np.subtract(*lp_hp_gains(math.exp(x), **parts)),
                           math.log(100.0), math.log(2e4), xtol=1e-14, rtol=1e-15))


def write(tmp_path: Path, body: str, netlist: str = PAIR, head: str | None = None) -> str:
    (tmp_path / "n.cir").write_text(netlist)
    spec = tmp_path / "s.toml"
    head = head if head is not None else ('source = "V1"\n[outputs]\nlow = "lp"\n'
                                          'high = "hp"\n')
    spec.write_text(f'netlist = "n.cir"\n{head}\n[sweep]\nstart = "10"\nstop = "100k"\n'
                    f'points_per_decade = 40\n{body}')
    return str(spec)


def rows(result) -> dict:
    assert result.error is None, result.error
    return {r.name: r for r in result.limits}


CROSSOVER = """
[[limits]]
kind = "crossover"
name = "x"
outputs = ["low", "high"]
band = ["100", "20k"]
range = ["1.9k", "2.1k"]
level_db = [-3.1, -2.9]
"""



def spot_limits(outputs: tuple[str, ...], freqs: tuple[str, ...]) -> str:
    """A spot gain limit (≤ 10 dB, named "OUTPUT at F") per output and frequency."""
    return "".join(f"""
[[limits]]
kind = "gain"
name = "{out} at {f}"
output = "{out}"
at = "{f}"
max_db = 10
""" for out in outputs for f in freqs)

class TestButterworthPair:
    def test_crossover_at_f0_and_3_01_db_down(self, tmp_path):
        got = rows(check_spec(write(tmp_path, CROSSOVER)))
        # Butterworth: both sections are 1/√2 at f0 (handbook, from memory)
        assert got["x: frequency"].measured == pytest.approx(F0, rel=1e-9)
        assert got["x: level"].measured == pytest.approx(20 * math.log10(1 / math.sqrt(2)),
                                                         abs=1e-9)
        assert {r.output for r in got.values()} == {"low/high"}

    def test_each_output_judged_on_its_own_response(self, tmp_path):
        body = spot_limits(("low", "high"), ("500", "2k", "8k"))
        got = rows(check_spec(write(tmp_path, body)))
        # scipy.signal.freqs of the closed forms (Q = 1/√2, ω0 = 2π·2 kHz)
        a = [1 / W0 ** 2, math.sqrt(2) / W0, 1.0]
        ref = {"low": [1.0], "high": [1 / W0 ** 2, 0.0, 0.0]}
        for out, b in ref.items():
            for f in (500.0, 2000.0, 8000.0):
                name = f"{out} at {f / 1000:g}k" if f >= 1000 else f"{out} at {f:g}"
                _, h = signal.freqs(b, a, worN=[2 * math.pi * f])
                assert got[name].measured == pytest.approx(20 * math.log10(abs(h[0])),
                                                           abs=1e-9), name
                assert got[name].output == out

    def test_no_crossing_in_the_band_cannot_be_measured(self, tmp_path):
        body = CROSSOVER.replace('band = ["100", "20k"]', 'band = ["5k", "20k"]')
        got = rows(check_spec(write(tmp_path, body)))
        assert {r.status for r in got.values()} == {Status.ERROR}
        assert "not equal anywhere" in got["x: frequency"].message

    def test_monte_carlo_crossover_is_each_samples_own(self, tmp_path):
        body = CROSSOVER + """
[tolerances]
default = { L = "5%", C = "5%" }
distribution = "uniform"
[analysis]
mode = ["nominal", "monte_carlo"]
samples = 60
seed = 3
"""
        result = check_spec(write(tmp_path, body))
        assert result.error is None, result.error
        mc = result.extra_value("tolerance")["monte_carlo"]
        entry = next(e for e in mc["limits"] if e["name"] == "x: frequency")
        assert entry["measured_in"] == 60
        v = entry["worst_values"]
        # the closed-form crossover of the worst sample's parts (brentq, here)
        ref = pair_crossover(l1=v["L1"], c1=v["C1"], l2=v["L2"], c2=v["C2"])
        assert entry["worst_measured"] == pytest.approx(ref, rel=1e-9)

    def test_worst_case_of_the_crossover_from_the_closed_form(self, tmp_path):
        body = CROSSOVER + """
[tolerances]
default = { L = "2%", C = "2%" }
[analysis]
mode = ["nominal", "worst_case"]
"""
        result = check_spec(write(tmp_path, body))
        assert result.error is None, result.error
        wc = result.extra_value("tolerance")["worst_case"]
        entry = next(e for e in wc["limits"] if e["name"] == "x: frequency")
        # EVA from the closed form: ∂f/∂ln p by central differences of brentq's
        # crossover, each part at the end that moves f most (independent calculation)
        base = {"l1": L, "c1": C, "l2": L, "c2": C}
        span = 0.0
        for k in base:
            up = pair_crossover(**{**base, k: base[k] * (1 + 1e-5)})
            down = pair_crossover(**{**base, k: base[k] * (1 - 1e-5)})
            span += abs((up - down) / 2e-5) * 0.02
        assert entry["min"] == pytest.approx(F0 - span, rel=1e-7)
        assert entry["max"] == pytest.approx(F0 + span, rel=1e-7)
        assert entry["sensitivity_method"] == "adjoint"
        # the level there, 20·log10|LP(f_x)|, the same way
        def level(**parts):
            return 20 * math.log10(lp_hp_gains(pair_crossover(**parts), **parts)[0])

        span_db = sum(abs(level(**{**base, k: base[k] * (1 + 1e-5)})
                          - level(**{**base, k: base[k] * (1 - 1e-5)})) / 2e-5 * 0.02
                      for k in base)
        lv = next(e for e in wc["limits"] if e["name"] == "x: level")
        assert lv["sensitivity_method"] == "adjoint"
        nominal_db = 20 * math.log10(1 / math.sqrt(2))
        assert lv["min"] == pytest.approx(nominal_db - span_db, abs=1e-7)
        assert lv["max"] == pytest.approx(nominal_db + span_db, abs=1e-7)
        # all 16 corners of the tolerance box, each crossover by brentq (here)
        import itertools
        at = [pair_crossover(**{k: base[k] * e for k, e in zip(base, ends)})
              for ends in itertools.product((0.98, 1.02), repeat=4)]
        assert entry["corners_max"] == pytest.approx(max(at), rel=1e-9)
        assert entry["corners_min"] == pytest.approx(min(at), rel=1e-9)


class TestStateVariableSample:
    """specs/qm_sv1_split.toml against the closed forms of its circuit."""

    TAU = 15.8e3 * 10e-9
    K = 8.87e3 / (10e3 + 8.87e3)

    def forms(self):
        t, k = self.TAU, self.K
        a = [t * t, 3 * k * t, 1.0]
        return {"low": ([-1.0], a), "band": ([t, 0.0], a), "high": ([-t * t, 0.0, 0.0], a)}

    def test_every_channel_against_its_transfer_function(self, tmp_path):
        body = spot_limits(("low", "band", "high"), ("200", "1000", "5000"))
        got = rows(check_spec(write(tmp_path, body, SV_NETLIST.read_text(), head=(
            'source = "VIN"\n[outputs]\nlow = "lp"\nband = "bp"\nhigh = "hp"\n'))))
        for out, (b, a) in self.forms().items():
            for f in (200.0, 1000.0, 5000.0):
                # scipy.signal.freqs of the ideal-op-amp closed form; the sample's op-amps
                # have a gain of 1e7, a relative error near 1e-6 (3e-5 dB allowed)
                _, h = signal.freqs(b, a, worN=[2 * math.pi * f])
                assert got[f"{out} at {f:g}"].measured == pytest.approx(
                    20 * math.log10(abs(h[0])), abs=3e-5), (out, f)

    def test_sample_crossover_and_band_channel(self):
        result = check_spec(str(SAMPLE))
        got = rows(result)
        f0 = 1 / (2 * math.pi * self.TAU)
        q = 1 / (3 * self.K)
        # LP and HP cross where ω²τ² = 1, at the gain 1/(3k) = Q; BP peaks there with Q
        assert got["low/high crossover: frequency"].measured == pytest.approx(f0, rel=1e-5)
        assert got["low/high crossover: level"].measured == pytest.approx(
            20 * math.log10(q), abs=1e-4)
        assert got["band channel: centre"].measured == pytest.approx(f0, rel=1e-5)
        assert got["band channel: Q"].measured == pytest.approx(q, rel=1e-5)
        assert got["band channel: Q"].output == "band"
        assert result.status is Status.PASS

    def test_json_rows_name_their_output_and_the_schema_holds(self):
        import jsonschema

        result = check_spec(str(SAMPLE), plot_detail=False)
        doc = json.loads(json.dumps(to_dict(CheckResult((result,), "0"))))
        schema = json.loads((ROOT / "docs" / "result.schema.json").read_text("utf-8"))
        jsonschema.validate(doc, schema)
        spec = doc["specs"][0]
        named = {r["name"]: r.get("output") for r in spec["limits"]}
        assert named["low channel stop-band"] == "low"
        assert named["high channel pass-band"] == "high"
        assert named["worst case: band channel: centre"] == "band"
        assert named["Monte Carlo yield (all limits)"] is None
        assert spec["sweep"]["outputs"] == {"low": ["lp", "0"], "band": ["bp", "0"],
                                            "high": ["hp", "0"]}

    def test_a_spec_with_one_output_has_no_output_in_its_rows(self):
        result = check_spec(str(ROOT / "specs" / "sk_lowpass.toml"), plot_detail=False)
        doc = to_dict(CheckResult((result,), "0"))
        assert all("output" not in r for r in doc["specs"][0]["limits"])
        assert "outputs" not in doc["specs"][0]["sweep"]


HEAD = 'netlist = "n.cir"\nsource = "V1"\n'
SWEEP = '[sweep]\nstart = "10"\nstop = "100k"\n'


@pytest.mark.parametrize("text, where, code, words", [
    (HEAD + 'output = "lp"\n[outputs]\nlow = "lp"\n' + SWEEP, "output", "spec-265",
     "not both"),
    ('netlist = "n.cir"\n[ports]\ninput = { node = "in", ohms = "8" }\n'
     'output = { node = "lp", ohms = "8" }\n[outputs]\nlow = "lp"\n' + SWEEP, "outputs",
     "spec-265", "not judged through [ports]"),
    (HEAD + '[outputs]\n' + SWEEP, "outputs", "spec-265", "expected a table"),
    (HEAD + '[outputs]\n"2nd" = "lp"\n' + SWEEP, "outputs.2nd", "spec-265", "a letter"),
    (HEAD + '[outputs]\nlow = "lp"\nalso = "LP"\n' + SWEEP, "outputs.also", "spec-265",
     "same node as output 'low'"),
    (HEAD + '[outputs]\nlow = ["lp", "lp"]\n' + SWEEP, "outputs.low", "spec-265",
     "against itself"),
    (HEAD + '[outputs]\nlow = 3\n' + SWEEP, "outputs.low", "spec-265", "node name"),
    (HEAD + '[outputs]\n' + "".join(f'o{k} = "n{k}"\n' for k in range(17)) + SWEEP,
     "outputs", "spec-205", "over the budget of 16"),
    (HEAD + '[outputs]\nlow = "lp"\nhigh = "hp"\n' + SWEEP +
     '[[limits]]\nkind = "gain"\noutput = "hihg"\nband = ["10", "1k"]\nmax_db = 1\n',
     "limits[0].output", "spec-266", "did you mean 'high'?"),
    (HEAD + 'output = "lp"\n' + SWEEP +
     '[[limits]]\nkind = "gain"\noutput = "low"\nband = ["10", "1k"]\nmax_db = 1\n',
     "limits[0].output", "spec-266", "this spec has one output"),
    (HEAD + 'output = "lp"\n' + SWEEP + CROSSOVER, "limits[0].outputs", "spec-266",
     "[outputs] table"),
    (HEAD + '[outputs]\nlow = "lp"\nhigh = "hp"\n' + SWEEP +
     CROSSOVER.replace('["low", "high"]', '["low", "mid"]'), "limits[0].outputs",
     "spec-266", "no output named 'mid'"),
    (HEAD + '[outputs]\nlow = "lp"\nhigh = "hp"\n' + SWEEP +
     CROSSOVER.replace('["low", "high"]', '["low", "low"]'), "limits[0].outputs",
     "spec-267", "twice"),
    (HEAD + '[outputs]\nlow = "lp"\nhigh = "hp"\n' + SWEEP +
     CROSSOVER.replace('outputs = ["low", "high"]\n', ''), "limits[0].outputs",
     "spec-267", "missing"),
    (HEAD + '[outputs]\nlow = "lp"\nhigh = "hp"\n' + SWEEP +
     CROSSOVER.replace('range = ["1.9k", "2.1k"]\nlevel_db = [-3.1, -2.9]\n', ''),
     "limits[0].range", "spec-267", "give range"),
    (HEAD + '[outputs]\nlow = "lp"\nhigh = "hp"\n' + SWEEP +
     CROSSOVER.replace('name = "x"', 'name = "x"\noutput = "low"'), "limits[0].output",
     "spec-266", "not output"),
])
def test_bad_outputs_are_refused_at_their_key(text, where, code, words):
    with pytest.raises(SpecError) as info:
        parse_spec(text, "s.toml")
    err = info.value
    assert (err.where, err.code) == (where, code), err.message
    assert words in err.message
    assert err.span is not None  # located in the file: line and column


def test_an_output_node_not_in_the_netlist_is_refused_at_its_name(tmp_path):
    result = check_spec(write(tmp_path, "", head='source = "V1"\n[outputs]\nlow = "lp"\n'
                              'high = "hpx"\n'))
    assert result.status is Status.ERROR
    assert "spec-203" in result.error and "outputs.high" in result.error
    assert "hpx" in result.error


def test_an_output_without_signal_is_refused_at_its_name(tmp_path):
    netlist = PAIR.replace(".end", "RX far 0 1k\nRY far 0 1k\n.end")
    result = check_spec(write(tmp_path, "", netlist, head='source = "V1"\n[outputs]\n'
                              'low = "lp"\nnothing = "far"\n'))
    assert result.status is Status.ERROR
    assert "analysis-304" in result.error and "outputs.nothing" in result.error


def test_the_crossover_section_shows_the_samples_rows():
    # docs/spec-format.md's crossover section states specs/qm_sv1_split.toml's limits and
    # shows the rows the check prints for them
    doc = (ROOT / "docs" / "spec-format.md").read_text("utf-8")
    section = doc.split("### `crossover`:")[1].split("\n## ")[0]
    shown = section.split('kind = "crossover"')[1].split("```\n")[2].split("```")[0]
    got = rows(check_spec(str(SAMPLE), plot_detail=False))
    names = ["low channel stop-band", "band channel: centre", "band channel: Q",
             "low/high crossover: frequency", "low/high crossover: level"]
    for name in names:
        r = got[name]
        line = next(x for x in shown.splitlines() if f"{name} [{r.output}]" in x)
        assert r.figures.measured in line and r.figures.margin in line, name


def test_the_pdf_draws_each_output_with_its_own_mask():
    from netcheck.report.plot_response import spec_plots

    result = check_spec(str(SAMPLE))
    plots = spec_plots(result)
    by_output: dict[str, set[str]] = {}
    for plot in plots:
        out = plot.title.split(": output ")[1].split(",")[0]
        by_output.setdefault(out, set()).update(k.name for k in plot.keys)
    assert set(by_output) == {"low", "band", "high"}
    # each figure's mask bands are its own output's limits only (the rows' output)
    outputs = {r.name: r.output for r in result.limits}
    for out, names in by_output.items():
        assert all(outputs[n] == out for n in names), (out, names)
    # the gain limits draw bands; the band channel's resonance limit draws none
    assert by_output["low"] == {"low channel pass-band", "low channel stop-band"}
    assert by_output["high"] == {"high channel pass-band"} and by_output["band"] == set()
