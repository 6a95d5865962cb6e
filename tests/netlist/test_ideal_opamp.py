"""``E … OPAMP in+ in-``: the ideal op-amp (a nullor), against closed forms.

References: the ideal-op-amp gains of the inverting stage −R2/R1 and of the
non-inverting stage 1 + R2/R1, and the inverting integrator-type low-pass
H = −(R2/R1)/(1 + sR2C) (common practice, no source; any op-amp handbook). The limit
check compares with an ordinary E card of gain 1e9 solved by the same engine, whose
closed-loop gain differs from the ideal by about the loop-gain error 1/(A·β).
"""

from __future__ import annotations

import numpy as np
import pytest

from netcheck import read_netlist
from netcheck.exceptions import NetcheckError

F = np.logspace(1, 6, 31)


def _h(text: str, node: str = "out") -> np.ndarray:
    return read_netlist(text).ac("V1", node, freqs=F).transfer


def test_inverting_stage_is_minus_r2_over_r1():
    h = _h("Quillmere QM-3 inverting stage\nV1 in 0 AC 1\nR1 in m 1k\nR2 m out 4.7k\n"
           "E1 out 0 opamp 0 m\n")
    np.testing.assert_allclose(h, -4.7, rtol=1e-12)


def test_non_inverting_stage_is_one_plus_r2_over_r1():
    h = _h("Quillmere QM-3 buffer\nV1 in 0 AC 1\nR1 m 0 2k\nR2 out m 10k\n"
           "Eamp out 0 OPAMP in m\n")
    np.testing.assert_allclose(h, 6.0, rtol=1e-12)


def test_active_low_pass_matches_its_closed_form():
    r1, r2, c = 10e3, 22e3, 4.7e-9
    h = _h(f"Quillmere QM-3 active low-pass\nV1 in 0 AC 1\nR1 in m {r1}\nR2 m out {r2}\n"
           f"C1 m out {c}\nE1 out 0 opamp 0 m\n")
    s = 2j * np.pi * F
    np.testing.assert_allclose(h, -(r2 / r1) / (1 + s * r2 * c), rtol=1e-10)


def test_it_is_the_limit_of_a_high_gain_e_card():
    body = "V1 in 0 AC 1\nR1 in m 1k\nR2 m out 10k\nC1 m out 1n\n"
    ideal = _h("Quillmere QM-3\n" + body + "E1 out 0 opamp 0 m\n")
    finite = _h("Quillmere QM-3\n" + body + "E1 out 0 0 m 1e9\n")
    np.testing.assert_allclose(finite, ideal, rtol=1e-7)


def test_it_is_read_with_one_note():
    circuit = read_netlist("Quillmere QM-3\nV1 in 0 AC 1\nR1 in m 1k\nR2 m out 1k\n"
                           "E1 out 0 opamp 0 m\n")
    notes = [d for d in circuit.diagnostics if d.code == "netlist-162"]
    assert len(notes) == 1 and notes[0].span.line == 5 and notes[0].span.column == 10


def test_without_feedback_the_circuit_is_refused_not_solved():
    # the input difference is forced to zero with nothing to force it: singular
    with pytest.raises(NetcheckError) as info:
        _h("Quillmere QM-3 open loop\nV1 in 0 AC 1\nR1 in 0 1k\nRL out 0 1k\n"
           "E1 out 0 opamp in 0\n")
    assert info.value.code.startswith("analysis-30")


def test_missing_input_node_names_the_card():
    with pytest.raises(NetcheckError) as info:
        read_netlist("Quillmere QM-3\nV1 in 0 AC 1\nR1 in m 1k\nE1 out 0 opamp m\n")
    assert info.value.code == "netlist-105" and info.value.span.line == 4
