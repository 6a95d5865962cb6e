"""Elaboration: subcircuits, parameters, values, references and lint warnings."""

from __future__ import annotations

import math

import numpy as np
import pytest

from netcheck import ElaborationError, read_netlist
from netcheck.netlist.elements import CCCS, CCVS, VCCS, VCVS, Capacitor, Coupling, CurrentSource, \
    Inductor, Resistor, VoltageSource

NESTED = """nested subcircuits
.param base=100
.subckt outer a b params: r=1k r2={2*r}
.param half={r/2}
.subckt inner p q params: c=1n
C3 p q {c}
R9 p mid {r}
R8 mid q {half}
.ends inner
X2 a b inner c={r*1p}
R1 a b {r2}
.ends outer
X1 in 0 outer r={base*3}
X3 in 0 outer
V1 in 0 AC 1
"""


class TestSubcircuits:
    def test_hierarchical_names_and_values(self):
        ckt = read_netlist(NESTED)
        got = {e.name: (e.nodes, e.value) for e in ckt.elements}
        # X1: r = base*3 = 300 (instance override, evaluated in the caller's scope);
        # r2 = 2*r and half = r/2 follow it; inner c = r*1p = 300p
        assert got["X1.X2.C3"] == (("in", "0"), pytest.approx(300e-12, rel=1e-15))
        assert got["X1.X2.R9"] == (("in", "x1.x2.mid"), 300.0)
        assert got["X1.X2.R8"] == (("x1.x2.mid", "0"), 150.0)
        assert got["X1.R1"] == (("in", "0"), 600.0)
        # X3 takes the defaults: r = 1k, r2 = 2k, half = 500, c = 1n
        assert got["X3.X2.C3"][1] == pytest.approx(1e-9, rel=1e-15)
        assert got["X3.X2.R9"][1] == 1000.0
        assert got["X3.X2.R8"][1] == 500.0
        assert got["X3.R1"][1] == 2000.0
        assert [e.name for e in ckt.elements] == [
            "X1.X2.C3", "X1.X2.R9", "X1.X2.R8", "X1.R1", "X3.X2.C3", "X3.X2.R9", "X3.X2.R8",
            "X3.R1", "V1"]
        assert set(ckt.nodes) == {"in", "x1.x2.mid", "x3.x2.mid"}

    def test_same_expression_text_in_different_scopes(self):
        # one text, {w*2}, read in three scopes: each value is its own scope's, and the
        # error is placed at the card where it is written (column counted in the text)
        text = ("repeated expressions\n.subckt s a b params: w=5\nR1 a b {w*2}\n.ends s\n"
                "X1 in 0 s w=7\nX2 in 0 s\nV1 in 0 AC 1\nR9 in 0  {w*2}\n")
        with pytest.raises(ElaborationError, match="undefined parameter 'w'") as info:
            read_netlist(text)
        span = info.value.span
        assert (span.line, span.column, span.end_column) == (8, 11, 12)
        ckt = read_netlist(text + ".param w=1.5\n")  # now w is defined at the top too
        assert {e.name: e.value for e in ckt.elements if e.letter == "R"} == {
            "X1.R1": 14.0, "X2.R1": 10.0, "R9": 3.0}

    def test_element_lookup_is_case_insensitive(self):
        ckt = read_netlist(NESTED)
        assert ckt.element("x1.x2.c3") is ckt.element("X1.X2.C3")
        assert ckt.has_element("X3.R1") and not ckt.has_element("X9")

    def test_inner_definition_is_not_visible_outside(self):
        with pytest.raises(ElaborationError, match="undefined subcircuit 'inner'") as info:
            read_netlist(NESTED + "X9 in 0 inner\n")
        assert info.value.code == "netlist-107"

    def test_instance_param_expression_uses_the_callers_scope(self):
        # inside the subcircuit r is the instance value; {r*2} on the X card means the
        # caller's r (5), so the subcircuit sees r = 10
        ckt = read_netlist("t\n.param r=5\n.subckt s a params: r=1k\nR1 a 0 {r}\n.ends\n"
                           "X1 n s r={r*2}\nR0 n 0 1\n")
        assert ckt.element("X1.R1").value == 10.0

    def test_default_refers_to_another_param(self):
        ckt = read_netlist("t\n.subckt s a params: r=1k r2={r*2}\nR1 a 0 {r2}\n.ends\n"
                           "X1 n s r=10\nX2 n s r2=7\nR0 n 0 1\n")
        assert ckt.element("X1.R1").value == 20.0
        assert ckt.element("X2.R1").value == 7.0

    def test_global_param_visible_inside(self):
        ckt = read_netlist("t\n.param g=42\n.subckt s a\nR1 a 0 {g}\n.ends\nX1 n s\nR0 n 0 1\n")
        assert ckt.element("X1.R1").value == 42.0

    def test_unknown_instance_param(self):
        with pytest.raises(ElaborationError, match="has no parameter 'q'") as info:
            read_netlist("t\n.subckt s a params: r=1\nR1 a 0 {r}\n.ends\nX1 n s q=2\nR0 n 0 1\n")
        assert (info.value.code, info.value.span.line, info.value.span.column) == ("netlist-102", 5, 8)

    def test_ports_map_and_ground_is_global(self):
        ckt = read_netlist("t\n.subckt s p q\nR1 p q 1\nR2 q gnd 2\nR3 q 0 3\n.ends\n"
                           "X1 a b s\nR0 a 0 1\n")
        assert ckt.element("X1.R1").nodes == ("a", "b")
        assert ckt.element("X1.R2").nodes == ("b", "0")
        assert ckt.element("X1.R3").nodes == ("b", "0")

    def test_controlling_source_in_the_same_instance(self):
        ckt = read_netlist("t\n.subckt s a b\nVS a m 0\nF1 b 0 VS 2\nH1 c 0 vs 5\nR1 m 0 1\n"
                           "R2 b 0 1\nR3 c 0 1\n.ends\nX1 n o s\nV1 n 0 AC 1\nR9 o 0 1\n")
        assert ckt.element("X1.F1").control == "X1.VS"
        assert ckt.element("X1.H1").control == "X1.VS"

    def test_controlling_source_is_scoped(self):
        # VS exists at the top, but a name inside a subcircuit means that subcircuit's VS
        with pytest.raises(ElaborationError, match="not defined in its scope") as info:
            read_netlist("t\nVS a 0 0\n.subckt s a b\nF1 b 0 VS 2\nR2 b 0 1\n.ends\n"
                         "X1 a o s\nR1 a 0 1\nR9 o 0 1\n")
        assert info.value.code == "netlist-107"

    def test_sample_opamp_macro_model(self, samples):
        # lib/opamp.lib: RP = a0/gm with gm = 1 mS, CP = 1/(2 pi fp RP) (single pole at fp)
        ckt = read_netlist(str(samples / "sk_lowpass.cir"))
        a0, fp = 200e3, 10.0
        assert ckt.element("XU1.RP").value == pytest.approx(a0 / 1e-3, rel=1e-15)
        assert ckt.element("XU1.CP").value == pytest.approx(
            1 / (2 * math.pi * fp * a0 / 1e-3), rel=1e-14)
        assert ckt.element("XU1.RIN").value == 10e6  # "10meg": mega, not milli
        assert ckt.element("XU1.RIN").nodes == ("b", "out")


class TestElementCards:
    def test_each_letter(self):
        ckt = read_netlist("t\nV1 in 0 DC 1 AC 2 45\nI1 0 x AC 1\nR1 in x 1k\nC1 x 0 1n\n"
                           "L1 x y 1m\nL2 y 0 2m\nK1 L1 L2 0.5\nE1 e 0 x 0 2\nG1 g 0 x 0 1m\n"
                           "VS e es 0\nF1 g 0 VS 3\nH1 h 0 VS 10\nRE es 0 1\nRG g 0 1\nRH h 0 1\n")
        kinds = {e.name: type(e) for e in ckt.elements}
        assert kinds == {"V1": VoltageSource, "I1": CurrentSource, "R1": Resistor,
                         "C1": Capacitor, "L1": Inductor, "L2": Inductor, "K1": Coupling,
                         "E1": VCVS, "G1": VCCS, "VS": VoltageSource, "F1": CCCS, "H1": CCVS,
                         "RE": Resistor, "RG": Resistor, "RH": Resistor}
        v1 = ckt.element("V1")
        assert (v1.dc, v1.ac_magnitude, v1.ac_phase_deg, v1.has_ac) == (1.0, 2.0, 45.0, True)
        assert ckt.element("K1").inductors == ("L1", "L2")
        assert ckt.element("E1").nodes == ("e", "0", "x", "0")
        assert ckt.element("G1").value == 1e-3

    @pytest.mark.parametrize("card,dc,ac,phase,has_ac", [
        ("V1 a 0 5", 5.0, 0.0, 0.0, False),
        ("V1 a 0 DC 5", 5.0, 0.0, 0.0, False),
        ("V1 a 0 AC", 0.0, 1.0, 0.0, True),
        ("V1 a 0 ac 0.5 -90", 0.0, 0.5, -90.0, True),
        ("V1 a 0 3 AC 1", 3.0, 1.0, 0.0, True),
    ])
    def test_source_values(self, card, dc, ac, phase, has_ac):
        v = read_netlist(f"t\n{card}\nR1 a 0 1\n").element("V1")
        assert (v.dc, v.ac_magnitude, v.ac_phase_deg, v.has_ac) == (dc, ac, phase, has_ac)

    def test_negative_values_need_permission(self):
        text = "t\nR1 a 0 -1k\nC1 a 0 -1n\nL1 a 0 -1m\nR2 a 0 1k\n"
        with pytest.raises(ElaborationError, match="negative value") as info:
            read_netlist(text)
        assert info.value.code == "netlist-110"
        ckt = read_netlist(text, allow_negative=True)
        assert [e.value for e in ckt.elements] == [-1000.0, -1e-9, -1e-3, 1000.0]

    def test_zero_is_never_allowed(self):
        with pytest.raises(ElaborationError, match="has value 0"):
            read_netlist("t\nC1 a 0 {1-1}\nR2 a 0 1\n", allow_negative=True)

    def test_negative_gain_is_fine(self):
        ckt = read_netlist("t\nV1 a 0 AC 1\nE1 b 0 a 0 -3\nR1 b 0 1\nR2 a 0 1\n")
        assert ckt.element("E1").value == -3.0

    def test_overrides(self):
        ckt = read_netlist("t\n.param r=1k c={1/r}\nR1 a 0 {r}\nC1 a 0 {c}\n",
                           overrides={"R": 50.0})
        assert ckt.element("R1").value == 50.0
        assert ckt.element("C1").value == 1 / 50.0
        assert dict(ckt.params) == {"r": 50.0, "c": 0.02}


def diag_codes(text: str) -> list[tuple[str, str]]:
    return [(d.code, str(d.span)) for d in read_netlist(text).diagnostics]


class TestLint:
    def test_capital_m_on_resistor_and_inductor(self):
        # a part written 1M is 1 milliohm / millihenry in SPICE convention; 1 megohm
        # was almost always meant (common practice, no source)
        text = "t\nR1 a 0 1M\nL1 a 0 2.2M\nC1 a 0 1M\nR2 a 0 1Meg\nR3 a 0 1m\nR4 a 0 {1M}\n"
        diags = read_netlist(text).diagnostics
        assert [(d.code, str(d.span)) for d in diags] == [("netlist-151", "<text>:2:8"),
                                                          ("netlist-151", "<text>:3:8")]
        assert "write 1meg" in diags[0].message and "milliohm" in diags[0].message
        assert "millihenr" in diags[1].message

    def test_node_with_one_connection(self):
        diags = read_netlist("t\nV1 in 0 AC 1\nR1 in out 1k\nR2 in 0 1k\n").diagnostics
        assert [(d.code, str(d.span)) for d in diags] == [("netlist-152", "<text>:3:7")]
        assert "'out'" in diags[0].message

    def test_clean_circuit_has_no_warnings(self, samples):
        for name in ("rx40k.cir", "aa7_ladder.cir", "coupled_bp.cir", "hum_notch.cir",
                     "tank_tia.cir", "sk_lowpass.cir"):
            assert read_netlist(str(samples / name)).diagnostics == (), name

    def test_warnings_come_through_in_file_order_with_format(self):
        d = read_netlist("t\nR1 a 0 10M\nR2 a 0 1\n").diagnostics[0]
        assert d.format().split("\n") == [
            "<text>:2:8: warning netlist-151: R1 = 10M reads as 0.01 (milliohms: SPICE 'M' is "
            "milli); write 10meg if mega was meant", "    R1 a 0 10M", "           ^^^"]


def test_circuit_ac_needs_frequencies():
    ckt = read_netlist("t\nV1 a 0 AC 1\nR1 a 0 1\n")
    with pytest.raises(ValueError, match="freqs"):
        ckt.ac("V1", "a")
    assert ckt.ac("v1", "A", freqs=np.array([1.0, 2.0])).transfer.tolist() == [1, 1]
