"""Sampled part values on circuits with devices: every sample at its own operating point
(netcheck.mna.bias_samples), against references written in tests/mna/test_bias.py.

A resistor's tolerance moves a transistor's bias and with it gm, rπ, ro and the junction
capacitances. The references solve each sample's DC equations independently (fsolve on
KCL with the Ebers–Moll law written out) and its small-signal response by a hybrid-π
nodal solve (Sedra & Smith, from memory); the worst-case sensitivities are checked
against central differences of that independent reference.
"""

from __future__ import annotations

import numpy as np
import pytest

from netcheck.api import read_netlist
from netcheck.exceptions import OperatingPointError
from netcheck.mna import bias_samples
from netcheck.mna.assemble import assemble
from netcheck.mna.sampling import SampleSet
from netcheck.mna.sensitivity import adjoint_sensitivities

from .test_bias import CE_R, ce_netlist, ce_reference, hybrid_pi_gain

VAF = 70.0
F = np.array([30.0, 1e3, 1e6, 300e6])


def reference(monkeypatch, values: dict[str, float], f: np.ndarray) -> np.ndarray:
    """V(c)/V(in) of the stage with ``values`` in place of the nominal parts, solved
    independently (fsolve bias, hybrid-π nodal solve)."""
    with monkeypatch.context() as m:
        for name, v in values.items():
            m.setitem(CE_R, name, v)
        x, t = ce_reference(VAF)
        return hybrid_pi_gain(x, t, f, VAF, caps=True)


@pytest.fixture(scope="module")
def system():
    return assemble(read_netlist(ce_netlist(VAF, caps=True)), "VIN", "c")


def test_each_sample_against_its_own_independent_bias_and_response(system, monkeypatch):
    rng = np.random.default_rng(7)
    samples = 6
    values = {"RB2": CE_R["RB2"] * (1 + 0.1 * rng.uniform(-1, 1, samples)),
              "RC": CE_R["RC"] * (1 + 0.1 * rng.uniform(-1, 1, samples)),
              "CE": CE_R["CE"] * (1 + 0.2 * rng.uniform(-1, 1, samples))}
    ss = SampleSet(system, values, samples, F)
    got = ss.direct(np.tile(F, (samples, 1)))
    for s in range(samples):
        want = reference(monkeypatch, {k: float(v[s]) for k, v in values.items()}, F)
        np.testing.assert_allclose(got[s], want, rtol=1e-9, err_msg=f"sample {s}")
    # the premise: a 10 % RB2 moves the mid-band gain by far more than the check resolves
    assert np.ptp(np.abs(got[:, 1])) / np.abs(got[:, 1]).mean() > 0.02


def test_worst_case_sensitivities_follow_the_bias(system, monkeypatch):
    # p ∂H/∂p against a central difference of the independent reference (step 1e-4:
    # truncation ~1e-8 relative); RB2 acts on H only through the bias
    parts = [("RB2", CE_R["RB2"], 0.1), ("RC", CE_R["RC"], 0.05), ("CE", CE_R["CE"], 0.2)]
    f = np.array([1e3, 1e6])
    _, dh = adjoint_sensitivities(system, parts, f)
    h = 1e-4
    for k, (name, v, _) in enumerate(parts):
        up = reference(monkeypatch, {name: v * (1 + h)}, f)
        down = reference(monkeypatch, {name: v * (1 - h)}, f)
        np.testing.assert_allclose(dh[:, k], (up - down) / (2 * h * v), rtol=1e-6,
                                   err_msg=name)


def test_a_sample_newton_cannot_finish_is_solved_from_zero(system, monkeypatch):
    values = {"RB2": np.array([9e3, 11e3])}
    direct = SampleSet(system, values, 2, F).direct(np.tile(F, (2, 1)))
    monkeypatch.setattr(bias_samples, "_newton", lambda *a: None)
    got = bias_samples.sampled_small_signal(system.circuit, values, 2)
    assert got.restarted == 2 and list(got.regions["Q1"]) == ["forward-active"] * 2
    again = SampleSet(system, values, 2, F).direct(np.tile(F, (2, 1)))
    np.testing.assert_allclose(again, direct, rtol=1e-9)


def test_a_sample_without_an_operating_point_is_named(system, monkeypatch):
    monkeypatch.setattr(bias_samples, "_newton", lambda *a: None)

    def fails(dc):
        raise OperatingPointError("the DC operating point did not converge", None)

    monkeypatch.setattr(bias_samples, "_solve_dc", fails)
    with pytest.raises(OperatingPointError) as err:
        SampleSet(system, {"RB2": np.array([9e3, 11e3])}, 2, F)
    assert err.value.code == "analysis-311"
    assert "sample 1 (RB2 = 9000)" in str(err.value)


def test_each_sample_region_against_its_independent_bias(system, monkeypatch):
    # RC from 4.7k up to 12k: the collector falls toward the emitter and the transistor
    # saturates; the region rule (docs/devices.md) applied to the independent bias:
    # saturated when both junctions conduct and IR > 1e-4·IF
    from scipy.optimize import fsolve

    from .test_bias import CE_IS, ebers_moll, shockley

    rc = np.array([4.7e3, 6.8e3, 8.2e3, 9.1e3, 12e3])
    got = SampleSet(system, {"RC": rc}, rc.size, F).bias.regions["Q1"]
    want = []
    for r in rc:
        def kcl(x, r=float(r)):  # as ce_reference, with this RC, scaled to mA
            vb, vc, ve = x
            t = ebers_moll(vb - ve, vb - vc, VAF)
            return [1e3 * ((12 - vb) / CE_R["RB1"] - vb / CE_R["RB2"] - t["ib"]),
                    1e3 * ((12 - vc) / r - t["ic"]),
                    1e3 * (t["ic"] + t["ib"] - ve / CE_R["RE"])]

        # from the saturated side (collector near the emitter): fsolve's full steps
        # reach both kinds of solution from there
        (vb, vc, ve), info, ok, _ = fsolve(kcl, [1.9, 1.3, 1.2], xtol=1e-13,
                                           full_output=True)
        assert ok == 1 and np.max(np.abs(info["fvec"])) < 1e-9
        i_f, i_r = shockley(vb - ve, CE_IS, 1.0)[0], shockley(vb - vc, CE_IS, 1.0)[0]
        want.append("saturated" if vb - vc > 0 and i_r > 1e-4 * i_f else "forward-active")
    assert list(got) == want
    assert want[0] == "forward-active" and want[-1] == "saturated"
