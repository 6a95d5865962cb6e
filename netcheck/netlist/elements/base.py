"""The Element base class: hierarchical name, nodes, class flags, card reader and stamp.

Every stamp follows the modified nodal approach of Ho, Ruehli & Brennan [1]_:
node voltages are unknowns, and elements whose current cannot be written from
node voltages (inductors, voltage-defined sources) add their branch current.
A stamp adds to ``G`` (real, frequency-independent) and ``C`` (multiplied by
``s``), so the system is ``(G + sC) x = b``.

References
----------
.. [1] C.-W. Ho, A. E. Ruehli and P. A. Brennan, "The modified nodal approach to
   network analysis", IEEE Trans. Circuits and Systems, vol. 22, no. 6,
   pp. 504-509, 1975.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, Callable, ClassVar

from ..source import Span

if TYPE_CHECKING:  # pragma: no cover
    from ...mna.assemble import Stamper
    from ..reader import CardReader

__all__ = ["Element", "of_classes"]


@dataclass(slots=True, unsafe_hash=True)
class Element:
    """Base of all elements: hierarchical name, node names, source position.

    Elements are treated as immutable (use :func:`dataclasses.replace`), but are not
    frozen dataclasses: a big netlist makes them by the hundred thousand, and a frozen
    dataclass pays a call per field to be built.
    """

    name: str
    nodes: tuple[str, ...]
    span: Span

    letter: ClassVar[str] = ""
    #: number of nodes on the card (for controlled sources: output then controlling pair)
    n_nodes: ClassVar[int] = 2
    #: the element adds a branch-current unknown
    has_branch: ClassVar[bool] = False
    #: a voltage-defined two-terminal (V, E, H): loops of these are singular
    voltage_defined: ClassVar[bool] = False
    #: a current-defined two-terminal (I, G, F): cut-sets of these are singular
    current_defined: ClassVar[bool] = False
    #: branch unknowns beyond the first, named ``<name> <suffix>`` (a space: no card name has one) (a line's second port)
    extra_branches: ClassVar[tuple[str, ...]] = ()
    #: not linear: solved at the DC operating point and replaced there by its small-signal
    #: equivalent before any stamp (netcheck.mna.bias); devices and nonlinear sources
    nonlinear: ClassVar[bool] = False
    #: a passive part whose value must be positive (R, L, C)
    passive: ClassVar[bool] = False
    #: the unit of ``value`` for reports
    unit: ClassVar[str] = ""
    #: what ``value`` stamped out of range would make overflow or vanish (netlist-118 says it);
    #: empty for elements that stamp no value (independent sources)
    range_why: ClassVar[str] = ""

    @property
    def value(self) -> float:
        """The element's main value (ohms, farads, henries, gain...)."""
        return float("nan")

    @property
    def terminals(self) -> tuple[str, str]:
        """The two nodes the element's own current flows between."""
        return self.nodes[0], self.nodes[1]

    @property
    def links(self) -> tuple[tuple[str, str], ...]:
        """The node pairs the element joins, for connectivity (its terminals)."""
        return (self.terminals,)

    @property
    def sensed(self) -> tuple[tuple[str, str], ...]:
        """Node pairs whose voltage difference the element's equations read besides its
        own terminals (the controlling input of E and G)."""
        return ()

    def controls(self) -> tuple[str, ...]:
        """Names of other elements this one refers to (controlling sources, inductors)."""
        return ()

    def stamp(self, st: "Stamper", value: Any) -> None:
        """Add this element's entries to the MNA matrices (``value`` may be a sample array)."""
        raise NotImplementedError

    @classmethod
    def from_card(cls, rd: "CardReader") -> "Element":
        """Build the element from a card (``rd`` reads nodes and values)."""
        raise NotImplementedError


def of_classes(elements: "list[Element] | tuple[Element, ...]", test: "Callable[[type], bool]",
               classes: "set[type] | None" = None) -> list[Element]:
    """The elements whose class passes ``test``, each class tested once (``classes``, if
    given, is the set of the elements' classes).

    A big netlist has a hundred thousand elements of a handful of classes; most checks
    concern a class or two that it often has none of, and then cost one pass in C.
    """
    if classes is None:
        classes = set(map(type, elements))
    chosen = {cls for cls in classes if test(cls)}
    if len(chosen) == len(classes):
        return list(elements)
    return [e for e in elements if type(e) in chosen] if chosen else []
