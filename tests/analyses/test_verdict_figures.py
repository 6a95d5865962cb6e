"""Verdicts that never lie (issue 11, items 7 and 8): the figures every report prints.

Item 7: a lossless notch is an exact transmission zero; its computed gain there is rounding
noise (−290 … −340 dB, or −∞), and every report says "below <floor>" with a margin it
certainly has, never the noise as a number. Item 8: the bounds, the measured value and the
margin of a row print with as many figures as tell them apart, in every report alike.

References: the notch of a parallel LC trap in series with the load is at
f0 = 1/(2π√(LC)), where the trap's impedance is infinite and |H| = 0 exactly; a series RLC
band-pass has its centre √(f_low·f_high) at the same f0 (both common practice, no source).
The floor of a double-precision solve: the LU backward error |ΔA| ≤ γ₃ₙ|L||U| (Higham,
Accuracy and Stability of Numerical Algorithms, 2nd ed., 2002, ch. 9), carried to the output
by the adjoint; 10⁻¹⁵ of the peak (−300 dB) is a few units of the IEEE 754 binary64
epsilon, 2.2·10⁻¹⁶ (IEEE 754-2008). Rounding a printed number (common practice, no source).
"""

from __future__ import annotations

import io
import json
import math
import re
from decimal import Decimal
from pathlib import Path

import jsonschema
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from netcheck.analyses.nominal import check_spec
from netcheck.spec.limits import GainLimit
from netcheck.measure import Extremum
from netcheck.render import RenderOptions, get_renderer
from netcheck.result import CheckResult, LimitResult, Status
from netcheck.netlist.units import format_eng, row_text, tell_apart

ROOT = Path(__file__).resolve().parents[2]
CREATED = "2026-01-01T00:00:00Z"

L_TRAP, C_TRAP, R_LOAD = 1e-3, 1e-6, 1e3
#: the trap's notch, where the exact |H| is 0 (common practice, no source)
F_NOTCH = 1.0 / (2.0 * math.pi * math.sqrt(L_TRAP * C_TRAP))

TRAP_NET = """Quillmere Instruments - lossless LC trap in series with the load
V1 in 0 AC 1
L1 in out 1m
C1 in out 1u
RL out 0 1k
.end
"""
TRAP_SPEC = """title = "Quillmere Instruments LC trap, lossless"
netlist = "trap.cir"
source = "V1"
output = "out"

[sweep]
start = "100"
stop = "100k"
points_per_decade = 50

[[limits]]
kind = "gain"
name = "trap must pass"
band = ["4k", "6k"]
min_db = -3

[[limits]]
kind = "gain"
name = "far pass-band"
band = ["100", "1k"]
min_db = -1
"""

#: a series RLC band-pass whose centre is 10.0000076454 MHz (f0 = 1/(2π√(LC)))
L_BP, C_BP = 1e-6, 253.30257178540185e-12
F_BP = 1.0 / (2.0 * math.pi * math.sqrt(L_BP * C_BP))
BP_NET = """Quillmere Instruments - 10 MHz reference band-pass
V1 in 0 AC 1
R1 in a 5
L1 a b 1u
C1 b out 253.30257178540185p
RL out 0 5
.end
"""
BP_SPEC = """title = "Quillmere Instruments 10 MHz reference band-pass"
netlist = "bp.cir"
source = "V1"
output = "out"

[sweep]
start = "1meg"
stop = "100meg"
points_per_decade = 200

[[limits]]
kind = "resonance"
center = "10meg"
center_tolerance = 5
q = [3, 20]

[tolerances]
default = { L = "2ppm", C = "2ppm", R = "1%" }

[analysis]
mode = ["nominal", "worst_case", "monte_carlo"]
samples = 100
seed = 3
yield_min = 0.5
"""


def words(text: str) -> str:
    return " ".join(text.split())


def outputs(result: CheckResult, tmp_path: Path) -> dict[str, str]:
    """Every report of ``result`` as text: terminal, Markdown, JUnit, SARIF, JSON, PDF."""
    out = {}
    for name in ("text", "markdown", "junit", "sarif", "json"):
        buf = io.StringIO()
        get_renderer(name)(result, buf, RenderOptions())
        out[name] = buf.getvalue()
    from pypdf import PdfReader

    from netcheck.report import pdf

    data = pdf.render_bytes(result)
    out["pdf"] = words(" ".join(p.extract_text() or "" for p in PdfReader(io.BytesIO(data)).pages))
    return out


def printed(text: str) -> Decimal:
    """The exact number a printed value stands for (``10.000008 MHz`` → 10000008)."""
    m = re.fullmatch(r"([-+]?\d+(?:\.\d+)?)(?:e(-?\d+))? ?([kMGTmµnpf]?)(?:Hz|dB|deg|Ω|s|V|A|W)?",
                     text.strip())
    assert m, text
    exp = {"": 0, "k": 3, "M": 6, "G": 9, "T": 12, "m": -3, "µ": -6, "n": -9, "p": -12,
           "f": -15}[m[3]]
    return Decimal(m[1]).scaleb(exp + int(m[2] or 0))


# ---- item 7: an exact transmission zero ---------------------------------------------------

@pytest.fixture(scope="module")
def trap(tmp_path_factory):
    d = tmp_path_factory.mktemp("trap")
    (d / "trap.cir").write_text(TRAP_NET)
    (d / "trap.toml").write_text(TRAP_SPEC)
    spec = check_spec(str(d / "trap.toml"))
    result = CheckResult((spec,), "0.1.0", CREATED)
    return spec, outputs(result, d)


def test_the_zero_is_found_at_the_notch(trap):
    spec, _ = trap
    lim = next(x for x in spec.limits if x.name == "trap must pass")
    assert lim.at_hz == pytest.approx(F_NOTCH, rel=1e-9)  # f0 = 1/(2π√(LC))
    # the computed gain there is noise far below any real response (exact |H| = 0) ...
    assert lim.measured < -200.0
    # ... and is reported at or below a floor that lies well under the pass-band
    assert lim.below_floor and lim.measured <= lim.floor < -200.0
    assert lim.status is Status.FAIL  # a lower bound of -3 dB above the floor: certainly not met
    far = next(x for x in spec.limits if x.name == "far pass-band")
    assert not far.below_floor and far.status is Status.PASS


def test_no_report_prints_the_noise(trap):
    spec, out = trap
    lim = next(x for x in spec.limits if x.name == "trap must pass")
    noise = f"{lim.measured:.3f}"  # e.g. -297.497: what the reports printed before
    floor = format_eng(lim.floor, "dB")
    for name in ("text", "markdown", "junit", "sarif"):
        assert noise not in out[name], name
    for name in ("text", "markdown", "junit", "sarif", "pdf"):
        assert f"below {floor}" in out[name], name
        assert "no transmission" in out[name], name
    # the PDF's own text: verdict, limits table and limit-by-limit details
    from netcheck.report.context import build_context

    view = build_context(CheckResult((spec,), "0.1.0", CREATED), with_plots=False)
    assert noise not in json.dumps(view, default=str, ensure_ascii=False)
    certain = f"≤ {format_eng(lim.floor - lim.lower, 'dB')}"  # floor − lower, negative
    for name in ("text", "markdown", "junit", "sarif", "pdf"):
        assert certain in out[name], name


def test_no_pdf_figure_prints_the_noise(trap):
    spec, out = trap
    lim = next(x for x in spec.limits if x.name == "trap must pass")
    assert f"{lim.measured:.3f}" not in out["pdf"]


def test_json_keeps_the_number_and_flags_it(trap):
    spec, out = trap
    doc = json.loads(out["json"])
    schema = json.loads((ROOT / "docs" / "result.schema.json").read_text("utf-8"))
    jsonschema.Draft202012Validator(schema).validate(doc)
    by_name = {x["name"]: x for x in doc["specs"][0]["limits"]}
    flagged = by_name["trap must pass"]
    assert flagged["below_floor"] is True and flagged["floor"] < -200.0
    assert flagged["measured"] == "-inf" or flagged["measured"] <= flagged["floor"]
    assert "below_floor" not in by_name["far pass-band"] and "floor" not in by_name["far pass-band"]
    sarif = json.loads(out["sarif"])
    props = sarif["runs"][0]["results"][0]["properties"]
    assert props["belowFloor"] is True and props["floor"] == flagged["floor"]


def test_a_lossy_trap_is_a_number(tmp_path):
    # the same trap with 10 Ω in series with L1: |H| = RL / |RL + Z_trap|, with
    # Z_trap = (r + jωL) ∥ 1/(jωC) (nodal analysis by hand, common practice, no source)
    (tmp_path / "trap.cir").write_text(TRAP_NET.replace("L1 in out 1m", "L1 in x 1m\nRS x out 10"))
    (tmp_path / "trap.toml").write_text(TRAP_SPEC)
    spec = check_spec(str(tmp_path / "trap.toml"))
    lim = next(x for x in spec.limits if x.name == "trap must pass")
    f = np.linspace(4e3, 6e3, 400_001)
    w = 2 * np.pi * f
    z_l, z_c = 10.0 + 1j * w * L_TRAP, 1.0 / (1j * w * C_TRAP)
    h = R_LOAD / (R_LOAD + z_l * z_c / (z_l + z_c))
    assert lim.measured == pytest.approx(20 * np.log10(np.abs(h).min()), abs=1e-3)
    assert not lim.below_floor and lim.figures.measured == format_eng(lim.measured, "dB")


class _Probe:
    """A probe whose band extremes are given (no circuit behind it: only the relative
    floor, 300 dB below the peak, applies)."""

    def __init__(self, value_db: float, peak_db: float = 0.0) -> None:
        self.value, self.top = value_db, peak_db

    def extremes(self, quantity, lo, hi):
        e = Extremum(F_NOTCH, self.value)
        return e, e

    def peak(self):
        return Extremum(1e3, self.top)


@pytest.mark.parametrize("noise", [-321.9, -math.inf])
def test_upper_bound_on_a_zero_passes_with_a_certain_margin(noise):
    lim = GainLimit("notch", 0, 1, (5e3, 5.1e3), None, -60.0)
    (r,) = lim.judge(_Probe(noise))
    assert r.status is Status.PASS and r.floor == -300.0  # 10⁻¹⁵ of the peak
    fig = r.figures
    assert (fig.measured, fig.bound, fig.margin) == ("below -300.000 dB", "≤ -60.000 dB",
                                                     "≥ +240.000 dB")
    assert "no transmission" in r.message


def test_a_bound_below_the_floor_cannot_be_judged():
    lim = GainLimit("notch", 0, 1, (5e3, 5.1e3), None, -310.0)
    (r,) = lim.judge(_Probe(-321.9))
    assert r.status is Status.ERROR and r.margin is None
    assert r.figures.measured == "below -300.000 dB" and r.figures.margin == "—"
    assert "cannot be told" in r.message
    # re the peak: the floor moves with it
    lim = GainLimit("notch", 0, 1, (5e3, 5.1e3), None, -60.0, "peak")
    (r,) = lim.judge(_Probe(-301.9, peak_db=20.0))
    assert r.status is Status.PASS and r.floor == -300.0 and r.measured == -321.9


def test_a_deep_but_real_gain_is_not_floored():
    lim = GainLimit("stop", 0, 1, (5e3, 5.1e3), None, -60.0)
    (r,) = lim.judge(_Probe(-299.0))
    assert not r.below_floor and r.figures.measured == "-299.000 dB"


# ---- item 8: as many figures as tell the row apart ---------------------------------------

def test_a_narrow_window_prints_distinctly():
    # ±20 Hz at 10 MHz, measured 0.5 Hz inside the upper bound
    r = row_text(10.0000195e6, 9.99998e6, 10.00002e6, 0.5, "Hz", 10.0000195e6)
    lo, hi = r.bound.split(" … ")
    values = [printed(r.measured), printed(lo), printed(hi)]
    assert len(set(values)) == 3
    assert values[0] < values[2] and values[1] < values[0]  # the order survives printing
    assert printed(r.at) == values[0] and printed(r.margin) == Decimal("0.5")


def test_margin_in_db_to_the_row_decimals():
    r = row_text(-60.0004, None, -60.0, 0.0004, "dB")
    assert (r.measured, r.bound, r.margin) == ("-60.0004 dB", "≤ -60.0000 dB", "+0.0004 dB")
    # a row the house precision tells apart is printed as it always was
    r = row_text(-66.797, None, -60.0, 6.797, "dB", 60e3)
    assert (r.measured, r.bound, r.margin, r.at) == ("-66.797 dB", "≤ -60.000 dB",
                                                      "+6.797 dB", "60.000 kHz")


def test_dimensionless_house_style():
    # 4 significant figures, trailing zeros kept, a prefix letter from 1000 up
    assert format_eng(52360.0) == "52.36 k"
    assert format_eng(12.0) == "12.00" and format_eng(0.98) == "0.9800"
    assert row_text(12.02, 10.0, 14.0, 1.98, "").margin == "+1.980"


finite = st.floats(min_value=1.0, max_value=1e9, allow_nan=False, allow_infinity=False)


@settings(max_examples=200, deadline=None)
@given(finite, st.floats(min_value=1e-9, max_value=1e-3), st.floats(min_value=-1.0, max_value=1.0),
       st.sampled_from(["Hz", "Ω", "dB", ""]))
def test_distinct_values_print_distinctly(centre, rel, where, unit):
    lo, hi = centre * (1 - rel), centre * (1 + rel)
    measured = centre * (1 + where * rel * 1.5)
    margin = min(measured - lo, hi - measured)
    r = row_text(measured, lo, hi, margin, unit)
    a, b = r.bound.split(" … ")
    shown = {printed(r.measured), printed(a), printed(b)}
    assert len(shown) == len({measured, lo, hi})
    assert printed(a) < printed(b)


@pytest.fixture(scope="module")
def bandpass(tmp_path_factory):
    d = tmp_path_factory.mktemp("bp")
    (d / "bp.cir").write_text(BP_NET)
    (d / "bp.toml").write_text(BP_SPEC)
    spec = check_spec(str(d / "bp.toml"))
    return spec, outputs(CheckResult((spec,), "0.1.0", CREATED), d)


def test_a_failing_centre_reads_apart_everywhere(bandpass):
    spec, out = bandpass
    centre = next(x for x in spec.limits if x.name == "resonance: centre")
    assert centre.measured == pytest.approx(F_BP, rel=1e-12)  # f0 = 1/(2π√(LC))
    assert centre.status is Status.FAIL  # 7.6 Hz off, 5 Hz allowed
    fig = centre.figures
    assert fig.bound == "9.999995 MHz … 10.000005 MHz"  # before: 10.00 MHz … 10.00 MHz
    assert fig.measured == "10.000008 MHz" and fig.margin == "-2.645 Hz"
    for name in ("text", "markdown", "junit", "sarif", "pdf"):
        assert fig.bound in out[name], name
        assert f"measured {fig.measured}" in out[name] or fig.measured in out[name], name
    assert f'"limit_text": "{fig.bound}"' in out["json"]


def test_a_failing_worst_case_reads_apart_everywhere(bandpass):
    spec, out = bandpass
    worst = next(x for x in spec.limits if x.name == "worst case: resonance: centre")
    assert worst.status is Status.FAIL
    fig = worst.figures
    lo, hi = fig.bound.split(" … ")
    assert len({printed(fig.measured), printed(lo), printed(hi)}) == 3
    assert printed(fig.measured) > printed(hi)  # outside, above the upper bound
    for name in ("text", "markdown", "junit", "sarif", "pdf"):
        assert fig.measured in out[name] and fig.bound in out[name], name
    # the worst-case table of the PDF tells its bounds apart too
    assert tell_apart([worst.lower, worst.upper], "Hz") is not None
    assert "9.999995 MHz … 10.000005 MHz" in out["pdf"]


def test_yields_carry_their_interval_everywhere(bandpass):
    spec, out = bandpass
    y = next(x for x in spec.limits if x.kind == "yield")
    assert y.status is Status.FAIL and "95 % interval" in y.message
    for name in ("text", "markdown", "junit", "sarif", "pdf"):
        assert "95 % interval" in out[name], name


def test_a_met_yield_says_its_interval_in_junit_too():
    # the Wilson interval text as netcheck.analyses.tolerance writes it (no outside figure needed)
    from netcheck.result import SpecResult

    row = LimitResult("Monte Carlo yield (all limits)", "yield", Status.PASS, 1.0, 0.95, None,
                      0.05, "", None, message="200 of 200 samples met every limit; 95 % "
                      "interval 98.12 % – 100.00 % (Wilson score)")
    spec = SpecResult("q.toml", "q.cir", "Quillmere yield", Status.PASS, limits=(row,))
    buf = io.StringIO()
    get_renderer("junit")(CheckResult((spec,), "0.1.0", CREATED), buf, RenderOptions())
    assert "95 % interval 98.12 % – 100.00 %" in buf.getvalue()
