"""The element table: card letter → element class, the one place elaboration looks up."""

from __future__ import annotations

from .base import Element
from .behavioural import BehaviouralSource
from .controlled import CCCS, CCVS, VCCS, VCVS
from .coupling import Coupling
from .devices import Bjt, Diode, Jfet, Mosfet
from .passives import Capacitor, Inductor, Resistor
from .sources import CurrentSource, VoltageSource
from .tline import TransmissionLine

__all__ = ["ELEMENTS"]

#: letter → element class (each key is its class's ``letter``). ``X`` (subcircuit
#: instance) is not here: elaboration expands it.
ELEMENTS: dict[str, type[Element]] = {
    "R": Resistor,
    "C": Capacitor,
    "L": Inductor,
    "V": VoltageSource,
    "I": CurrentSource,
    "E": VCVS,
    "G": VCCS,
    "F": CCCS,
    "H": CCVS,
    "K": Coupling,
    "T": TransmissionLine,
    "D": Diode,
    "Q": Bjt,
    "M": Mosfet,
    "J": Jfet,
    "B": BehaviouralSource,
}
