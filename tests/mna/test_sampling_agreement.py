"""Monte Carlo agrees with the nominal check, sample by sample.

Each case is one where the batched measurements (:mod:`netcheck.analyses.sample_probe`, through
``netcheck.analyses.tolerance.run_samples`` or a :class:`BatchProbe` directly) once differed
from the nominal check (``netcheck.analyses.nominal.evaluate`` on the circuit with the sample's
values): a corner whose fixed reference lies above the pass-band, a narrow peak on a
sample solved directly (no pole–zero form to take seeds from), and a crossing hidden
between grid points by a narrow trap. Every case also has its closed form.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import optimize, signal

from netcheck import read_netlist
from netcheck.mna import sampling
from netcheck.mna.assemble import assemble
from netcheck.analyses.nominal import evaluate
from netcheck.result import Status
from netcheck.analyses.sample_probe import BatchProbe
from netcheck.mna.sampling import SampleSet
from netcheck.spec import parse_spec
from netcheck.analyses.tolerance import _chunk_size, run_samples, with_values

TWO_PI = 2.0 * math.pi
HALF_POWER = 10.0 * math.log10(2.0)
MEMORY = 2**28


def _spec(body: str, start: str, stop: str, ppd: int) -> str:
    return f"""netlist = "quillmere.cir"
source = "V1"
output = "out"
[sweep]
start = "{start}"
stop = "{stop}"
points_per_decade = {ppd}
{body}"""


def _nominal(ckt, spec, values: dict[str, np.ndarray], i: int) -> dict:
    """The nominal check's results by limit name for sample ``i``."""
    res = evaluate(spec, with_values(ckt, {k: float(v[i]) for k, v in values.items()}))
    return {lim.name: lim for lim in res.limits}


def _draw(nominal: dict[str, float], spread: float, count: int, seed: int
          ) -> dict[str, np.ndarray]:
    """The nominal values first, then ``count - 1`` uniform draws within ±spread."""
    rng = np.random.default_rng(seed)
    return {k: v * np.concatenate([[1.0], rng.uniform(1 - spread, 1 + spread, count - 1)])
            for k, v in nominal.items()}


# -- a fixed corner reference above the pass-band ------------------------------------------

DIVIDER_RC = """Quillmere Instruments QL-2 loaded RC low-pass
V1 in 0 AC 1
R1 in out 1k
R2 out 0 3k
C1 out 0 100n
"""


def _divider_corner(spec_body: str) -> tuple:
    ckt = read_netlist(DIVIDER_RC)
    spec = parse_spec(_spec(spec_body, "10", "100k", 50), "quillmere.toml")
    values = _draw({"R1": 1e3, "R2": 3e3, "C1": 100e-9}, 0.05, 6, 21)
    system = assemble(ckt, "V1", "out")
    margins, measured, _, _, _ = run_samples(system, spec, values, 6, MEMORY)
    return ckt, spec, values, margins, measured


class TestCornerReference:
    def test_no_corner_when_the_pass_band_is_below_the_level(self):
        body = """[[limits]]
kind = "corner"
name = "corner -1 dB re 0 dB"
range = ["1", "100k"]
side = "high"
level_db = 1
reference_db = 0
"""
        ckt, spec, values, margins, measured = _divider_corner(body)
        # the divider's pass-band gain R2/(R1 + R2) (Ohm's law): every sample's is
        # below -1 dB, so no frequency has the gain fall to -1 dB from above
        k = values["R2"] / (values["R1"] + values["R2"])
        assert (20 * np.log10(k) < -2.0).all()
        name = "corner -1 dB re 0 dB"
        assert np.isnan(measured[name]).all()
        assert (margins[name] == -np.inf).all()
        for i in range(6):
            lim = _nominal(ckt, spec, values, i)[name]
            assert lim.status is Status.ERROR and lim.measured is None
            assert "is not above the corner level" in lim.message

    def test_corner_below_the_reference_follows_the_first_order_formula(self):
        body = """[[limits]]
kind = "corner"
name = "corner -1 dB re -2 dB"
range = ["500", "1k"]
side = "high"
level_db = 1
reference_db = -2
"""
        ckt, spec, values, margins, measured = _divider_corner(body)
        name = "corner -1 dB re -2 dB"
        r1, r2, c1 = values["R1"], values["R2"], values["C1"]
        # Thevenin equivalent of the divider: H = k/(1 + jω/ωp), k = R2/(R1 + R2),
        # ωp = 1/((R1 ∥ R2) C1); |H|² = 10^(-3/10) at ω = ωp·sqrt(k²·10^(3/10) − 1)
        k = r2 / (r1 + r2)
        fp = (r1 + r2) / (r1 * r2 * c1) / TWO_PI
        ref = fp * np.sqrt(k * k * 10 ** 0.3 - 1)
        np.testing.assert_allclose(measured[name], ref, rtol=1e-10)
        for i in range(6):
            lim = _nominal(ckt, spec, values, i)[name]
            assert lim.measured == pytest.approx(measured[name][i], rel=1e-10)
            assert (lim.status is Status.PASS) == (margins[name][i] >= 0)


# -- a narrow peak on samples solved directly -----------------------------------------------

PEAKER = dict(R1=1e3, R2=1e3, C2=159e-9, LX=0.7958, CX=7.9577e-12, RX=10.0)


def _peaker(line: int) -> str:
    """A resistive divider bridged by a high-Q series LC (a peak near 63 kHz), and an
    RC line of ``line`` stages hanging off the driven input: it leaves the response
    alone but makes the system as large as wanted."""
    stages = "\n".join(f"RL{i} n{i} n{i + 1} 1k\nCL{i} n{i + 1} 0 1n" for i in range(line))
    return f"""Quillmere Instruments QN-3 peaker with a dangling line
V1 in 0 AC 1
R1 in out {PEAKER['R1']!r}
R2 out 0 {PEAKER['R2']!r}
C2 out 0 {PEAKER['C2']!r}
LX in m {PEAKER['LX']!r}
CX m x {PEAKER['CX']!r}
RX x out {PEAKER['RX']!r}
RH in n0 1k
CH n0 0 1n
{stages}
"""


PEAK_SPEC = _spec("""[[limits]]
kind = "gain"
name = "max gain"
band = ["100", "100k"]
max_db = -3
""", "100", "100k", 10)


def _peaker_tf(lx: float, cx: float) -> tuple[np.ndarray, np.ndarray]:
    """H = V(out)/V(in) by nodal analysis at ``out``: with Y1 = 1/R1, Y2 = 1/R2 + sC2
    and the series branch sCX/D, D = LX CX s² + RX CX s + 1,
    H = (Y1 D + sCX)/((Y1 + Y2) D + sCX)."""
    p = PEAKER
    d = np.array([lx * cx, p["RX"] * cx, 1.0])
    num = np.polyadd(d / p["R1"], [cx, 0.0])
    den = np.polyadd(np.polymul([p["C2"], 1 / p["R1"] + 1 / p["R2"]], d), [cx, 0.0])
    return num, den


def _peaker_peak(lx: float, cx: float) -> tuple[float, float]:
    """Peak frequency (Hz) and gain (dB) of the closed form: scipy.signal.freqs
    evaluates it, bounded Brent (scipy.optimize) maximises it within a few
    half-widths of the pole (Q is about 30 000)."""
    num, den = _peaker_tf(lx, cx)
    pole = max(np.roots(den), key=lambda r: r.imag)
    f0 = pole.imag / TWO_PI

    half = abs(pole.real / pole.imag)  # the peak's relative half-width

    def loss(t: float) -> float:  # t: offset from the pole frequency in half-widths
        return -float(np.abs(signal.freqs(num, den, worN=[TWO_PI * f0 * (1 + half * t)])[1][0]))

    res = optimize.minimize_scalar(loss, bounds=(-10.0, 10.0), method="bounded",
                                   options={"xatol": 1e-9})
    return f0 * (1 + half * float(res.x)), 20 * math.log10(-res.fun)


class TestDirectSamplesGetPoleSeeds:
    # 320 stages: over 300 unknowns, the per-sample sparse path. Dense: a nominal form
    # that fails its check (as it does for about 200 stages here) leaves every sample to
    # direct solves; that is made to happen on the small circuit, which is quicker
    @pytest.mark.parametrize("line,count,sparse", [(0, 4, False), (320, 2, True)])
    def test_peak_between_grid_points_is_found(self, line, count, sparse, monkeypatch):
        ckt = read_netlist(_peaker(line))
        spec = parse_spec(PEAK_SPEC, "quillmere.toml")
        system = assemble(ckt, "V1", "out")
        if not sparse:
            monkeypatch.setattr(sampling, "_nominal_form", lambda system, grid: (None, None))
        values = _draw({"LX": PEAKER["LX"], "CX": PEAKER["CX"]}, 0.05, count, 22)
        ss = SampleSet(system, values, count, spec.sweep.grid(), MEMORY)
        assert ss.direct_rows.size == count and (ss.sparse is not None) == sparse
        assert ss.counts is None and ss.poles.shape[1] == 0
        # each sample's followed seed is its own pole (numpy.roots of the closed form)
        seeds = ss.direct_seeds() * ss.w_scale
        # sparse: a budget of one sample per chunk, so later chunks reuse the nominal
        # seed poles the first one found
        memory = 100_000 if sparse else MEMORY
        assert (_chunk_size(system, spec, memory) == 1) == sparse
        margins, measured, _, _, _ = run_samples(system, spec, values, count, memory)
        for i in range(count):
            num, den = _peaker_tf(values["LX"][i], values["CX"][i])
            pole = max(np.roots(den), key=lambda r: r.imag)
            assert np.min(np.abs(seeds[i] - pole)) < 1e-9 * abs(pole)
            f_pk, g_pk = _peaker_peak(values["LX"][i], values["CX"][i])
            assert g_pk > 3.0  # well above the -3 dB limit: every sample fails
            assert measured["max gain"][i] == pytest.approx(g_pk, abs=1e-9)
            lim = _nominal(ckt, spec, values, i)["max gain"]
            assert lim.status is Status.FAIL and margins["max gain"][i] < 0
            assert lim.measured == pytest.approx(measured["max gain"][i], abs=1e-9)
            assert lim.at_hz == pytest.approx(f_pk, rel=1e-6)

    def test_samples_whose_form_failed_follow_the_nominal_poles(self):
        # a small peaker with a form; half the samples are then solved directly
        ckt = read_netlist(_peaker(0))
        spec = parse_spec(PEAK_SPEC, "quillmere.toml")
        values = _draw({"LX": PEAKER["LX"], "CX": PEAKER["CX"]}, 0.05, 6, 23)
        ss = SampleSet(assemble(ckt, "V1", "out"), values, 6, spec.sweep.grid(), MEMORY)
        assert ss.counts is not None and ss.direct_rows.size == 0
        assert ss.direct_seeds().shape == (6, 0)
        ss.solve_directly(np.array([1, 3, 4]))
        seeds = ss.direct_seeds() * ss.w_scale
        assert np.isnan(seeds[[0, 2, 5]]).all()
        bp = BatchProbe(ss)
        peak = bp.peak()
        for i in range(6):
            f_pk, g_pk = _peaker_peak(values["LX"][i], values["CX"][i])
            if i in (1, 3, 4):
                # numpy.roots of the closed form's denominator
                pole = max(np.roots(_peaker_tf(values["LX"][i], values["CX"][i])[1]),
                           key=lambda r: r.imag)
                assert np.min(np.abs(seeds[i] - pole)) < 1e-9 * abs(pole)
            assert peak.value[i] == pytest.approx(g_pk, abs=1e-9)
            assert peak.frequency_hz[i] == pytest.approx(f_pk, rel=1e-6)
            lim = _nominal(ckt, spec, values, i)["max gain"]
            assert lim.measured == pytest.approx(peak.value[i], abs=1e-9)


# -- crossings hidden between grid points by a narrow trap --------------------------------

def _trap_gain_db(f: np.ndarray | float, v: dict[str, float]) -> np.ndarray:
    """20 log10 |H| of R1 feeding C1 ∥ (RT + LT + CT in series) (voltage divider of
    the impedances, by hand)."""
    w = TWO_PI * np.asarray(f, float)
    zt = v["RT"] + 1j * w * v["LT"] + 1 / (1j * w * v["CT"])
    zc = 1 / (1j * w * v["C1"])
    zp = zt * zc / (zt + zc)
    return 20 * np.log10(np.abs(zp / (v["R1"] + zp)))


def _trap_netlist(title: str, v: dict[str, float]) -> str:
    return f"""Quillmere Instruments {title}
V1 in 0 AC 1
R1 in out {v['R1']!r}
C1 out 0 {v['C1']!r}
LT out t {v['LT']!r}
CT t u {v['CT']!r}
RT u 0 {v['RT']!r}
"""


def _sample(values: dict[str, np.ndarray], i: int) -> dict[str, float]:
    return {k: float(v[i]) for k, v in values.items()}


def _probe(system, values, count, spec, direct: bool) -> BatchProbe:
    ss = SampleSet(system, values, count, spec.sweep.grid(), MEMORY)
    assert ss.direct_rows.size == 0
    if direct:  # every other sample takes the direct path (followed seeds, bisection)
        ss.solve_directly(np.arange(0, count, 2))
    return BatchProbe(ss)


class TestHiddenCrossings:
    @pytest.mark.parametrize("direct", [False, True])
    def test_hum_trap_below_a_low_pass_corner(self, direct):
        f_trap, lt = 2985.0, 10.0
        nominal = {"R1": 1e3, "C1": 15.9e-9, "LT": lt, "CT": 1 / ((TWO_PI * f_trap) ** 2 * lt),
                   "RT": 10.0}
        ckt = read_netlist(_trap_netlist("QL-5 low-pass with a hum trap", nominal))
        spec = parse_spec(_spec("""[[limits]]
kind = "corner"
name = "corner"
range = ["5k", "20k"]
side = "high"
""", "100", "100k", 20), "quillmere.toml")
        values = _draw(nominal, 0.01, 5, 24)
        bp = _probe(assemble(ckt, "V1", "out"), values, 5, spec, direct)
        got = spec.limits[0].judge_batch(bp)[0]
        for i in range(5):
            v = _sample(values, i)
            # the trap's series resonance 1/(2π sqrt(LT CT)) sits between grid points
            ft = 1 / (TWO_PI * math.sqrt(v["LT"] * v["CT"]))
            k = np.searchsorted(spec.sweep.grid(), ft)
            assert (_trap_gain_db(spec.sweep.grid()[k - 1:k + 1], v) > -3).all()
            # the closed form's first half-power crossing above the peak (the sweep start,
            # where this low-pass is highest), by Brent's method (scipy.optimize.brentq)
            level = float(_trap_gain_db(100.0, v)) - HALF_POWER
            edge = optimize.brentq(lambda f: float(_trap_gain_db(f, v)) - level,
                                   0.99 * ft, ft, xtol=1e-12, rtol=1e-15)
            assert got[1][i] == pytest.approx(edge, rel=1e-9)
            lim = _nominal(ckt, spec, values, i)["corner"]
            assert lim.status is Status.FAIL and got[2][i] < 0
            assert lim.measured == pytest.approx(got[1][i], rel=1e-9)

    @pytest.mark.parametrize("direct", [False, True])
    def test_notch_between_heavily_damped_poles(self, direct):
        # a trap with sqrt(LT/CT) = 400 Ω behind 1 kΩ: its poles are real, only its
        # zeros are near the axis, so the zero frequency is what marks the dip
        f_trap, z0 = 29850.0, 400.0
        nominal = {"R1": 1e3, "C1": 0.159e-9, "LT": z0 / (TWO_PI * f_trap),
                   "CT": 1 / (TWO_PI * f_trap * z0), "RT": 0.1}
        ckt = read_netlist(_trap_netlist("QL-6 low-pass with a broad-pole trap", nominal))
        spec = parse_spec(_spec("""[[limits]]
kind = "corner"
name = "-40 dB edge"
range = ["1k", "20k"]
side = "low"
level_db = 40
reference_db = 0
""", "1k", "1meg", 20), "quillmere.toml")
        values = _draw(nominal, 0.01, 5, 25)
        bp = _probe(assemble(ckt, "V1", "out"), values, 5, spec, direct)
        got = spec.limits[0].judge_batch(bp)[0]
        assert np.abs(bp.ss.poles.imag).max() == 0.0
        for i in range(5):
            v = _sample(values, i)
            ft = 1 / (TWO_PI * math.sqrt(v["LT"] * v["CT"]))
            # moving down from the peak (near 275 kHz) the gain first reaches -40 dB on
            # the upper flank of the notch: Brent's method on the closed form
            edge = optimize.brentq(lambda f: float(_trap_gain_db(f, v)) + 40.0,
                                   ft, 1.1 * ft, xtol=1e-12, rtol=1e-15)
            k = np.searchsorted(spec.sweep.grid(), edge)
            assert (_trap_gain_db(spec.sweep.grid()[k - 1:k + 1], v) > -40).all()
            assert got[1][i] == pytest.approx(edge, rel=1e-9)
            lim = _nominal(ckt, spec, values, i)["-40 dB edge"]
            assert lim.status is Status.FAIL and got[2][i] < 0
            assert lim.measured == pytest.approx(got[1][i], rel=1e-9)
