"""The ``step`` limit kind against closed forms: for an RC low-pass, y = 1 − e^{−t/τ}, so
the 10–90 % rise time is τ·ln 9, the delay (50 %) τ·ln 2 and the settling time into a band
b of the final value τ·ln(1/b) (by hand); for a second-order low-pass the overshoot is
exp(−πζ/√(1 − ζ²)) (Ogata, *Modern Control Engineering*, from memory).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest

from circuits import refused_at
from netcheck.analyses.nominal import check_spec

R, C = 1e3, 1e-6
TAU = R * C
RC = f"Quillmere QM-S6 RC\nV1 in 0 AC 1\nR1 in out {R:g}\nC1 out 0 {C:g}\n"


def write(tmp_path: Path, body: str, netlist: str = RC) -> str:
    (tmp_path / "n.cir").write_text(netlist)
    spec = tmp_path / "s.toml"
    spec.write_text('title = "step"\nnetlist = "n.cir"\nsource = "V1"\noutput = "out"\n'
                    f'[sweep]\nstart = "1"\nstop = "1meg"\n{body}')
    return str(spec)


def step(quantity: str, rest: str) -> str:
    return f'[[limits]]\nkind = "step"\nquantity = "{quantity}"\n{rest}\n'


def test_rc_rise_delay_and_settling(tmp_path):
    body = (step("rise_time", 'max = "5m"') + step("delay", 'max = "5m"')
            + step("settling_time", 'settle_band = "0.1%"\nmax = "10m"')
            + step("settling_time", 'name = "to half an LSB"\nsettle_bits = 16\nmax = "20m"')
            + step("rise_time", 'name = "20-80"\nlevels = [20, 80]\nmax = "5m"')
            + step("overshoot", "max = 1"))
    result = check_spec(write(tmp_path, body))
    assert result.error is None
    got = [r.measured for r in result.limits]
    assert got[0] == pytest.approx(TAU * math.log(9), rel=1e-9)
    assert got[1] == pytest.approx(TAU * math.log(2), rel=1e-9)
    assert got[2] == pytest.approx(TAU * math.log(1000), rel=1e-9)
    assert got[3] == pytest.approx(TAU * math.log(2 ** 17), rel=1e-9)
    assert got[4] == pytest.approx(TAU * math.log(4), rel=1e-9)  # ln(0.8/0.2) = ln 4
    assert got[5] == 0.0  # a first-order response never overshoots


@pytest.mark.parametrize("zeta", [0.2, 0.5])
def test_second_order_overshoot(tmp_path, zeta):
    l, c = 10e-3, 100e-9
    r = 2 * zeta * math.sqrt(l / c)
    net = f"Quillmere QM-S7 RLC\nV1 in 0 AC 1\nR1 in a {r}\nL1 a out {l}\nC1 out 0 {c}\n"
    (res,) = check_spec(write(tmp_path, step("overshoot", "max = 80"), net)).limits
    assert res.measured == pytest.approx(
        100 * math.exp(-math.pi * zeta / math.sqrt(1 - zeta * zeta)), rel=1e-9)
    wd = math.sqrt(1 - zeta * zeta) / math.sqrt(l * c)
    assert "at t = " in res.definition and res.at_hz is None
    # the peak time π/ω_d, given to five figures in µs
    assert f"at t = {math.pi / wd * 1e6:.5g} µs" in res.definition


def test_monte_carlo_and_worst_case_of_the_rise_time(tmp_path):
    # every sample's rise time is its own R·C·ln 9: the worst Monte Carlo sample and the
    # worst case (central differences; all four corners) against that
    body = (step("rise_time", 'max = "2.5m"')
            + '[tolerances]\ndefault = { R = "5%", C = "10%" }\n[analysis]\n'
              'mode = ["nominal", "worst_case", "monte_carlo"]\nsamples = 40\nseed = 2\n')
    spec = write(tmp_path, body)
    out = tmp_path / "r.json"
    from netcheck.cli import main
    assert main(["check", spec, "--jobs", "1", "--json", str(out)]) in (0, 1)
    doc = json.loads(out.read_text("utf-8"))["specs"][0]
    mc = doc["tolerance"]["monte_carlo"]["limits"][0]
    v = mc["worst_values"]
    assert mc["worst_measured"] == pytest.approx(v["R1"] * v["C1"] * math.log(9), rel=1e-8)
    worst = next(r for r in doc["limits"] if r["name"].startswith("worst case"))
    assert worst["measured"] == pytest.approx(1.05 * 1.1 * TAU * math.log(9), rel=1e-6)


@pytest.mark.parametrize("rest, where, words", [
    ('quantity = "settling_time"\nmax = 1', "limits[0].settle_band", "required"),
    ('quantity = "rise_time"\nmax = 1\nsettle_band = 0.01', "limits[0].settle_band",
     "for a settling_time"),
    ('quantity = "delay"\nmax = 1\nlevels = [10, 90]', "limits[0].levels", "rise_time"),
    ('quantity = "rise_time"\nmax = 1\nlevels = [90, 10]', "limits[0].levels", "lo < hi"),
    ('quantity = "settling_time"\nmax = 1\nsettle_bits = 12.5', "limits[0].settle_bits",
     "whole number"),
    ('quantity = "settling_time"\nmax = 1\nsettle_band = 0.1\nsettle_bits = 8',
     "limits[0].settle_bits", "not both"),
])
def test_bad_step_limits_are_refused_at_their_key(rest, where, words):
    text = ('netlist = "n.cir"\nsource = "V1"\noutput = "out"\n[sweep]\nstart = "10"\n'
            f'stop = "10meg"\n[[limits]]\nkind = "step"\n{rest}\n')
    refused_at(text, where, words)


def test_a_high_pass_has_no_step_figures(tmp_path):
    net = "Quillmere QM-S8 CR\nV1 in 0 AC 1\nC1 in out 1u\nR1 out 0 1k\n"
    (r,) = check_spec(write(tmp_path, step("rise_time", 'max = "1m"'), net)).limits
    assert r.status.value == "error" and "settles to 0" in r.message


def test_the_anti_alias_sample_against_scipy_cheby1():
    # the sample is a 6th-order 0.5 dB Chebyshev to 14.5 kHz (its netlist's comment):
    # scipy.signal.cheby1's step response, on a 10 ns grid, gives its overshoot and when
    # it last leaves half an LSB of 16 bits (to the grid's 10 ns)
    import numpy as np
    from scipy import signal

    root = Path(__file__).resolve().parents[2]
    result = check_spec(str(root / "specs" / "aa6_cheby.toml"))
    got = {r.name: r.measured for r in result.limits}
    b, a = signal.cheby1(6, 0.5, 2 * math.pi * 14.5e3, analog=True)
    t = np.linspace(0.0, 3e-3, 300001)
    _, y = signal.step((b, a), T=t)
    final = y[-1]
    assert got["step overshoot"] == pytest.approx((y.max() - final) / final * 100, rel=1e-5)
    last = t[np.flatnonzero(np.abs(y - final) > 2.0 ** -17 * abs(final))[-1]]
    assert got["settles for the ADC"] == pytest.approx(last, abs=2e-8)


def test_the_json_and_the_report_carry_the_step_response(tmp_path):
    # the step block's samples are the RC's 1 − e^{−t/τ}; its marks are where the limits
    # measured (the 10 % and 90 % crossings at τ·ln(10/9) and τ·ln 10); the PDF draws it
    import jsonschema
    import numpy as np

    body = step("rise_time", 'max = "5m"') + step("settling_time", 'settle_band = 0.01\nmax = "1"')
    spec = write(tmp_path, body)
    out = tmp_path / "r.json"
    from netcheck.cli import main
    assert main(["check", spec, "--jobs", "1", "--json", str(out)]) == 0
    doc = json.loads(out.read_text("utf-8"))
    root = Path(__file__).resolve().parents[2]
    jsonschema.validate(doc, json.loads((root / "docs" / "result.schema.json").read_text()))
    block = doc["specs"][0]["step"]
    t, y = np.array(block["t"]), np.array(block["y"])
    np.testing.assert_allclose(y, 1 - np.exp(-t / TAU), atol=1e-12)
    crossings = [m["t"] for m in block["marks"] if m["what"].endswith("%")]
    np.testing.assert_allclose(crossings, [TAU * math.log(10 / 9), TAU * math.log(10)],
                               rtol=1e-9)
    settled = next(m for m in block["marks"] if m["what"] == "settled")
    assert settled["t"] == pytest.approx(TAU * math.log(100), rel=1e-9)
    from netcheck.report.plot_response import spec_figures
    result = check_spec(spec)
    assert "Step response" in [title for title, _ in spec_figures(result)]


def test_a_mask_on_the_step_response(tmp_path):
    # an upper line from (0, 0.5) to (4 ms, 1.1) against 1 − e^{−t/τ}, τ = 1 ms: the
    # margin 0.5 + 150·t − 1 + e^{−t/τ} is least where e^{−t/τ} = 150·τ, t = τ·ln(1/0.15)
    # (by hand); the lower line (0.2 ms, 0) to (5 ms, 0.9) stays below the response
    body = step("mask", 'max_points = [[0, 0.5], ["4m", 1.1]]\n'
                        'min_points = [["0.2m", 0], ["5m", 0.9]]\nduration = "6m"')
    (r,) = check_spec(write(tmp_path, body)).limits
    t = TAU * math.log(1 / 0.15)
    assert r.measured == pytest.approx(0.5 + 150 * t - 1 + 0.15, abs=1e-9)
    assert r.status.value == "fail" and r.margin == pytest.approx(r.measured)
    assert f"at t = {t * 1e3:.5g} ms" in r.definition


def test_a_duration_too_short_for_the_response_is_an_error(tmp_path):
    # 1 µs of a 1 ms time constant: the response is still near zero, so no figure of its
    # shape can be judged there (an overshoot of 0 % would be a false pass)
    (r,) = check_spec(write(tmp_path, step("overshoot", 'max = 5\nduration = "1u"'))).limits
    assert r.status.value == "error" and "does not reach 90 %" in r.message
