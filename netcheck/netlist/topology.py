"""Graph checks that find singular circuits before solving, and node lint."""

from __future__ import annotations

from collections.abc import Iterable

from .elements import Element
from ..exceptions import Diagnostic, ElaborationError
from .source import Span, printable, quoted

__all__ = ["check_topology", "lint_nodes"]

GROUND = "0"


class _Sets:
    """Union-find over node names."""

    def __init__(self) -> None:
        self.parent: dict[str, str] = {}

    def find(self, a: str) -> str:
        self.parent.setdefault(a, a)
        while self.parent[a] != a:
            self.parent[a] = self.parent[self.parent[a]]
            a = self.parent[a]
        return a

    def union(self, a: str, b: str) -> bool:
        """Join the sets of a and b; False if they were already joined."""
        ra, rb = self.find(a), self.find(b)
        if ra == rb:
            return False
        self.parent[ra] = rb
        return True


def _groups(sets: _Sets, nodes: Iterable[str]) -> dict[str, list[str]]:
    out: dict[str, list[str]] = {}
    for n in nodes:
        out.setdefault(sets.find(n), []).append(n)
    return out


def _names(nodes: list[str]) -> str:
    shown = ", ".join(printable(n, 60) for n in nodes[:6])
    return shown + (f" and {len(nodes) - 6} more" if len(nodes) > 6 else "")


def check_topology(elements: tuple[Element, ...], nodes: tuple[str, ...]) -> None:
    """Refuse topologies that make the MNA matrix singular at every frequency.

    Three structural causes are named: a group of nodes with no path to ground
    (floating), a loop made only of voltage-defined elements (V, E, H), and a
    group of nodes joined to the rest only by current sources (I, G, F).

    Raises
    ------
    ElaborationError
        netlist-111, netlist-112 or netlist-113, at the first element touching the offending nodes.
    """
    two_terminal = [e for e in elements if e.letter != "K"]
    first_touch: dict[str, Element] = {}
    for e in two_terminal:
        for n in e.nodes:
            first_touch.setdefault(n, e)

    full = _Sets()
    full.find(GROUND)
    for n in nodes:
        full.find(n)
    for e in two_terminal:
        for a, b in e.links:
            full.union(a, b)
    ground = full.find(GROUND)
    for root, group in _groups(full, nodes).items():
        if root != ground:
            culprit = first_touch[group[0]]
            sense_only = all(n not in x for n in group for x in culprit.links)
            why = (f" (it connects only to the controlling input of "
                   f"{printable(culprit.name, 80)})"
                   if sense_only and len(group) == 1 else "")
            raise ElaborationError(
                f"node{'s' if len(group) > 1 else ''} {_names(group)} "
                f"{'have' if len(group) > 1 else 'has'} no path to ground{why}; connect it "
                "or tie it to ground through a resistor", culprit.span, code="netlist-111")

    loops = _Sets()
    for e in two_terminal:
        if e.voltage_defined:
            a, b = e.terminals
            if not loops.union(a, b):
                raise ElaborationError(
                    f"{printable(e.name, 80)} closes a loop of voltage-defined elements (V, E, "
                    f"H) between nodes {printable(a, 60)} and {printable(b, 60)}; the loop "
                    "current is undetermined", e.span,
                    code="netlist-112")

    passive = _Sets()
    passive.find(GROUND)
    for n in nodes:
        passive.find(n)
    for e in two_terminal:
        if not e.current_defined:
            for a, b in e.links:
                passive.union(a, b)
    ground = passive.find(GROUND)
    for root, group in _groups(passive, nodes).items():
        if root != ground:
            culprit = next(e for e in two_terminal if e.current_defined
                           and set(e.terminals) & set(group))
            raise ElaborationError(
                f"node{'s' if len(group) > 1 else ''} {_names(group)} "
                f"connect{'' if len(group) > 1 else 's'} to the rest only "
                "through current sources (a cut-set of current sources, e.g. "
                f"{printable(culprit.name, 80)}); "
                "their voltage is undetermined", culprit.span, code="netlist-113")


def lint_nodes(node_spans: dict[str, list[Span]]) -> list[Diagnostic]:
    """Warn about nodes touched by a single terminal (usually a typo)."""
    out = []
    for node, spans in node_spans.items():
        if node != GROUND and len(spans) == 1:
            out.append(Diagnostic("netlist-152", f"node {quoted(node, 80)} has only one connection",
                                  spans[0]))
    return out
