"""The element table: one class per letter, each in its family's module, and one
netlist per family that elaborates to the expected classes."""

from __future__ import annotations

import importlib
import inspect

import pytest

from netcheck.netlist import elements
from netcheck.netlist.elaborate import elaborate
from netcheck.netlist.elements import (CCCS, CCVS, ELEMENTS, VCCS, VCVS, BehaviouralSource,
                                       BehaviouralVCCS, BehaviouralVCVS, Bjt, Capacitor,
                                       Coupling, CurrentSource, Diode, Element, IdealOpAmp,
                                       Inductor, Jfet, Mosfet, PolyCCCS, PolyCCVS, PolyVCCS,
                                       PolyVCVS, Resistor, TransmissionLine, VoltageSource)
from netcheck.netlist.parse import load_netlist

#: card letter → the family module its class lives in
FAMILY = {
    "R": "passives", "L": "passives", "C": "passives",
    "V": "sources", "I": "sources",
    "E": "controlled", "F": "controlled", "G": "controlled", "H": "controlled",
    "K": "coupling",
    "T": "tline",
    "D": "devices", "Q": "devices", "M": "devices", "J": "devices",
    "B": "behavioural",
}
#: element classes no card makes: the devices' common base, and a device's small-signal
#: equivalent and a polynomial source's linearisation, which the operating point puts in their
#: places (netcheck.mna.bias)
NOT_FROM_CARDS = {"Device", "Linearised", "LinearisedSource"}
FAMILIES = sorted(set(FAMILY.values()))


def _kinds(module_name: str) -> dict[str, type[Element]]:
    """The public element classes a family module defines (not imports)."""
    module = importlib.import_module(f"netcheck.netlist.elements.{module_name}")
    return {name: obj for name, obj in vars(module).items()
            if inspect.isclass(obj) and issubclass(obj, Element) and obj is not Element
            and obj.__module__ == module.__name__ and not name.startswith("_")}


def test_every_letter_has_a_family_and_its_class_lives_there():
    assert set(ELEMENTS) == set(FAMILY)
    for letter, cls in ELEMENTS.items():
        assert cls.letter == letter
        assert cls.__module__ == f"netcheck.netlist.elements.{FAMILY[letter]}", letter


@pytest.mark.parametrize("family", FAMILIES)
def test_every_class_of_a_family_is_in_the_table(family):
    kinds = _kinds(family)
    assert kinds, family
    for name, cls in kinds.items():
        if name in NOT_FROM_CARDS:
            assert cls.letter not in ELEMENTS, name
            continue
        # a class is its letter's, or a form that class's card reader returns (E … OPAMP)
        assert ELEMENTS.get(cls.letter) is cls or issubclass(cls, ELEMENTS[cls.letter]), name
    module = importlib.import_module(f"netcheck.netlist.elements.{family}")
    assert sorted(n for n in module.__all__ if inspect.isclass(getattr(module, n))) == \
        sorted(kinds)


def test_base_holds_no_kind_and_the_package_re_exports_every_kind():
    assert _kinds("base") == {}
    for cls in ELEMENTS.values():
        assert getattr(elements, cls.__name__) is cls
        assert cls.__name__ in elements.__all__


NETLISTS = {
    "passives": ("""Quillmere Instruments passive ladder
V1 in 0 AC 1
R1 in a 1k
L1 a out 10m
C1 out 0 100n
""", {"V1": VoltageSource, "R1": Resistor, "L1": Inductor, "C1": Capacitor}),
    "sources": ("""Quillmere Instruments two sources
V1 in 0 DC 0 AC 1
R1 in out 1k
I1 0 out AC 1m
R2 out 0 1k
""", {"V1": VoltageSource, "R1": Resistor, "I1": CurrentSource, "R2": Resistor}),
    "controlled": ("""Quillmere Instruments controlled sources
V1 in 0 AC 1
R1 in 0 1k
E1 a 0 in 0 2
R2 a 0 1k
G1 0 b in 0 1m
R3 b 0 1k
F1 0 c V1 0.5
R4 c 0 1k
H1 d 0 V1 100
R5 d 0 1k
R6 d e 1k
R7 e f 2k
E2 f 0 opamp 0 e
E3 g 0 POLY(1) in 0 0 2
R8 g 0 1k
G2 0 h POLY(1) in 0 0 1m
R9 h 0 1k
F2 0 i POLY(1) V1 0 1
R10 i 0 1k
H2 j 0 POLY(1) V1 0 100
R11 j 0 1k
E4 k 0 VALUE={2*v(in)}
R12 k 0 1k
G3 0 l value={1m*v(in,0)^2}
R13 l 0 1k
""", {"V1": VoltageSource, "R1": Resistor, "E1": VCVS, "R2": Resistor, "G1": VCCS,
      "R3": Resistor, "F1": CCCS, "R4": Resistor, "H1": CCVS, "R5": Resistor,
      "R6": Resistor, "R7": Resistor, "E2": IdealOpAmp, "E3": PolyVCVS, "R8": Resistor,
      "G2": PolyVCCS, "R9": Resistor, "F2": PolyCCCS, "R10": Resistor, "H2": PolyCCVS,
      "R11": Resistor, "E4": BehaviouralVCVS, "R12": Resistor, "G3": BehaviouralVCCS,
      "R13": Resistor}),
    "behavioural": ("""Quillmere Instruments behavioural sources
V1 in 0 DC 1 AC 1
R1 in 0 1k
B1 c 0 V={tanh(v(in))}
R4 c 0 1k
B2 0 d I={0.5*i(V1)}
R5 d 0 1k
""", {"V1": VoltageSource, "R1": Resistor, "B1": BehaviouralSource, "R4": Resistor,
      "B2": BehaviouralSource, "R5": Resistor}),
    "coupling": ("""Quillmere Instruments coupled coils
V1 in 0 AC 1
R1 in p 50
L1 p 0 1u
L2 s 0 4u
R2 s 0 50
K1 L1 L2 0.9
""", {"V1": VoltageSource, "R1": Resistor, "L1": Inductor, "L2": Inductor, "R2": Resistor,
      "K1": Coupling}),
    "tline": ("""Quillmere Instruments quarter-wave transformer
V1 in 0 AC 1
R1 in a 50
T1 a 0 out 0 Z0=70.7 F=1.2g
R2 out 0 100
""", {"V1": VoltageSource, "R1": Resistor, "T1": TransmissionLine, "R2": Resistor}),
    "devices": ("""Quillmere Instruments one of each device
VCC vcc 0 DC 9
V1 in 0 AC 1
R1 vcc in 10k
D1 in 0 qm_d
Q1 vcc in e qm_n
R2 e 0 1k
M1 vcc e 0 0 qm_m W=10u L=1u
J1 vcc e 0 qm_j
.model qm_d D(IS=1e-14)
.model qm_n NPN(BF=100)
.model qm_m NMOS(KP=100u VTO=1)
.model qm_j NJF(BETA=1m VTO=-2)
""", {"VCC": VoltageSource, "V1": VoltageSource, "R1": Resistor, "D1": Diode, "Q1": Bjt,
      "R2": Resistor, "M1": Mosfet, "J1": Jfet}),
}


@pytest.mark.parametrize("family", FAMILIES)
def test_one_netlist_per_family_elaborates_to_its_classes(family):
    text, expected = NETLISTS[family]
    circuit = elaborate(load_netlist(text))
    assert circuit.title.startswith("Quillmere Instruments")
    assert {e.name: type(e) for e in circuit.elements} == expected
    assert {c for n, c in _kinds(family).items() if n not in NOT_FROM_CARDS} <= \
        set(expected.values())
