"""Tolerance, worst-case, Monte Carlo and part-stress features pushed from the user's side.

Each test writes a small spec (and netlist) the way a filter engineer would, checks that
bad input becomes a located error (never a traceback, never exit status 3), and checks
numbers against closed forms or the GUM where one exists. The last section holds the
defects a review found, one test each (each failed before its fix).
"""

from __future__ import annotations

import json
import math
import re
import xml.etree.ElementTree as ET
from pathlib import Path

import jsonschema
import pytest

from circuits import C, L, R
from circuits import SERIES_RLC, split_rc_chain as _chain
from netcheck.cli import main
from netcheck.analyses.nominal import check_spec
from netcheck.result import Status

ROOT = Path(__file__).resolve().parents[2]
SCHEMA = json.loads((ROOT / "docs" / "result.schema.json").read_text("utf-8"))

Q_LIMIT = '[[limits]]\nkind = "resonance"\nq = [1, 100]\n'
TOL3 = '[tolerances]\ndefault = { R = "1%", L = "3%", C = "2%" }\n'

#: series RLC of tests/circuits.py: f0 = 1/(2 pi sqrt(LC)), Q = sqrt(L/C)/R (textbook)
F0 = 1.0 / (2 * math.pi * math.sqrt(L * C))
Q0 = math.sqrt(L / C) / R

#: a parallel tank driven by a current: f0 = 159.15 kHz, Q = R sqrt(C/L) = 10
TANK = """Quillmere test: parallel tank driven by a current
I1 0 out AC 1
R1 out 0 1k
L1 out 0 100u
C1 out 0 10n
"""

#: a first-order RC low-pass: corner 1/(2 pi R C) = 1.5915 kHz
RC_LOWPASS = """Quillmere test: RC low-pass
V1 in 0 AC 1
R1 in out 1k
C1 out 0 100n
"""


def _spec(tmp_path: Path, body: str, netlist: str = SERIES_RLC, sweep=("10k", "200k", 100),
          source: str = "V1", top: str = "", name: str = "t") -> str:
    """Write ``name``.cir and ``name``.toml (tables of ``body`` after [sweep]); the spec path."""
    (tmp_path / f"{name}.cir").write_text(netlist)
    text = (f'netlist = "{name}.cir"\nsource = "{source}"\noutput = "out"\n{top}\n'
            f'[sweep]\nstart = "{sweep[0]}"\nstop = "{sweep[1]}"\n'
            f"points_per_decade = {sweep[2]}\n\n{body}")
    path = tmp_path / f"{name}.toml"
    path.write_text(text)
    return str(path)


def _tol(result) -> dict:
    return dict(result.extra)["tolerance"]


def _rows(result, prefix: str = "") -> dict:
    return {r.name: r for r in result.limits if r.name.startswith(prefix)}


def _cli(capsys, *args: str) -> tuple[int, str, str]:
    rc = main(["check", *args, "--color", "never"])
    out = capsys.readouterr()
    return rc, out.out, out.err


def _refused(result, *words: str) -> None:
    """The spec was refused with a located error (file:line) that says all of ``words``."""
    assert result.error is not None and re.search(r"t\.toml:\d+:\d+: error spec-2", result.error)
    for word in words:
        assert word in result.error, (word, result.error)


def _line_of(path: str, needle: str) -> int:
    lines = Path(path).read_text().splitlines()
    return next(i for i, line in enumerate(lines, 1) if needle in line)


def _rc_corner(fc: float, f_start: float) -> float:
    """Half-power corner of a first-order low-pass measured against its gain at the sweep
    start f_start (the peak of the sweep): |H|² = 1/(1 + (f/fc)²) falls to half of
    |H(f_start)|² at f = fc·sqrt(1 + 2 (f_start/fc)²) (first-order magnitude, textbook)."""
    return fc * math.sqrt(1.0 + 2.0 * (f_start / fc) ** 2)


def _second_order_peak(q: float) -> float:
    """Peak of |1/(1 − x² + j x/Q)| over x: Q/sqrt(1 − 1/(4Q²)) for Q > 1/√2 (textbook
    second-order resonance: capacitor voltage of a series RLC, inductor current of a
    current-driven parallel RLC)."""
    return q / math.sqrt(1.0 - 1.0 / (4.0 * q * q))


# ---------------------------------------------------------------------------------------
# [tolerances]: bad values are located spec errors; odd but valid ones behave
# ---------------------------------------------------------------------------------------

@pytest.mark.parametrize("value, words", [
    ('"100%"', "between 0 % and 100 %"),
    ('"-5%"', "between 0 % and 100 %"),
    ("5", "between 0 % and 100 %"),          # a bare 5 would be 500 %
    ('"abc%"', "'abc' before % is not a number"),
    ('"nan%"', "is not finite"),
    ('"5p"', "not a relative quantity"),     # a scale suffix, not a unit of tolerance
    ("true", "expected a number"),
    # a list is the asymmetric form [lower, upper] (spec-270)
    ("[1]", "spec-270: tolerances.default.R: an asymmetric tolerance is [lower, upper]"),
    ('["+5%", "+10%"]', "spec-270: tolerances.default.R: the lower end must lie in"),
    ('{ distribution = "normal" }', "spec-270: tolerances.default.R.tolerance: missing"),
    ('{ tolerance = "5%", shape = "normal" }', "spec-201: tolerances.default.R.shape: unknown"),
])
def test_bad_tolerance_value_is_a_located_spec_error(tmp_path, value, words):
    path = _spec(tmp_path, f"[tolerances]\ndefault = {{ R = {value} }}\n"
                 '[analysis]\nmode = ["worst_case"]\n' + Q_LIMIT)
    res = check_spec(path)
    assert res.status is Status.ERROR
    assert re.search(r"t\.toml:\d+:\d+: error spec-2\d\d: tolerances\.default\.R", res.error)
    assert words in res.error


def test_bad_tolerance_exits_2_not_3(tmp_path, capsys):
    path = _spec(tmp_path, '[tolerances]\ndefault = { R = "-1%" }\n' + Q_LIMIT)
    rc, _, err = _cli(capsys, path)
    assert rc == 2
    assert "Traceback" not in err and "spec-202" in err


@pytest.mark.parametrize("letter", ["X", "RR", "V"])
def test_default_tolerance_only_by_r_l_c_letter(tmp_path, letter):
    path = _spec(tmp_path, f'[tolerances]\ndefault = {{ {letter} = "5%" }}\n' + Q_LIMIT)
    res = check_spec(path)
    assert res.status is Status.ERROR
    assert f"tolerances.default.{letter}: default tolerances are by element letter" in res.error


def test_percent_with_a_space_reads_as_without(tmp_path):
    a = check_spec(_spec(tmp_path, '[tolerances]\ndefault = { R = "5 %" }\n'
                         '[analysis]\nmode = ["worst_case"]\n' + Q_LIMIT, name="a"))
    b = check_spec(_spec(tmp_path, '[tolerances]\ndefault = { R = "5%" }\n'
                         '[analysis]\nmode = ["worst_case"]\n' + Q_LIMIT, name="b"))
    assert a.error is None and b.error is None
    assert _tol(a)["worst_case"]["limits"] == _tol(b)["worst_case"]["limits"]


def test_zero_tolerances_warn_that_no_analysis_ran(tmp_path):
    path = _spec(tmp_path, '[tolerances]\ndefault = { R = "0%", L = "0 %" }\n'
                 '[analysis]\nmode = ["worst_case", "monte_carlo"]\nsamples = 20\n' + Q_LIMIT)
    res = check_spec(path)
    assert res.status is Status.PASS
    assert "worst_case" not in _tol(res) and "monte_carlo" not in _tol(res)
    assert any("no part has a tolerance" in c.message and c.code == "spec-250"
               for c in res.cautions)


def test_zero_tolerance_per_part_removes_it_from_the_default(tmp_path):
    path = _spec(tmp_path, '[tolerances]\ndefault = { R = "5%", L = "5%", C = "5%" }\n'
                 'parts = { R1 = "0%" }\n[analysis]\nmode = ["monte_carlo"]\nsamples = 2\n'
                 + Q_LIMIT)
    parts = [p["part"] for p in _tol(check_spec(path))["monte_carlo"]["parts"]]
    assert parts == ["C1", "L1"]


def test_parts_glob_matching_nothing_is_nc203(tmp_path):
    path = _spec(tmp_path, '[tolerances]\nparts = { "ZZ*" = "5%" }\n'
                 '[analysis]\nmode = ["worst_case"]\n' + Q_LIMIT)
    res = check_spec(path)
    assert res.status is Status.ERROR
    assert "spec-203" in res.error and "tolerances.parts.ZZ*" in res.error


SUB = """Quillmere test: the series section as a subcircuit
.subckt tank a b
L1 a m 2.2m
C1 m b 7.2n
.ends
V1 in 0 AC 1
X1 in out tank
R1 out 0 47
"""


@pytest.mark.parametrize("parts, expected", [
    ('{ "X1.L1" = "5%" }', ["X1.L1"]),
    ('{ "x1.l1" = "5%" }', ["X1.L1"]),          # names are case-insensitive
    ('{ "X1.*" = "5%" }', ["X1.C1", "X1.L1"]),
    ('{ "*C1" = "5%" }', ["X1.C1"]),              # * crosses the dots
])
def test_subcircuit_parts_by_hierarchical_name_and_glob(tmp_path, parts, expected):
    path = _spec(tmp_path, f"[tolerances]\nparts = {parts}\n"
                 '[analysis]\nmode = ["monte_carlo"]\nsamples = 2\n' + Q_LIMIT, netlist=SUB)
    res = check_spec(path)
    assert res.error is None
    assert [p["part"] for p in _tol(res)["monte_carlo"]["parts"]] == expected


def test_unquoted_dotted_part_name_is_a_clear_error(tmp_path):
    # TOML reads X1.L1 = "5%" as a nested table { X1 = { L1 = "5%" } }
    path = _spec(tmp_path, '[tolerances]\nparts = { X1.L1 = "5%" }\n' + Q_LIMIT, netlist=SUB)
    res = check_spec(path)
    assert res.status is Status.ERROR
    assert "tolerances.parts.X1" in res.error and "got dict" in res.error
    assert '"X1.L1" = "5%"' in res.error  # says how to write it


def test_controlled_source_gain_tolerance_is_exact_at_the_corners(tmp_path):
    net = """Quillmere test: RC into a gain-of-two buffer
V1 in 0 AC 1
R1 in a 1k
C1 a 0 100n
E1 out 0 a 0 2
R2 out 0 1k
"""
    path = _spec(tmp_path, '[tolerances]\nparts = { E1 = "5%" }\n[analysis]\n'
                 'mode = ["worst_case"]\n[[limits]]\nkind = "gain"\nband = ["1", "2"]\n'
                 "min_db = 5\n", netlist=net, sweep=("1", "100k", 20))
    res = check_spec(path)
    wc = _tol(res)["worst_case"]["limits"][0]
    # gain 2·(1 ± 5 %) times the RC's |H| at 2 Hz, 1/sqrt(1 + (2/1591.5)²) (closed form)
    rc_db = -10 * math.log10(1 + (2 * 2 * math.pi * 1e3 * 100e-9) ** 2)
    assert wc["corners_min"] == pytest.approx(20 * math.log10(1.9) + rc_db, abs=1e-9)


# ---------------------------------------------------------------------------------------
# [analysis]: every key validated with its key path
# ---------------------------------------------------------------------------------------

@pytest.mark.parametrize("line, words", [
    ("samples = 1", "analysis.samples: expected a whole number >= 2, got 1"),
    ("samples = 10.5", "analysis.samples: expected a whole number >= 2"),
    ('samples = "100"', "analysis.samples: expected a whole number >= 2"),
    ("seed = -1", "analysis.seed: expected a whole number >= 0, got -1"),
    ("seed = 1.5", "analysis.seed: expected a whole number >= 0"),
    ("seed = true", "analysis.seed: expected a whole number >= 0, got True"),
    ("memory_mib = 8", "analysis.memory_mib: expected a whole number >= 16, got 8"),
    ("yield_min = 0", "analysis.yield_min: must be a fraction in (0, 1]"),
    ("yield_min = 1.5", "analysis.yield_min: must be a fraction in (0, 1]"),
    ("yield_min = -0.1", "analysis.yield_min: must be a fraction in (0, 1]"),
    ("yield_min = true", "analysis.yield_min: expected a number"),
    ('mode = ["montecarlo"]', "analysis.mode: expected a list drawn from"),
    ("mode = []", "analysis.mode: expected a list drawn from"),
    ("mode = [1]", "analysis.mode: expected a list drawn from"),
    ("mode = { a = 1 }", "analysis.mode: expected a list drawn from"),
    ("sample = 10", "did you mean 'samples'?"),
])
def test_bad_analysis_key_is_a_located_spec_error(tmp_path, line, words):
    mode = "" if line.startswith("mode") else 'mode = ["monte_carlo"]\n'
    path = _spec(tmp_path, TOL3 + f"[analysis]\n{mode}{line}\n" + Q_LIMIT)
    res = check_spec(path)
    assert res.status is Status.ERROR
    assert f"t.toml:{_line_of(path, line)}:" in res.error
    assert words in res.error


@pytest.mark.parametrize("line", ["samples = 2", "memory_mib = 16", "seed = 0",
                                  "seed = 123456789012345678901234567890",
                                  'mode = "monte_carlo"', 'yield_min = "0.5"'])
def test_edge_but_valid_analysis_values_run(tmp_path, line):
    head = {"mode": "samples = 8\n", "samples": 'mode = ["monte_carlo"]\n'}.get(
        line.split()[0], 'mode = ["monte_carlo"]\nsamples = 8\n')
    path = _spec(tmp_path, TOL3 + f"[analysis]\n{head}{line}\n" + Q_LIMIT)
    res = check_spec(path)
    assert res.error is None and res.status is Status.PASS
    assert _tol(res)["monte_carlo"]["yield"] == 1.0


def test_results_do_not_depend_on_the_memory_budget(tmp_path):
    # 1500 samples are judged in one chunk with 1 GiB and in several with 16 MiB
    body = (TOL3 + '[analysis]\nmode = ["monte_carlo"]\nsamples = 1500\nseed = 11\n'
            "memory_mib = MEM\n" + '[[limits]]\nkind = "resonance"\ncenter = "40k"\n'
            'center_tolerance = "2%"\nq = [11, 12.5]\n'
            '[[stress]]\nsource_amplitude = "1"\nparts = "C1"\nmax_voltage = "12"\n')
    small = check_spec(_spec(tmp_path, body.replace("MEM", "16"), name="small"))
    large = check_spec(_spec(tmp_path, body.replace("MEM", "1024"), name="large"))
    a, b = _tol(small)["monte_carlo"], _tol(large)["monte_carlo"]
    assert 0 < a["yield"] < 1
    assert json.dumps(a, sort_keys=True) == json.dumps(b, sort_keys=True)


# ---------------------------------------------------------------------------------------
# numbers against outside references
# ---------------------------------------------------------------------------------------

def test_rc_corner_worst_case_is_exact_at_the_corners_and_rss_follows_gum(tmp_path):
    t = 0.05
    path = _spec(tmp_path, '[tolerances]\nparts = { R1 = "5%", C1 = "5%" }\n'
                 '[analysis]\nmode = ["worst_case"]\n[[limits]]\nkind = "corner"\n'
                 'range = ["1k", "2k"]\n', netlist=RC_LOWPASS, sweep=("10", "100k", 20))
    res = check_spec(path)
    wc = _tol(res)["worst_case"]
    entry = wc["limits"][0]
    fc = 1 / (2 * math.pi * 1e3 * 100e-9)
    # f = 1/(2 pi R C) is monotone in R and C: its extremes over ±t are at
    # R(1-t)C(1-t) and R(1+t)C(1+t) exactly (closed form)
    assert entry["corners_max"] == pytest.approx(_rc_corner(fc / (1 - t) ** 2, 10), rel=1e-9)
    assert entry["corners_min"] == pytest.approx(_rc_corner(fc / (1 + t) ** 2, 10), rel=1e-9)
    assert wc["corners"] == 4
    # RSS: JCGM 100:2008 (GUM) 5.1.2 with sensitivity coefficients ∂f/∂ln R = ∂f/∂ln C = -f
    f = entry["measured_nominal"]
    assert entry["rss_max"] - f == pytest.approx(f * t * math.sqrt(2), rel=1e-3)
    # EVA is first order, f (1 ± 2t); the row takes the worse of EVA and the corners on
    # the deciding side (here the upper one: 2 kHz - f_max < f_min - 1 kHz)
    assert entry["min"] == pytest.approx(f * (1 - 2 * t), rel=1e-3)
    assert entry["max"] == pytest.approx(f * (1 + 2 * t), rel=1e-3)
    row = _rows(res, "worst case: ")["worst case: corner (half-power)"]
    assert row.measured == entry["corners_max"]
    assert row.margin == pytest.approx(2000 - entry["corners_max"], rel=1e-12)


@pytest.mark.parametrize("n, corners", [(12, 4096), (13, None)])
def test_corner_enumeration_stops_above_12_parts(tmp_path, n, corners):
    path = _spec(tmp_path, '[tolerances]\ndefault = { R = "1%", C = "5%" }\n'
                 '[analysis]\nmode = ["worst_case"]\n[[limits]]\nkind = "corner"\n'
                 'range = ["100", "10k"]\n', netlist=_chain(n), sweep=("10", "1meg", 20))
    res = check_spec(path)
    wc = _tol(res)["worst_case"]
    assert wc["parts"] == n and wc["corners"] == corners
    entry = wc["limits"][0]
    if corners is None:
        assert "corners_min" not in entry
        return
    # series resistance 1100 Ω ± 1 %, C ± 5 %: the corner extremes in closed form
    rt = (n - 1) * 100.0
    hi = _rc_corner(1 / (2 * math.pi * rt * 0.99 * 100e-9 * 0.95), 10)
    lo = _rc_corner(1 / (2 * math.pi * rt * 1.01 * 100e-9 * 1.05), 10)
    assert entry["corners_max"] == pytest.approx(hi, rel=1e-9)
    assert entry["corners_min"] == pytest.approx(lo, rel=1e-9)


def test_monte_carlo_spread_of_q_follows_gum_product_rule(tmp_path):
    # Q = sqrt(L/C)/R. JCGM 100:2008 (GUM) 5.1.6, a product of powers:
    # (u_Q/Q)² = u_R²/R² + (u_L/2L)² + (u_C/2C)²; a uniform ±t has u = t/sqrt(3) (GUM 4.3.7)
    tr, tl, tc = 0.01, 0.03, 0.02
    path = _spec(tmp_path, TOL3 + '[analysis]\nmode = ["monte_carlo"]\nsamples = 4000\n'
                 "seed = 5\n" + Q_LIMIT)
    m = _tol(check_spec(path))["monte_carlo"]["measurements"]["q"]
    expected = math.sqrt((tr ** 2 + (tl / 2) ** 2 + (tc / 2) ** 2) / 3)
    assert m["std"] / m["mean"] == pytest.approx(expected, rel=0.05)
    assert m["p50"] == pytest.approx(Q0, rel=0.01)


def test_worst_sample_rebuilt_as_a_netlist_measures_the_same(tmp_path):
    path = _spec(tmp_path, TOL3 + '[analysis]\nmode = ["monte_carlo"]\nsamples = 300\n'
                 'seed = 4\n[[limits]]\nkind = "resonance"\ncenter = "40k"\n'
                 'center_tolerance = "2%"\nq = [11, 12.5]\n')
    mc = _tol(check_spec(path))["monte_carlo"]
    for lim in mc["limits"]:
        v = lim["worst_values"]
        net = (f"Quillmere test: worst sample\nV1 in 0 AC 1\nL1 in a {v['L1']!r}\n"
               f"C1 a out {v['C1']!r}\nR1 out 0 {v['R1']!r}\n")
        again = check_spec(_spec(tmp_path, '[[limits]]\nkind = "resonance"\ncenter = "40k"\n'
                                 'center_tolerance = "2%"\nq = [11, 12.5]\n', netlist=net,
                                 name="worst"))
        assert _rows(again)[lim["name"]].measured == pytest.approx(lim["worst_measured"],
                                                                   rel=1e-9)


def test_limit_failing_at_nominal_fails_worst_case_and_yield(tmp_path):
    path = _spec(tmp_path, '[tolerances]\ndefault = { R = "1%", L = "1%", C = "1%" }\n'
                 '[analysis]\nmode = ["worst_case", "monte_carlo"]\nsamples = 50\n'
                 'yield_min = 0.9\n[[limits]]\nkind = "resonance"\nq = [20, 30]\n')
    res = check_spec(path)
    rows = _rows(res)
    assert rows["resonance: Q"].status is Status.FAIL
    assert rows["worst case: resonance: Q"].status is Status.FAIL
    assert rows["Monte Carlo yield (all limits)"].measured == 0.0
    assert rows["Monte Carlo yield (all limits)"].status is Status.FAIL


# ---------------------------------------------------------------------------------------
# [[stress]]
# ---------------------------------------------------------------------------------------

def _stress(amp: str, parts: str, rating: str) -> str:
    return f'[[stress]]\nsource_amplitude = "{amp}"\nparts = "{parts}"\n{rating}\n'


@pytest.mark.parametrize("amp", ["10", "peak:10", "rms:7.0710678118654755",
                                 " RMS : 7.0710678118654755 "])
def test_capacitor_voltage_matches_the_second_order_peak(tmp_path, amp):
    path = _spec(tmp_path, Q_LIMIT + _stress(amp, "C1", 'max_voltage = "250"'))
    res = check_spec(path)
    row = _rows(res)["stress: C1 voltage"]
    # series RLC: peak capacitor voltage V·Q/sqrt(1 - 1/(4Q²)) (textbook); "rms:" is ×√2
    assert row.measured == pytest.approx(10 * _second_order_peak(Q0), rel=1e-9)
    assert row.at_hz == pytest.approx(F0 * math.sqrt(1 - 1 / (2 * Q0 * Q0)), rel=1e-6)


@pytest.mark.parametrize("amp, words", [
    ("pk:10", "unknown amplitude prefix 'pk'"),
    ("rms:", "no value after 'rms'"),
    ("-10", "must be > 0"),
    ("0", "must be > 0"),
])
def test_bad_source_amplitude_is_a_located_spec_error(tmp_path, amp, words):
    path = _spec(tmp_path, Q_LIMIT + _stress(amp, "C1", 'max_voltage = "250"'))
    res = check_spec(path)
    assert res.status is Status.ERROR
    assert f"t.toml:{_line_of(path, 'source_amplitude')}:" in res.error
    assert "stress[0].source_amplitude" in res.error and words in res.error


@pytest.mark.parametrize("parts, rating, words", [
    ("ZZ*", 'max_voltage = "250"', "matches no part"),
    ("C1", 'max_power = "1"', "power is judged on resistors"),
])
def test_stress_on_missing_or_wrong_parts_is_an_error_row(tmp_path, parts, rating, words):
    path = _spec(tmp_path, Q_LIMIT + _stress("10", parts, rating))
    res = check_spec(path)
    assert res.error is None
    row = next(r for r in res.limits if r.kind == "stress")
    assert row.status is Status.ERROR and words in row.message


def test_resistor_power_matches_closed_form(tmp_path):
    path = _spec(tmp_path, Q_LIMIT + _stress("10", "R1", 'max_power = "1"'))
    row = _rows(check_spec(path))["stress: R1 power"]
    # at resonance the series current is V/R; average power (V/R)²R/2 = V²/(2R)
    # (Alexander & Sadiku, Fundamentals of Electric Circuits, ch. 11)
    assert row.measured == pytest.approx(100 / (2 * R), rel=1e-9)
    assert row.status is Status.FAIL


def test_stress_with_a_current_source_stimulus(tmp_path):
    body = ('[[limits]]\nkind = "resonance"\nq = [1, 1000]\n'
            + _stress("1m", "I1", 'max_voltage = "2"')
            + _stress("rms:1m", "L1", 'max_current = "1"')
            + _stress("1m", "R1", 'max_power = "1"'))
    res = check_spec(_spec(tmp_path, body, netlist=TANK, source="I1", sweep=("10k", "1meg", 100)))
    rows = _rows(res, "stress: ")
    # parallel RLC driven by I: |V| = I·R at f0; |I_L| = I·Q/sqrt(1-1/(4Q²)), Q = R sqrt(C/L)
    assert rows["stress: I1 voltage"].measured == pytest.approx(1e-3 * 1e3, rel=1e-9)
    assert rows["stress: L1 current"].measured == pytest.approx(
        math.sqrt(2) * 1e-3 * _second_order_peak(10.0), rel=1e-9)
    assert rows["stress: R1 power"].measured == pytest.approx((1e-3) ** 2 * 1e3 / 2, rel=1e-9)


def test_spec_with_only_stress_and_no_limits(tmp_path, capsys):
    path = _spec(tmp_path, _stress("10", "C1", 'max_voltage = "250"'))
    out = tmp_path / "o.json"
    rc, _, err = _cli(capsys, path, "--json", str(out))
    assert rc == 0, err
    doc = json.loads(out.read_text())
    jsonschema.validate(doc, SCHEMA)
    assert [s["part"] for s in doc["specs"][0]["stress"]] == ["C1"]


# ---------------------------------------------------------------------------------------
# large circuits (sparse engine) and the output files
# ---------------------------------------------------------------------------------------

def _big(n: int) -> str:
    """RC low-pass whose drive node also carries a chain of n resistors (> 300 unknowns);
    an ideal source makes the chain irrelevant to H, so H = 1/(1 + jωRC) exactly."""
    lines = ["Quillmere test: RC low-pass with a long resistive load on the drive",
             "V1 in 0 AC 1", "RA in out 1k", "CA out 0 100n"]
    prev = "in"
    for i in range(n):
        lines.append(f"RB{i} {prev} b{i} 10k")
        prev = f"b{i}"
    lines.append(f"RBE {prev} 0 10k")
    return "\n".join(lines) + "\n"


def test_sparse_circuit_worst_case_and_monte_carlo(tmp_path):
    t = 0.05
    path = _spec(tmp_path, '[tolerances]\nparts = { RA = "5%", CA = "5%" }\n'
                 '[analysis]\nmode = ["worst_case", "monte_carlo"]\nsamples = 3\n'
                 '[[limits]]\nkind = "corner"\nrange = ["1k", "2k"]\n', netlist=_big(300),
                 sweep=("10", "100k", 10))
    res = check_spec(path)
    sweep = dict(res.sweep)
    assert sweep["method"] == "sparse" and sweep["unknowns"] > 300
    fc = 1 / (2 * math.pi * 1e3 * 100e-9)
    entry = _tol(res)["worst_case"]["limits"][0]
    assert entry["corners_max"] == pytest.approx(_rc_corner(fc / (1 - t) ** 2, 10), rel=1e-9)
    assert entry["corners_min"] == pytest.approx(_rc_corner(fc / (1 + t) ** 2, 10), rel=1e-9)
    edges = _tol(res)["monte_carlo"]["histogram"]["edges"]
    assert entry["corners_min"] <= edges[0] and edges[-1] <= entry["corners_max"]


def test_full_run_json_junit_and_pdf(tmp_path, capsys):
    import pypdf
    body = (TOL3 + '[analysis]\nmode = ["nominal", "worst_case", "monte_carlo"]\n'
            "samples = 64\nyield_min = 0.5\n" + '[[limits]]\nkind = "resonance"\n'
            'center = "40k"\ncenter_tolerance = "3%"\nq = [10, 14]\n'
            + _stress("rms:7.07", "C1", 'max_voltage = "250"')
            + _stress("10", "R1", 'max_power = "2"'))
    path = _spec(tmp_path, body)
    out, junit, pdf = tmp_path / "o.json", tmp_path / "o.xml", tmp_path / "pdf"
    rc, _, err = _cli(capsys, path, "--json", str(out), "--junit", str(junit), "--pdf", str(pdf))
    assert rc == 0, err
    doc = json.loads(out.read_text())
    jsonschema.validate(doc, SCHEMA)
    spec = doc["specs"][0]
    assert {"monte_carlo", "worst_case"} <= set(spec["tolerance"])
    suite = ET.parse(junit).getroot().find("testsuite")
    assert int(suite.get("tests")) == len(spec["limits"])
    assert int(suite.get("failures")) == sum(r["status"] == "fail" for r in spec["limits"])
    text = "".join(p.extract_text() for p in pypdf.PdfReader(pdf / "t.pdf").pages)
    assert "Monte Carlo" in text and "Worst case" in text
    assert not re.search(r"(?<![A-Za-z])(-?inf|nan)(?![A-Za-z])", text)


# =======================================================================================
# defects found in review, fixed: each test failed before its fix
# =======================================================================================

def test_huge_sample_count_is_a_spec_error_not_an_internal_error(tmp_path, capsys):
    path = _spec(tmp_path, TOL3 + '[analysis]\nmode = ["monte_carlo"]\n'
                 "samples = 1000000000000\n" + Q_LIMIT)
    rc, _, err = _cli(capsys, path)
    assert rc == 2
    assert "Traceback" not in err and "analysis.samples" in err


BAND_LIMIT = '[[limits]]\nkind = "resonance"\nband = ["39k", "41k"]\nq = [1, 100]\n'


def test_monte_carlo_counts_a_peak_outside_the_band_as_unmeasurable(tmp_path):
    path = _spec(tmp_path, '[tolerances]\nparts = { L1 = "10%" }\n[analysis]\n'
                 'mode = ["monte_carlo"]\nsamples = 400\nseed = 3\n' + BAND_LIMIT)
    mc = _tol(check_spec(path))["monte_carlo"]
    # the peak of the series RLC is at f0 = 1/(2 pi sqrt(L C)) (closed form); with
    # L = L0 (1 + 0.1 u), u ~ U(-1, 1), f0 lies in the band for
    # u in (10((F0/41k)² - 1), 10((F0/39k)² - 1)), and at nominal (as here) a peak at
    # the band end cannot be measured, so those samples must fail
    lo = max(-1.0, 10 * ((F0 / 41e3) ** 2 - 1))
    hi = min(1.0, 10 * ((F0 / 39e3) ** 2 - 1))
    expected = (hi - lo) / 2
    assert abs(mc["yield"] - expected) < 0.1   # binomial sd is 0.025 with 400 samples


def test_worst_case_corner_with_the_peak_outside_the_band_does_not_pass(tmp_path):
    path = _spec(tmp_path, '[tolerances]\nparts = { L1 = "10%" }\n[analysis]\n'
                 'mode = ["worst_case"]\n' + BAND_LIMIT)
    res = check_spec(path)
    # L0 (1 ± 0.1) puts f0 at 38.1 kHz and 42.2 kHz, both outside 39–41 kHz (closed form)
    assert F0 / math.sqrt(1.1) < 39e3 and F0 / math.sqrt(0.9) > 41e3
    assert _rows(res)["worst case: resonance: Q"].status is not Status.PASS


def test_unmeasurable_worst_case_corner_keeps_outputs_valid(tmp_path, capsys):
    # L ±40 % moves the lower half-power edge below the sweep start at one corner
    path = _spec(tmp_path, '[tolerances]\nparts = { L1 = "40%" }\n[analysis]\n'
                 'mode = ["worst_case", "monte_carlo"]\nsamples = 50\n' + Q_LIMIT,
                 sweep=("36k", "200k", 100))
    out = tmp_path / "o.json"
    rc, stdout, err = _cli(capsys, path, "--json", str(out))
    assert rc in (0, 1) and "Traceback" not in err
    jsonschema.validate(json.loads(out.read_text()), SCHEMA)
    assert not re.search(r"(?<![A-Za-z])-?inf(?![A-Za-z])", stdout)


def test_two_unnamed_limits_of_one_kind_in_monte_carlo(tmp_path):
    path = _spec(tmp_path, TOL3 + '[analysis]\nmode = ["monte_carlo"]\nsamples = 20\n'
                 + Q_LIMIT + '[[limits]]\nkind = "resonance"\nlevel_db = 6\nq = [5, 50]\n')
    res = check_spec(path)
    # either the two limits are told apart, or the spec is refused with a clear error
    if res.error is None:
        assert len(_tol(res)["monte_carlo"]["limits"]) == 2
    else:
        assert "limits[1]" in res.error and "name" in res.error


def test_two_unnamed_gain_limits_get_their_own_worst_case_verdicts(tmp_path):
    path = _spec(tmp_path, TOL3 + '[analysis]\nmode = ["worst_case"]\n'
                 '[[limits]]\nkind = "gain"\nband = ["39k", "41k"]\nmin_db = -3\n'
                 '[[limits]]\nkind = "gain"\nband = ["39k", "41k"]\nmin_db = -6\n')
    res = check_spec(path)
    if res.error is not None:   # refusing duplicate names would also do
        assert "limits[1]" in res.error
        return
    wc = [r for r in res.limits if r.kind == "worst_case"]
    looser = [r for r in wc if r.lower == -6]
    # every corner's band minimum is about -3.34 dB, far above -6 dB
    assert all(r.measured > -4 for r in wc)
    assert looser and all(r.status is Status.PASS for r in looser)


def test_monte_carlo_worst_resistor_power_is_the_worst_sample(tmp_path):
    net = """Quillmere test: shunt resistor across the drive, RC low-pass after it
V1 in 0 AC 1
R1 in 0 1k
R2 in out 1k
C1 out 0 100n
"""
    body = ('[tolerances]\nparts = { R1 = "20%" }\n[analysis]\nmode = ["monte_carlo"]\n'
            "samples = 200\nseed = 5\n"
            # |Z_in| ≈ R1 at 10–20 Hz, so this limit's worst sample is the smallest R1
            '[[limits]]\nkind = "impedance"\nband = ["10", "20"]\nrange = ["700", "1meg"]\n'
            + _stress("10", "R1", 'max_power = "1"'))
    res = check_spec(_spec(tmp_path, body, netlist=net, sweep=("10", "100k", 20)))
    mc = _tol(res)["monte_carlo"]
    r_min = mc["limits"][0]["worst_values"]["R1"]
    worst = _rows(res)["Monte Carlo worst: stress: R1 power"].measured
    # R1 sits across the ideal 10 V source: P = V²/(2 R1) (Alexander & Sadiku, ch. 11)
    assert worst == pytest.approx(100 / (2 * r_min), rel=1e-6)


def test_monte_carlo_yield_counts_stress_limits(tmp_path):
    path = _spec(tmp_path, '[tolerances]\ndefault = { R = "1%", L = "1%", C = "1%" }\n'
                 '[analysis]\nmode = ["monte_carlo"]\nsamples = 50\nyield_min = 0.9\n'
                 + Q_LIMIT + _stress("10", "C1", 'max_voltage = "100"'))
    res = check_spec(path)
    # V_C,max = 10·Q/sqrt(1 - 1/(4Q²)) ≈ 117.7 V (textbook); 1 % parts move Q by ~2 %, so
    # no sample stays under 100 V
    assert 10 * _second_order_peak(Q0 * 0.97) > 100
    assert _rows(res)["Monte Carlo worst: stress: C1 voltage"].status is Status.FAIL
    assert _tol(res)["monte_carlo"]["yield"] == 0.0


def test_tolerance_on_a_negative_part_with_allow_negative(tmp_path, capsys):
    net = SERIES_RLC + "RN out 0 -1meg\n"
    path = _spec(tmp_path, '[tolerances]\ndefault = { R = "1%" }\n[analysis]\n'
                 'mode = ["worst_case"]\n' + Q_LIMIT, netlist=net, top="allow_negative = true")
    rc, _, err = _cli(capsys, path)
    assert rc == 0 and "Traceback" not in err


def test_coupling_tolerance_beyond_unity_is_refused_or_flagged(tmp_path):
    net = """Quillmere test: coupled tanks
V1 in 0 AC 1
R1 in a 50
L1 a 0 10u
C1 a 0 10n
L2 b 0 10u
C2 b 0 10n
R2 b out 1
R3 out 0 50k
K1 L1 L2 0.99
"""
    path = _spec(tmp_path, '[tolerances]\nparts = { K1 = "5%" }\n[analysis]\n'
                 'mode = ["worst_case", "monte_carlo"]\nsamples = 50\n[[limits]]\n'
                 'kind = "gain"\nband = ["100k", "200k"]\nmax_db = 60\n', netlist=net,
                 sweep=("100k", "10meg", 50))
    res = check_spec(path)
    # 0.99 × 1.05 = 1.0395: a coupling coefficient above 1 is not physical
    _refused(res, "tolerances.parts.K1", "above 1")


def test_tolerance_on_the_stimulus_source_is_refused_or_flagged(tmp_path):
    path = _spec(tmp_path, '[tolerances]\nparts = { V1 = "5%" }\n[analysis]\n'
                 'mode = ["worst_case"]\n' + Q_LIMIT)
    _refused(check_spec(path), "tolerances.parts.V1", "independent source")


def test_star_glob_does_not_tolerance_independent_sources(tmp_path):
    path = _spec(tmp_path, '[tolerances]\nparts = { "*" = "1%" }\n[analysis]\n'
                 'mode = ["monte_carlo"]\nsamples = 2\n' + Q_LIMIT)
    parts = [p["part"] for p in _tol(check_spec(path))["monte_carlo"]["parts"]]
    assert parts == ["C1", "L1", "R1"]


def test_normal_distribution_never_solves_non_positive_values_silently(tmp_path):
    # tolerance 95 % = 3 sigma: P(C <= 0) = P(z < -3.16) ≈ 8e-4 per sample (normal tail)
    path = _spec(tmp_path, '[tolerances]\nparts = { C1 = "95%" }\ndistribution = "normal"\n'
                 '[analysis]\nmode = ["monte_carlo"]\nsamples = 3000\nseed = 2\n' + Q_LIMIT)
    _refused(check_spec(path), "tolerances.distribution", "C1", "truncnormal")


def test_margin_percentiles_of_unmeasurable_samples_are_not_a_sentinel(tmp_path):
    path = _spec(tmp_path, '[tolerances]\ndefault = { R = "1%", C = "5%" }\n[analysis]\n'
                 'mode = ["monte_carlo"]\nsamples = 20\n' + Q_LIMIT,
                 netlist=RC_LOWPASS, sweep=("10", "100k", 20))
    res = check_spec(path)
    lim = _tol(res)["monte_carlo"]["limits"][0]
    assert lim["yield"] == 0.0   # a low-pass has no resonance peak in any sample
    for key in ("margin_p01", "margin_p50", "margin_p99"):
        assert lim[key] is None or abs(lim[key]) < 1e100


def test_error_in_an_inline_tolerance_table_points_at_its_line(tmp_path):
    path = _spec(tmp_path, '[tolerances]\ndistribution = "uniform"\n'
                 'default = { C = "2%", R = true }\n' + Q_LIMIT)
    res = check_spec(path)
    assert f"t.toml:{_line_of(path, 'default = {')}:" in res.error


def test_error_in_a_tolerance_sub_table_has_a_line(tmp_path):
    path = _spec(tmp_path, '[tolerances.parts]\nR1 = "abc%"\n' + Q_LIMIT)
    res = check_spec(path)
    assert "tolerances.parts.R1" in res.error
    assert f"t.toml:{_line_of(path, 'R1 = ')}:" in res.error


def test_tolerance_error_names_its_key_once(tmp_path):
    path = _spec(tmp_path, '[tolerances]\ndefault = { R = true }\n' + Q_LIMIT)
    res = check_spec(path)
    message = res.error.splitlines()[0]
    assert message.count("default.R") == 1


def test_exact_part_name_wins_over_a_glob_or_the_overlap_is_reported(tmp_path):
    path = _spec(tmp_path, '[tolerances]\nparts = { R1 = "1%", "R*" = "5%" }\n[analysis]\n'
                 'mode = ["monte_carlo"]\nsamples = 2\n' + Q_LIMIT)
    res = check_spec(path)
    tol = {p["part"]: p["tolerance"] for p in _tol(res)["monte_carlo"]["parts"]}
    warned = any("R1" in c.message and "R*" in c.message for c in res.cautions)
    assert tol["R1"] == pytest.approx(0.01) or warned


def test_monte_carlo_stress_finds_a_peak_narrower_than_the_grid(tmp_path):
    # A lossless parallel LC behind 100 kOhm: at f0 = 1/(2 pi sqrt(LC)) the tank's
    # impedance is infinite (textbook), so every sample's capacitor sees the full 1 V
    # input, far above the 0.5 V rating, whatever L and C are. The sweep has only 10
    # points per decade, so the peak sits between grid points in almost every sample.
    net = """Quillmere test: lossless tank behind a large resistor
V1 in 0 AC 1
R1 in out 100k
L1 out 0 1m
C1 out 0 100n
"""
    body = ('[tolerances]\ndefault = { C = "1%", L = "1%" }\n[analysis]\n'
            'mode = ["monte_carlo"]\nsamples = 200\n[[limits]]\nkind = "gain"\n'
            'band = ["1k", "2k"]\nmax_db = 0\n' + _stress("1", "C1", 'max_voltage = "0.5"'))
    res = check_spec(_spec(tmp_path, body, netlist=net, sweep=("1k", "100k", 10)))
    mc = _tol(res)["monte_carlo"]
    stress = {e["name"]: e for e in mc["limits"]}["stress: C1 voltage"]
    assert stress["yield"] == 0.0 and mc["yield"] == 0.0
    assert stress["worst_measured"] == pytest.approx(1.0, rel=1e-6)


def test_a_zero_valued_part_cannot_take_a_tolerance(tmp_path):
    net = SERIES_RLC + "E1 x 0 out 0 0\nRX x 0 1k\n"
    path = _spec(tmp_path, '[tolerances]\nparts = { E1 = "5%" }\n[analysis]\n'
                 'mode = ["monte_carlo"]\nsamples = 20\n' + Q_LIMIT, netlist=net)
    _refused(check_spec(path), "tolerances.parts.E1", "value 0")


def test_error_in_a_sub_table_with_spaced_header_has_its_line(tmp_path):
    path = _spec(tmp_path, '[tolerances . parts]\nR1 = "abc%"\n' + Q_LIMIT)
    res = check_spec(path)
    assert f"t.toml:{_line_of(path, 'R1 = ')}:" in res.error


def test_corners_on_the_sparse_path_stop_at_a_lower_cap(tmp_path):
    # every corner of a system on the sparse path is a sweep of its own: 2^7 = 128 of
    # them is more than the cap of 6 parts there, so EVA alone decides
    from netcheck.mna.solve import DENSE_MAX
    from netcheck.analyses.worstcase import MAX_CORNER_PARTS_SPARSE
    chain = "\n".join(f"RC{k} n{k} n{k + 1} 1" for k in range(DENSE_MAX))
    net = (f"Quillmere test: long chain into a series RLC\nV1 n0 0 AC 1\n{chain}\n"
           f"E1 b 0 n{DENSE_MAX} 0 1\nL1 b a {L!r}\nC1 a out {C!r}\nR1 out 0 {R!r}\n"
           "R2 out 0 1meg\nR3 out 0 2meg\nR4 out 0 3meg\nR5 out 0 4meg\n")
    parts = ", ".join(f'{p} = "1%"' for p in ("L1", "C1", "R1", "R2", "R3", "R4", "R5"))
    path = _spec(tmp_path, f'[tolerances]\nparts = {{ {parts} }}\n[analysis]\n'
                 'mode = ["worst_case"]\n' + Q_LIMIT, netlist=net)
    wc = _tol(check_spec(path))["worst_case"]
    assert MAX_CORNER_PARTS_SPARSE < 7
    assert wc["corners"] is None and wc["corner_cap"] == MAX_CORNER_PARTS_SPARSE
    assert wc["limits"][0]["sensitivity_method"] == "adjoint"  # EVA still runs
