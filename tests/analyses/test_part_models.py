"""Part models (spec key ``part_models``): a subcircuit that models one physical part.

Defect 10 of issue 11: a quartz crystal written as a subcircuit (motional arm RM, LM,
CM in series, in parallel with the holder capacitance C0) got a hazardous-voltage
caution on CM, a few femtofarads that hold kilovolts nowhere a probe could touch, and
E-series warnings on its model parameters. With ``part_models = ["QX10"]`` the
instance is one part: no lint inside, no internal parts in the stress table, and the
part judged at its ports (voltage between each pair, current into each).

Closed forms used as references (standard circuit theory, written from common
practice, no source looked up):

* impedance of the crystal model: Z = (RM + jωLM + 1/(jωCM)) ∥ 1/(jωC0), with
  Z1 ∥ Z2 = Z1·Z2/(Z1 + Z2);
* a series chain driven by an ideal source of amplitude A: the current is
  A/(sum of the impedances) and the voltage across one of them is A·Z/(sum) (divider);
* series resonance of the motional arm: f_s = 1/(2π√(LM·CM));
* series RLC driven at ω0 = 1/√(LC): V_C = Q·V_in with Q = ω0·L/R, and the largest
  |V_C| over frequency is Q·V_in/√(1 − 1/(4Q²)).
"""

from __future__ import annotations

import math
import re
import textwrap
import tomllib
from pathlib import Path

import numpy as np
import pytest

import netcheck.analyses.stress as stress_mod
from netcheck import elaborate, read_netlist
from netcheck.analyses.nominal import check_spec
from netcheck.netlist.parse import load_netlist
from netcheck.result import Status

TWO_PI = 2.0 * math.pi

# Quillmere Instruments QX-10: a 10 MHz crystal (values of a typical AT-cut part)
RM, LM, CM, C0 = 12.5, 10.13e-3, 25e-15, 5e-12
RS, RL = 50.0, 50.0            # source and load resistance of the filter stage
AMP = 10.0                     # [[stress]] source_amplitude, V peak
F_S = 1.0 / (TWO_PI * math.sqrt(LM * CM))  # series resonance of the motional arm

QX10 = f""".subckt QX10 a b
RM a m1 {RM!r}
LM m1 m2 {LM!r}
CM m2 b {CM!r}
C0 a b {C0!r}
.ends QX10
"""

# the crystal in series between a 50 Ω source and a 50 Ω load: a one-pole crystal filter,
# the stage an oscillator's output filter or an IF filter is built from
FILTER = f"""Quillmere Instruments QX-10 crystal filter stage
{QX10}V1 in 0 AC 1
RS in a {RS!r}
X1 a out QX10
RL out 0 {RL!r}
"""

SPEC = """title = "QX-10 crystal filter stage"
netlist = "{netlist}"
source = "V1"
output = "out"
{extra}
[sweep]
start = "9.9meg"
stop = "10.1meg"
points_per_decade = 20000

[[limits]]
kind = "gain"
band = ["9.99meg", "10.01meg"]
max_db = 0

[tolerances]
default = {{ R = "1%", C = "5%", L = "5%" }}

[analysis]
mode = ["nominal"]

[[stress]]
source_amplitude = "{amp}"
parts = "*"
max_voltage = "100"

[[stress]]
parts = "*"
max_current = "1"
"""


def z_crystal(f: np.ndarray | float) -> np.ndarray:
    """(RM + jωLM + 1/(jωCM)) ∥ 1/(jωC0), the closed form quoted in the module doc."""
    w = TWO_PI * np.asarray(f, dtype=float)
    arm = RM + 1j * w * LM + 1.0 / (1j * w * CM)
    hold = 1.0 / (1j * w * C0)
    return arm * hold / (arm + hold)


def crystal_voltage(f):
    """Peak voltage across X1 for the AMP-volt source: the divider A·Z/(Z + RS + RL)."""
    z = z_crystal(f)
    return np.abs(AMP * z / (z + RS + RL))


def crystal_current(f):
    """Peak current through the chain: A/(Z + RS + RL)."""
    return np.abs(AMP / (z_crystal(f) + RS + RL))


def write(tmp_path: Path, netlist: str, extra: str = "", amp: float = AMP,
          spec: str = SPEC) -> Path:
    (tmp_path / "qx10_filter.cir").write_text(netlist)
    path = tmp_path / "qx10_filter.toml"
    path.write_text(spec.format(netlist="qx10_filter.cir", extra=extra, amp=amp))
    return path


def stress_rows(result) -> dict[str, object]:
    return {r.name: r for r in result.limits if r.kind == "stress"}


def lint(result) -> list[str]:
    return [c.message for c in result.cautions if c.code == "netlist-154"]


def stress_cautions(result) -> list[str]:
    return [c.message for c in result.cautions if c.code == "analysis-stress"]


class TestCrystalFilter:
    def test_model_internals_are_not_parts_and_ports_match_closed_form(self, tmp_path):
        # (a) Reference: the closed-form crystal impedance in a divider with the source
        # and load resistance (module doc).
        # Without the declaration (what netcheck did before part_models, and still does
        # when the spec does not say): CM gets the hazardous-voltage caution and the
        # model's parameters get E-series lint.
        before = check_spec(str(write(tmp_path, FILTER)), design_root=str(tmp_path))
        assert before.error is None
        cautions = stress_cautions(before)
        assert any(m.startswith("X1.CM sees") and "above 50 V" in m and " kV peak" in m
                   for m in cautions), cautions
        linted = lint(before)
        for name in ("X1.RM", "X1.LM", "X1.CM", "X1.C0"):
            assert any(m.startswith(f"{name} = ") for m in linted), (name, linted)
        assert "stress: X1.CM voltage" in stress_rows(before)

        # With it: no lint for the internals, no internal parts in the stress table,
        # the part judged at its ports under its instance name.
        after = check_spec(str(write(tmp_path, FILTER, 'part_models = ["QX10"]\n')),
                           design_root=str(tmp_path))
        assert after.error is None
        assert not any(m.startswith("X1.") for m in lint(after))
        assert any(m.startswith("RS = ") for m in lint(after))   # physical parts still linted
        rows = stress_rows(after)
        assert not any(name.startswith("stress: X1.") for name in rows), sorted(rows)
        assert {"stress: X1 (a–b) voltage", "stress: X1 (a) current",
                "stress: X1 (b) current"} <= set(rows)
        assert stress_cautions(after) == []     # 10 V across the pins: nothing to call out

        # the reported peaks are the closed form at the reported frequency
        volt = rows["stress: X1 (a–b) voltage"]
        assert volt.measured == pytest.approx(float(crystal_voltage(volt.at_hz)), rel=1e-9)
        for port in ("a", "b"):
            cur = rows[f"stress: X1 ({port}) current"]
            assert cur.measured == pytest.approx(float(crystal_current(cur.at_hz)), rel=1e-9)
        # and they are the true maxima: a dense closed-form scan finds nothing higher
        dense = np.linspace(9.9e6, 10.1e6, 400_001)
        assert volt.measured >= crystal_voltage(dense).max() * (1 - 1e-9)
        assert rows["stress: X1 (a) current"].measured >= \
            crystal_current(dense).max() * (1 - 1e-9)
        assert "part model QX10" in volt.definition

        # the terminal voltage of X1 at series resonance, from the stress probe of its ports
        ckt = elaborate(load_netlist(FILTER), part_models={"qx10"})
        response = ckt.ac("V1", "out", freqs=np.array([9.9e6, F_S, 10.1e6]))
        (model,) = ckt.part_models
        (ports, probe), = stress_mod._model_probes(response.system, model, "voltage", AMP)
        assert ports == ("a", "b")
        f = np.array([F_S])
        got = probe.values(f, response.direct().solution(f))[0]
        assert got == pytest.approx(float(crystal_voltage(F_S)), rel=1e-9)

    def test_port_currents_obey_kcl_and_close_form(self):
        # Reference: the series chain current A/(Z + RS + RL) (module doc); the current
        # into port a leaves at port b (Kirchhoff's current law).
        ckt = read_netlist(FILTER)
        assert ckt.part_models == ()
        ckt = elaborate(load_netlist(FILTER), part_models={"qx10"})
        f = np.array([9.95e6, F_S, 10.0e6, 10.02e6])
        response = ckt.ac("V1", "out", freqs=f)
        (model,) = ckt.part_models
        probes = stress_mod._model_probes(response.system, model, "current", 1.0)
        x = response.direct().solution(f)
        ia, ib = (p.values(f, x) for _, p in probes)
        np.testing.assert_allclose(ia, crystal_current(f) / AMP, rtol=1e-9)
        np.testing.assert_allclose(ib, ia, rtol=1e-9)


class TestSpecKey:
    def test_unknown_subcircuit_is_a_spec_error_at_the_key(self, tmp_path):
        # (b) Reference: docs/spec-format.md, "Part models": an entry that names no
        # subcircuit of the netlist is spec-203 at the key, with file and line.
        path = write(tmp_path, FILTER, 'part_models = ["QX10", "QX20"]\n')
        result = check_spec(str(path), design_root=str(tmp_path))
        assert result.status is Status.ERROR
        line = 1 + path.read_text().splitlines().index('part_models = ["QX10", "QX20"]')
        assert f"{path}:{line}:" in result.error
        assert "spec-203" in result.error and "part_models" in result.error
        assert "'QX20'" in result.error and "QX10" in result.error   # what it does define

    @pytest.mark.parametrize("value, fragment", [
        ("5", "expected a subcircuit name or an array"),
        ('[""]', "entry 1: expected a subcircuit name"),
        ('["QX10", 3]', "entry 2: expected a subcircuit name"),
    ])
    def test_malformed_key_is_refused(self, tmp_path, value, fragment):
        path = write(tmp_path, FILTER, f"part_models = {value}\n")
        result = check_spec(str(path), design_root=str(tmp_path))
        assert result.status is Status.ERROR
        assert "part_models" in result.error and fragment in result.error
        assert f"{path}:5:" in result.error

    def test_one_name_and_globs(self, tmp_path):
        for value in ('"qx10"', '["QX*"]'):
            path = write(tmp_path, FILTER, f"part_models = {value}\n")
            result = check_spec(str(path), design_root=str(tmp_path))
            assert result.error is None
            assert "stress: X1 (a–b) voltage" in stress_rows(result)


class TestHazardStillRaised:
    def test_physical_series_rlc_capacitor_is_still_called_out(self, tmp_path):
        # (c) Reference: series RLC at resonance, V_C = Q·V_in, largest |V_C| =
        # Q·V_in/√(1 − 1/(4Q²)) (module doc). The crystal is declared a part model in
        # the same netlist; the physical C1 of the series RLC sees kilovolts and must
        # still get the hazardous-voltage caution.
        r, l, c, vin = 10.0, 1e-3, 10e-9, 100.0
        w0 = 1.0 / math.sqrt(l * c)
        q = w0 * l / r                                    # ≈ 31.6
        netlist = FILTER + f"V2 p 0 AC 1\nR1 p s1 {r!r}\nL1 s1 s2 {l!r}\nC1 s2 0 {c!r}\n"
        spec = SPEC.replace('source = "V1"', 'source = "V2"').replace(
            'output = "out"', 'output = "s2"').replace(
            '"9.9meg"', '"10k"').replace('"10.1meg"', '"200k"').replace(
            'band = ["9.99meg", "10.01meg"]', 'band = ["10k", "20k"]').replace(
            'max_db = 0', 'max_db = 40').replace('points_per_decade = 20000',
                                                 'points_per_decade = 200')
        path = write(tmp_path, netlist, 'part_models = ["QX10"]\n', amp=vin, spec=spec)
        result = check_spec(str(path), design_root=str(tmp_path))
        assert result.error is None
        rows = stress_rows(result)
        peak = rows["stress: C1 voltage"].measured
        top = q * vin / math.sqrt(1.0 - 1.0 / (4.0 * q * q))
        assert peak == pytest.approx(top, rel=1e-9)
        assert peak > q * vin > 50.0                      # kilovolts from a 100 V input
        cautions = stress_cautions(result)
        assert any(m.startswith("C1 sees 3.16 kV peak") and "above 50 V" in m
                   for m in cautions), cautions
        # nothing from inside the crystal model, which is not driven here anyway
        assert not any(m.startswith("X1.") for m in cautions)
        assert not any(name.startswith("stress: X1.") for name in rows)

    def test_model_ports_at_hazardous_voltage_are_called_out(self, tmp_path):
        # Reference: the divider of the module doc; at 1 kV drive the crystal's pins see
        # up to about the drive itself, far above 50 V, and that is a real hazard.
        path = write(tmp_path, FILTER, 'part_models = ["QX10"]\n', amp=1000.0)
        result = check_spec(str(path), design_root=str(tmp_path))
        cautions = stress_cautions(result)
        assert any(m.startswith("X1 (a–b) sees") and "above 50 V" in m for m in cautions)
        assert not any(m.startswith("X1.") for m in cautions)


class TestElaboration:
    def test_flat_circuit_is_unchanged_by_the_declaration(self):
        # a node inside the model with one connection, and a port used by one card only:
        # the same netlist-152 warnings with the declaration as without
        odd = FILTER.replace(".ends QX10\n", "RX a dangle 1meg\n.ends QX10\n")
        for text in (FILTER, odd):
            netlist = load_netlist(text)
            plain, marked = elaborate(netlist), elaborate(netlist, part_models={"qx10"})
            assert plain.elements == marked.elements
            assert plain.nodes == marked.nodes
            assert plain.diagnostics == marked.diagnostics
        assert any(d.code == "netlist-152" for d in marked.diagnostics)
        (model,) = marked.part_models
        assert (model.name, model.subckt, model.ports, model.nodes) == \
            ("X1", "QX10", ("a", "b"), ("a", "out"))
        assert marked.part_model_of("X1.CM") is model
        assert marked.part_model_of("RS") is None

    def test_ports_sharing_a_node_and_ground_are_told_apart(self):
        # Reference: Kirchhoff's current law per port, by construction. Port a and port b
        # of a three-port model tied to one node; port c grounded while the model also
        # uses ground inside (R3): each port's current is its own elements' sum.
        text = """shared ports
.subckt TRIO a b c
R1 a c 100
R2 b c 300
R3 a 0 1k
.ends TRIO
V1 in 0 AC 1
X1 in in 0 TRIO
"""
        ckt = elaborate(load_netlist(text), part_models={"trio"})
        f = np.array([1e3])
        response = ckt.ac("V1", "in", freqs=f)
        (model,) = ckt.part_models
        probes = dict(stress_mod._model_probes(response.system, model, "current", 1.0))
        x = response.direct().solution(f)
        got = {ports[0]: float(p.values(f, x)[0]) for ports, p in probes.items()}
        # port a feeds R1 (1 V / 100 Ω) and R3 (1 V / 1 kΩ); port b R2; port c takes
        # back R1's and R2's currents only (R3 goes to the model's own ground)
        assert got["a"] == pytest.approx(1 / 100 + 1 / 1000, rel=1e-12)
        assert got["b"] == pytest.approx(1 / 300, rel=1e-12)
        assert got["c"] == pytest.approx(1 / 100 + 1 / 300, rel=1e-12)

    def test_nested_instance_is_named_by_its_path(self):
        text = "nested\n" + QX10 + """.subckt STAGE i o
X1 i o QX10
RQ o 0 1k
.ends STAGE
V1 in 0 AC 1
X2 in out STAGE
RL out 0 50
"""
        ckt = elaborate(load_netlist(text), part_models={"qx10"})
        assert [m.name for m in ckt.part_models] == ["X2.X1"]
        assert ckt.part_model_of("X2.X1.CM").name == "X2.X1"
        assert ckt.part_model_of("X2.RQ") is None


class TestStressRows:
    def test_glob_into_a_model_and_power_are_explained(self, tmp_path):
        spec = SPEC.replace('parts = "*"\nmax_voltage = "100"', 'parts = "X1.*"\n'
                            'max_voltage = "100"').replace(
            'parts = "*"\nmax_current = "1"', 'parts = "X1"\nmax_power = "1"')
        path = write(tmp_path, FILTER, 'part_models = ["QX10"]\n', spec=spec)
        result = check_spec(str(path), design_root=str(tmp_path))
        rows = stress_rows(result)
        inside = rows["stress: X1.* voltage"]
        assert inside.status is Status.ERROR and "parts = 'X1'" in inside.message
        power = rows["stress: X1 power"]
        assert power.status is Status.ERROR and "port voltage or current" in power.message


def test_monte_carlo_screen_leaves_model_internals_out(tmp_path):
    # Reference: docs/spec-format.md, "Part models": inside a model nothing is a part, in
    # the Monte Carlo stress screen too; the model's ports are screened like other parts.
    spec = SPEC.replace('mode = ["nominal"]', 'mode = ["nominal", "monte_carlo"]\nsamples = 40')
    path = write(tmp_path, FILTER, 'part_models = ["QX10"]\n', spec=spec)
    result = check_spec(str(path), design_root=str(tmp_path))
    assert result.error is None
    names = [r.name for r in result.limits]
    assert "Monte Carlo worst: stress: RS voltage" in names
    assert not any("X1." in n for n in names), names
    ports = [n for n in names if n.startswith("Monte Carlo worst: stress: X1 (")]
    assert len(ports) == 3, names  # the port pair's voltage, each port's current
    # at nominal the screened pin voltage cannot be below the exact nominal peak, which
    # is the closed-form divider A·Z/(Z + RS + RL) at its maximum (common practice)
    f = np.linspace(9.99e6, 10.01e6, 200_001)
    row = next(r for r in result.limits if r.name.startswith("Monte Carlo worst: stress: X1 (")
               and "voltage" in r.name)
    assert row.measured >= 0.9 * crystal_voltage(f).max()


def test_doc_names_the_key_and_shows_the_example():
    # Reference: docs/spec-format.md, the "Part models" section this feature adds: its
    # two code blocks (indented) are the netlist and the spec lines that declare it.
    doc = (Path(__file__).resolve().parents[2] / "docs" / "spec-format.md").read_text("utf-8")
    assert "| `part_models` |" in doc
    section = doc.split('<a id="part-models"></a>')[1].split("<a id=")[0]
    blocks = re.findall(r"((?:^    .*\n|^\n)+)", section, flags=re.M)
    code = [textwrap.dedent(b).strip() + "\n" for b in blocks if b.strip()]
    assert len(code) == 2
    ckt = elaborate(load_netlist(code[0]), part_models={"qx10"})
    assert [m.name for m in ckt.part_models] == ["X1"]
    assert tomllib.loads(code[1])["part_models"] == ["QX10"]


class TestBehaviouralInsideAPartModel:
    def test_v_of_a_port_node_reads_the_outside_node(self):
        # B1's current 1 mA + V²·1 mA (V = v(p, n), p the port): KCL at a, derived here,
        # (5 − Va)/1k = 1m + Va²·1m + Va/10k → Va² + 1.1·Va − 4 = 0; small signal, a sees
        # G = 1/1k + 1/10k + 2·Va·1m behind C1: |v_a/v_in| = ωC/√(G² + (ωC)²)
        text = ("Quillmere QM-BC1 behavioural clamp\nVCC vcc 0 DC 5\nVIN in 0 AC 1\n"
                "RS vcc a 1k\nC1 in a 1u\nX1 a 0 BCLAMP\n.subckt BCLAMP p n\n"
                "B1 p n I={1m + v(p,n)*v(p,n)*1m}\nRP p n 10k\n.ends BCLAMP\n")
        f = np.array([10.0, 100.0, 1e3])
        ckt = elaborate(load_netlist(text), part_models=["BCLAMP"])
        assert [m.name for m in ckt.part_models] == ["X1"]
        va = (-1.1 + math.sqrt(1.1 ** 2 + 16)) / 2
        g, wc = 1e-3 + 1e-4 + 2 * va * 1e-3, 2 * math.pi * f * 1e-6
        got = np.abs(ckt.ac("VIN", "a", freqs=f).transfer)
        assert got == pytest.approx(wc / np.hypot(g, wc), rel=1e-9)
