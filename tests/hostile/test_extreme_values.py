"""Extreme but finite part values, and badly scaled circuits.

A part value whose conductance or reactance leaves floating-point range is bad input: a
clear error with its code, the netlist file and the part, exit status 2, and never a
numpy exception reported as an internal error (internal-500, exit 3). A 1 fΩ resistor is legal
and regular, only badly scaled: every engine, ``sweep`` and ``check`` solve it alike.

Every netlist and spec is written here, in tmp_path. The reference answers are computed
in the tests with numpy from the closed form of the circuit, not by netcheck.
"""

from __future__ import annotations

import csv
import dataclasses
import io
import json
import math
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from netcheck import NetcheckError, read_netlist
from netcheck.mna.assemble import assemble
from netcheck.mna.solve import DenseEngine, PoleZeroEngine, SparseEngine, solve

ROOT = Path(__file__).resolve().parents[2]

L_NOM, C_NOM, RL_NOM = 10e-3, 1.5e-9, 1e3

BANDPASS = ("Quillmere Instruments QM-41 band-pass, {what}\n"
            "VIN in 0 AC 1\n"
            "R1 in a {r}\n"
            "L1 a b {l}\n"
            "C1 b out {c}\n"
            "RL out 0 {rl}\n")

#: 400 resistors across the source: nothing changes at ``out`` (the source is ideal),
#: but the system has more than 300 unknowns and takes the sparse path
PAD = "".join(f"RP{i} p{i} p{i + 1} 1k\n" for i in range(400)) + "RA in p0 1k\nRB p400 0 1k\n"

SPEC = """title = "Quillmere Instruments QM-41 band-pass"
netlist = "{netlist}"
source = "VIN"
output = "out"

[sweep]
start = "1k"
stop = "1meg"
points_per_decade = {ppd}

[[limits]]
kind = "gain"
name = "no gain anywhere"
band = ["1k", "1meg"]
max_db = 0.001

[[limits]]
kind = "gain"
name = "low stop-band"
band = ["1k", "2k"]
max_db = -20
"""


def series_rlc(f: np.ndarray, r: float, l: float, c: float, rl: float) -> np.ndarray:
    """V(out)/V(in) of R, L and C in series into a load RL, the output across RL:
    H = RL / (RL + R + j(ωL − 1/(ωC))).

    Series RLC transfer function, common practice, no source.
    """
    w = 2 * np.pi * np.asarray(f, dtype=float)
    return rl / (rl + r + 1j * (w * l - 1 / (w * c)))


def bandpass(tmp_path: Path, what: str, r: str = "50", l: str = "10m", c: str = "1.5n",
             rl: str = "1k", pad: bool = False, name: str = "bp.cir") -> Path:
    path = tmp_path / name
    path.write_text(BANDPASS.format(what=what, r=r, l=l, c=c, rl=rl) + (PAD if pad else ""),
                    encoding="utf-8")
    return path


def with_values(circuit, **values: float):
    """The circuit with part values replaced after elaboration (as the Python interface
    or a sampled tolerance could set them), bypassing the netlist's range check."""
    elements = tuple(dataclasses.replace(e, magnitude=values[e.name]) if e.name in values
                     else e for e in circuit.elements)
    return dataclasses.replace(circuit, elements=elements, _index=None)


def run(args: list[str], cwd: Path) -> subprocess.CompletedProcess:
    """``python -m netcheck ARGS`` as a user runs it, from ``cwd``."""
    env = {**os.environ, "PYTHONPATH": str(ROOT), "OPENBLAS_NUM_THREADS": "1",
           "OMP_NUM_THREADS": "1", "MKL_NUM_THREADS": "1"}
    proc = subprocess.run([sys.executable, "-m", "netcheck", *args], cwd=cwd, env=env,
                          capture_output=True, text=True, timeout=300)
    assert "Traceback" not in proc.stderr + proc.stdout
    assert "internal-500" not in proc.stderr + proc.stdout
    return proc


SWEEP_ARGS = ["--source", "VIN", "--node", "out", "--start", "1k", "--stop", "1meg"]


# --- A. values out of range: refused where they are written ------------------------------

@pytest.mark.parametrize("part, field, value, column", [
    ("C1", "c", "1e308", 10),            # 2π·f·C overflows above 1.8e308
    ("R1", "r", "1e-320", 9),            # subnormal: 1/R overflows
    ("L1", "l", "1e300", 8),             # 2π·f·L near the top of the double range
    ("C1", "c", "2e200", 10),            # just above the bound
    ("R1", "r", "9e-201", 9),            # just below the bound
    ("L1", "l", "{1e150*1e60}", 8),      # an expression that comes out of range
])
def test_out_of_range_value_is_refused_at_its_line(tmp_path, part, field, value, column):
    path = bandpass(tmp_path, "a part out of range", **{field: value})
    with pytest.raises(NetcheckError) as info:
        read_netlist(str(path))
    err = info.value
    line = {"R1": 3, "L1": 4, "C1": 5}[part]
    assert err.code == "netlist-118"
    assert str(err.span) == f"{path}:{line}:{column}"
    assert f"{part} = " in err.message
    assert "magnitude 1e-200 to 1e+200" in err.message


@pytest.mark.parametrize("card", ["E1 out 0 a 0 1e250", "G1 out 0 a 0 1e-250",
                                  "K1 L1 L9 1e-210"])
def test_gains_and_couplings_out_of_range_are_refused(tmp_path, card):
    path = bandpass(tmp_path, "a controlled part out of range")
    text = path.read_text("utf-8").replace("RL out 0 1k\n", "RL out 0 1k\nL9 c 0 1m\nR9 c 0 1\n")
    if not card.startswith("K"):
        text = text.replace("RL out 0 1k\n", "RL out 0 1k\nRE out2 0 1k\n")
        card = card.replace("out 0", "out2 0")
    path.write_text(text + card + "\n", encoding="utf-8")
    with pytest.raises(NetcheckError) as info:
        read_netlist(str(path))
    assert info.value.code == "netlist-118"
    assert info.value.span.line == text.count("\n") + 1


@pytest.mark.parametrize("field, value", [("c", "1e308"), ("r", "1e-320"), ("l", "1e300")])
def test_sweep_and_check_refuse_out_of_range_values_with_exit_status_2(tmp_path, field,
                                                                       value):
    path = bandpass(tmp_path, "a part out of range", **{field: value})
    swept = run(["sweep", path.name, *SWEEP_ARGS, "--ppd", "10"], tmp_path)
    assert swept.returncode == 2, swept.stderr
    assert f"{path.name}:" in swept.stderr and "error netlist-118" in swept.stderr
    (tmp_path / "bp.toml").write_text(SPEC.format(netlist=path.name, ppd=10), "utf-8")
    checked = run(["check", "bp.toml", "--json", "result.json"], tmp_path)
    assert checked.returncode == 2, checked.stdout + checked.stderr
    doc = json.loads((tmp_path / "result.json").read_text("utf-8"))
    errors = [c for c in doc["specs"][0]["cautions"] if c["severity"] == "error"]
    assert [c["code"] for c in errors] == ["netlist-118"]
    assert errors[0]["path"].endswith(path.name)
    assert errors[0]["line"] == {"r": 3, "l": 4, "c": 5}[field]


@pytest.mark.parametrize("points, pad, method", [(31, False, "dense"),
                                                 (61, False, "pole-zero"),
                                                 (31, True, "sparse")])
def test_values_at_the_bounds_are_accepted_and_solved(tmp_path, points, pad, method):
    # R1 = 1e-200 (1/R = 1e200) and L1 = 1e-200 (a C high-pass into RL)
    f = np.geomspace(1e3, 1e6, points)
    ckt = read_netlist(str(bandpass(tmp_path, "at the bounds", r="1e-200", l="1e-200",
                                    pad=pad)))
    resp = ckt.ac("VIN", "out", freqs=f)
    assert resp.method == method
    np.testing.assert_allclose(resp.transfer, series_rlc(f, 1e-200, 1e-200, C_NOM, RL_NOM),
                               rtol=1e-11)


# --- A. values out of range that reach the solver: analysis-303 from every engine ---------------

@pytest.mark.parametrize("values, part, shown", [
    ({"C1": 1e308}, "C1", "C1 = 1e+308 F"),
    ({"R1": 1e-320}, "R1", "R1 = 9.99989e-321"),
    ({"L1": 1e305}, "L1", "L1 = 1e+305 H"),
])
@pytest.mark.parametrize("points, pad", [(5, False), (61, False), (5, True)])
def test_matrix_that_is_not_finite_is_a_clear_error(tmp_path, values, part, shown, points,
                                                    pad):
    path = bandpass(tmp_path, "values set past the netlist check", pad=pad)
    ckt = with_values(read_netlist(str(path)), **values)
    with pytest.raises(NetcheckError) as info:
        ckt.ac("VIN", "out", freqs=np.geomspace(1e3, 1e6, points))
    err = info.value
    assert err.code == "analysis-303"
    assert err.message.startswith("the circuit matrix is not finite at ")
    assert shown in err.message
    line = {"R1": 3, "L1": 4, "C1": 5}[part]
    assert err.format().startswith(f"{path}:{line}:1: error analysis-303: ")


def test_every_engine_reports_a_matrix_that_is_not_finite(tmp_path):
    path = bandpass(tmp_path, "values set past the netlist check")
    system = assemble(with_values(read_netlist(str(path)), C1=1e308), "VIN", "out")
    f = np.geomspace(1e3, 1e6, 41)
    calls = [lambda: DenseEngine(system).check_regular(f[:3]),
             lambda: DenseEngine(system).transfer(f),
             lambda: DenseEngine(system).solution(f),
             lambda: PoleZeroEngine.build(DenseEngine(system), f),
             lambda: SparseEngine(system).check_regular(f[:3]),
             lambda: SparseEngine(system).transfer(f),
             lambda: SparseEngine(system).solution(f),
             lambda: solve(system, f)]
    for call in calls:
        with pytest.raises(NetcheckError) as info:
            call()
        assert info.value.code == "analysis-303" and "C1 = 1e+308 F" in info.value.message


def test_solution_that_overflows_names_the_parts(tmp_path):
    # 1 A into two 1.5e308 Ω resistors in series: V(a) = 3e308 V overflows, although
    # every entry of the matrix (1/R ≈ 6.7e-309) is finite
    path = tmp_path / "chain.cir"
    path.write_text("Quillmere Instruments QM-42 bias chain\nI1 0 a AC 1\nR1 a b 1k\n"
                    "R2 b 0 1k\n", encoding="utf-8")
    ckt = with_values(read_netlist(str(path)), R1=1.5e308, R2=1.5e308)
    for freqs in ([1e3], np.geomspace(1e3, 1e6, 61)):
        with pytest.raises(NetcheckError) as info:
            ckt.ac("I1", "a", freqs=freqs)
        assert info.value.code == "analysis-303"
        assert "overflowed" in info.value.message
        assert "R1 = 1.5e+308" in info.value.message and "R2 = 1.5e+308" in info.value.message


# --- B. a 1 fΩ resistor: badly scaled, regular, solved alike everywhere ------------------

@pytest.mark.parametrize("points, pad, method", [(31, False, "dense"),
                                                 (61, False, "pole-zero"),
                                                 (31, True, "sparse"),
                                                 (61, True, "sparse")])
def test_one_femtoohm_band_pass_solves_on_every_engine(tmp_path, points, pad, method):
    f = np.geomspace(1e3, 1e6, points)
    ckt = read_netlist(str(bandpass(tmp_path, "1 fOhm series resistance", r="1f", pad=pad)))
    resp = ckt.ac("VIN", "out", freqs=f)
    assert resp.method == method
    np.testing.assert_allclose(resp.transfer, series_rlc(f, 1e-15, L_NOM, C_NOM, RL_NOM),
                               rtol=1e-11)


@pytest.mark.parametrize("k", [1e-12, 1e12])
@pytest.mark.parametrize("points, pad", [(31, False), (61, False), (31, True)])
def test_scaling_every_impedance_changes_nothing(tmp_path, k, points, pad):
    # R, L and RL times k, C divided by k: H is the same function of f; MNA rows and
    # columns only change their scale, so no engine may call the circuit singular
    f = np.geomspace(1e3, 1e6, points)
    r, l, c, rl = 50 * k, L_NOM * k, C_NOM / k, RL_NOM * k
    ckt = read_netlist(str(bandpass(tmp_path, "impedances scaled", r=repr(r), l=repr(l),
                                    c=repr(c), rl=repr(rl), pad=pad)))
    resp = ckt.ac("VIN", "out", freqs=f)
    np.testing.assert_allclose(resp.transfer, series_rlc(f, 50, L_NOM, C_NOM, RL_NOM),
                               rtol=1e-11)


def test_sweep_and_check_agree_on_the_one_femtoohm_band_pass(tmp_path):
    path = bandpass(tmp_path, "1 fOhm series resistance", r="1f")
    # sweep, 31 points (direct solves) and 61 (the pole-zero form): the response itself
    for ppd in ("10", "20"):
        swept = run(["sweep", path.name, *SWEEP_ARGS, "--ppd", ppd, "--csv", "-"], tmp_path)
        assert swept.returncode == 0, swept.stderr
        rows = list(csv.reader(io.StringIO(swept.stdout)))[1:]
        data = np.array([[float(x) for x in row] for row in rows])
        expected = series_rlc(data[:, 0], 1e-15, L_NOM, C_NOM, RL_NOM)
        np.testing.assert_allclose(data[:, 1], 20 * np.log10(np.abs(expected)), rtol=0,
                                   atol=1e-10)
    # check, on both sweeps: passes, and measures the resonance where the closed form has
    # it, f0 = 1/(2π√(LC)) with the peak gain 20·log10(RL/(RL + R))
    f0 = 1 / (2 * math.pi * math.sqrt(L_NOM * C_NOM))
    for ppd in (10, 20):
        (tmp_path / "bp.toml").write_text(SPEC.format(netlist=path.name, ppd=ppd), "utf-8")
        checked = run(["check", "bp.toml", "--json", "result.json"], tmp_path)
        assert checked.returncode == 0, checked.stdout + checked.stderr
        spec = json.loads((tmp_path / "result.json").read_text("utf-8"))["specs"][0]
        assert spec["status"] == "pass"
        measured = spec["measurements"]
        assert measured["f_peak_hz"] == pytest.approx(f0, rel=1e-9)
        assert measured["peak_gain_db"] == pytest.approx(
            20 * math.log10(RL_NOM / (RL_NOM + 1e-15)), abs=1e-10)


@pytest.mark.parametrize("points, pad", [(5, False), (61, False), (5, True)])
def test_equilibration_does_not_hide_a_singular_circuit(tmp_path, points, pad):
    # a unity follower whose input is its own output (E1 out 0 out 0 1) gives the branch
    # equation v(out) - v(out) = 0 for every s, however small the resistor beside it
    path = tmp_path / "follower.cir"
    path.write_text("Quillmere Instruments QM-16 follower wired to itself\nVIN in 0 AC 1\n"
                    "R1 in out 1f\nE1 out 0 out 0 1\n" + (PAD if pad else ""), "utf-8")
    with pytest.raises(NetcheckError) as info:
        read_netlist(str(path)).ac("VIN", "out", freqs=np.geomspace(1e3, 1e6, points))
    assert info.value.code == "analysis-300"
    assert "E1 (line 4)" in info.value.message


@pytest.mark.parametrize("points, pad", [(5, False), (61, False), (5, True)])
def test_a_part_too_large_to_solve_beside_the_rest_is_refused_alike(tmp_path, points, pad):
    # C1 = 1e200 F in series: 2πf·C1 ≈ 6e203 S ties b to out, and the load (1 mS) and the
    # inductor's branch are 1e-206 of it, below what double precision keeps. The value is
    # accepted (it is inside the range), but no engine can solve it to the tool's
    # accuracy: each refuses it in the same words, naming C1 first
    path = bandpass(tmp_path, "a 1e200 F coupling capacitor", c="1e200", pad=pad)
    with pytest.raises(NetcheckError) as info:
        read_netlist(str(path)).ac("VIN", "out", freqs=np.geomspace(1e3, 1e6, points))
    assert info.value.code == "analysis-300"
    assert "the elements touching them most are C1 (line 5)" in info.value.message
