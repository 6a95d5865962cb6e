"""Instance options (m, Rser, Rpar, Cpar, TC1/TC2, IC, key=value), passive .model cards,
0 Ω resistors and K over several inductors, each against an outside reference: a closed
form written here, or an independent nodal analysis in numpy."""

from __future__ import annotations

import numpy as np
import pytest

from netcheck import NetcheckError, read_netlist

F = np.logspace(1, 7, 61)   # ≥ 40 points: the pole-zero engine is used where it can be
W = 2j * np.pi * F


def h(text: str, node: str = "out", freqs: np.ndarray = F) -> np.ndarray:
    return np.asarray(read_netlist("Quillmere Instruments options\n" + text)
                      .ac("V1", node, freqs=freqs).transfer)


def close(a, b, rtol=1e-9):
    np.testing.assert_allclose(a, b, rtol=rtol, atol=0)


class TestSeriesResistance:
    def test_capacitor_rser_moves_the_rc_corner(self):
        # RC low-pass with ESR r: H = (1 + sCr)/(1 + sC(R + r)) (closed form, voltage
        # divider); the pole moves from 1/(2πRC) to 1/(2πC(R + r)), a zero appears at 1/(2πCr)
        R, C, r = 1e3, 100e-9, 47.0
        net = f"V1 in 0 AC 1\nR1 in out {R}\nC1 out 0 {C} Rser={r}\n"
        close(h(net), (1 + W * C * r) / (1 + W * C * (R + r)))
        resp = read_netlist("t\n" + net).ac("V1", "out", freqs=F)
        close(np.sort(-resp.poles_hz.real), [1 / (2 * np.pi * C * (R + r))], 1e-9)
        close(np.sort(-resp.zeros_hz.real), [1 / (2 * np.pi * C * r)], 1e-9)

    def test_inductor_rser(self):
        # RL divider: H = R/(R + Rser + sL) (closed form)
        R, L, r = 50.0, 1e-3, 3.3
        close(h(f"V1 in 0 AC 1\nL1 in out {L} Rser={r}\nR1 out 0 {R}\n"), R / (R + r + W * L))

    def test_voltage_source_rser(self):
        # a 50 Ω source into 50 Ω: half the EMF, at every frequency (closed form)
        close(h("V1 in 0 AC 1 Rser=50\nR1 in 0 50\n", node="in"), np.full(F.size, 0.5))

    def test_zero_rser_is_no_resistor(self):
        close(h("V1 in 0 AC 1\nR1 in out 1k\nC1 out 0 1n Rser=0\n"),
              1 / (1 + W * 1e-9 * 1e3))


class TestParallelParts:
    def test_inductor_rpar_and_cpar(self):
        # Z = 1/(1/(Rser + sL) + 1/Rpar + sCpar) across the part; divider with R (closed form)
        R, L, rs, rp, cp = 1e3, 10e-3, 2.0, 20e3, 50e-12
        z = 1 / (1 / (rs + W * L) + 1 / rp + W * cp)
        net = f"V1 in 0 AC 1\nR1 in out {R}\nL1 out 0 {L} Rser={rs} Rpar={rp} Cpar={cp}\n"
        close(h(net), z / (R + z))

    def test_capacitor_rpar_and_cpar(self):
        R, C, rs, rp, cp = 1e3, 10e-9, 5.0, 1e6, 1e-9
        z = 1 / (1 / (rs + 1 / (W * C)) + 1 / rp + W * cp)
        net = f"V1 in 0 AC 1\nR1 in out {R}\nC1 out 0 {C} Rser={rs} Rpar={rp} Cpar={cp}\n"
        close(h(net), z / (R + z))


class TestMultiplier:
    # m parallel copies, checked against the same parallel network written out part by
    # part and against the hand formula (R/m, C·m, L/m)
    def test_resistor(self):
        close(h("V1 in 0 AC 1\nR1 in out 1k\nR2 out 0 4k m=4\n"), np.full(F.size, 0.5))

    def test_capacitor_equals_parallel_copies(self):
        one = h("V1 in 0 AC 1\nR1 in out 1k\nC1 out 0 10n m=3 Rser=12\n")
        three = h("V1 in 0 AC 1\nR1 in out 1k\nC1 out 0 10n Rser=12\nC2 out 0 10n Rser=12\n"
                  "C3 out 0 10n Rser=12\n")
        close(one, three)
        rs, c = 12 / 3, 30e-9
        close(one, (1 + W * c * rs) / (1 + W * c * (1e3 + rs)))

    def test_inductor_equals_parallel_copies(self):
        one = h("V1 in 0 AC 1\nL1 in out 1m m=2 Rser=1 Rpar=10k\nR1 out 0 100\n")
        two = h("V1 in 0 AC 1\nL1 in out 1m Rser=1 Rpar=10k\nL2 in out 1m Rser=1 Rpar=10k\n"
                "R1 out 0 100\n")
        close(one, two)
        z = 1 / (2 / (1 + W * 1e-3) + 2 / 10e3)
        close(one, 100 / (100 + z))


class TestValueForms:
    def test_key_value_forms(self):
        a = h("V1 in 0 AC 1\nR1 in out R=1k\nC1 out 0 C=100n\nL1 out 0 L=1m\n")
        b = h("V1 in 0 AC 1\nR1 in out 1k\nC1 out 0 100n\nL1 out 0 1m\n")
        close(a, b, 1e-12)

    def test_temperature_coefficients_stored_and_nominal(self):
        ckt = read_netlist("t\nV1 in 0 AC 1\nR1 in out 1k TC1=3.9m TC2=1u\nC1 out 0 1n\n")
        r1 = ckt.element("R1")
        assert r1.value == 1e3   # at the nominal 27 °C the value is unchanged
        # R(T) = R·(1 + TC1·ΔT + TC2·ΔT²), ΔT = 77 − 27 = 50 (the convention's formula)
        assert r1.value_at(77.0) == pytest.approx(1e3 * (1 + 3.9e-3 * 50 + 1e-6 * 2500))
        assert r1.value_at(27.0) == 1e3

    def test_initial_condition_is_ignored_with_one_note(self):
        ckt = read_netlist("t\nV1 in 0 AC 1\nR1 in out 1k\nC1 out 0 1n IC=2\nL1 out 0 1 IC=0\n")
        notes = [d for d in ckt.diagnostics if d.code == "netlist-160"]
        assert [d.severity for d in notes] == ["note"]   # one note for the kind
        assert "on C1, L1" in notes[0].message
        assert (notes[0].span.line, notes[0].span.column) == (4, 13)
        one = read_netlist("t\nV1 in 0 AC 1\nR1 in out 1k\nC1 out 0 1n IC=2\n").diagnostics
        assert [d.message for d in one] == [
            "C1: IC= (an initial condition) has no meaning in a frequency-domain check; ignored"]

    def test_unknown_option_is_refused_with_its_position(self):
        with pytest.raises(NetcheckError, match="Lser= is not an option") as info:
            read_netlist("t\nV1 in 0 AC 1\nR1 in out 1k\nC1 out 0 1n Lser=1n\n")
        assert (info.value.span.line, info.value.span.column) == (4, 13)

    @pytest.mark.parametrize("card,message", [
        ("C1 out 0 1n Rser=-1", "Rser=-1"), ("C1 out 0 1n m=0", "m=0"),
        ("L1 out 0 1u Rpar=0", "Rpar=0"), ("L1 out 0 1u Cpar=-1p", "Cpar=-1e-12"),
        ("V2 out 0 AC 1 Rser=-5", "Rser=-5")])
    def test_impossible_options_name_the_line(self, card, message):
        with pytest.raises(NetcheckError) as info:
            read_netlist(f"t\nV1 in 0 AC 1\nR1 in out 1k\n{card}\n")
        assert info.value.code == "netlist-110" and message in info.value.message
        assert info.value.span.line == 4


class TestModelCards:
    def test_resistor_model_multiplies_and_carries_coefficients(self):
        ckt = read_netlist("t\n.model RQ RES (R=2 TC1=1m)\nV1 in 0 AC 1\nR1 in out RQ 1k\n"
                           "R2 out 0 2k RQ TC1=5m\n")
        assert ckt.element("R1").value == 2e3 and ckt.element("R1").tc1 == 1e-3
        assert ckt.element("R2").tc1 == 5e-3          # the card's own coefficient wins
        # R1 = 2 kΩ, R2 = 4 kΩ (model multiplier 2): divider H = 4k/(2k + 4k)
        close(ckt.ac("V1", "out", freqs=[1e3]).transfer, [4 / 6])

    def test_capacitor_and_inductor_models_in_a_subcircuit(self):
        net = (".subckt lc a b\n.model CX CAP(C=1.5)\n.model LX IND L=0.5\nC1 a b CX 10n\n"
               "L1 b 0 LX 2m\n.ends\nV1 in 0 AC 1\nR1 in a 100\nX1 a out lc\n")
        ref = "V1 in 0 AC 1\nR1 in a 100\nC1 a out 15n\nL1 out 0 1m\n"
        close(h(net), h(ref), 1e-12)

    def test_model_parameter_netcheck_does_not_read_is_refused(self):
        with pytest.raises(NetcheckError, match="parameter 'RSH' is not one") as info:
            read_netlist("t\n.model RD R (RSH=10)\nV1 in 0 AC 1\nR1 in 0 RD 1k\n")
        assert info.value.code == "netlist-130" and info.value.span.line == 2

    def test_device_model_is_stored_and_used_by_its_device_only(self):
        text = ("t\n.MODEL QN NPN(BF=200 IS=1e-15\n+ VAF=80 CJC=2p)\n.model DX D(IS=1n)\n"
                "V1 in 0 AC 1 0 Rser=50\nR1 in 0 1k\n")
        assert read_netlist(text).element("R1").value == 1e3   # stored, not in the way
        q1 = read_netlist(text + "Q1 c in 0 QN\nR2 c 0 1k\nVC c 0 DC 5\n").element("Q1")
        assert (q1.model.BF, q1.model.IS, q1.model.VAF, q1.model.CJC) == (200, 1e-15, 80, 2e-12)
        with pytest.raises(NetcheckError, match="device model .D, for D cards."):
            read_netlist(text + "C1 in 0 DX 1n\n")
        with pytest.raises(NetcheckError, match="model DX is of type D, not a model for a bjt") \
                as info:
            read_netlist(text + "Q1 c in 0 DX\n")
        assert info.value.code == "netlist-130" and info.value.span.line == 4


class TestZeroOhm:
    def test_zero_ohm_resistor_is_a_wire(self):
        # R0 joins a and out: the divider is 1k over 3k (closed form), on the pole-zero
        # engine and the dense one alike
        net = "V1 in 0 AC 1\nR1 in a 1k\nR0 a out 0\nR2 out 0 3k\nC1 out 0 1n\n"
        close(h(net), 3e3 / (3e3 + 1e3 * (1 + W * 1e-9 * 3e3)))
        close(h(net, freqs=F[:5]), (3e3 / (3e3 + 1e3 * (1 + W * 1e-9 * 3e3)))[:5])


class TestCouplingOfSeveralInductors:
    def test_three_windings_against_an_inductance_matrix(self):
        # K1 L1 L2 L3 k couples every pair (common practice, no source). Reference: the
        # nodal analysis written here with the 3×3 inductance matrix
        # M = [[L1, k√(L1L2), k√(L1L3)], ...], loop by loop: the primary driven through
        # Rs, each secondary loaded by its own resistor.
        L = np.array([1e-3, 4e-3, 0.25e-3])
        k, rs, r2, r3 = 0.95, 50.0, 1e3, 20.0
        net = (f"V1 in 0 AC 1\nRS in p {rs}\nL1 p 0 {L[0]}\nL2 s 0 {L[1]}\nR2 s 0 {r2}\n"
               f"L3 t 0 {L[2]}\nR3 t 0 {r3}\nK1 L1 L2 L3 {k}\n")
        f = np.logspace(2, 6, 9)
        got2, got3 = h(net, "s", f), h(net, "t", f)
        M = k * np.sqrt(np.outer(L, L))
        np.fill_diagonal(M, L)
        for i, s in enumerate(2j * np.pi * f):
            # unknowns: winding currents i1..i3 (into the dotted end); v_j = s Σ M_jk i_k;
            # v1 = 1 − Rs·i1; v2 = −R2·i2; v3 = −R3·i3
            A = s * M + np.diag([rs, r2, r3])
            cur = np.linalg.solve(A, [1.0, 0.0, 0.0])
            close(got2[i], -r2 * cur[1], 1e-8)
            close(got3[i], -r3 * cur[2], 1e-8)

    def test_naming_an_inductor_twice_is_refused(self):
        with pytest.raises(NetcheckError, match="couples L2 to itself"):
            read_netlist("t\nV1 in 0 AC 1\nR1 in p 1\nL1 p 0 1u\nL2 p 0 1u\nK1 L1 L2 L2 0.5\n")


class TestStressOfPartsWithOptions:
    # part stress judges one physical part: with m copies each carries 1/m of the
    # current; a capacitor with Rser carries its branch current, not sC·V(terminals).
    # References: Ohm's law and the divider, closed forms written here.
    @staticmethod
    def peak(text, parts, quantity, grid):
        from netcheck.analyses.stress import judge_stress
        from netcheck.spec.stress import parse_stress
        resp = read_netlist("t\n" + text).ac("V1", "out", freqs=grid)
        (res,) = judge_stress(parse_stress([{"source_amplitude": "1", "parts": parts, quantity: 1e9}],
                                             "s.toml"), resp)
        return res.peak

    def test_resistor_copies_share_the_current_and_a_wire_dissipates_nothing(self):
        grid = np.logspace(1, 3, 5)
        text = "V1 in 0 AC 1\nR1 in x 1k\nR0 x out 0\nR2 out 0 2k m=2\n"
        # 1 V over 1k + 1k: 0.5 mA in all, 0.25 mA per copy of R2
        assert self.peak(text, "R2", "max_current", grid) == pytest.approx(0.25e-3, rel=1e-9)
        assert self.peak(text, "R0", "max_current", grid) == pytest.approx(0.5e-3, rel=1e-9)
        assert self.peak(text, "R0", "max_power", grid) == 0.0

    def test_capacitor_with_rser_and_copies(self):
        # |I| = |1/(R + Rser/m + 1/(sCm))| in all, 1/m of it per capacitor; at the top of
        # the sweep it is largest (high-pass current)
        grid = np.logspace(2, 6, 41)
        R, C, r, m = 1e3, 10e-9, 100.0, 2
        text = f"V1 in 0 AC 1\nR1 in out {R}\nC1 out 0 {C} Rser={r} m={m}\n"
        s = 2j * np.pi * grid[-1]
        expect = abs(1 / (R + r / m + 1 / (s * C * m))) / m
        assert self.peak(text, "C1", "max_current", grid) == pytest.approx(expect, rel=1e-9)


def test_sampled_values_move_the_part_and_keep_its_options():
    # a tolerance varies the part's own value; m, Rser, Rpar and Cpar stay. Reference:
    # the same circuit written with the sampled value, assembled on its own
    from netcheck.mna.assemble import assemble, assemble_batch
    card = "C1 out 0 {c} m=2 Rser=3 Rpar=1meg Cpar=5p\nL1 out x {l} m=3 Rser=2\nR2 x 0 {r} m=2\n"
    base = "V1 in 0 AC 1\nR1 in out 1k\n"
    nominal = read_netlist("t\n" + base + card.format(c="10n", l="1m", r="100"))
    system = assemble(nominal, "V1", "out")
    G, C = assemble_batch(system, {"C1": np.array([11e-9]), "L1": np.array([0.9e-3]),
                                   "R2": np.array([105.0])}, 1)
    moved = assemble(read_netlist("t\n" + base + card.format(c="11n", l="0.9m", r="105")),
                     "V1", "out")
    np.testing.assert_allclose(G[0], moved.G.toarray(), rtol=1e-15, atol=0)
    np.testing.assert_allclose(C[0], moved.C.toarray(), rtol=1e-15, atol=0)


def test_voltage_source_with_rser_may_parallel_another_source():
    # two 1 V sources, 100 Ω and 300 Ω inside, in parallel: Thevenin, 1 V open circuit;
    # into 50 Ω (V2 zeroed, only V1 drives): 1 V·(300∥50)/(100 + 300∥50) (closed form)
    got = h("V1 in 0 AC 1 Rser=100\nV2 in 0 AC 1 Rser=300\nR1 in 0 50\n", node="in",
            freqs=np.array([1e3]))
    par = 300 * 50 / 350
    close(got, [par / (100 + par)])


def test_a_model_name_starting_with_m_is_not_read_as_milli():
    # netlist-151 warns of '1M' on a resistor; a model called MFILM is not a value
    ckt = read_netlist("t\n.model MFILM RES (TC1=50u TNOM=25)\nV1 in 0 AC 1\n"
                       "R1 in 0 MFILM 1k\nL1 in 0 L=1m TC1=1m\nC1 in 0 1n TC2=2u\n")
    assert not [d for d in ckt.diagnostics if d.code == "netlist-151"]
    # TNOM from the model: ΔT = 75 − 25; coefficients on L and C too (the same formula)
    assert ckt.element("R1").value_at(75.0) == pytest.approx(1e3 * (1 + 50e-6 * 50))
    assert ckt.element("L1").value_at(127.0) == pytest.approx(1e-3 * (1 + 1e-3 * 100))
    assert ckt.element("C1").value_at(-23.0) == pytest.approx(1e-9 * (1 + 2e-6 * 2500))


def test_three_fields_naming_a_model_are_not_a_value():
    # 'R1 a 0 rmet': the third field names a .model, so the value is missing (the error
    # points just past the card); with a value the model's R= multiplier applies (2 × 5 Ω)
    with pytest.raises(NetcheckError, match="R1: missing resistor value") as info:
        read_netlist("t\n.model rmet R(R=2)\nR1 a 0 rmet\nV1 a 0 AC 1\n")
    assert (info.value.span.line, info.value.span.column) == (3, 12)
    for card in ("R1 a 0 rmet 5", "R1 a 0 5 rmet"):
        ckt = read_netlist(f"t\n.model rmet R(R=2)\n{card}\nV1 a 0 AC 1\n")
        assert (ckt.element("R1").value, ckt.element("R1").model) == (10.0, "rmet")
    plain = read_netlist("t\n.model rmet R(R=2)\nR1 a 0 5\nV1 a 0 AC 1\n").element("R1")
    assert (plain.value, plain.model) == (5.0, "")
