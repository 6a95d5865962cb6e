"""Adjoint sensitivities of measured quantities against closed forms and central differences."""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest

from circuits import C, L, R, SERIES_RLC
from netcheck import read_netlist
from netcheck.mna.assemble import assemble
from netcheck.analyses.nominal import ResponseCurve, SpecProbe
from netcheck.measure import resonance
from netcheck.mna import sensitivity
from netcheck.mna.sensitivity import AdjointSensitivity
from netcheck.mna.solve import solve
from netcheck.spec import parse_spec
from netcheck.analyses.tolerance import with_values


def _probe(ckt, spec):
    system = assemble(ckt, spec.source, spec.output[0])
    curve = ResponseCurve.of(solve(system, spec.sweep.grid()))
    return system, SpecProbe(curve, spec.sweep)


def test_series_rlc_resonance_sensitivities_match_closed_form():
    # Series RLC (textbook closed forms): f0 = 1/(2 pi sqrt(LC)), BW = R/(2 pi L),
    # Q = (1/R) sqrt(L/C). As power laws their logarithmic derivatives are the exponents:
    #   d ln f0 = -1/2 d ln L - 1/2 d ln C;  d ln BW = d ln R - d ln L;
    #   d ln Q = -d ln R + 1/2 d ln L - 1/2 d ln C.
    # At f0 the impedance is R alone, and a minimum, so d|Z|/d ln R = R, 0 for L and C.
    ckt = read_netlist(SERIES_RLC)
    system = assemble(ckt, "V1", "out")
    parts = [("C1", C, 0.05), ("L1", L, 0.05), ("R1", R, 0.01)]
    adj = AdjointSensitivity(system, parts)
    res = resonance(ResponseCurve.of(solve(system, np.geomspace(1e4, 2e5, 400))))
    d = adj.resonance(res)
    exponents = {"f_center_hz": (-0.5, -0.5, 0.0), "f_peak_hz": (-0.5, -0.5, 0.0),
                 "bandwidth_hz": (0.0, -1.0, 1.0), "q": (-0.5, 0.5, -1.0)}
    for key, expected in exponents.items():
        np.testing.assert_allclose(d[key] / getattr(res, key), expected, atol=1e-9)
    # the half-power edges: f_(L,H) = f0 (sqrt(1 + 1/(4Q^2)) -+ 1/(2Q)); their R-sensitivity
    # is -+ BW/2 (d f_(H) - d f_(L) = d BW = BW d ln R and f_L f_H = f0^2 is R-free)
    assert d["f_high_hz"][2] == pytest.approx(res.bandwidth_hz / 2 * res.f_high_hz / res.f_center_hz
                                              / math.sqrt(1 + 1 / (4 * res.q ** 2)), rel=1e-9)
    z = adj.extreme("impedance_ohm", res.f_peak_hz)
    np.testing.assert_allclose(z, (0.0, 0.0, R), atol=1e-9 * R)


def test_dense_and_sparse_factorisations_agree(monkeypatch):
    # the same sensitivities from SuperLU as from dense LU (scipy.linalg), on the same circuit
    ckt = read_netlist(SERIES_RLC)
    system = assemble(ckt, "V1", "out")
    parts = [("C1", C, 0.05), ("L1", L, 0.05), ("R1", R, 0.01)]
    f = np.array([2e4, 4e4, 9e4])
    dense = AdjointSensitivity(system, parts).log_derivatives(f)
    monkeypatch.setattr(sensitivity, "DENSE_LIMIT", 0)
    on_sparse = AdjointSensitivity(system, parts)
    assert system.size > sensitivity.DENSE_LIMIT  # so SuperLU is the one used
    sparse = on_sparse.log_derivatives(f)
    for field in dataclasses.fields(dense):
        np.testing.assert_allclose(getattr(dense, field.name), getattr(sparse, field.name),
                                   rtol=1e-10, err_msg=field.name)


def _band_pass(rng: np.random.Generator) -> str:
    """Two coupled resonators with terminations, values spread ±20 % about a 40 kHz design."""
    def v(x: float) -> str:
        return repr(x * rng.uniform(0.8, 1.2))
    return f"""random coupled band-pass
V1 in 0 AC 1
RS in a {v(600.0)}
L1 a b {v(4.7e-3)}
C1 b c {v(3.3e-9)}
L2 c 0 {v(1.0e-3)}
C2 c 0 {v(15e-9)}
R2 c 0 {v(20e3)}
L3 c d {v(4.7e-3)}
C3 d out {v(3.3e-9)}
RL out 0 {v(600.0)}
E1 buf 0 out 0 {v(2.0)}
RB buf 0 1k
"""


SPEC = """netlist = "x.cir"
source = "V1"
output = "{out}"
[sweep]
start = "10k"
stop = "200k"
points_per_decade = 150
[[limits]]
kind = "resonance"
center = "40k"
center_tolerance = "50%"
bandwidth = [1, 1e6]
q = [0.1, 1000]
[[limits]]
kind = "corner"
range = [1, 1e6]
side = "high"
[[limits]]
kind = "corner"
name = "lower edge at -20 dB re -6 dB"
range = [1, 1e6]
side = "low"
level_db = 20
reference_db = -6
[[limits]]
kind = "gain"
name = "stop-band"
band = ["10k", "20k"]
max_db = 0
[[limits]]
kind = "gain"
name = "pass-band re peak"
band = ["38k", "42k"]
min_db = -40
reference = "peak"
[[limits]]
kind = "ripple"
band = ["36k", "44k"]
max_db = 100
[[limits]]
kind = "group_delay"
band = ["30k", "50k"]
max = 1
[[limits]]
kind = "group_delay"
name = "delay spread"
band = ["35k", "45k"]
max_variation = 1
[[limits]]
kind = "phase"
band = ["30k", "60k"]
range_deg = [-1000, 1000]
[[limits]]
kind = "impedance"
band = ["20k", "100k"]
range = [1, 1e9]
[[limits]]
kind = "impedance"
name = "impedance maximum"
band = ["20k", "100k"]
range = {{ max = 1e9 }}
"""


@pytest.mark.parametrize("seed", range(4))
def test_every_limit_kind_matches_central_differences(seed):
    # Director & Rohrer 1969 adjoint sensitivities, carried through each measurement's
    # definition (envelope theorem, implicit functions), against central finite
    # differences of the measurement itself, re-measured on circuits with one part moved.
    rng = np.random.default_rng(100 + seed)
    text = _band_pass(rng)
    ckt = read_netlist(text)
    spec = parse_spec(SPEC.format(out="buf" if seed % 2 else "out"), "x.toml")
    system, probe = _probe(ckt, spec)
    parts = [(e.name, e.value, 0.01) for e in ckt.elements if e.letter in "RLCE"]
    adj = AdjointSensitivity(system, parts)
    h = 1e-5
    names = set()
    for lim in spec.limits:
        rows = lim.sensitivities(probe, adj)
        nominal = {r.name: r.measured for r in lim.judge(probe)}
        for row in rows:
            names.add(row.name)
            # one-sided limits (and single values) linearise the judged value itself
            assert row.low == pytest.approx(nominal[row.name], rel=1e-12, abs=1e-15)
            fd = []
            for name, v, _ in parts:
                m = []
                for sign in (1, -1):
                    _, p = _probe(with_values(ckt, {name: v * (1 + sign * h)}), spec)
                    m.append({r.name: r.measured for r in lim.judge(p)}[row.name])
                fd.append((m[0] - m[1]) / (2 * h))
            fd = np.array(fd)
            scale = np.abs(fd).max()
            np.testing.assert_allclose(row.d_low, fd, rtol=2e-4, atol=2e-5 * scale,
                                       err_msg=f"{row.name} (seed {seed})")
    assert len(names) == 13


def test_worst_case_reports_adjoint_for_every_kind(tmp_path):
    # every judged quantity of the spec above is linearised by the adjoint method, and the
    # worst-case range brackets the nominal value
    (tmp_path / "x.cir").write_text(_band_pass(np.random.default_rng(100)))
    spec_text = SPEC.format(out="out") + """
[tolerances]
default = { R = "1%", C = "2%", L = "2%" }
[analysis]
mode = ["worst_case"]
"""
    (tmp_path / "x.toml").write_text(spec_text)
    from netcheck.analyses.nominal import check_spec
    res = check_spec(str(tmp_path / "x.toml"))
    wc = dict(res.extra)["tolerance"]["worst_case"]
    assert len(wc["limits"]) == 13
    for e in wc["limits"]:
        assert e["sensitivity_method"] == "adjoint", e["name"]
        assert e["min"] <= e["measured_nominal"] <= e["max"], e["name"]
    assert {m["method"] for m in wc["measurements"].values()} == {"adjoint"}
