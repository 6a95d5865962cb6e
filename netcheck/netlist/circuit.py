"""The elaborated circuit: flat elements and nodes (Circuit), part-model instances (PartModel)."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from ..exceptions import Diagnostic
from .elements.base import Element
from .source import SourceFile, Span

__all__ = ["Circuit", "PartModel", "GROUND", "GROUND_NAMES"]

#: the ground node's name in a Circuit (netlists may also write ``gnd``)
GROUND = "0"
#: the node names a netlist writes for ground (lower case)
GROUND_NAMES = frozenset({GROUND, "gnd"})


@dataclass(frozen=True, slots=True)
class PartModel:
    """One instance of a subcircuit that models a single physical part.

    A quartz crystal written as a motional arm in parallel with its holder capacitance
    is one part with two terminals, not four parts: the elements inside such an instance
    are model parameters (the spec's ``part_models`` names the subcircuits). What a
    physical part sees is at its ports: the voltage between each pair of them and the
    current into each.

    Attributes
    ----------
    name : str
        The instance's full name, upper case (``X1``, ``X2.X1``); every element inside
        is called ``<name>.<...>``.
    subckt : str
        The subcircuit's name as its ``.subckt`` line writes it.
    ports : tuple of str
        The port names as the ``.subckt`` line writes them.
    nodes : tuple of str
        The circuit node each port is connected to (``0`` is ground).
    through : tuple of (str, int, int)
        ``(element, node position, port position)`` for every node of an element inside
        that is reached through a port: exact even where two ports share one node or a
        port is grounded while the model also uses ground inside.
    span : Span or None
        The instance card's name.
    """

    name: str
    subckt: str
    ports: tuple[str, ...]
    nodes: tuple[str, ...]
    through: tuple[tuple[str, int, int], ...] = ()
    span: Span | None = None


@dataclass(frozen=True, slots=True)
class Circuit:
    """A flat circuit: elements with hierarchical names (``X1.X2.C3``) and node names.

    Node names are lower case (``0`` is ground); element names upper case.
    """

    title: str
    elements: tuple[Element, ...]
    nodes: tuple[str, ...]
    sources: tuple[SourceFile, ...] = ()
    diagnostics: tuple[Diagnostic, ...] = ()
    params: tuple[tuple[str, float], ...] = ()
    #: instances of subcircuits that model one physical part each (:class:`PartModel`)
    part_models: tuple[PartModel, ...] = ()
    #: the temperature of the check, °C (the netlist's ``.temp``; 27 when it has none):
    #: the parts' TC1/TC2 are taken there, and the devices solved there
    temp_c: float = 27.0
    #: for a circuit whose devices were replaced by their small-signal equivalents: the
    #: DC operating point they were linearised at (a netcheck.mna.bias.OperatingPoint)
    operating_point: Any = field(default=None, compare=False, repr=False)
    #: for such a circuit: the circuit with its devices, which each sample of part values
    #: (Monte Carlo, worst case, stress) solves again for its own operating point
    large_signal: "Circuit | None" = field(default=None, compare=False, repr=False)
    _index: dict = field(default=None, compare=False, repr=False)
    _models: dict = field(default=None, compare=False, repr=False)

    def element(self, name: str) -> Element:
        """The element called ``name`` (case-insensitive); KeyError if none."""
        index = self._index
        if index is None:
            index = {e.name: e for e in self.elements}
            object.__setattr__(self, "_index", index)
        return index[name.upper()]

    def part_model_of(self, name: str) -> PartModel | None:
        """The part model the element called ``name`` is inside, or None.

        Elements inside an instance are named ``<instance>.<...>``, so the dotted
        prefixes of ``name`` are the instances it is inside; the outermost part model
        among them holds it.
        """
        if not self.part_models:
            return None
        by_name = self._models
        if by_name is None:
            by_name = {m.name: m for m in self.part_models}
            object.__setattr__(self, "_models", by_name)
        parts = name.upper().split(".")
        for i in range(1, len(parts)):
            model = by_name.get(".".join(parts[:i]))
            if model is not None:
                return model
        return None

    def has_element(self, name: str) -> bool:
        """True if an element called ``name`` exists."""
        try:
            self.element(name)
        except KeyError:
            return False
        return True

