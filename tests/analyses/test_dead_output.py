"""An output with no signal in it is an error, never a PASS (analysis-304, spec-202).

References: a node that no element connects to the driven part of a circuit carries no
signal (Kirchhoff's laws; common practice, no source); a bridge of two dividers
R1–(R2 ∥ C2) and R3–(R4 ∥ C4) driven from one source is balanced, V(a) − V(b) = 0 at
every frequency, when R1/R2 = R3/R4 and R2·C2 = R4·C4 (the balance condition of an AC
Wheatstone bridge, any circuits text; the divider ratio below is computed in the test).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from netcheck.analyses.nominal import check_spec
from netcheck.result import Status

SPEC = """title = "Quillmere output check"
netlist = "n.cir"
source = "VIN"
output = {output}

[sweep]
start = 10
stop = "1meg"

[[limits]]
kind = "gain"
name = "stop-band"
band = [10, 1000]
max_db = -3
"""

RC = """Quillmere RC section with a spare resistor
VIN in 0 AC 1
R1 in out 1k
C1 out 0 1n
R2 spare 0 1k
.end
"""


def bridge(c4: float) -> str:
    return f"""Quillmere bridge
VIN in 0 AC 1
R1 in a 1.3k
R2 a 0 2.7k
C2 a 0 1.1n
R3 in b 3.9k
R4 b 0 8.1k
C4 b 0 {c4!r}
.end
"""


C4_BALANCED = 2.7e3 * 1.1e-9 / 8.1e3   # R2·C2 = R4·C4


def check(tmp_path, netlist: str, output: str):
    (tmp_path / "n.cir").write_text(netlist)
    (tmp_path / "n.toml").write_text(SPEC.format(output=output))
    return check_spec(str(tmp_path / "n.toml"))


@pytest.mark.parametrize("output, says", [
    ('["out", "out"]', "measures node 'out' twice against itself"),
    ('["OUT", "out"]', "against itself"),
    ('"0"', "measures ground against itself"),
])
def test_a_node_against_itself_is_refused_at_the_key(tmp_path, output, says):
    res = check(tmp_path, RC, output)
    assert res.status is Status.ERROR and not res.limits
    assert "n.toml:4:1: error spec-202: output: " in res.error and says in res.error


@pytest.mark.parametrize("output", ['"spare"', '["gnd", "0"]'])
def test_an_undriven_output_is_no_signal(tmp_path, output):
    # reference: no element joins 'spare' (or ground) to VIN: V = 0 at every frequency
    res = check(tmp_path, RC, output)
    assert res.status is Status.ERROR and not res.limits
    assert "n.toml:4:1: error analysis-304: output: no signal" in res.error
    assert "exactly zero at every frequency from 10.00 Hz to 1.000 MHz" in res.error


def test_a_balanced_bridge_is_no_signal(tmp_path):
    # reference: AC Wheatstone balance (module docstring); the computed difference is
    # rounding noise some 300 dB down, below the rounding floor of the solve
    assert 1.3e3 / 2.7e3 == pytest.approx(3.9e3 / 8.1e3, rel=1e-15)
    res = check(tmp_path, bridge(C4_BALANCED), '["a", "b"]')
    assert res.status is Status.ERROR and "analysis-304" in res.error
    assert "below the rounding floor of the solve" in res.error


def test_a_slightly_unbalanced_bridge_is_judged(tmp_path):
    # reference: the two dividers computed here in numpy, H = Za/(R1+Za) − Zb/(R3+Zb)
    # with Z = R ∥ 1/(jωC); a 0.1 % unbalance is a real, small signal, not noise
    c4 = C4_BALANCED * 1.001
    res = check(tmp_path, bridge(c4), '["a", "b"]')
    assert res.status is Status.PASS, res.error
    f = res.curves.frequency_hz
    s = 2j * math.pi * f
    za = 1 / (1 / 2.7e3 + s * 1.1e-9)
    zb = 1 / (1 / 8.1e3 + s * c4)
    h = za / (1.3e3 + za) - zb / (3.9e3 + zb)
    assert np.allclose(res.curves.gain_db, 20 * np.log10(np.abs(h)), atol=1e-6)
    (lim,) = res.limits
    assert lim.measured < -60 and lim.margin > 50


def test_a_lossless_resonance_is_an_error_not_a_crash(tmp_path):
    # reference: an LC section with no resistance has its poles on the jω axis at
    # f0 = 1/(2π√(LC)) (closed form, series LC): |H| is unbounded there and the
    # half-power edges meet, so bandwidth and Q cannot be measured. It used to end in
    # internal-500 (ZeroDivisionError); it is a measurement error naming the peak
    (tmp_path / "n.cir").write_text("Quillmere lossless LC\nVIN in 0 AC 1\nL1 in out 1m\n"
                                    "C1 out 0 1u\n.end\n")
    (tmp_path / "n.toml").write_text(SPEC.format(output='"out"').split("[[limits]]")[0]
                                     + '[[limits]]\nkind = "resonance"\ncenter = "5k"\n'
                                     'center_tolerance = "5%"\n')
    res = check_spec(str(tmp_path / "n.toml"))
    f0 = 1 / (2 * math.pi * math.sqrt(1e-3 * 1e-6))
    assert res.status is Status.ERROR and not res.error  # the row carries it, no internal-500
    (row,) = res.limits
    assert row.status is Status.ERROR
    assert "half-power edges coincide" in row.message
    assert f"{f0 / 1e3:.3f} kHz" in row.message   # 5.033 kHz
