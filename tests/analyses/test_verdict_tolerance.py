"""Tolerance verdicts that never lie (issue 11): what decides a worst case, and over how
many samples each Monte Carlo figure is taken.

A. With every corner evaluated and the quantity monotone in each part over the
   tolerance box, the exact corners decide the worst case; the linear estimate (EVA)
   may not fail a design that every corner passes. Reference: the closed form
   Q = (1/R)·sqrt(L/C) of a series RLC, evaluated at every corner here.
B. Monte Carlo figures of a quantity that exists in some samples only say over how
   many (n of N); the histogram and its table row cover the same samples; a sample
   where a limit's quantity cannot be measured fails that limit; every yield is
   printed with its Wilson interval.
"""

from __future__ import annotations

import itertools
import json
import math
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from circuits import C, L, SERIES_RLC, split_rc_chain as _chain, write_spec
from netcheck.cli import main
from netcheck.analyses.nominal import check_spec
from netcheck.result import Status
from netcheck.analyses.tolerance import draw, wilson_interval

#: a crystal-like motional arm (Quillmere Instruments reference oscillator): series RLC,
#: output across R, f0 = 1/(2 pi sqrt(L C)) ≈ 1.0066 MHz, Q = sqrt(L/C)/R ≈ 50 600
ARM_L, ARM_C, ARM_R = 0.1, 0.25e-12, 12.5
ARM = f"""Quillmere Instruments reference oscillator, crystal motional arm
V1 in 0 AC 1
L1 in a {ARM_L!r}
C1 a out {ARM_C!r}
R1 out 0 {ARM_R!r}
"""

#: a series RLC low-pass (output across C) near maximal flatness: f0 = 1 kHz and
#: Q = sqrt(L/C)/R ≈ 0.7071 at nominal, so the gain has an interior peak only in the
#: samples with Q > 1/sqrt(2), about half of them with R ±10 %
LP_R, LP_L, LP_C = 88.86, 10e-3, 2.533e-6
LOWPASS = f"""Quillmere Instruments anti-alias stage, second order
V1 in 0 AC 1
R1 in a {LP_R!r}
L1 a out {LP_L!r}
C1 out 0 {LP_C!r}
"""


def _spec(tmp_path: Path, netlist: str, sweep: tuple[str, str, int], body: str) -> str:
    return write_spec(tmp_path, body, netlist, sweep)


def _tol(result) -> dict:
    return dict(result.extra)["tolerance"]


def _rows(result) -> dict:
    return {r.name: r for r in result.limits}


def _cli(capsys, *args: str) -> tuple[int, str]:
    rc = main(["check", *args, "--color", "never"])
    return rc, capsys.readouterr().out


# ---------------------------------------------------------------------------------------
# A. worst case: the exact corners decide where the quantity is monotone
# ---------------------------------------------------------------------------------------

ARM_SPEC = ('[tolerances]\ndefault = { R = "2%", L = "2%", C = "2%" }\n'
            '[analysis]\nmode = ["worst_case"]\n'
            '[[limits]]\nkind = "resonance"\nq = [48600, 60000]\n')


def test_high_q_worst_case_is_decided_by_the_exact_corners(tmp_path):
    # reference: Q = (1/R) sqrt(L/C) for a series RLC (common practice, no source),
    # at every corner of the ±2 % box; Q is monotone in each part (1/R, sqrt L, 1/sqrt C)
    corners = [(1 / (ARM_R * (1 + r))) * math.sqrt(ARM_L * (1 + l) / (ARM_C * (1 + c)))
               for r, l, c in itertools.product((-0.02, 0.02), repeat=3)]
    q_min, q_max = min(corners), max(corners)
    assert q_min > 48600  # every corner meets the limit
    res = check_spec(_spec(tmp_path, ARM, ("900k", "1.1meg", 2000), ARM_SPEC))
    entry = _tol(res)["worst_case"]["limits"][0]
    assert entry["corners_min"] == pytest.approx(q_min, rel=1e-8)
    assert entry["corners_max"] == pytest.approx(q_max, rel=1e-8)
    # the linear estimate reaches below the limit, below every corner (1/(1+t) > 1 − t)
    assert entry["min"] < 48600 < q_min and entry["margin"] < 0
    assert entry["monotone"] is True and entry["not_monotone_in"] == []
    assert entry["decided_by"] == "corners"
    row = _rows(res)["worst case: resonance: Q"]
    assert row.status is Status.PASS, (row, entry)
    assert row.measured == pytest.approx(q_min, rel=1e-8)
    assert row.margin == pytest.approx(q_min - 48600, rel=1e-6)
    assert row.message.startswith("decided by the corners (all 8; monotone")


def test_high_q_worst_case_in_terminal_and_json(tmp_path, capsys):
    # the same closed form as above decides the verdict; the row says which method did
    path = _spec(tmp_path, ARM, ("900k", "1.1meg", 2000), ARM_SPEC)
    out = tmp_path / "r.json"
    rc, text = _cli(capsys, path, "--json", str(out))
    assert rc == 0, text
    lines = text.splitlines()
    k = next(i for i, ln in enumerate(lines) if "worst case: resonance: Q" in ln)
    assert "PASS" in lines[k] and "decided by the corners" in lines[k + 1]
    doc = json.loads(out.read_text())
    row = next(r for r in doc["specs"][0]["limits"] if r["kind"] == "worst_case")
    assert row["status"] == "pass" and row["message"].startswith("decided by the corners")
    assert doc["specs"][0]["tolerance"]["worst_case"]["limits"][0]["decided_by"] == "corners"


def test_non_monotone_quantity_keeps_the_worse_of_eva_and_corners(tmp_path):
    # reference: |H| = R / |R + j(wL − 1/(wC))| of a series RLC (common practice, no
    # source) is largest where wL = 1/(wC): the lowest gain over a band around f0 first
    # rises, then falls as L sweeps through its tolerance, so it is not monotone in L
    f0 = 1 / (2 * math.pi * math.sqrt(L * C))

    def band_min(l_scale: float) -> float:
        w = 2 * math.pi * np.array([39.5e3, 40.5e3])
        x = w * L * l_scale - 1 / (w * C)
        return float(np.min(20 * np.log10(47.0 / np.hypot(47.0, x))))

    assert 39.5e3 < f0 < 40.5e3
    assert band_min(1.0) > band_min(0.97) and band_min(1.0) > band_min(1.03)
    path = _spec(tmp_path, SERIES_RLC, ("10k", "200k", 100),
                 '[tolerances]\nparts = { L1 = "3%", R1 = "1%" }\n'
                 '[analysis]\nmode = ["worst_case"]\n'
                 '[[limits]]\nkind = "gain"\nname = "band"\nband = ["39.5k", "40.5k"]\n'
                 'min_db = -3\n')
    res = check_spec(path)
    entry = _tol(res)["worst_case"]["limits"][0]
    assert entry["monotone"] is False and "L1" in entry["not_monotone_in"]
    # the verdict is the worse of the two, as before
    row = _rows(res)["worst case: band"]
    assert row.margin == pytest.approx(min(entry["margin"], entry["corners_margin"]),
                                       rel=1e-12)
    assert entry["decided_by"] == ("corners" if entry["corners_margin"] < entry["margin"]
                                   else "linear estimate")
    assert "not shown monotone in L1" in row.message


def test_without_corners_the_linear_estimate_decides_and_says_so(tmp_path):
    # 13 toleranced parts: more than the 12 whose corners are enumerated; the corner
    # 1/(2 pi R C) of the RC low-pass (common practice, no source) lies inside the range
    path = _spec(tmp_path, _chain(13), ("10", "1meg", 20),
                 '[tolerances]\ndefault = { R = "1%", C = "5%" }\n'
                 '[analysis]\nmode = ["worst_case"]\n'
                 '[[limits]]\nkind = "corner"\nrange = ["100", "10k"]\n')
    res = check_spec(path)
    entry = _tol(res)["worst_case"]["limits"][0]
    assert entry["decided_by"] == "linear estimate" and entry["monotone"] is None
    assert "corners not evaluated (13 toleranced parts, more than 12)" in \
        _rows(res)["worst case: corner (half-power)"].message


def _box(f, P: int, t: float = 0.05) -> np.ndarray:
    """f at the corners, the face centres (−t each, then +t each) and the nominal."""
    pts = [np.array(s) * t for s in itertools.product((-1.0, 1.0), repeat=P)]
    pts += [-t * e for e in np.eye(P)] + [t * e for e in np.eye(P)] + [np.zeros(P)]
    return np.array([f(p) for p in pts])


def test_monotonicity_check_on_known_functions():
    # reference: calculus (common practice, no source): exp(x0 − 2 x1) is monotone in
    # both coordinates; x0² has its minimum inside the box; a part with no effect is flat
    from netcheck.analyses.worstcase import FLAT, _not_monotone

    assert _not_monotone(_box(lambda x: math.exp(x[0] - 2 * x[1]), 2), 2, 1e-12) == []
    assert _not_monotone(_box(lambda x: x[0] ** 2 + x[1], 2), 2, 1e-12) == [0]
    assert _not_monotone(_box(lambda x: 3.0 + x[1], 3), 3, 1e-12) == []
    # a turn inside the box that no corner shows is caught through the nominal:
    # cos(pi x0 / t) is −1 at every corner and face centre but +1 at the nominal
    t = 0.05
    v = _box(lambda x: math.cos(math.pi * x[0] / t), 2, t)
    assert np.ptp(v[:4]) == 0
    assert _not_monotone(v, 2, 1e-12) == [0]
    # below the flat threshold a reversal counts as no change
    noisy = _box(lambda x: 1.0 + x[0] + 1e-13 * math.cos(40 * x[1]), 2)
    assert _not_monotone(noisy, 2, FLAT * 2.0) == []


# ---------------------------------------------------------------------------------------
# B. Monte Carlo figures say over how many samples they are taken
# ---------------------------------------------------------------------------------------

LP_SPEC = ('[tolerances]\nparts = { R1 = "10%" }\n'
           '[analysis]\nmode = ["monte_carlo"]\nsamples = 400\nseed = 5\n'
           '[[limits]]\nkind = "corner"\nrange = ["900", "1.1k"]\n')


def _drawn(part: str, value: float, tol: float, samples: int, seed: int) -> np.ndarray:
    """The values Monte Carlo draws for one part (same generator, same seed)."""
    return draw([(part, value, tol)], samples, "uniform", np.random.default_rng(seed))[part]


def test_key_figures_of_a_peak_present_in_some_samples_say_n_of_n(tmp_path):
    # reference: the series RLC low-pass |H|² = 1/((1 − x²)² + (x/Q)²) has an interior
    # peak at x = sqrt(1 − 1/(2Q²)) only when Q = sqrt(L/C)/R > 1/sqrt(2) (second-order
    # resonance, common practice, no source); the sweep starts at 10 Hz
    r = _drawn("R1", LP_R, 0.10, 400, 5)
    q = np.sqrt(LP_L / LP_C) / r
    f0 = 1 / (2 * math.pi * math.sqrt(LP_L * LP_C))
    with np.errstate(invalid="ignore"):
        f_peak = f0 * np.sqrt(1 - 1 / (2 * q * q))
    peaked = int(np.count_nonzero(f_peak > 10.0 * 1.001))
    assert 100 < peaked < 300  # the case of the issue: a figure for part of the samples
    res = check_spec(_spec(tmp_path, LOWPASS, ("10", "100k", 100), LP_SPEC))
    mc = _tol(res)["monte_carlo"]
    for key in ("f_peak_hz", "f_high_hz"):
        st = mc["measurements"][key]
        assert st["samples"] == 400
        assert abs(st["n"] - peaked) <= 1, (key, st["n"], peaked)
    assert mc["measurements"]["f_low_hz"]["n"] == 0  # no lower edge below a low-pass peak
    # the histogram (the corner limit, measured in every sample) states its sample set,
    # and its own figures are over exactly the binned samples
    hist = mc["histogram"]
    assert hist["name"] == "corner (half-power)" and hist["n"] == 400 == sum(hist["counts"])
    assert hist["stats"]["n"] == 400 and hist["samples"] == 400
    centres = 0.5 * (np.array(hist["edges"][1:]) + np.array(hist["edges"][:-1]))
    binned_mean = float(np.dot(hist["counts"], centres)) / 400
    width = hist["edges"][1] - hist["edges"][0]
    assert abs(hist["stats"]["mean"] - binned_mean) <= width / 2
    # the corner limit measured everywhere: every sample counted
    lim = mc["limits"][0]
    assert lim["measured_in"] == 400 and lim["passed"] == round(lim["yield"] * 400)


def test_key_figure_table_and_histogram_in_the_pdf_view_agree(tmp_path):
    # same reference as above: n of N in every row, the histogram's own row first
    from netcheck.report.view_tolerance import tolerance_view

    res = check_spec(_spec(tmp_path, LOWPASS, ("10", "100k", 100), LP_SPEC))
    view = tolerance_view(res, with_plots=False)["mc"]
    mc = _tol(res)["monte_carlo"]
    first = view["spread"][0]
    assert first["label"] == "corner (half-power)" and first["in_histogram"]
    assert first["n"] == "400 of 400" and view["histogram_n"] == "400 of 400"
    by_label = {r["label"]: r for r in view["spread"]}
    n_high = mc["measurements"]["f_high_hz"]["n"]
    assert by_label["upper half-power edge f_high"]["n"] == f"{n_high} of 400"
    assert view["partial"] is True
    assert "lower half-power edge f_low" in view["never"]


def test_histogram_caption_and_legend_state_the_sample_set(tmp_path):
    # the binned samples are those where the quantity was measured: here the centre of
    # a series RLC peak f0 = 1/(2 pi sqrt(L C)) (common practice, no source) that leaves
    # the 39–41 kHz band in some samples
    from netcheck.report.plot_tolerance import histogram_plot

    path = _spec(tmp_path, SERIES_RLC, ("10k", "200k", 100),
                 '[tolerances]\nparts = { L1 = "10%" }\n[analysis]\n'
                 'mode = ["monte_carlo"]\nsamples = 300\nseed = 3\n'
                 '[[limits]]\nkind = "resonance"\nband = ["39k", "41k"]\nq = [1, 100]\n')
    res = check_spec(path)
    hist = _tol(res)["monte_carlo"]["histogram"]
    assert hist["n"] < 300 == hist["samples"]
    plot = histogram_plot(res)
    assert f"The {hist['n']} of 300 Monte Carlo samples where this could be measured" \
        in plot.caption
    assert f"{300 - hist['n']} it could not" in plot.caption
    assert f"{hist['n']} of 300 in 30 bins" in plot.svg


def test_an_unmeasurable_sample_fails_its_limit_and_the_yield(tmp_path, capsys):
    # reference: the series RLC peak f0 = 1/(2 pi sqrt(L C)) (common practice, no
    # source) moves with L = L0 (1 + 0.1 u); where it leaves the 39–41 kHz band its Q
    # cannot be measured, and such a sample must fail the Q limit and the yield. The
    # interval is checked against scipy's own Wilson score interval (Wilson 1927).
    S, seed = 300, 3
    l_vals = _drawn("L1", L, 0.10, S, seed)
    f0 = 1 / (2 * math.pi * np.sqrt(l_vals * C))
    inside = int(np.count_nonzero((f0 > 39e3) & (f0 < 41e3)))
    assert 0 < inside < S
    path = _spec(tmp_path, SERIES_RLC, ("10k", "200k", 100),
                 '[tolerances]\nparts = { L1 = "10%" }\n[analysis]\n'
                 f'mode = ["monte_carlo"]\nsamples = {S}\nseed = {seed}\nyield_min = 0.5\n'
                 '[[limits]]\nkind = "resonance"\nband = ["39k", "41k"]\nq = [1, 100]\n')
    res = check_spec(path)
    mc = _tol(res)["monte_carlo"]
    lim = mc["limits"][0]
    # Q ≈ 11.8 in every sample where the peak is in the band: those pass, the rest fail
    assert abs(lim["measured_in"] - inside) <= 1
    assert lim["passed"] == lim["measured_in"] and lim["yield"] == lim["passed"] / S
    assert mc["passed"] == lim["passed"]
    ci = stats.binomtest(lim["passed"], S).proportion_ci(confidence_level=0.95,
                                                         method="wilson")
    assert lim["yield_ci"] == pytest.approx([ci.low, ci.high], abs=1e-12)
    row = _rows(res)["Monte Carlo yield (all limits)"]
    lo, hi = wilson_interval(lim["passed"], S)
    assert row.message == (f"{lim['passed']} of {S} samples met every limit; 95 % interval "
                           f"{100 * lo:.2f} % – {100 * hi:.2f} % (Wilson score)")
    # printed with its interval on the terminal and in the Markdown summary
    md = tmp_path / "s.md"
    _, text = _cli(capsys, path, "--summary-md", str(md))
    lines = text.splitlines()
    k = next(i for i, ln in enumerate(lines) if "Monte Carlo yield (all limits)" in ln)
    assert f"95 % interval {100 * lo:.2f} % – {100 * hi:.2f} %" in lines[k + 1]
    assert f"95 % interval {100 * lo:.2f} % – {100 * hi:.2f} %" in md.read_text()
