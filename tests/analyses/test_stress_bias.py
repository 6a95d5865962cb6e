"""Part stress on a circuit with an operating point includes each part's DC bias.

The circuit: a 12 V divider R1/R2 sets node b near 6 V; a coupling capacitor C1 brings
the AC input in; a diode D1 across R2, reverse biased, makes the circuit one with an
operating point (netcheck solves it around its DC solution). References written here:

* the DC voltage of b by scipy's brentq on KCL with the Shockley diode (Shockley 1949,
  the equation quoted from memory): (12 − V)/R1 − V/R2 + IS·(exp(−V/Vt) − 1) = 0;
* the AC small-signal circuit: the reverse-biased diode's conductance IS/Vt·exp(−V/Vt)
  is below 1e-100 S and it has no capacitance (CJO = 0), so b sees R1‖R2 to AC ground:
  v_b/v_in = jωRC/(1 + jωRC) with R = R1‖R2, and v_C1 = v_in − v_b = v_in/(1 + jωRC);
* stress with DC bias (common practice, no source): the peak of DC + a sine is
  |X_DC| + X_AC,peak; a resistor's average power is V_DC²/R + |V_AC|²/(2R).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import brentq

from netcheck import read_netlist
from netcheck.analyses.stress import judge_stress
from netcheck.analyses.tolerance import stress_over_samples
from netcheck.result import Status
from netcheck.spec.load import load_spec
from netcheck.spec.stress import parse_stress

VT = 1.380649e-23 * 300.15 / 1.602176634e-19   # kT/q at 27 °C, exact SI 2019 constants
IS, C1 = 1e-14, 100e-9
BIAS_TEE = """Quillmere QM-BT2 bias tee
VCC vcc 0 DC 12
VIN in 0 DC 0 AC 1
C1 in b 100n
R1 vcc b {r1}
R2 b 0 {r2}
D1 0 b qm_dclamp
.model qm_dclamp D(IS=1e-14)
"""
F = np.logspace(1, 5, 161)   # 10 Hz .. 100 kHz


def bias(r1: float, r2: float) -> float:
    """V(b) at DC: KCL at b with the diode's current from ground into b."""
    return brentq(lambda v: (12 - v) / r1 - v / r2 + IS * math.expm1(-v / VT), 0, 12,
                  xtol=1e-15, rtol=1e-15)


def expected(r1: float, r2: float) -> dict[str, float]:
    """C1's peak voltage, R1's average power and R2's peak current over F, DC included.
    |v_C1| falls with f (largest at F[0]); |v_b| rises with f (largest at F[-1])."""
    vb, r = bias(r1, r2), r1 * r2 / (r1 + r2)
    wrc_lo, wrc_hi = 2 * math.pi * F[0] * r * C1, 2 * math.pi * F[-1] * r * C1
    vc_ac = 1 / math.hypot(1, wrc_lo)
    vb_ac = wrc_hi / math.hypot(1, wrc_hi)
    return {"C1": vb + vc_ac,                                   # |0 − V_b| + AC peak
            "R1": (12 - vb) ** 2 / r1 + vb_ac ** 2 / (2 * r1),  # DC power + AC average
            "R2": vb / r2 + vb_ac / r2}                         # |I_DC| + AC peak


STRESS = [{"source_amplitude": 1, "parts": "C1", "max_voltage": "6.5"},
          {"source_amplitude": 1, "parts": "R1", "max_power": "4m"},
          {"source_amplitude": 1, "parts": "R2", "max_current": "1m"}]


def test_nominal_peaks_include_the_dc_bias():
    resp = read_netlist(BIAS_TEE.format(r1="10k", r2="10k")).ac("VIN", "b", freqs=F)
    got = {r.part: r for r in judge_stress(parse_stress(STRESS, "t"), resp)}
    want = expected(10e3, 10e3)
    for part in ("C1", "R1", "R2"):
        assert got[part].peak == pytest.approx(want[part], rel=1e-9), part
    vb = bias(10e3, 10e3)
    assert got["C1"].dc == pytest.approx(vb, rel=1e-9)
    assert got["R1"].dc == pytest.approx((12 - vb) ** 2 / 10e3, rel=1e-9)
    assert got["R2"].dc == pytest.approx(vb / 10e3, rel=1e-9)
    # 1 V of AC alone is far inside 6.5 V; with its 6 V of bias C1 is over its rating
    assert got["C1"].status is Status.FAIL and got["C1"].peak - got["C1"].dc < 1.0
    assert "at the DC operating point (6 V)" in got["C1"].definition
    assert got["C1"].to_json()["dc"] == pytest.approx(vb, rel=1e-9)
    # the resonance caution's ratio is the AC part only
    assert got["C1"].ratio == pytest.approx(want["C1"] - vb, rel=1e-9)


def test_a_linear_circuit_has_no_dc_part():
    text = BIAS_TEE.format(r1="10k", r2="10k").replace("D1 0 b qm_dclamp\n", "")
    got = judge_stress(parse_stress(STRESS[:1], "t"), read_netlist(text).ac("VIN", "b",
                                                                             freqs=F))[0]
    # no devices: no operating point, the AC stress alone (the DC source is not applied)
    assert got.dc is None and "dc" not in got.to_json()
    assert got.peak == pytest.approx(1 / math.hypot(1, 2 * math.pi * F[0] * 5e3 * C1),
                                     rel=1e-9)


@pytest.mark.parametrize("candidates", [6, 1])
def test_monte_carlo_judges_each_sample_with_its_own_bias(tmp_path, candidates):
    # R1 and R2 per sample move V(b) from 4 V to 8 V: which samples pass C1's 6.5 V
    # rating is decided by the DC bias, and each sample's bias is its own. With one
    # candidate most samples are only screened: the screen must carry the bias too.
    (tmp_path / "bt.cir").write_text(BIAS_TEE.format(r1="10k", r2="10k"))
    (tmp_path / "bt.toml").write_text(
        'netlist = "bt.cir"\nsource = "VIN"\noutput = "b"\n'
        '[sweep]\nstart = 10\nstop = "100k"\npoints_per_decade = 40\n'
        '[[limits]]\nkind = "gain"\nband = [10, "100k"]\nmax_db = 1\n' + "".join(
            f'[[stress]]\nsource_amplitude = 1\nparts = "{s["parts"]}"\n' +
            "".join(f'{k} = "{v}"\n' for k, v in s.items() if k.startswith("max_"))
            for s in STRESS))
    spec = load_spec(tmp_path / "bt.toml")
    r1 = np.array([10e3, 5e3, 20e3, 12e3, 8e3, 10e3])
    r2 = np.array([10e3, 10e3, 10e3, 8e3, 12e3, 9e3])
    circuit = read_netlist(str(tmp_path / "bt.cir"))
    system = circuit.ac("VIN", "b", freqs=F).system
    block, rows, passed = stress_over_samples(system, spec, {"R1": r1, "R2": r2}, 6,
                                              256 * 2**20, candidates=candidates)
    for part, quantity, rating in (("C1", "voltage", 6.5), ("R1", "power", 4e-3),
                                   ("R2", "current", 1e-3)):
        want = np.array([expected(a, b)[part] for a, b in zip(r1, r2)])
        ok, margin, peak = passed[f"stress: {part} {quantity}"]
        if candidates == 6:  # every sample judged exactly
            assert peak == pytest.approx(want, rel=1e-8), part
        else:  # the grid maximum where not judged exactly: never above the true peak
            assert (peak <= want * (1 + 1e-9)).all() and (peak >= 0.95 * want).all(), part
        assert ok.tolist() == (want <= rating).tolist(), part
        worst = next(b for b in block if b["part"] == part)
        assert worst["peak"] == pytest.approx(want.max(), rel=1e-8)
        assert worst["sample"] == int(np.argmax(want))
    # C1's verdicts follow the bias 12·R2/(R1 + R2) plus about 1 V of AC: 6, 8, 4, 4.8,
    # 7.2 and 5.7 V, so only the samples at 4 V and 4.8 V stay under 6.5 V
    assert passed["stress: C1 voltage"][0].tolist() == [False, False, True, True, False,
                                                        False]


def _with_models(text: str, models: list[str]):
    from netcheck.api import elaborate
    from netcheck.netlist.parse import load_netlist
    return elaborate(load_netlist(text), part_models=models)


def test_part_model_port_current_counts_its_current_sources_dc():
    # QB (a part model) is RA ‖ a 1 mA DC current source. KCL at a, derived here:
    # (12 − Va)/R1 = Va/RA + 1 mA → Va = 11/1.5 V with R1 = 1k, RA = 2k; the port current
    # is the current through R1, 14/3 mA. AC: a sees R1 ‖ RA = 2/3 kΩ behind C1, so
    # v_a/v_in = jωRC/(1 + jωRC) and the port's AC current is v_a/RA (largest at F[-1]).
    # The reverse-biased D1 across the supply only gives the circuit an operating point.
    text = ("Quillmere QM-IB1 current-fed load\nVCC vcc 0 DC 12\nVIN in 0 AC 1\n"
            "R1 vcc a 1k\nC1 in a 1u\nD1 0 vcc qm_dclamp\nX1 a 0 QB\n"
            ".subckt QB p n\nRA p n 2k\nIB p n DC 1m\n.ends QB\n"
            ".model qm_dclamp D(IS=1e-14)\n")
    resp = _with_models(text, ["QB"]).ac("VIN", "a", freqs=F)
    got = judge_stress(parse_stress([{"source_amplitude": 1, "parts": "X1",
                                      "max_current": "10m"}], "t"), resp)[0]
    va = 11 / 1.5
    wrc = 2 * math.pi * F[-1] * (2e3 / 3) * 1e-6
    assert got.dc == pytest.approx(va / 2e3 + 1e-3, rel=1e-6)   # = (12 − Va)/R1
    assert got.peak == pytest.approx(va / 2e3 + 1e-3 + wrc / math.hypot(1, wrc) / 2e3,
                                     rel=1e-6)


def test_part_model_with_a_device_inside_has_no_port_current():
    # a diode inside the model carries current the ports' sum of element currents cannot
    # take: the port current is an error naming it, not a pass on part of the current
    text = ("Quillmere QM-DC1 clamp\nVCC vcc 0 DC 5\nVIN in 0 AC 1\nRS vcc a 1k\n"
            "C1 in a 1u\nX1 a 0 DCLAMP\n.subckt DCLAMP p n\nD1 p n qm_dclamp\nRP p n 10k\n"
            ".ends DCLAMP\n.model qm_dclamp D(IS=1e-14)\n")
    resp = _with_models(text, ["DCLAMP"]).ac("VIN", "a", freqs=F)
    got = judge_stress(parse_stress([{"source_amplitude": "1m", "parts": "X1",
                                      "max_current": "1m"}], "t"), resp)[0]
    assert got.status is Status.ERROR and got.peak is None
    assert "X1.D1" in got.message and "in series with the port" in got.message
