"""Graph checks that find singular circuits before solving, and node lint."""

from __future__ import annotations

import dataclasses
from itertools import chain
from operator import attrgetter

import numpy as np

from .elements import Element
from .elements.base import of_classes
from ..exceptions import Diagnostic, ElaborationError
from .source import Span, printable, quoted

__all__ = ["check_topology", "lint_nodes", "tie_isolated_ports", "number_nodes"]

GROUND = "0"
#: the number of links from which the topology's components are found by
#: scipy.sparse.csgraph rather than a union-find in Python (:func:`_labels`)
SPARSE_FROM = 300

_NODES = attrgetter("nodes")


class _Sets:
    """Union-find over node names (path halving); ``count`` is the number of sets."""

    def __init__(self) -> None:
        self.parent: dict[str, str] = {}
        self.count = 0

    def find(self, a: str) -> str:
        parent = self.parent
        p = parent.get(a)
        if p is None:
            parent[a] = a
            self.count += 1
            return a
        while p != a:
            gp = parent[p]
            parent[a] = gp
            a, p = gp, parent[gp]
        return a

    def union(self, a: str, b: str) -> bool:
        """Join the sets of a and b; False if they were already joined."""
        ra, rb = self.find(a), self.find(b)
        if ra == rb:
            return False
        self.parent[ra] = rb
        self.count -= 1
        return True


def number_nodes(elements: tuple[Element, ...]) -> tuple[dict[str, int], list[int]]:
    """Every node of ``elements`` numbered in the order it first appears, ground 0: the
    numbers by node, and the number of every node of every element in turn (one pass;
    the circuit's node list is the keys after ground)."""
    index = {GROUND: 0}
    number = index.setdefault
    return index, [number(n, len(index)) for n in chain.from_iterable(map(_NODES, elements))]


def _link_codes(elements: list[Element], index: dict[str, int], classes: set[type],
                codes: list[int] | None = None) -> list[int]:
    """The node numbers (``index``) at the two ends of every link of ``elements``, one
    link after another.

    A big netlist has a hundred thousand elements and most of them are of a class that
    links just its two nodes, so those are numbered in one C-level pass over their node
    tuples; elements with links of their own (devices, lines, controlled sources) add
    theirs one by one. ``classes`` is the set of the elements' classes; ``codes``, if
    given, is :func:`number_nodes`'s numbers of every node of ``elements`` in turn.
    """
    simple_classes = {cls for cls in classes if cls.n_nodes == 2
                      and cls.links is Element.links and cls.terminals is Element.terminals}
    simple = elements if len(simple_classes) == len(classes) else \
        [e for e in elements if type(e) in simple_classes]
    if codes is not None and simple is elements and len(codes) == 2 * len(elements):
        return codes
    ends = list(map(index.__getitem__, chain.from_iterable(map(_NODES, simple))))
    if len(ends) != 2 * len(simple):  # a card of such a class with other than two nodes
        ends = [index[n] for e in simple for n in e.nodes[:2]]
    if len(simple) != len(elements):
        ends += [index[n] for e in elements if type(e) not in simple_classes
                 for pair in e.links for n in pair]
    return ends


def _labels(size: int, ends: list[int]) -> list[int]:
    """A label per node number (``size`` of them) that is the same for two nodes exactly
    when the links ``ends`` join them.

    A graph of a few hundred links (most circuits) is joined by :class:`_Sets`;
    a bigger one by :func:`scipy.sparse.csgraph.connected_components`, which builds a
    sparse matrix first (a tenth of a millisecond: more than a small circuit's whole
    elaboration) but then takes a generated netlist's hundred thousand links in C.
    """
    if len(ends) < 2 * SPARSE_FROM:
        sets = _Sets()
        for k in range(0, len(ends), 2):
            sets.union(ends[k], ends[k + 1])
        return [sets.find(a) for a in range(size)]
    from scipy.sparse import csr_matrix
    from scipy.sparse.csgraph import connected_components
    links = np.asarray(ends, dtype=np.intp)
    graph = csr_matrix((np.ones(len(links) // 2, dtype=np.int8), (links[0::2], links[1::2])),
                       shape=(size, size))
    return connected_components(graph, directed=False)[1].tolist()


def _flagged(elements: list[Element], flag: str, classes: set[type]) -> list[Element]:
    """The elements whose ``flag`` (``voltage_defined``, ``current_defined``) is true:
    asked once per class where the class fixes it, else of each element (``classes``
    is the set of the elements' classes)."""
    fixed = {cls: value for cls in classes if isinstance(value := getattr(cls, flag), bool)}
    if len(fixed) == len(classes) and not any(fixed.values()):
        return []
    return [e for e in elements if fixed.get(type(e), True) and getattr(e, flag)]


def _ungrounded(elements: list[Element], nodes: tuple[str, ...],
                classes: set[type] | None = None,
                numbered: tuple[dict[str, int], list[int]] | None = None) -> list[list[str]]:
    """The groups of ``nodes`` the links of ``elements`` do not join to ground, each in
    node order, in the order of their first node.

    The connected components come from the links numbered as node indices (ground is
    0), by :func:`_labels`. ``numbered`` is :func:`number_nodes` of ``elements`` when the
    caller has it.
    """
    if numbered is not None:
        index, codes = numbered
    else:
        index, codes = {GROUND: 0}, None
        index.update(zip(nodes, range(1, len(nodes) + 1)))
    labels = _labels(len(index), _link_codes(
        elements, index, set(map(type, elements)) if classes is None else classes, codes))
    ground = labels[0]
    if labels.count(ground) == len(labels):
        return []
    out: dict[int, list[str]] = {}
    for node, label in zip(nodes, labels[1:]):
        if label != ground:
            out.setdefault(label, []).append(node)
    return list(out.values())


def _names(nodes: list[str]) -> str:
    shown = ", ".join(printable(n, 60) for n in nodes[:6])
    return shown + (f" and {len(nodes) - 6} more" if len(nodes) > 6 else "")


def check_topology(elements: tuple[Element, ...], nodes: tuple[str, ...],
                   classes: set[type] | None = None,
                   numbered: tuple[dict[str, int], list[int]] | None = None) -> None:
    """Refuse topologies that make the MNA matrix singular at every frequency.

    Three structural causes are named: a group of nodes with no path to ground
    (floating), a loop made only of voltage-defined elements (V, E, H), and a
    group of nodes joined to the rest only by current sources (I, G, F), unless one of
    them senses a voltage across that cut (:func:`_sensed_across`).

    ``classes`` (the set of the elements' classes) and ``numbered`` (:func:`number_nodes`
    of ``elements``) may be given when the caller has them.

    Raises
    ------
    ElaborationError
        netlist-111, netlist-112 or netlist-113, at the first element touching the offending nodes.
    """
    if classes is None:
        classes = set(map(type, elements))
    two_terminal = of_classes(elements, lambda cls: cls.letter != "K", classes)
    classes = {cls for cls in classes if cls.letter != "K"}
    whole = numbered if len(two_terminal) == len(elements) else None
    for group in _ungrounded(two_terminal, nodes, classes, whole)[:1]:
        culprit = next(e for e in two_terminal if group[0] in e.nodes)
        sense_only = all(n not in x for n in group for x in culprit.links)
        why = (f" (it connects only to the controlling input of "
               f"{printable(culprit.name, 80)})"
               if sense_only and len(group) == 1 else "")
        raise ElaborationError(
            f"node{'s' if len(group) > 1 else ''} {_names(group)} "
            f"{'have' if len(group) > 1 else 'has'} no path to ground{why}; connect it "
            "or tie it to ground through a resistor", culprit.span, code="netlist-111")

    loops = _Sets()
    for e in _flagged(two_terminal, "voltage_defined", classes):
        a, b = e.terminals
        if not loops.union(a, b):
            raise ElaborationError(
                f"{printable(e.name, 80)} closes a loop of voltage-defined elements (V, E, "
                f"H) between nodes {printable(a, 60)} and {printable(b, 60)}; the loop "
                "current is undetermined", e.span,
                code="netlist-112")

    current = _flagged(two_terminal, "current_defined", classes)
    if not current:
        return  # the groups below are those above: all reach ground
    sensing = [e for e in current if e.sensed]
    apart = set(map(id, current))
    for group in _ungrounded([e for e in two_terminal if id(e) not in apart], nodes):
        if not _sensed_across(group, sensing):
            culprit = next(e for e in two_terminal if e.current_defined
                           and set(e.terminals) & set(group))
            raise ElaborationError(
                f"node{'s' if len(group) > 1 else ''} {_names(group)} "
                f"connect{'' if len(group) > 1 else 's'} to the rest only "
                "through current sources (a cut-set of current sources, e.g. "
                f"{printable(culprit.name, 80)}); "
                "their voltage is undetermined", culprit.span, code="netlist-113")


def _sensed_across(group: list[str], sensing: list[Element]) -> bool:
    """True when a controlled current source crossing the cut around ``group`` senses a
    voltage across that cut (``G1 out 0 0 out gm``: a conductance in all but name).

    Its current into the group then depends on the group's own voltages, so neither the
    group's summed KCL row nor a common shift of its voltages is a null vector of the
    system, and the cut no longer makes it singular. Other singular systems are still
    found by the solver (analysis-300).
    """
    inside = set(group)
    for e in sensing:
        a, b = e.terminals
        if (a in inside) != (b in inside) and any(
                (p in inside) != (n in inside) for p, n in e.sensed):
            return True
    return False


def lint_nodes(single: dict[str, Span]) -> list[Diagnostic]:
    """Warn about nodes touched by a single terminal (usually a typo): ``single`` holds
    each node named once, and where."""
    return [Diagnostic("netlist-152", f"node {quoted(node, 80)} has only one connection", span)
            for node, span in single.items() if node != GROUND]


def tie_isolated_ports(elements: list[Element], classes: set[type] | None = None
                       ) -> list[Diagnostic]:
    """Give the far port of a transmission line a reference when nothing else does.

    A line couples its ports only through the voltage across each, so a group of
    nodes reached only through one port of a line (a stub's far end written with
    nodes of its own, ``T2 a 0 5 6``; a shorted stub ``T1 a b 4 4``) has a voltage
    against ground that nothing determines, and no current can leave it except through
    the line. Any value is exact for everything else in the circuit; the group is tied
    to the other port's reference (its reference node, or its shorted node, becomes that
    node), in place in ``elements``, with one netlist-161 note per line tied.
    """
    if not of_classes(elements, lambda cls: bool(cls.extra_branches), classes):
        return []
    lines = [k for k, e in enumerate(elements) if e.extra_branches]
    notes: list[Diagnostic] = []
    sets = None
    for k in lines:
        if sets is None:  # made again only after a tie changed the nodes
            sets = _Sets()
            sets.find(GROUND)
            for e in elements:
                for a, b in e.links:
                    sets.union(a, b)
        line = elements[k]
        n1, n2, n3, n4 = line.nodes
        for (ra, rb), (oa, ob) in (((n3, n4), (n1, n2)), ((n1, n2), (n3, n4))):
            root = sets.find(rb)
            if root in (sets.find(GROUND), sets.find(ob)):
                continue
            # the port (ra, rb) and all that hangs on it float: rb becomes ob
            for j, e in enumerate(elements):
                if rb in e.nodes:
                    elements[j] = dataclasses.replace(
                        e, nodes=tuple(ob if n == rb else n for n in e.nodes))
            notes.append(Diagnostic(
                "netlist-161", f"{printable(line.name, 80)}: the port ({printable(ra, 60)}, "
                f"{printable(rb, 60)}) connects to nothing else, so its voltage against "
                f"ground is free; node {printable(rb, 60)} is taken as the other port's "
                f"reference {printable(ob, 60)}", line.span, "note"))
            sets = None
            break
    return notes
