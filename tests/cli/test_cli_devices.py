"""Device netlists through the command line, as a user runs them: ``python -m netcheck
sweep`` and ``check``, against the closed form of a diode-biased attenuator written
here (Shockley 1949 for the bias, by scipy's brentq; the small-signal diode
rd = N·Vt/(Id + IS) and its capacitance Cj + TT·gd making one RC pole)."""

from __future__ import annotations

import csv
import io
import json
import math
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from scipy.optimize import brentq

ROOT = Path(__file__).resolve().parents[2]
VT = 1.380649e-23 * 300.15 / 1.602176634e-19   # kT/q, exact SI 2019 constants

ATTENUATOR = """Quillmere qm_att3 diode-biased attenuator
VCC vcc 0 DC 5
VIN in 0 DC 0 AC 1
R1 vcc out 4.7k
R2 in out 10k
D1 out 0 qm_dlim
.model qm_dlim D (IS=2.5f N=1.05 CJO=4p VJ=0.9 M=0.4 FC=0.9 TT=6n)
"""


def attenuator(f: np.ndarray) -> np.ndarray:
    """V(out)/V(in): (1/R2)/(1/R1 + 1/R2 + gd + s·(Cj + TT·gd)) at the brentq bias;
    Cj = CJO·(1 − V/VJ)^−M (below FC·VJ = 0.81 V here)."""
    r1, r2, is_, n = 4.7e3, 10e3, 2.5e-15, 1.05
    v = brentq(lambda v: (5 - v) / r1 - v / r2 - is_ * math.expm1(v / (n * VT)), 0, 5,
               xtol=1e-15, rtol=1e-15)
    assert v < 0.81
    i = is_ * math.expm1(v / (n * VT))
    gd = (i + is_) / (n * VT)
    c = 4e-12 * (1 - v / 0.9) ** -0.4 + 6e-9 * gd
    return (1 / r2) / (1 / r1 + 1 / r2 + gd + 2j * np.pi * f * c)


def netcheck(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "netcheck", *args], cwd=ROOT,
                          capture_output=True, text=True, timeout=120)


def test_sweep_of_a_device_netlist_prints_the_independent_gain(tmp_path):
    path = tmp_path / "qm_att3.cir"
    path.write_text(ATTENUATOR)
    run = netcheck("sweep", str(path), "--source", "VIN", "--node", "out", "--start", "10",
                   "--stop", "1meg", "--ppd", "10")
    assert run.returncode == 0, run.stderr
    assert "Traceback" not in run.stderr
    # the response falls from 10 Hz on (one pole), so the peak is at 10 Hz
    want = 20 * math.log10(abs(attenuator(np.array([10.0]))[0]))
    line = next(x for x in run.stdout.splitlines() if "peak gain" in x)
    assert float(line.split()[2]) == pytest.approx(want, abs=5e-5)  # printed to 4 places
    assert "at 10.00000 Hz" in line
    # every point of the CSV against the closed form
    run = netcheck("sweep", str(path), "--source", "VIN", "--node", "out", "--start", "10",
                   "--stop", "1g", "--ppd", "10", "--csv", "-")
    assert run.returncode == 0, run.stderr
    rows = list(csv.reader(io.StringIO(run.stdout)))[1:]
    data = np.array([[float(x) for x in row] for row in rows])
    h = attenuator(data[:, 0])
    np.testing.assert_allclose(data[:, 1], 20 * np.log10(np.abs(h)), rtol=0, atol=1e-7)
    np.testing.assert_allclose(data[:, 2], np.degrees(np.angle(h)), rtol=0, atol=1e-6)
    assert data[-1, 1] < data[0, 1] - 20  # the pole is inside the sweep


@pytest.mark.parametrize("card, column", [("D1 out 0 qm_dmissing", 10),
                                          ("Q1 out in 0 qm_qmissing", 13),
                                          ("M1 out in 0 0 qm_mmissing W=4u L=1u", 15),
                                          ("J1 out in 0 qm_jmissing", 13)])
def test_a_device_naming_a_missing_model_is_refused_with_file_and_line(tmp_path, card,
                                                                       column):
    path = tmp_path / "qm_att3.cir"
    path.write_text(ATTENUATOR.replace("D1 out 0 qm_dlim", card))
    run = netcheck("sweep", str(path), "--source", "VIN", "--node", "out", "--start", "10",
                   "--stop", "1meg", "--ppd", "10")
    assert run.returncode == 2
    assert "Traceback" not in run.stderr
    model = next(w for w in card.split() if w.startswith("qm_"))
    assert f"{path}:6:{column}: error netlist-130" in run.stderr
    assert f"found {model}, which names no .model card" in run.stderr


SPEC = """title = "qm_att3 attenuator {what}"
netlist = "qm_att3.cir"
source = "VIN"
output = "out"
sweep = {{ start = "10", stop = "1meg", points_per_decade = 10 }}
tolerances = {{ default = {{ R = "5%" }} }}
analysis = {{ mode = {mode}, samples = 50, seed = 3 }}
limits = [{{ kind = "gain", name = "loss", band = ["10", "1k"], min_db = -52, max_db = -48 }}]
"""


def attenuator_db(r1: float, r2: float, f: float) -> float:
    """The attenuator's gain in dB with R1, R2 in place of the nominal parts: the same
    brentq bias and small-signal divider as :func:`attenuator`."""
    is_, n = 2.5e-15, 1.05
    v = brentq(lambda v: (5 - v) / r1 - v / r2 - is_ * math.expm1(v / (n * VT)), 0, 5,
               xtol=1e-15, rtol=1e-15)
    gd = (is_ * math.expm1(v / (n * VT)) + is_) / (n * VT)
    c = 4e-12 * (1 - v / 0.9) ** -0.4 + 6e-9 * gd
    return 20 * math.log10(abs((1 / r2) / (1 / r1 + 1 / r2 + gd + 2j * math.pi * f * c)))


def test_worst_case_and_monte_carlo_solve_each_sample_bias(tmp_path):
    # a sampled R moves the diode's operating point: the worst case's corners and the
    # Monte Carlo samples must each be solved at their own bias (the reference: brentq
    # per corner, per sample)
    (tmp_path / "qm_att3.cir").write_text(ATTENUATOR)
    spec = tmp_path / "att.toml"
    spec.write_text(SPEC.format(what="across tolerances",
                                mode='["nominal", "worst_case", "monte_carlo"]'))
    run = netcheck("check", str(spec), "--json", str(tmp_path / "out.json"))
    assert run.returncode == 0, run.stdout + run.stderr
    result = json.loads((tmp_path / "out.json").read_text())["specs"][0]
    # the gain falls with frequency, so over 10 Hz–1 kHz its maximum is at 10 Hz; the
    # worst case of the upper limit is the highest corner there (all 4 corners are run)
    corners = [attenuator_db(4.7e3 * a, 10e3 * b, 10.0) for a in (0.95, 1.05)
               for b in (0.95, 1.05)]
    worst = next(r for r in result["limits"] if r["kind"] == "worst_case")
    assert "all 4 corners evaluated" in worst["definition"]
    assert worst["measured"] == pytest.approx(max(corners), abs=1e-9)
    # the Monte Carlo sample closest to the upper limit, re-solved here from its values
    mc = result["tolerance"]["monte_carlo"]["limits"][0]
    r1, r2 = mc["worst_values"]["R1"], mc["worst_values"]["R2"]
    assert mc["worst_measured"] == pytest.approx(attenuator_db(r1, r2, 10.0), abs=1e-9)
    # the nominal linearisation would give every sample the same diode: the spread
    # between the extreme corners is far above the 1e-9 dB checked
    assert max(corners) - min(corners) > 1.0


def test_the_nominal_check_of_a_device_circuit_judges_the_independent_gain(tmp_path):
    (tmp_path / "qm_att3.cir").write_text(ATTENUATOR)
    spec = tmp_path / "att.toml"
    spec.write_text(SPEC.format(what="nominal", mode='["nominal"]'))
    run = netcheck("check", str(spec))
    assert run.returncode == 0, run.stdout + run.stderr
    line = next(x for x in run.stdout.splitlines() if " loss " in x)
    # the band's lowest gain is at 1 kHz (the response falls monotonically)
    want = 20 * math.log10(abs(attenuator(np.array([1e3]))[0]))
    assert f"{want:.3f} dB" in line


def test_a_circuit_without_an_operating_point_is_refused_at_the_device(tmp_path):
    # 1 mA drawn backwards through a diode, which carries at most IS in reverse
    # (Shockley 1949): no DC solution exists
    path = tmp_path / "qm_clamp2.cir"
    path.write_text("Quillmere qm_clamp2 clamp fed backwards\nI1 a 0 DC 1m AC 1\n"
                    "D1 a 0 qm_dclamp\n.model qm_dclamp D (IS=10f)\n")
    run = netcheck("sweep", str(path), "--source", "I1", "--node", "a", "--start", "10",
                   "--stop", "1meg", "--ppd", "10")
    assert run.returncode == 2
    assert "Traceback" not in run.stderr
    assert f"{path}:3:1: error analysis-306" in run.stderr
    assert "for the devices D1" in run.stderr
