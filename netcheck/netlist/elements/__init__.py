"""Element kinds, one module per family, and the letter → class table.

``base`` holds :class:`Element`; ``passives`` (R, L, C), ``sources`` (V, I),
``controlled`` (E, F, G, H), ``behavioural`` (B; the VALUE forms
of E and G are in ``controlled``), ``coupling`` (K), ``tline`` (T) and ``devices`` (D, Q, M, J,
and their small-signal equivalents) hold the kinds, each with its card
reader and MNA stamp; ``table`` holds :data:`ELEMENTS`. Adding a kind is one class in
its family's module and one line in the table.
"""

from __future__ import annotations

from .base import Element
from .behavioural import BehaviouralSource
from .controlled import (CCCS, CCVS, VCCS, VCVS, BehaviouralVCCS, BehaviouralVCVS, IdealOpAmp,
                         LinearisedSource, PolyCCCS, PolyCCVS, PolyVCCS, PolyVCVS)
from .coupling import Coupling
from .laplace import LaplaceVCCS, LaplaceVCVS
from .devices import Bjt, Device, Diode, Jfet, Linearised, Mosfet
from .passives import Capacitor, Inductor, Resistor
from .sources import CurrentSource, VoltageSource
from .table import ELEMENTS
from .tline import TransmissionLine

__all__ = ["Element", "Resistor", "Capacitor", "Inductor", "VoltageSource", "CurrentSource",
           "VCVS", "IdealOpAmp", "VCCS", "CCCS", "CCVS", "Coupling", "TransmissionLine", "ELEMENTS",
           "Device", "Diode", "Bjt", "Mosfet", "Jfet", "Linearised", "PolyVCVS", "PolyVCCS",
           "PolyCCCS", "PolyCCVS", "LinearisedSource", "LaplaceVCVS", "LaplaceVCCS",
           "BehaviouralSource", "BehaviouralVCVS",
           "BehaviouralVCCS"]
