"""Tolerances as parts really vary: per-part distributions, asymmetric bands, tracking.

The draws are checked against the moments of their distributions (closed forms, and
scipy.stats for the truncated normal) and the correlation asked for, each with a bound of
five standard errors at the sample count used (so a correct draw fails about once in
two million runs, a wrong one by many errors). Worst case is checked against closed forms
of a first-order RC low-pass and a resistive divider.
"""

from __future__ import annotations

import json
import math
import re
from pathlib import Path

import jsonschema
import numpy as np
import pytest
from scipy import stats

from netcheck.analyses.nominal import check_spec
from netcheck.analyses.part_spread import Part, copula_r, draw, toleranced_parts, variables
from netcheck.cli import main
from netcheck.netlist.elaborate import elaborate
from netcheck.netlist.parse import load_netlist
from netcheck.spec.tolerances import parse_tolerances
from circuits import write_spec as _spec

ROOT = Path(__file__).resolve().parents[2]
SCHEMA = json.loads((ROOT / "docs" / "result.schema.json").read_text("utf-8"))

RC_LOWPASS = """Quillmere test: RC low-pass, corner 1/(2 pi R C) = 1.5915 kHz
V1 in 0 AC 1
R1 in out 1k
C1 out 0 100n
"""

DIVIDER = """Quillmere test: matched-network divider, gain R2/(R1 + R2) = 1/2
V1 in 0 AC 1
R1 in out 10k
R2 out 0 10k
C1 out 0 1p
"""

N = 200_000


def _tol(result) -> dict:
    return dict(result.extra)["tolerance"]


# ---------------------------------------------------------------------------------------
# drawing: moments of each distribution over its (asymmetric) band
# ---------------------------------------------------------------------------------------

def test_mixed_distributions_have_the_moments_of_their_bands():
    parts = [Part("R1", 1e3, -0.01, 0.01, "uniform"),
             Part("C1", 1e-7, -0.10, 0.10, "normal"),
             Part("C9", 1e-4, -0.20, 0.80, "uniform"),
             Part("C2", 1e-9, -0.10, 0.10, "truncnormal")]
    v = draw(parts, N, "uniform", np.random.default_rng(5))
    # uniform on [a, b]: mean (a+b)/2, variance (b−a)²/12, excess kurtosis −1.2;
    # normal: 3σ = the half-band; truncated normal at ±3σ: scipy.stats.truncnorm
    tn = stats.truncnorm(-3, 3, scale=0.10 / 3)
    expect = {"R1": (0.0, 0.02 / math.sqrt(12), -1.2), "C1": (0.0, 0.10 / 3, 0.0),
              "C9": (0.30, 1.0 / math.sqrt(12), -1.2),
              "C2": (0.0, float(tn.std()), float(tn.stats(moments="k")))}
    for p in parts:
        x = v[p[0]] / p[1] - 1.0
        mean, sd, kurt = expect[p[0]]
        # standard errors: of the mean σ/√N; of the sample sd σ·√((κ_excess + 2)/(4N))
        assert abs(x.mean() - mean) < 5 * sd / math.sqrt(N), p[0]
        assert abs(x.std(ddof=1) - sd) < 5 * sd * math.sqrt((kurt + 2) / (4 * N)), p[0]
    # the band's ends bound the uniform and truncated draws, and are reached
    c9 = v["C9"] / 1e-4
    assert c9.min() >= 0.8 and c9.max() <= 1.8
    assert c9.min() < 0.8 + 1e-4 and c9.max() > 1.8 - 1e-4
    assert np.all(np.abs(v["C2"] / 1e-9 - 1.0) <= 0.10 + 1e-15)
    # "10 % normal": 3σ = 10 %, so 0.27 % of parts fall outside ±10 % (2(1 − Φ(3)))
    outside = np.mean(np.abs(v["C1"] / 1e-7 - 1.0) > 0.10)
    p_out = 2 * stats.norm.sf(3)
    assert abs(outside - p_out) < 5 * math.sqrt(p_out * (1 - p_out) / N)


def test_one_distribution_without_tracking_draws_as_before():
    # plain (name, nominal, t) tuples and Parts of one distribution give the same samples
    # for one seed (runs of earlier versions repeat exactly)
    plain = draw([("C1", 1e-9, 0.05), ("R1", 1e3, 0.01)], 50, "uniform",
                 np.random.default_rng(3))
    parts = draw([Part("C1", 1e-9, -0.05, 0.05, "uniform"),
                  Part("R1", 1e3, -0.01, 0.01, "uniform")], 50, "uniform",
                 np.random.default_rng(3))
    assert all(np.array_equal(plain[k], parts[k]) for k in plain)
    u = np.random.default_rng(3).uniform(-1, 1, size=(50, 2))
    assert np.allclose(plain["C1"], 1e-9 * (1 + 0.05 * u[:, 0]), rtol=0, atol=1e-24)


# ---------------------------------------------------------------------------------------
# tracking: the correlation of the drawn values is the one asked for
# ---------------------------------------------------------------------------------------

@pytest.mark.parametrize("distribution, rho", [("uniform", 0.6), ("normal", 0.3),
                                               ("uniform", 0.95), ("truncnormal", 0.8)])
def test_tracking_group_has_the_requested_correlation(distribution, rho):
    n = 40_000
    parts = [Part("C4", 1e-8, -0.05, 0.05, distribution, 0, rho),
             Part("C5", 2e-8, -0.05, 0.05, distribution, 0, rho),
             Part("C6", 3e-8, -0.10, 0.30, distribution, 0, rho),  # asymmetric: linear map
             Part("R1", 1e3, -0.01, 0.01, distribution)]
    v = draw(parts, n, "uniform", np.random.default_rng(11))
    r = np.corrcoef([v["C4"], v["C5"], v["C6"], v["R1"]])
    # large-sample standard error of Pearson's r: (1 − ρ²)/√(n − 1) (Fisher 1915); the
    # normal truncated at ±3σ keeps ρ to within 1e-3 (its tails hold 0.27 % of the mass)
    se = (1 - rho ** 2) / math.sqrt(n - 1)
    slack = 1e-3 if distribution == "truncnormal" else 0.0
    for i, j in ((0, 1), (0, 2), (1, 2)):
        assert abs(r[i, j] - rho) < 5 * se + slack, (i, j, r[i, j])
    for i in range(3):  # the part outside the group stays independent of it
        assert abs(r[i, 3]) < 5 / math.sqrt(n - 1)


def test_the_copula_correlation_inverts_pearsons_formula():
    # Pearson (1907): values Φ(z) of normals correlated by r have ρ = (6/π)·arcsin(r/2)
    for rho in (0.1, 0.5, 0.9):
        r = copula_r(rho, "uniform")
        assert (6 / math.pi) * math.asin(r / 2) == pytest.approx(rho, rel=1e-12)


def test_a_shared_draw_puts_every_part_at_the_same_point_of_its_band():
    parts = [Part("RN1.A", 1e3, -0.001, 0.001, "uniform", 0, 1.0),
             Part("RN1.B", 4e3, -0.001, 0.001, "uniform", 0, 1.0),
             Part("C9", 1e-4, -0.2, 0.8, "normal", 1, 1.0),
             Part("C8", 1e-4, -0.1, 0.1, "truncnormal", 1, 1.0)]
    v = draw(parts, 1000, "uniform", np.random.default_rng(2))
    assert np.allclose(v["RN1.A"] / 1e3, v["RN1.B"] / 4e3, rtol=1e-14)
    # one draw mapped onto two distributions: comonotone (the same rank in every sample)
    assert stats.spearmanr(v["C9"], v["C8"])[0] == pytest.approx(1.0, abs=1e-12)
    assert [len(g) for g in variables(parts)] == [2, 2]


# ---------------------------------------------------------------------------------------
# the spec: tables, globs, errors at their keys
# ---------------------------------------------------------------------------------------

def test_spec_forms_reach_each_part():
    circuit = elaborate(load_netlist(DIVIDER + "C9 out 0 10u\n"))
    tol = parse_tolerances({"default": {"R": "1%", "C": {"tolerance": "10%",
                                                         "distribution": "normal"}},
                            "parts": {"C9": ["-20%", "+80%"]},
                            "tracking": [{"parts": ["R*"]}]}, "t.toml")
    got = {p[0]: p for p in toleranced_parts(tol, circuit)}
    assert (got["R1"].low, got["R1"].high, got["R1"].distribution) == (-0.01, 0.01, "uniform")
    assert (got["C1"].distribution, got["C1"][2]) == ("normal", 0.10)
    assert (got["C9"].low, got["C9"].high, got["C9"][2]) == (-0.2, 0.8, 0.8)
    assert got["R1"].group == got["R2"].group == 0 and got["C1"].group is None


@pytest.mark.parametrize("body, code, key, words", [
    ('[tolerances]\ndefault = { R = "1%" }\n[[tolerances.tracking]]\nparts = ["L*"]\n',
     "spec-271", "tolerances.tracking[0].parts", "matches no toleranced part"),
    ('[tolerances]\ndefault = { R = "1%" }\n[[tolerances.tracking]]\nparts = ["R1"]\n',
     "spec-271", "tolerances.tracking[0].parts", "two or more"),
    ('[tolerances]\ndefault = { R = "1%" }\n[[tolerances.tracking]]\nparts = ["R*"]\n'
     'correlation = 1.5\n', "spec-271", "tolerances.tracking[0].correlation", "(0, 1]"),
    ('[tolerances]\ndefault = { R = "1%" }\n[[tolerances.tracking]]\nparts = ["R*"]\n'
     '[[tolerances.tracking]]\nparts = ["R2", "R1"]\n', "spec-271",
     "tolerances.tracking[1].parts", "already in tracking group 0"),
    ('[tolerances]\ndefault = { R = "1%", C = { tolerance = "5%", distribution = "normal" } }'
     '\n[[tolerances.tracking]]\nparts = ["R1", "C1"]\ncorrelation = 0.5\n', "spec-272",
     "tolerances.tracking[0]", "different distributions"),
    ('[tolerances]\nparts = { C1 = ["20%", "80%"] }\n', "spec-270", "tolerances.parts.C1",
     "minus sign"),
])
def test_bad_tolerance_forms_are_errors_at_their_key(tmp_path, body, code, key, words):
    path = _spec(tmp_path, body + '[analysis]\nmode = ["monte_carlo"]\nsamples = 20\n'
                 '[[limits]]\nkind = "gain"\nband = ["100", "200"]\nmin_db = -10\n', DIVIDER)
    res = check_spec(path)
    assert res.error is not None
    assert re.search(rf"t\.toml(:\d+:\d+)?: error {code}: {re.escape(key)}", res.error), res.error
    assert words in res.error


def test_the_worked_examples_of_spec_format_parse():
    doc = (ROOT / "docs" / "spec-format.md").read_text("utf-8")
    import tomllib
    blocks = [b.split("```")[0] for b in doc.split("```toml\n")[1:] if "[tolerances]" in b
              and "netlist" not in b.split("```")[0]]
    parsed = [parse_tolerances(tomllib.loads(b)["tolerances"], "x.toml") for b in blocks]
    assert any(t.tracking for t in parsed)
    assert any(s.low != -s.high for t in parsed for _, s in t.parts if hasattr(s, "low"))


# ---------------------------------------------------------------------------------------
# worst case: asymmetric ends and tracking groups against closed forms
# ---------------------------------------------------------------------------------------

def _rc_gain_db(r: float, c: float, f: float) -> float:
    """|H| of a first-order RC low-pass in dB: −10·log10(1 + (2π f R C)²) (textbook)."""
    return -10 * math.log10(1 + (2 * math.pi * f * r * c) ** 2)


def test_asymmetric_electrolytic_in_worst_case_uses_each_end(tmp_path):
    body = ('[tolerances]\ndefault = { R = "1%" }\nparts = { C1 = ["-20%", "+80%"] }\n'
            '[analysis]\nmode = ["worst_case", "monte_carlo"]\nsamples = 400\n'
            '[[limits]]\nkind = "gain"\nband = ["1.5k", "2k"]\nmin_db = -20\n')
    res = check_spec(_spec(tmp_path, body, RC_LOWPASS))
    assert res.error is None, res.error
    wc = _tol(res)["worst_case"]["limits"][0]
    f = 2e3  # the band minimum of a falling response is at its upper end
    # monotone in both parts: the corners are exact, R at +1 % with C at +80 % and
    # R at −1 % with C at −20 % (closed form)
    assert wc["corners_min"] == pytest.approx(_rc_gain_db(1.01e3, 1.8e-7, f), abs=1e-9)
    assert wc["corners_max"] == pytest.approx(_rc_gain_db(0.99e3, 0.8e-7, f), abs=1e-9)
    assert wc["decided_by"] == "corners"
    # EVA: ∂G/∂ln R = ∂G/∂ln C = −(20/ln 10)·x²/(1 + x²), x = 2π f R C, at each end
    x2 = (2 * math.pi * f * 1e3 * 1e-7) ** 2
    d = -(20 / math.log(10)) * x2 / (1 + x2)
    g0 = _rc_gain_db(1e3, 1e-7, f)
    assert wc["min"] == pytest.approx(g0 + d * (0.01 + 0.80), rel=1e-6)
    assert wc["max"] == pytest.approx(g0 - d * (0.01 + 0.20), rel=1e-6)
    mc = _tol(res)["monte_carlo"]
    c1 = next(p for p in mc["parts"] if p["part"] == "C1")
    assert (c1["low"], c1["high"], c1["tolerance"]) == (-0.2, 0.8, 0.8)


def test_a_fully_tracking_divider_is_one_variable(tmp_path):
    lim = ('[[limits]]\nkind = "gain"\nband = ["100", "200"]\nmin_db = -6.2\nmax_db = -5.9\n'
           '[analysis]\nmode = ["worst_case", "monte_carlo"]\nsamples = 200\n')
    tracked = check_spec(_spec(tmp_path, '[tolerances]\nparts = { "R*" = "1%" }\n'
                               '[[tolerances.tracking]]\nparts = ["R1", "R2"]\n' + lim,
                               DIVIDER))
    assert tracked.error is None, tracked.error
    wc = _tol(tracked)["worst_case"]
    assert (wc["parts"], wc["variables"], wc["corners"]) == (2, 1, 2)
    half = 20 * math.log10(0.5)  # R2/(R1 + R2) does not move when both move together
    row = wc["limits"][0]
    assert row["corners_min"] == pytest.approx(half, abs=1e-6)
    assert row["corners_max"] == pytest.approx(half, abs=1e-6)
    assert row["min"] == pytest.approx(half, abs=1e-6)
    mc = _tol(tracked)["monte_carlo"]
    assert mc["tracking"][0]["sample_correlation"] == pytest.approx(1.0, abs=1e-12)
    assert mc["yield"] == 1.0
    # the same divider with independent resistors: R1 at +1 % against R2 at −1 %
    free = check_spec(_spec(tmp_path, '[tolerances]\nparts = { "R*" = "1%" }\n' + lim,
                            DIVIDER))
    row = _tol(free)["worst_case"]["limits"][0]
    assert row["corners_min"] == pytest.approx(20 * math.log10(0.99 / 2.0), abs=1e-6)


def test_tracking_shows_in_the_json_and_the_pdf(tmp_path, capsys):
    import pypdf
    body = ('[tolerances]\ndefault = { R = "1%", C = { tolerance = "10%", distribution = '
            '"normal" } }\n[[tolerances.tracking]]\nparts = ["R*"]\ncorrelation = 0.9\n'
            '[analysis]\nmode = ["worst_case", "monte_carlo"]\nsamples = 300\n'
            '[[limits]]\nkind = "gain"\nband = ["100", "200"]\nmin_db = -7\n')
    path = _spec(tmp_path, body, DIVIDER)
    out, pdf = tmp_path / "o.json", tmp_path / "pdf"
    rc = main(["check", path, "--json", str(out), "--pdf", str(pdf), "--color", "never"])
    assert rc == 0, capsys.readouterr().err
    doc = json.loads(out.read_text())
    jsonschema.validate(doc, SCHEMA)
    mc = doc["specs"][0]["tolerance"]["monte_carlo"]
    group = mc["tracking"][0]
    assert group["parts"] == ["R1", "R2"] and group["correlation"] == 0.9
    se = (1 - 0.81) / math.sqrt(299)  # standard error of r (Fisher 1915)
    assert abs(group["sample_correlation"] - 0.9) < 5 * se
    text = "".join(p.extract_text() for p in pypdf.PdfReader(pdf / "t.pdf").pages)
    assert "tracking group" in text.lower() and "0.9" in text and "normal" in text


# ---------------------------------------------------------------------------------------
# a tolerance on a .param: the netlist elaborated again, the dependent elements exact
# ---------------------------------------------------------------------------------------

TUNED = """Quillmere test: RC low-pass tuned by a parameter, C = 1/(2 pi fc R)
.param fc=1k
V1 in 0 AC 1
R1 in out 1k
C1 out 0 {1/(2*pi*fc*1k)}
"""

TUNED_LIMIT = ('[analysis]\nmode = ["worst_case", "monte_carlo"]\nsamples = 600\n'
               '[[limits]]\nkind = "gain"\nband = ["1.5k", "2k"]\nmin_db = -9\n')


def _lowpass_db(fc: float, f: float) -> float:
    """First-order low-pass: −10·log10(1 + (f/fc)²) (textbook)."""
    return -10 * math.log10(1 + (f / fc) ** 2)


def test_a_param_tolerance_moves_its_elements_exactly(tmp_path):
    body = '[tolerances]\ndefault = { R = "1%", C = "5%" }\nparams = { fc = "20%" }\n'
    res = check_spec(_spec(tmp_path, body + TUNED_LIMIT, TUNED))
    assert res.error is None, res.error
    tol = _tol(res)
    assert tol["params"] == ["fc"]
    mc = tol["monte_carlo"]
    # C1 follows fc, so the letter default passes over it: only R1 is a part of its own
    assert [p["part"] for p in mc["parts"]] == ["R1"]
    (fc,) = mc["params"]
    assert fc["elements"] == ["C1"] and fc["element_nominal"]["C1"] == pytest.approx(
        1 / (2 * math.pi * 1e3 * 1e3), rel=1e-12)
    # uniform ±20 %: mean 1 kHz, standard error 0.2·1k/√3/√600
    assert abs(fc["sample_mean"] - 1e3) < 5 * 200 / math.sqrt(3) / math.sqrt(600)
    # the worst sample's gain is that of the corner its own C1 and R1 give (closed form)
    worst = mc["limits"][0]
    r1, c1 = worst["worst_values"]["R1"], worst["worst_values"]["C1"]
    assert worst["worst_measured"] == pytest.approx(
        _lowpass_db(1 / (2 * math.pi * r1 * c1), 2e3), abs=1e-9)
    assert 1 / (2 * math.pi * 1.2e3 * 1e3) <= c1 <= 1 / (2 * math.pi * 0.8e3 * 1e3)


def test_a_param_is_one_worst_case_variable_at_its_exact_ends(tmp_path):
    body = '[tolerances]\nparams = { fc = ["-20%", "+10%"] }\n'
    res = check_spec(_spec(tmp_path, body + TUNED_LIMIT, TUNED))
    wc = _tol(res)["worst_case"]
    assert (wc["variables"], wc["corners"]) == (1, 2)
    row = wc["limits"][0]
    # fc at 800 Hz and 1.1 kHz: C1 = 1/(2π fc R) taken from the netlist at each end
    assert row["corners_min"] == pytest.approx(_lowpass_db(800.0, 2e3), abs=1e-9)
    assert row["corners_max"] == pytest.approx(_lowpass_db(1100.0, 2e3), abs=1e-9)


@pytest.mark.parametrize("body, code, key, words", [
    ('params = { gbw = "10%" }\n', "spec-273", "tolerances.params.gbw",
     "defines no global .param gbw (it defines fc)"),
    ('parts = { C1 = "5%" }\nparams = { fc = "10%" }\n', "spec-274", "tolerances.params.fc",
     "C1 depends on fc and has a tolerance of its own"),
    ('params = { fc = ["-120%", "+10%"] }\n', "spec-270", "tolerances.params.fc",
     "lower end must lie in"),
])
def test_bad_param_tolerances_are_errors_at_their_key(tmp_path, body, code, key, words):
    res = check_spec(_spec(tmp_path, "[tolerances]\n" + body + TUNED_LIMIT, TUNED))
    assert res.error is not None
    assert re.search(rf"error {code}: {re.escape(key)}", res.error), res.error
    assert words in res.error


def test_a_param_no_element_depends_on_is_refused(tmp_path):
    net = TUNED.replace(".param fc=1k", ".param fc=1k spare=3")
    res = check_spec(_spec(tmp_path, '[tolerances]\nparams = { spare = "10%" }\n' + TUNED_LIMIT,
                           net))
    assert res.error is not None and "spec-273" in res.error
    assert "no element value depends on .param spare" in res.error


# ---------------------------------------------------------------------------------------
# temperature and ageing
# ---------------------------------------------------------------------------------------

TEMPERATURE = "temperature = { range_c = [-40, 85] }\n"  # reference 25 °C: ΔT −65 … +60 K


def test_temperature_and_ageing_widen_the_worst_case_ends(tmp_path):
    body = ('[tolerances]\n' + TEMPERATURE +
            'default = { R = { tolerance = "0%", tc = "100ppm/K" }, '
            'C = { tolerance = "5%", ageing = ["0%", "+2%"] } }\n'
            '[analysis]\nmode = ["worst_case", "monte_carlo"]\nsamples = 200\n'
            '[[limits]]\nkind = "gain"\nband = ["1.5k", "2k"]\nmin_db = -20\n')
    res = check_spec(_spec(tmp_path, body, RC_LOWPASS))
    assert res.error is None, res.error
    tol = _tol(res)
    r = 1e3 * (1 + 100e-6 * 65)  # the largest |ΔT| of the range is 65 K (at −40 °C)
    row = tol["worst_case"]["limits"][0]
    # the RC corners: R at its hot/cold end, C at +5 % aged +2 % or at −5 % unaged
    assert row["corners_min"] == pytest.approx(_rc_gain_db(r, 1e-7 * 1.05 * 1.02, 2e3),
                                               abs=1e-9)
    assert row["corners_max"] == pytest.approx(
        _rc_gain_db(1e3 * (1 - 100e-6 * 65), 0.95e-7, 2e3), abs=1e-9)
    parts = {p["part"]: p for p in tol["monte_carlo"]["parts"]}
    assert parts["C1"]["worst_high"] == pytest.approx(1.05 * 1.02 - 1, rel=1e-12)
    assert parts["R1"]["tc"] == [-1e-4, 1e-4]
    assert tol["temperature"] == {"range_c": [-40.0, 85.0], "reference_c": 25.0}
    t = tol["monte_carlo"]["temperature"]
    assert -40 <= t["min_c"] < t["mean_c"] < t["max_c"] <= 85


def test_netlist_tc1_tc2_drift_over_the_stated_range(tmp_path):
    net = RC_LOWPASS.replace("R1 in out 1k", "R1 in out 1k TC1=1e-3 TC2=1e-5")
    body = ('[tolerances]\n' + TEMPERATURE + '[analysis]\nmode = ["worst_case", '
            '"monte_carlo"]\nsamples = 50\n[[limits]]\nkind = "gain"\nband = ["1.5k", "2k"]'
            '\nmin_db = -20\n')
    res = check_spec(_spec(tmp_path, body, net))
    assert res.error is None, res.error
    tol = _tol(res)
    # g(T) = 1 + TC1·(T − 27) + TC2·(T − 27)², relative to g(27) = 1 (the netlist's 27 °C):
    # least at the vertex T = 27 − TC1/(2·TC2) = −23 °C (0.975), greatest at 85 °C
    g = lambda t: 1 + 1e-3 * (t - 27) + 1e-5 * (t - 27) ** 2  # noqa: E731
    (r1,) = tol["monte_carlo"]["parts"]
    assert r1["tc12"] == [1e-3, 1e-5]
    assert r1["worst_low"] == pytest.approx(g(-23) - 1, abs=1e-12)
    assert r1["worst_high"] == pytest.approx(g(85) - 1, abs=1e-12)
    row = tol["worst_case"]["limits"][0]
    assert row["corners_min"] == pytest.approx(_rc_gain_db(1e3 * g(85), 1e-7, 2e3), abs=1e-9)
    assert row["corners_max"] == pytest.approx(_rc_gain_db(1e3 * g(-23), 1e-7, 2e3), abs=1e-9)


def test_the_temperature_draw_has_the_moments_of_its_model():
    from netcheck.analyses.part_spread import drift
    t_range = (-40.0, 85.0, 25.0)
    parts = [Part("R1", 1e3, 0.0, 0.0, "uniform", tc=(-1e-4, 1e-4), temperature=t_range),
             Part("R2", 1e3, 0.0, 0.0, "uniform", tc=(-1e-4, 1e-4), temperature=t_range),
             Part("C1", 1e-9, 0.0, 0.0, "uniform", ageing=(0.0, 0.02))]
    rng = np.random.default_rng(4)
    values = draw(parts, N, "uniform", rng)
    t = drift(parts, values, N, rng)
    # x = c·(T − 25), c ~ U(−a, a), T ~ U(−40, 85) independent: E[x] = 0,
    # Var x = (a²/3)·(Var T + (E T − 25)²) with Var T = 125²/12 (independent calculation)
    a, mean_t, var_t = 1e-4, 22.5, 125 ** 2 / 12
    x = values["R1"] / 1e3 - 1
    sd = math.sqrt(a * a / 3 * (var_t + (mean_t - 25) ** 2))
    assert abs(x.mean()) < 5 * sd / math.sqrt(N)
    # standard error of the sd: σ·√((κ + 2)/(4N)), κ the excess kurtosis of x = c·s:
    # E x⁴/(E x²)² = (E c⁴/(E c²)²)·(E s⁴/(E s²)²), 9/5 for the uniform c, and s = T − 25
    # uniform on [−65, 60] with E s^k = (60^(k+1) − (−65)^(k+1))/((k + 1)·125)
    moment = lambda k: (60 ** (k + 1) - (-65) ** (k + 1)) / ((k + 1) * 125)  # noqa: E731
    kappa = 1.8 * moment(4) / moment(2) ** 2 - 3
    assert abs(x.std() - sd) < 5 * sd * math.sqrt((kappa + 2) / (4 * N))
    assert abs(t.mean() - mean_t) < 5 * math.sqrt(var_t / N)
    # one temperature per sample for every part: R1 and R2 drift together in sign only as
    # far as their independent coefficients allow, so their correlation is 0 (E[c1 c2] = 0)
    assert abs(np.corrcoef(values["R1"], values["R2"])[0, 1]) < 5 / math.sqrt(N)
    y = values["C1"] / 1e-9 - 1  # ageing U(0, 2 %): mean 1 %, sd 2 %/√12
    assert abs(y.mean() - 0.01) < 5 * 0.02 / math.sqrt(12 * N)


@pytest.mark.parametrize("body, key, words", [
    ('default = { C = { tolerance = "5%", tc = "30ppm/K" } }\n', "tolerances.default.C.tc",
     "needs the temperature range"),
    (TEMPERATURE + 'default = { C = { tolerance = "5%", tc = "-30ppm/K" } }\n',
     "tolerances.default.C.tc", "a single coefficient is a ± band"),
    (TEMPERATURE + 'default = { C = { tolerance = "5%", tc = 30 } }\n',
     "tolerances.default.C.tc", "write ppm/K"),
    ('temperature = { range_c = [-40] }\n', "tolerances.temperature.range_c", "expected [min, max]"),
])
def test_bad_temperature_forms_are_errors_at_their_key(tmp_path, body, key, words):
    res = check_spec(_spec(tmp_path, "[tolerances]\n" + body + '[[limits]]\nkind = "gain"\n'
                           'band = ["100", "200"]\nmin_db = -10\n', RC_LOWPASS))
    assert res.error is not None
    assert re.search(rf"error spec-2\d\d: {re.escape(key)}", res.error), res.error
    assert words in res.error


def test_a_fully_tracking_group_drifts_as_one():
    from netcheck.analyses.part_spread import drift
    t_range = (-20.0, 70.0, 25.0)
    net = dict(distribution="uniform", group=0, correlation=1.0, tc=(-25e-6, 25e-6),
               temperature=t_range, ageing=(-0.002, 0.002))
    parts = [Part("R1", 10e3, -0.005, 0.005, **net), Part("R2", 20e3, -0.005, 0.005, **net),
             Part("R3", 1e3, -0.005, 0.005, "uniform", tc=(-25e-6, 25e-6),
                  temperature=t_range, ageing=(-0.002, 0.002))]
    rng = np.random.default_rng(9)
    values = draw(parts, 5000, "uniform", rng)
    drift(parts, values, 5000, rng)
    # the same point of the same bands, the same temperature: the ratio does not move
    assert np.allclose(values["R2"] / values["R1"], 2.0, rtol=1e-13)
    # the part outside the group drifts on its own (independent draws: r ≈ 0 ± 5/√n)
    assert abs(np.corrcoef(values["R1"], values["R3"])[0, 1]) < 5 / math.sqrt(4999)


def test_a_param_tolerance_on_a_circuit_with_a_transistor(tmp_path):
    # each sample elaborated again and its operating point solved again; the transistor
    # itself has no value to follow, so only the collector resistor does
    net = """Quillmere test: common-emitter stage, collector resistor set by a parameter
.param rc=4.7k
VCC vcc 0 DC 12
V1 in 0 AC 1
C1 in b 10u
R1 vcc b 100k
R2 b 0 22k
RC vcc out {rc}
RE e 0 1k
CE e 0 100u
Q1 out b e qm_npn
.model qm_npn NPN(IS=1e-15 BF=200 VAF=100)
"""
    body = ('[tolerances]\ndefault = { R = "1%" }\nparams = { rc = "5%" }\n'
            '[analysis]\nmode = ["worst_case", "monte_carlo"]\nsamples = 20\n'
            '[[limits]]\nkind = "gain"\nband = ["1k", "2k"]\nmin_db = 20\n')
    res = check_spec(_spec(tmp_path, body, net, sweep=("100", "100k", 20)))
    assert res.error is None, res.error
    tol = _tol(res)
    assert tol["monte_carlo"]["params"][0]["elements"] == ["RC"]
    assert "RC" not in {p["part"] for p in tol["monte_carlo"]["parts"]}
    assert tol["monte_carlo"]["device_regions"][0]["device"] == "Q1"
    assert tol["worst_case"]["variables"] == 4  # R1, R2, RE and .param rc
    # the worst sample's collector resistor lies in the parameter's band
    worst = tol["monte_carlo"]["limits"][0]
    assert 0.95 * 4.7e3 <= worst["worst_values"]["RC"] <= 1.05 * 4.7e3


def test_a_part_that_only_drifts_and_a_written_plus_minus():
    tol = parse_tolerances({"temperature": {"range_c": [0, 50]},
                            "parts": {"C3": {"tc": "±30ppm/K"}, "C4": {"ageing": "1%"}}},
                           "t.toml")
    spreads = dict(tol.parts)
    assert (spreads["C3"].low, spreads["C3"].high, spreads["C3"].tc) == (0.0, 0.0,
                                                                         (-3e-5, 3e-5))
    assert spreads["C4"].ageing == (-0.01, 0.01)
    # over 0 … 50 °C about 25 °C, ±30 ppm/K moves C3 by at most 30e-6 × 25 K either way
    part = Part("C3", 1e-9, 0.0, 0.0, tc=(-3e-5, 3e-5), temperature=(0.0, 50.0, 25.0))
    assert part.worst_ends() == pytest.approx((-7.5e-4, 7.5e-4), rel=1e-12)
