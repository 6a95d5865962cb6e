"""Gain limits stated as a datasheet states them: relative to a named pass-band reference,
at a spot frequency or a multiple of a measured corner, against sloped masks; bandwidth
at any level and shape factor. Each against a closed form or scipy.signal, and each
form also over Monte Carlo samples (against the nominal check of each sample) and in the
worst case (against central differences of the nominal measurement).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from scipy import integrate, signal

from netcheck import read_netlist
from netcheck.analyses.nominal import ResponseCurve, SpecProbe, evaluate
from netcheck.analyses.sample_probe import BatchProbe
from netcheck.analyses.tolerance import with_values
from netcheck.exceptions import SpecError
from netcheck.mna.assemble import assemble
from netcheck.mna.sampling import SampleSet
from netcheck.mna.sensitivity import AdjointSensitivity
from netcheck.mna.solve import solve
from netcheck.result import Status
from netcheck.spec import parse_spec

ROOT = Path(__file__).resolve().parents[2]
TWO_PI = 2.0 * math.pi
HALF_POWER = 10.0 * math.log10(2.0)

# -- the Chebyshev anti-alias sample, rev B (its rev C is sample_netlists/aa6_cheby.cir) --

#: 6th-order Chebyshev type I, 0.5 dB ripple to FP; the netlist has unity gain at DC
FP = 15e3
EPS2 = 10 ** (0.5 / 10) - 1  # ε² of a 0.5 dB ripple (Chebyshev: ripple = 10 log10(1 + ε²))


def cheby_db(f):
    """Gain of the rev B netlist, dB: |H|² = (1 + ε²) / (1 + ε² T6²(f/FP)), the Chebyshev
    magnitude (Williams & Taylor, Electronic Filter Design Handbook, ch. 2; from memory)
    scaled to unity gain at DC (T6(0) = −1)."""
    x = np.asarray(f, float) / FP
    t6 = np.where(x <= 1, np.cos(6 * np.arccos(np.minimum(x, 1))),
                  np.cosh(6 * np.arccosh(np.maximum(x, 1))))
    return 10 * np.log10(1 + EPS2) - 10 * np.log10(1 + EPS2 * t6 ** 2)


def revb_text() -> str:
    return (Path(__file__).parent / "aa6_cheby_revB.cir").read_text()


def _spec(limits: str, start: str = "10", stop: str = "200k", ppd: int = 100) -> object:
    return parse_spec(f"""netlist = "x.cir"
source = "VIN"
output = "out"
[sweep]
start = "{start}"
stop = "{stop}"
points_per_decade = {ppd}
{limits}""", "x.toml")


def _net(title: str, *cards: str) -> str:
    """A test netlist driven by VIN from node in."""
    return "\n".join([f"Quillmere test: {title}", "VIN in 0 AC 1", *cards]) + "\n"


def _judge(netlist: str, limits: str, **sweep) -> dict:
    spec = _spec(limits, **sweep)
    res = evaluate(spec, read_netlist(netlist))
    return {r.name: r for r in res.limits}


def test_the_sample_netlist_is_the_scipy_chebyshev_design():
    # scipy.signal.cheby1(6, 0.5, ωp, analog=True) evaluated with scipy.signal.freqs,
    # times √(1 + ε²) (unity gain at DC): the sample realises it
    b, a = signal.cheby1(6, 0.5, TWO_PI * FP, analog=True)
    f = np.array([10.0, 1e3, 7.5e3, 14e3, 15e3, 20e3, 48e3, 150e3])
    _, h = signal.freqs(b, a, TWO_PI * f)
    ref = 20 * np.log10(np.abs(h)) + 10 * math.log10(1 + EPS2)
    ckt = read_netlist(revb_text())
    system = assemble(ckt, "VIN", "out")
    got = solve(system, f).magnitude_db
    np.testing.assert_allclose(got, ref, atol=1e-6)
    np.testing.assert_allclose(cheby_db(f), ref, atol=1e-9)  # the closed form used below


def limits(*tables: dict) -> str:
    """``[[limits]]`` tables written as TOML (strings quoted, lists as arrays)."""
    out = []
    for t in tables:
        out.append("[[limits]]")
        out += [f"{k} = {json.dumps(v)}" for k, v in t.items()]
    return "\n".join(out) + "\n"


PASS_BAND = ["10", "15k"]
#: the reference keys of each name: against the peak, the pass-band's lowest, highest
#: and mean gain, the gain at 1 kHz, and none
REFS = {"re peak": {"reference": "peak"},
        "re min": {"reference": "min", "reference_band": PASS_BAND},
        "re max": {"reference": "max", "reference_band": PASS_BAND},
        "re mean": {"reference": "mean", "reference_band": PASS_BAND},
        "re 1 kHz": {"reference_at": "1k"},
        "absolute": {}}
#: "at least 80 dB attenuation at fs/2 = 48 kHz" against each of them
REFERENCES = limits(*({"kind": "gain", "name": name, "at": "48k", "max_db": -80, **ref}
                      for name, ref in REFS.items()))


def cheby_more(anchor_ref: dict, slope_ref: dict) -> str:
    """A corner re the mean pass-band gain, the gain at twice it and a sloped stop-band."""
    return limits(
        {"kind": "corner", "name": "corner re mean", "level_db": 3, "side": "high",
         "range": ["1", "1meg"], **REFS["re mean"]},
        {"kind": "gain", "name": "2 x corner", "at_multiple": 2, "anchor_level_db": 3,
         "anchor_side": "high", "max_db": -20, **anchor_ref},
        {"kind": "gain", "name": "sloped", "band": ["20k", "200k"], "max_db": -10,
         "slope_db_per_decade": -100, **slope_ref},
        {"kind": "gain", "name": "2 to 4 x corner", "band_multiple": [2, 4],
         "anchor_level_db": 3, "max_db": -20, "min_db": -120, **anchor_ref})


def test_attenuation_relative_to_the_pass_band_sees_the_ripple():
    # Chebyshev closed form: the pass-band gain swings between exactly 0 dB (T6² = 1)
    # and 10 log10(1 + ε²) = 0.5 dB (T6 = 0); the mean over log f by scipy's quad
    r = _judge(revb_text(), REFERENCES)
    g48 = float(cheby_db(48e3))
    lo, hi = math.log(10.0), math.log(15e3)
    mean = integrate.quad(lambda u: float(cheby_db(math.exp(u))), lo, hi, limit=400,
                          epsabs=1e-11)[0] / (hi - lo)
    expect = {"re peak": 0.5, "re max": 0.5, "re min": 0.0, "re mean": mean,
              "re 1 kHz": float(cheby_db(1e3)), "absolute": 0.0}
    for name, ref in expect.items():
        assert r[name].measured == pytest.approx(g48 - ref, abs=1e-6), name
        assert r[name].margin == pytest.approx(-80 - (g48 - ref), abs=1e-6), name
    for name in ("re min", "re mean", "re 1 kHz"):
        assert r[name].reference_db == pytest.approx(expect[name], abs=1e-6)
    assert r["absolute"].reference_db is None
    # the peak hides the ripple: the datasheet's requirement fails by 0.24 dB against
    # the lowest pass-band gain, and passes against the peak
    assert r["re peak"].status is Status.PASS and r["re min"].status is Status.FAIL
    assert r["re min"].margin == pytest.approx(-0.236, abs=5e-4)
    assert r["re mean"].status is Status.FAIL
    assert "re the mean gain over 10.00 Hz–15.00 kHz" in r["re mean"].definition


# -- a low-pass with peaking: the corner measured from the pass-band, not the peak ------

F0, Q = 10e3, 2.0


def _peaking(q: float = Q) -> str:
    # series R–L into a shunt C, out across C: H = 1 / (1 − x² + j x / Q), x = f/f0,
    # Q = √(L/C) / R (any circuits text)
    lv = 10e-3
    cv = 1 / ((TWO_PI * F0) ** 2 * lv)
    rv = math.sqrt(lv / cv) / q
    return _net("second-order low-pass with peaking", f"R1 in a {rv!r}", f"L1 a out {lv!r}",
                f"C1 out 0 {cv!r}")


def _edge_x(level_sq: float, q: float = Q) -> float:
    """x > 1 where |H|² = level_sq: (1 − x²)² + x²/Q² = 1/level_sq, a quadratic in x²."""
    b = 1 / q ** 2 - 2
    c = 1 - 1 / level_sq
    return math.sqrt((-b + math.sqrt(b * b - 4 * c)) / 2)


def test_corner_relative_to_the_pass_band_gain():
    refs = {"re peak": {}, "re dc": {"reference_at": "10"},
            "re mean": {"reference": "mean", "reference_band": ["10", "100"]}}
    r = _judge(_peaking(), limits(*({"kind": "corner", "name": n, "level_db": 3,
                                     "range": ["1", "1meg"], "side": "high", **ref}
                                    for n, ref in refs.items())), stop="1meg")
    # closed form: |H|²max = Q² / (1 − 1/(4Q²)) (peaking second-order low-pass)
    peak_sq = Q ** 2 / (1 - 1 / (4 * Q * Q))
    down = 10 ** (-3 / 10)
    assert r["re peak"].measured == pytest.approx(F0 * _edge_x(peak_sq * down), rel=1e-9)
    # re the gain at 10 Hz (|H|² there, closed form)
    x0 = 10 / F0
    ref_sq = 1 / ((1 - x0 ** 2) ** 2 + (x0 / Q) ** 2)
    assert r["re dc"].measured == pytest.approx(F0 * _edge_x(ref_sq * down), rel=1e-9)
    assert r["re dc"].measured > 1.25 * r["re peak"].measured  # 14.8 kHz against 11.7 kHz
    # mean of the gain over 10–100 Hz in log f (scipy quad of the closed form)
    g = lambda u: -10 * math.log10((1 - (math.exp(u) / F0) ** 2) ** 2  # noqa: E731
                                   + (math.exp(u) / F0 / Q) ** 2)
    mean = integrate.quad(g, math.log(10), math.log(100))[0] / math.log(10)
    assert r["re mean"].reference_db == pytest.approx(mean, abs=1e-9)
    assert r["re mean"].measured == pytest.approx(
        F0 * _edge_x(10 ** (mean / 10) * down), rel=1e-9)


# -- spot frequencies and multiples of a measured corner --------------------------------

def _butter(order: int, fc: float) -> str:
    """Unity-gain Butterworth low-pass of ``order`` (even) as Sallen-Key sections with
    ideal buffers: Q of pair k = 1 / (2 sin((2k − 1)π/(2n))) (Butterworth poles)."""
    lines = ["Quillmere test: Butterworth low-pass", "VIN in 0 AC 1"]
    node = "in"
    for k in range(1, order // 2 + 1):
        q = 1 / (2 * math.sin((2 * k - 1) * math.pi / (2 * order)))
        w, rr = TWO_PI * fc, 10e3
        out = "out" if k == order // 2 else f"o{k}"
        lines += [f"RA{k} {node} a{k} {rr!r}", f"RB{k} a{k} b{k} {rr!r}",
                  f"CA{k} a{k} {out} {2 * q / (w * rr)!r}",
                  f"CB{k} b{k} 0 {1 / (2 * q * w * rr)!r}", f"E{k} {out} 0 b{k} 0 1"]
        node = out
    return "\n".join(lines) + "\n"


def butter_db(f, order: int, fc: float):
    """20 log10 |H| = −10 log10(1 + (f/fc)^(2n)) (Butterworth magnitude, closed form)."""
    return -10 * np.log10(1 + (np.asarray(f, float) / fc) ** (2 * order))


SPOTS = """
[[limits]]
kind = "gain"
name = "at 1k"
at = "1k"
min_db = -0.01
max_db = 0.01
[[limits]]
kind = "gain"
name = "at 2 x corner"
at_multiple = 2
anchor_level_db = 3
anchor_side = "high"
max_db = -20
reference_at = "10"
[[limits]]
kind = "gain"
name = "at 3 x centre"
at_multiple = 3
anchor = "centre"
anchor_level_db = 40
max_db = -40
[[limits]]
kind = "gain"
name = "2 to 10 x corner"
band_multiple = [2, 10]
anchor_level_db = 3
min_db = -90
max_db = -20
reference_at = "10"
[[limits]]
kind = "gain"
name = "half-power re peak"
at_multiple = 1.5
max_db = -5
reference = "peak"
"""


def test_spot_and_corner_multiples_on_a_butterworth():
    fc = 2e3
    # the four-pole design against scipy.signal.butter with freqs first
    b, a = signal.butter(4, TWO_PI * fc, analog=True)
    f = np.array([100.0, 2e3, 5e3])
    np.testing.assert_allclose(20 * np.log10(np.abs(signal.freqs(b, a, TWO_PI * f)[1])),
                               butter_db(f, 4, fc), atol=1e-9)
    r = _judge(_butter(4, fc), SPOTS, start="10", stop="100k")
    assert r["at 1k"].measured == pytest.approx(float(butter_db(1e3, 4, fc)), abs=1e-9)
    assert r["at 1k"].at_hz == 1e3
    # the −3 dB corner re the gain at 10 Hz: (f/fc)^8 = 10^0.3 (1 + (10/fc)^8) − 1
    ref = float(butter_db(10.0, 4, fc))
    f3 = fc * (10 ** 0.3 * (1 + (10 / fc) ** 8) - 1) ** (1 / 8)
    assert r["at 2 x corner"].at_hz == pytest.approx(2 * f3, rel=1e-9)
    assert r["at 2 x corner"].measured == pytest.approx(
        float(butter_db(2 * f3, 4, fc)) - ref, abs=1e-8)
    # over 2 to 10 times that corner the monotone Butterworth is highest at 2 f3 and
    # lowest at 10 f3 (closed form): the upper bound decides, 4 dB inside against 10 dB
    hi = float(butter_db(2 * f3, 4, fc)) - ref
    lo = float(butter_db(10 * f3, 4, fc)) - ref
    assert r["2 to 10 x corner"].measured == pytest.approx(hi, abs=1e-8)
    assert r["2 to 10 x corner"].at_hz == pytest.approx(2 * f3, rel=1e-9)
    assert r["2 to 10 x corner"].margin == pytest.approx(-20 - hi, abs=1e-8)
    assert -20 - hi < lo + 90
    # a low-pass has no lower edge: the centre anchor cannot be measured, said so
    assert r["at 3 x centre"].status is Status.ERROR
    # half-power re the peak (at the sweep start, 10 Hz, the Butterworth being monotone)
    f_hp = fc * (2 * (1 + (10 / fc) ** 8) - 1) ** (1 / 8)
    assert r["half-power re peak"].measured == pytest.approx(
        float(butter_db(1.5 * f_hp, 4, fc)) - ref, abs=1e-8)


# -- sloped masks -------------------------------------------------------------------------

RC_FC = 1e3


def _rc() -> str:
    rv, cv = 1e3, 1 / (TWO_PI * RC_FC * 1e3)
    return _net("RC low-pass", f"R1 in out {rv!r}", f"C1 out 0 {cv!r}")


def test_sloped_mask_worst_point_is_where_the_slopes_match():
    # RC: G = −10 log10(1 + x²), dG/dlog10 f = −20 x²/(1 + x²); against a line of
    # −10 dB/decade the excess G − L is largest where the slopes match: x² = 1, at fc
    r = _judge(_rc(), """
[[limits]]
kind = "gain"
name = "two ends"
band = ["100", "10k"]
max_db = [7, -13]
[[limits]]
kind = "gain"
name = "slope"
band = ["100", "10k"]
max_db = 7
slope_db_per_decade = -10
[[limits]]
kind = "gain"
name = "points"
max_points = [["100", 7], ["1k", -3], ["10k", -13]]
[[limits]]
kind = "gain"
name = "floor"
band = ["100", "10k"]
min_db = [-1, -30]
""", start="10", stop="100k")
    for name in ("two ends", "slope", "points"):
        assert r[name].at_hz == pytest.approx(RC_FC, rel=1e-6), name
        assert r[name].measured == pytest.approx(-HALF_POWER, abs=1e-9)
        assert r[name].upper == pytest.approx(-3.0, abs=1e-9)
        assert r[name].margin == pytest.approx(-3.0 + HALF_POWER, abs=1e-9)
        assert r[name].status is Status.PASS  # by 10 mdB: the line just clears fc
    # lower line −1 → −30 dB over two decades (−14.5 dB/decade): G − L has its one
    # stationary point at x² = 14.5/5.5, a maximum (G is concave in log f), so the
    # smallest excess is at a band end: at 100 Hz, G = −10 log10(1.01) against −1 dB
    assert r["floor"].at_hz == pytest.approx(100.0, rel=1e-12)
    assert r["floor"].margin == pytest.approx(1 - 10 * math.log10(1.01), abs=1e-9)
    assert r["floor"].lower == pytest.approx(-1.0, abs=1e-12)


@pytest.mark.parametrize("table, key", [
    ('band = ["100", "1k"]\nmax_db = [1, 2, 3]', "limits[0].max_db"),
    ('at = "1k"\nmax_db = [1, 2]', "limits[0].max_db"),
    ('max_points = [["1k", 1], ["100", 2]]', "limits[0].max_points"),
    ('band = ["100", "1k"]\nmax_db = [0, -10]\nmin_db = [-5, -5]', "limits[0].min_db"),
    ('at = "1k"\nband = ["100", "1k"]\nmax_db = 0', "limits[0].at"),
    ('at = "1k"\nmax_db = 0\nreference = "mean"', "limits[0].reference_band"),
    ('at = "1k"\nmax_db = 0\nreference_band = ["100", "1k"]', "limits[0].reference_band"),
    ('at = "1k"\nmax_db = 0\nreference = "peak"\nreference_at = "100"',
     "limits[0].reference_at"),
    ('at = "1k"\nmax_db = 0\nanchor = "corner"', "limits[0].anchor"),
    ('at = "1meg"\nmax_db = 0', "limits[0].at"),
])
def test_bad_relative_and_sloped_keys_are_named(table, key):
    with pytest.raises(SpecError) as info:
        _spec(f'[[limits]]\nkind = "gain"\n{table}\n', stop="100k")
    assert info.value.where == key
    assert info.value.code.startswith("spec-2")


def test_corner_reference_db_and_reference_exclude_each_other():
    with pytest.raises(SpecError) as info:
        _spec('[[limits]]\nkind = "corner"\nrange = [1, 2]\nreference_db = 0\n'
              'reference = "mean"\nreference_band = ["10", "100"]\n')
    assert info.value.where == "limits[0].reference" and info.value.code == "spec-260"


# -- bandwidth at any level and shape factor ----------------------------------------------

def _bp(q: float = 5.0, f0: float = 10e3) -> str:
    # series R–L–C, out across R: H = 1 / (1 + jQ(x − 1/x)), Q = √(L/C)/R (any circuits text)
    lv = 10e-3
    cv = 1 / ((TWO_PI * f0) ** 2 * lv)
    rv = math.sqrt(lv / cv) / q
    return _net("series RLC band-pass", f"L1 in a {lv!r}", f"C1 a out {cv!r}",
                f"R1 out 0 {rv!r}")


def test_bandwidth_and_shape_factor_of_a_single_resonator():
    # closed form: |H|² = 1/(1 + Q²(x − 1/x)²); the edges d dB down have
    # x_high − x_low = √(10^(d/10) − 1) / Q, so BW(d) = f0 √(10^(d/10) − 1) / Q
    r = _judge(_bp(), """
[[limits]]
kind = "bandwidth"
name = "bw6"
level_db = 6
range = ["1", "1meg"]
[[limits]]
kind = "bandwidth"
name = "bw40"
level_db = 40
range = ["1", "1meg"]
[[limits]]
kind = "shape_factor"
name = "sf"
levels_db = [6, 60]
range = [1, 100]
""", start="1", stop="10meg")
    bw = lambda d: 10e3 * math.sqrt(10 ** (d / 10) - 1) / 5.0  # noqa: E731
    assert r["bw6"].measured == pytest.approx(bw(6), rel=1e-9)
    assert r["bw40"].measured == pytest.approx(bw(40), rel=1e-9)
    assert r["sf"].measured == pytest.approx(bw(60) / bw(6), rel=1e-9)
    assert r["sf"].status is Status.FAIL  # ≈ 579: a single resonator has poor skirts


# -- Monte Carlo: each sample as the nominal check judges it ------------------------------

def _agree(netlist: str, limits: str, parts: tuple[str, ...], **sweep) -> None:
    spec = _spec(limits, **sweep)
    ckt = read_netlist(netlist)
    values0 = {e.name: e.value for e in ckt.elements if e.name in parts}
    count = 6
    rng = np.random.default_rng(16)
    values = {k: v * np.concatenate([[1.0], rng.uniform(0.97, 1.03, count - 1)])
              for k, v in values0.items()}
    system = assemble(ckt, "VIN", "out")
    for direct in (False, True):
        ss = SampleSet(system, values, count, spec.sweep.grid(), 2 ** 28)
        if direct:  # every other sample solved directly (no pole–zero form)
            ss.solve_directly(np.arange(0, count, 2))
        bp = BatchProbe(ss)
        rows = {name: (m, g) for lim in spec.limits for name, m, g in lim.judge_batch(bp)}
        for i in range(count):
            nominal = evaluate(spec, with_values(ckt, {k: float(v[i]) for k, v in
                                                       values.items()}))
            for res in nominal.limits:
                m, g = rows[res.name]
                assert m[i] == pytest.approx(res.measured, rel=1e-7, abs=1e-7), \
                    (res.name, i, direct)
                assert g[i] == pytest.approx(res.margin, rel=1e-7, abs=1e-7), \
                    (res.name, i, direct)


def test_monte_carlo_agrees_on_the_chebyshev_sample():
    parts = ("C1A", "C1B", "C2A", "C2B", "C3A", "C3B", "R1A", "R3B")
    _agree(revb_text(), REFERENCES + cheby_more(REFS["re min"], REFS["re peak"]) + limits(
        {"kind": "gain", "name": "pass mask",
         "min_points": [["10", -0.1], ["10k", -0.2], ["15k", -0.6]],
         "max_points": [["10", 0.6], ["10k", 0.6], ["15k", 0.7]],
         "reference": "at", "reference_at": "100"}), parts)


def bp_widths(bw_ref: dict, sf_ref: dict) -> str:
    """The 20 dB bandwidth and the 30 dB / 3 dB shape factor, each against a reference."""
    return limits({"kind": "bandwidth", "name": "bw20", "level_db": 20,
                   "range": ["1", "1meg"], **bw_ref},
                  {"kind": "shape_factor", "name": "sf", "levels_db": [3, 30],
                   "range": [1, 100], **sf_ref})


def test_monte_carlo_agrees_on_bandwidth_and_shape_factor():
    _agree(_bp(), bp_widths({"reference_at": "10k"},
                            {"reference": "max", "reference_band": ["9k", "11k"]}),
           ("L1", "C1", "R1"), start="10", stop="10meg")


# -- worst case: adjoint sensitivities against central differences ------------------------

def _probe(ckt, spec):
    system = assemble(ckt, spec.source, spec.output[0])
    return system, SpecProbe(ResponseCurve.of(solve(system, spec.sweep.grid())), spec.sweep)


@pytest.mark.parametrize("which", ["cheby", "bp"])
def test_sensitivities_match_central_differences(which):
    # Director & Rohrer 1969 adjoint sensitivities through each new definition (reference
    # levels, anchored spots, sloped worst points, edges below a measured level) against
    # central differences of the nominal measurement, one part moved at a time
    # (the Chebyshev's peak and pass-band minimum are equiripple: several equal extremes,
    # a kink where no derivative exists, so its references here are the smooth ones)
    if which == "cheby":
        text, parts_of = revb_text(), ("C1B", "C2A", "C3A", "C3B", "R2B")
        smooth = ("re mean", "re 1 kHz", "absolute")
        spec = _spec(limits(*({"kind": "gain", "name": n, "at": "48k", "max_db": -80,
                               **REFS[n]} for n in smooth))
                     + cheby_more({"reference_at": "100"}, REFS["re mean"]))
    else:
        text, parts_of = _bp(), ("L1", "C1", "R1")
        spec = _spec(bp_widths({"reference_at": "9k"},
                               {"reference": "mean", "reference_band": ["9k", "11k"]})
                     + limits({"kind": "gain", "name": "at 2 x centre", "at_multiple": 2,
                               "anchor": "centre", "anchor_level_db": 10, "max_db": 0},
                              {"kind": "gain", "name": "moving", "band_multiple": [0.3, 0.9],
                               "anchor": "centre", "anchor_level_db": 10, "max_db": 0},
                              {"kind": "gain", "name": "sloped re peak", "band": ["1k", "8k"],
                               "max_db": [-30, -3], "reference": "peak"},
                              {"kind": "gain", "name": "band re max", "band": ["20k", "40k"],
                               "max_db": -3, "reference": "max",
                               "reference_band": ["5k", "20k"]}),
                     start="10", stop="10meg")
    ckt = read_netlist(text)
    system, probe = _probe(ckt, spec)
    parts = [(e.name, e.value, 0.01) for e in ckt.elements if e.name in parts_of]
    adj = AdjointSensitivity(system, parts)
    h = 1e-5
    for lim in spec.limits:
        (row,) = lim.sensitivities(probe, adj)
        (res,) = lim.judge(probe)
        # the side that decides the nominal result is the one its value is measured on
        low_decides = res.lower is not None and res.margin == pytest.approx(
            res.measured - res.lower, abs=1e-12)
        value, derivative = (row.low, row.d_low) if low_decides else (row.high, row.d_high)
        assert value == pytest.approx(res.measured, rel=1e-9, abs=1e-9)
        fd = []
        for name, v, _ in parts:
            m = [lim.judge(_probe(with_values(ckt, {name: v * (1 + s * h)}), spec)[1])[0]
                 .measured for s in (1, -1)]
            fd.append((m[0] - m[1]) / (2 * h))
        fd = np.array(fd)
        np.testing.assert_allclose(derivative, fd, rtol=2e-4, atol=2e-5 * np.abs(fd).max(),
                                   err_msg=lim.name)


# -- the plots draw each form where the spec puts it --------------------------------------

def test_plots_draw_sloped_relative_and_spot_bounds_where_they_are():
    # the RC's closed form gives each level: the mean over 10–100 Hz in log f by quad
    from netcheck.report.plot_response import spec_figures

    spec = _spec(limits(
        {"kind": "gain", "name": "slope", "band": ["2k", "20k"], "max_db": [-3, -23]},
        {"kind": "gain", "name": "re mean", "band": ["30k", "90k"], "max_db": -20,
         "reference": "mean", "reference_band": ["10", "100"]},
        {"kind": "gain", "name": "spot", "at": "500", "min_db": -3, "max_db": 1}),
        start="10", stop="100k")
    res = evaluate(spec, read_netlist(_rc()))
    rc = lambda f: -10 * math.log10(1 + (f / RC_FC) ** 2)  # noqa: E731
    mean = integrate.quad(lambda u: rc(math.exp(u)), math.log(10), math.log(100))[0] \
        / math.log(10)
    lines = [(np.asarray(ln.get_xdata(), float), np.asarray(ln.get_ydata(), float))
             for ln in spec_figures(res)[0][1].axes[0].get_lines()]

    def drawn(f: float, y: float) -> bool:
        return any(x.size and np.any(np.isclose(x, f, rtol=1e-9)) and
                   np.any(np.isclose(yy[np.isclose(x, f, rtol=1e-9)], y, atol=1e-9))
                   for x, yy in lines)

    # the sloped bound through both its ends, straight in log f between them
    assert drawn(2e3, -3.0) and drawn(20e3, -23.0)
    # the relative bound at the level measured, the spot's range at its frequency
    assert drawn(30e3, -20.0 + mean) and drawn(90e3, -20.0 + mean)
    assert drawn(500.0, -3.0) and drawn(500.0, 1.0)
