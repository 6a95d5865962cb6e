"""Tolerance analyses against the law of propagation of uncertainty and closed forms."""

from __future__ import annotations

import dataclasses
import math
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from circuits import C, L, R
from circuits import SERIES_RLC as NETLIST
from netcheck import read_netlist
from netcheck.mna.assemble import assemble
from netcheck.analyses.nominal import check_spec
from netcheck.exceptions import SpecError
from netcheck.result import Status
from netcheck.mna.sensitivity import adjoint_sensitivities
from netcheck.analyses.tolerance import draw, wilson_interval
from netcheck.spec.tolerances import parse_analysis, parse_tolerances


def _spec(tmp_path: Path, tolerances: str, analysis: str, limits: str = "") -> str:
    (tmp_path / "t.cir").write_text(NETLIST)
    text = f"""netlist = "t.cir"
source = "V1"
output = "out"
[sweep]
start = "10k"
stop = "200k"
points_per_decade = 100
[tolerances]
{tolerances}
[analysis]
{analysis}
[[limits]]
kind = "resonance"
q = [1, 100]
{limits}
"""
    path = tmp_path / "t.toml"
    path.write_text(text)
    return str(path)


def _tol(result):
    return dict(result.extra)["tolerance"]


def test_monte_carlo_spread_of_f0_follows_gum(tmp_path):
    # JCGM 100:2008 (GUM), law of propagation of uncertainty, for f0 = 1/(2 pi sqrt(LC)):
    #   u(f0)/f0 = 1/2 sqrt(u(L)^2/L^2 + u(C)^2/C^2)
    # with uniform tolerances +-t the standard uncertainty is t/sqrt(3) (GUM 4.3.7).
    tl, tc = 0.03, 0.02
    path = _spec(tmp_path, f'parts = {{ L1 = "{tl * 100}%", C1 = "{tc * 100}%" }}',
                 'mode = ["monte_carlo"]\nsamples = 20000\nseed = 3')
    res = check_spec(path)
    assert res.status is Status.PASS, res.error
    m = _tol(res)["monte_carlo"]["measurements"]["f_center_hz"]
    expected = 0.5 * math.sqrt((tl / math.sqrt(3)) ** 2 + (tc / math.sqrt(3)) ** 2)
    assert m["std"] / m["mean"] == pytest.approx(expected, rel=0.05)


def test_worst_case_f0_corners_are_exact(tmp_path):
    # f0 = 1/(2 pi sqrt(L C)) is monotone in L and C, so its extremes over +-t are at
    # L(1-t)C(1-t) and L(1+t)C(1+t) exactly (series RLC closed form, textbook).
    t = 0.05
    path = _spec(tmp_path, 'parts = { L1 = "5%", C1 = "5%" }', 'mode = ["worst_case"]',
                 'center = "33.4k"\ncenter_tolerance = "20%"')
    res = check_spec(path)
    wc = {e["name"]: e for e in _tol(res)["worst_case"]["limits"]}["resonance: centre"]
    hi = 1 / (2 * math.pi * math.sqrt(L * (1 - t) * C * (1 - t)))
    lo = 1 / (2 * math.pi * math.sqrt(L * (1 + t) * C * (1 + t)))
    assert wc["corners_max"] == pytest.approx(hi, rel=1e-9)
    assert wc["corners_min"] == pytest.approx(lo, rel=1e-9)
    # the linear EVA brackets f0*(1 +- t) (first order), close to but not equal to the corners
    f0 = 1 / (2 * math.pi * math.sqrt(L * C))
    assert wc["max"] == pytest.approx(f0 * (1 + t), rel=1e-5)
    assert wc["eva_differs"] is True


def test_same_seed_same_result_and_different_seed_differs(tmp_path):
    path = _spec(tmp_path, 'default = { L = "10%", C = "5%" }',
                 'mode = ["monte_carlo"]\nsamples = 500\nseed = 11')
    a, b = check_spec(path), check_spec(path)
    assert _tol(a) == _tol(b)
    Path(path).write_text(Path(path).read_text().replace("seed = 11", "seed = 12"))
    c = check_spec(path)
    assert _tol(c)["monte_carlo"]["measurements"] != _tol(a)["monte_carlo"]["measurements"]


def test_draw_is_reproducible_and_bounded():
    parts = [("R1", 100.0, 0.01), ("C1", 1e-9, 0.05)]
    a = draw(parts, 1000, "truncnormal", np.random.default_rng(5))
    b = draw(parts, 1000, "truncnormal", np.random.default_rng(5))
    assert all(np.array_equal(a[k], b[k]) for k in a)
    assert np.all(np.abs(a["C1"] / 1e-9 - 1) <= 0.05)
    u = draw(parts, 20000, "normal", np.random.default_rng(1))
    # tolerance = 3 sigma for the normal distribution (common practice, no source)
    assert np.std(u["C1"] / 1e-9 - 1) == pytest.approx(0.05 / 3, rel=0.03)


@pytest.mark.parametrize("passed,n", [(95, 100), (0, 50), (50, 50), (1999, 2000)])
def test_wilson_interval_matches_scipy(passed, n):
    # independent reference: scipy.stats.binomtest(...).proportion_ci(method="wilson")
    ci = stats.binomtest(passed, n).proportion_ci(confidence_level=0.95, method="wilson")
    lo, hi = wilson_interval(passed, n)
    assert lo == pytest.approx(ci.low, abs=1e-12)
    assert hi == pytest.approx(ci.high, abs=1e-12)


@pytest.mark.parametrize("seed", range(6))
def test_adjoint_sensitivities_match_central_differences(seed):
    # Director & Rohrer 1969 adjoint sensitivities against central finite differences of
    # direct solves, on random ladder-like RLC networks with a controlled source.
    rng = np.random.default_rng(seed)
    lines = ["random", "V1 n0 0 AC 1"]
    for k in range(4):
        lines.append(f"R{k} n{k} n{k + 1} {rng.uniform(10, 1000)!r}")
        lines.append(f"C{k} n{k + 1} 0 {rng.uniform(1e-9, 1e-7)!r}")
        lines.append(f"L{k} n{k + 1} 0 {rng.uniform(1e-4, 1e-2)!r}")
    lines.append(f"E1 out 0 n4 0 {rng.uniform(0.5, 5)!r}")
    lines.append("RO out 0 1k")
    ckt = read_netlist("\n".join(lines) + "\n")
    system = assemble(ckt, "V1", "out")
    parts = [(e.name, e.value, 0.01) for e in ckt.elements if e.letter in "RLCE"]
    f = np.array([1e3, 1e4, 3e4])
    h, dh = adjoint_sensitivities(system, parts, f)
    for k, (name, v, _) in enumerate(parts):
        step = 1e-6 * v
        hp = read_netlist("\n".join(lines) + "\n").ac("V1", "out", freqs=f)
        vals_p = _solve_with(ckt, name, v + step, f)
        vals_m = _solve_with(ckt, name, v - step, f)
        fd = (vals_p - vals_m) / (2 * step)
        np.testing.assert_allclose(dh[:, k], fd, rtol=1e-5, atol=1e-12 * np.abs(hp.transfer).max() / v)


def _solve_with(ckt, name, value, f):
    from netcheck.mna.assemble import Stamper
    system = assemble(ckt, "V1", "out")
    st = Stamper(ckt, {name: value})
    st.stamp_all()
    g, c = st.sparse("G").toarray(), st.sparse("C").toarray()
    a = g[None] + (2j * np.pi * f)[:, None, None] * c[None]
    x = np.linalg.solve(a, np.broadcast_to(system.b, (f.size, system.size))[..., None])[..., 0]
    return x @ system.l


class TestSpecKeys:
    def test_unknown_tolerance_key_suggests(self):
        with pytest.raises(SpecError) as info:
            parse_tolerances({"defualt": {}}, "s.toml")
        assert "tolerances.defualt" in str(info.value) and "did you mean 'default'" in str(info.value)

    def test_bad_letter_and_percent(self):
        with pytest.raises(SpecError, match="tolerances.default.X"):
            parse_tolerances({"default": {"X": "1%"}}, "s.toml")
        with pytest.raises(SpecError, match="tolerances.parts.C1"):
            parse_tolerances({"parts": {"C1": "150%"}}, "s.toml")

    def test_analysis_modes_and_yield(self):
        a = parse_analysis({"mode": ["monte_carlo"], "samples": 10, "seed": 2,
                            "yield_min": 0.9}, "s.toml")
        assert (a.modes, a.samples, a.seed, a.yield_min) == (("monte_carlo",), 10, 2, 0.9)
        with pytest.raises(SpecError, match="analysis.mode"):
            parse_analysis({"mode": ["everything"]}, "s.toml")
        with pytest.raises(SpecError, match="analysis.yield_min"):
            parse_analysis({"yield_min": 1.5}, "s.toml")
        assert parse_analysis({"yield_min": "95 %"}, "s.toml").yield_min == pytest.approx(0.95)
        for bad in ("150%", "ninety%"):
            with pytest.raises(SpecError, match="analysis.yield_min"):
                parse_analysis({"yield_min": bad}, "s.toml")

    def test_unknown_part_is_an_error_result(self, tmp_path):
        path = _spec(tmp_path, 'parts = { C9 = "1%" }', 'mode = ["monte_carlo"]\nsamples = 10')
        res = check_spec(path)
        assert res.status is Status.ERROR and "C9" in res.error


def test_yield_limit_fails_when_yield_is_low(tmp_path):
    # Q of the series section = w0 L / R = sqrt(L/C)/R = 11.76 nominal (textbook); a tight
    # Q window around it with 10 % parts cannot reach 99 % yield.
    path = _spec(tmp_path, 'default = { L = "10%", C = "10%", R = "5%" }',
                 'mode = ["monte_carlo"]\nsamples = 400\nseed = 1\nyield_min = 0.99',
                 '')
    Path(path).write_text(Path(path).read_text().replace("q = [1, 100]", "q = [11.5, 12.0]"))
    res = check_spec(path)
    row = next(r for r in res.limits if r.kind == "yield")
    assert row.status is Status.FAIL and 0.0 < row.measured < 0.99
    mc = _tol(res)["monte_carlo"]
    assert mc["yield"] == row.measured and mc["yield_ci"][0] <= mc["yield"] <= mc["yield_ci"][1]


def test_monte_carlo_worst_capacitor_stress_matches_closed_form(tmp_path):
    # Series RLC driven by A volts peak: |V_C| peaks at A Q / sqrt(1 - 1/(4 Q^2)) with
    # Q = sqrt(L/C)/R (derived from |V_C/V_in| = 1/|1 - w^2 LC + j w RC|; textbook
    # resonance). Q grows as C shrinks, so the worst sample is the one with the smallest C.
    path = _spec(tmp_path, 'parts = { C1 = "5%" }',
                 'mode = ["monte_carlo"]\nsamples = 300\nseed = 4')
    text = Path(path).read_text() + ('\n[[stress]]\nsource_amplitude = "2"\nparts = "C1"\n'
                                     'max_voltage = "100"\n')
    Path(path).write_text(text)
    res = check_spec(path)
    mc = _tol(res)["monte_carlo"]
    (entry,) = mc["stress"]
    values = draw([("C1", C, 0.05)], 300, "uniform", np.random.default_rng(4))["C1"]
    c_min = values.min()
    assert entry["sample"] == int(np.argmin(values))
    q = math.sqrt(L / c_min) / R
    expected = 2 * q / math.sqrt(1 - 1 / (4 * q * q))
    assert entry["peak"] == pytest.approx(expected, rel=1e-8)
    nominal = next(r for r in res.limits if r.name == "stress: C1 voltage")
    worst = next(r for r in res.limits if r.name == "Monte Carlo worst: stress: C1 voltage")
    assert worst.measured == entry["peak"] > nominal.measured


def test_tolerance_and_stress_json_follow_the_schema(tmp_path):
    # the fixed JSON contract (docs/result.schema.json, JSON Schema 2020-12, validated
    # with the jsonschema package as an outside reference implementation)
    import json

    import jsonschema

    from netcheck.render.jsonreport import to_dict
    from netcheck.result import CheckResult

    root = Path(__file__).resolve().parents[2]
    text = (root / "specs/rx40k_tolerance.toml").read_text().replace(
        "samples = 2000", "samples = 200").replace("../sample_netlists/rx40k.cir", "rx40k.cir")
    # the netlist beside the spec: the spec's design root is its own folder here
    (tmp_path / "rx40k.cir").write_bytes((root / "sample_netlists/rx40k.cir").read_bytes())
    spec = tmp_path / "t.toml"
    spec.write_text(text)
    doc = to_dict(CheckResult((check_spec(str(spec)),), "0", ""))
    schema = json.loads((root / "docs/result.schema.json").read_text())
    jsonschema.validate(doc, schema)
    entry = doc["specs"][0]
    mc, wc = entry["tolerance"]["monte_carlo"], entry["tolerance"]["worst_case"]
    assert mc["samples"] == 200 and len(mc["yield_ci"]) == 2 and wc["method"] == "eva"
    assert {"f_peak_hz", "q", "f_center_hz"} <= set(mc["measurements"]) & set(wc["measurements"])
    assert entry["stress"][0]["part"] == "C1" and mc["stress"][0]["part"] == "C1"


def test_monte_carlo_finds_narrow_peaks_between_grid_points(tmp_path):
    # V1 feeds R1 (output across it) through LP in parallel with a series L-C, so
    # H = R1/(R1 + Zs), Zs = jwLP || (jwL + 1/(jwC)): Zs = 0 at w0 = 1/sqrt(LC), where
    # |H| = 1 (0 dB) exactly, whatever L and C are, while away from w0 the response is a
    # low-pass floor R1/|R1 + jwLP| falling through -16 dB at 10 kHz (algebra by hand).
    # The spike is far narrower than a 5-points-per-decade grid and sits on the falling
    # slope, away from the grid maximum, so only each sample's own pole frequencies
    # reveal it: every sample must fail "gain <= -10 dB".
    (tmp_path / "q.cir").write_text(
        "Quillmere peaking section\nV1 in 0 AC 1\nLP in out 100u\nL1 in a 10m\n"
        "C1 a out 2.5n\nR1 out 0 1\n")
    (tmp_path / "q.toml").write_text("""netlist = "q.cir"
source = "V1"
output = "out"
[sweep]
start = "1k"
stop = "1meg"
points_per_decade = 5
[tolerances]
parts = { L1 = "5%", C1 = "5%" }
[analysis]
mode = ["monte_carlo"]
samples = 200
seed = 9
[[limits]]
kind = "gain"
band = ["10k", "1meg"]
max_db = -10
""")
    res = check_spec(str(tmp_path / "q.toml"))
    mc = _tol(res)["monte_carlo"]
    assert mc["limits"][0]["yield"] == 0.0
    assert mc["limits"][0]["worst_measured"] == pytest.approx(0.0, abs=1e-6)
    assert mc["limits"][0]["margin_p99"] == pytest.approx(-10.0, abs=1e-6)


def test_monte_carlo_phase_limit_matches_per_sample_checks(tmp_path):
    # A phase limit over a band holding the resonance (so pole seeds are used): each
    # sample's batched phase extreme equals a nominal check of that sample's circuit.
    from netcheck.spec import load_spec
    from netcheck.analyses.tolerance import run_samples, with_values
    from netcheck.analyses.nominal import evaluate
    path = _spec(tmp_path, 'default = { L = "5%", C = "5%" }', 'mode = ["monte_carlo"]',
                 '[[limits]]\nkind = "phase"\nband = ["30k", "50k"]\nrange_deg = [-80, 80]')
    spec = load_spec(path)
    ckt = read_netlist(NETLIST)
    system = assemble(ckt, "V1", "out")
    values = draw([("C1", C, 0.05), ("L1", L, 0.05)], 12, "uniform", np.random.default_rng(4))
    _, measured, _, _, _ = run_samples(system, spec, values, 12, 2**28)
    name = "phase 30.00–50.00 kHz"
    plain = dataclasses.replace(spec, text="")
    for k in range(12):
        one = with_values(ckt, {n: v[k] for n, v in values.items()})
        r = {x.name: x for x in evaluate(plain, one).limits}[name]
        assert measured[name][k] == pytest.approx(r.measured, abs=1e-6)


def test_monte_carlo_on_the_sparse_path_matches_per_sample_checks(tmp_path):
    # A system over 300 unknowns takes the sparse path: each sample is factored by
    # SuperLU on one shared pattern. Its batched verdicts and measurements must equal a
    # nominal check of each sample's own circuit (which uses scipy's SuperLU directly).
    from netcheck.mna.solve import DENSE_MAX
    from netcheck.spec import load_spec
    from netcheck.analyses.tolerance import run_samples, with_values
    from netcheck.analyses.nominal import evaluate
    chain = "\n".join(f"RC{k} n{k} n{k + 1} 1" for k in range(DENSE_MAX))
    net = (f"Quillmere test: long chain into a series RLC\nV1 n0 0 AC 1\n{chain}\n"
           f"E1 b 0 n{DENSE_MAX} 0 1\nL1 b a {L!r}\nC1 a out {C!r}\nR1 out 0 {R!r}\n")
    (tmp_path / "big.cir").write_text(net)
    path = tmp_path / "big.toml"
    path.write_text(Path(_spec(tmp_path, "", "")).read_text().replace('"t.cir"', '"big.cir"'))
    spec = load_spec(path)
    ckt = read_netlist(net)
    system = assemble(ckt, "V1", "out")
    assert system.size > DENSE_MAX
    values = draw([("C1", C, 0.05), ("L1", L, 0.05), ("R1", R, 0.05)], 4, "uniform",
                  np.random.default_rng(8))
    margins, measured, meas, _, _ = run_samples(system, spec, values, 4, 2**28)
    plain = dataclasses.replace(spec, text="")
    for k in range(4):
        one = evaluate(plain, with_values(ckt, {n: v[k] for n, v in values.items()}))
        r = {x.name: x for x in one.limits}["resonance: Q"]
        assert measured["resonance: Q"][k] == pytest.approx(r.measured, rel=1e-9)
        assert margins["resonance: Q"][k] == pytest.approx(r.margin, rel=1e-9, abs=1e-12)
        # and against the closed form Q = (1/R) sqrt(L/C) of the series RLC (textbook)
        q = math.sqrt(values["L1"][k] / values["C1"][k]) / values["R1"][k]
        assert measured["resonance: Q"][k] == pytest.approx(q, rel=1e-9)
