"""The state of one flattening, and instances made from the expansion of an earlier one.

Generated netlists instantiate one subcircuit thousands of times with a handful of
distinct parameter values, and write thousands of plain ``R1 a b 1k`` cards; both are
made here without the general card reader.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field
from typing import Callable

from .circuit import GROUND, GROUND_NAMES, PartModel
from ..exceptions import Diagnostic
from .elements import Capacitor, Element, Inductor, Resistor
from .models import ModelCard
from .params import Env
from .syntax import Card, SubcktDef
from .source import Span

__all__ = ["Flat", "Where", "where_span", "COPYABLE", "Template", "instance_shape",
           "plain_ports", "make_template", "copy_template", "plain_rlc"]

#: where a node was named: the span of its field, or (card, index of the field) for a card
#: elaborated from its words (the span is made only if a message needs it)
Where = Span | tuple[Card, int]


@dataclass
class Flat:
    elements: list[Element] = field(default_factory=list)
    #: every element and instance name made so far: the card that made it, except the
    #: elements of instances made by a copier (:attr:`copied`)
    names: dict[str, Card] = field(default_factory=dict)
    #: instances made by a copier (netcheck.netlist.copies): name → (each element's name
    #: after the instance's → its index, and its card); their elements are named
    #: ``<instance><suffix>`` (:meth:`holder`)
    copied: dict[str, tuple[dict[str, int], tuple[Card, ...]]] = field(default_factory=dict)
    #: every P such that a name in :attr:`names` or :attr:`copied` starts with ``P.``
    dotted: set[str] = field(default_factory=set)
    #: every node named so far: how many times, and where first (:data:`Where`); a node
    #: named once is netlist-152's (:meth:`note_node`)
    uses: dict[str, int] = field(default_factory=dict)
    first: dict[str, "Where"] = field(default_factory=dict)
    diags: list[Diagnostic] = field(default_factory=list)
    #: lower-case names of the subcircuits whose instances are part models
    models: frozenset[str] = frozenset()
    #: the part models found, in the order they were expanded
    found: list[PartModel] = field(default_factory=list)
    #: how many part-model instances the expansion is inside (the outermost one counts)
    depth: int = 0
    #: node names declared ``.global`` (lower case): the same node at every level
    globals: frozenset[str] = frozenset()
    #: while an instance is expanded to serve as a template: every (node, span) that
    #: node_of gives, in order (else None)
    log: list[tuple[str, "Where"]] | None = None
    #: templates of expanded instances, by (definition, enclosing scope, parameter values)
    copies: dict[tuple, "Template"] = field(default_factory=dict)
    #: the same templates by (definition, enclosing scope, node count, the instance card's
    #: ``key=value`` words as written), as the function that copies one
    #: (:mod:`netcheck.netlist.copies`): a card that repeats an earlier one's assignments
    #: is made without evaluating them again
    by_words: dict[tuple, Callable] = field(default_factory=dict)
    #: those functions by the id of their template (one per template)
    copiers: dict[int, Callable] = field(default_factory=dict)
    #: by id of a subcircuit definition: True if its body is only R, L and C cards
    rlc: dict[int, bool] = field(default_factory=dict)

    def note_node(self, name: str, where: "Where", times: int = 1) -> None:
        """Count ``times`` more uses of node ``name``, the first of them at ``where``."""
        count = self.uses.get(name)
        if count is None:
            self.uses[name] = times
            self.first[name] = where
        else:
            self.uses[name] = count + times

    def holder(self, name: str) -> Card | None:
        """The card that made element ``name`` of an instance made by a copier, or None:
        ``name`` is such an instance's name then one of its suffixes."""
        k = name.find(".")
        while k > 0:
            got = self.copied.get(name[:k])
            if got is not None and name[k:] in got[0]:
                return got[1][got[0][name[k:]]]
            k = name.find(".", k + 1)
        return None

    def add_dotted(self, name: str) -> None:
        """Record every dotted prefix of ``name`` in :attr:`dotted`."""
        k = name.find(".")
        while k > 0:
            self.dotted.add(name[:k])
            k = name.find(".", k + 1)

    def single_nodes(self) -> dict[str, Span]:
        """The nodes named only once, and where."""
        return {n: where_span(self.first[n]) for n, c in self.uses.items() if c == 1}


# Repeated instances. Generated netlists instantiate one subcircuit thousands of times
# with a handful of distinct parameter values. An instance whose body is only R, L and C
# cards, whose ports reach distinct ordinary nodes and whose expansion said nothing
# (no diagnostic) is kept as a template; a later instance of the same definition in the
# same scope whose parameters all evaluate to the same values is made from it: the same
# element values, names and local nodes renamed, port nodes mapped, and the places where
# a node is named recorded where a message may need them (every place of a port or global
# node; a local node only if the body names it once, the one case netlist-152 warns of).
# Anything else, or any doubt, expands the instance card by card as before.

COPYABLE = (Resistor, Capacitor, Inductor)


@dataclass(frozen=True, slots=True)
class Template:
    #: the nodes an instance makes, as its ports (first) and these: nodes the same in every
    #: instance (ground, globals), then local nodes (the text after the instance's prefix)
    fixed: list[str]
    #: the local nodes, each as its name (lower case) inside the instance
    local: tuple[str, ...]
    #: per element: ``.`` and its card's name in upper case (the instance name comes first)
    suffixes: tuple[str, ...]
    #: per element: its class, its two nodes (indices into the instance's node table), its
    #: span and the values of its other fields up to the last one that is not the default
    build: tuple[tuple[type, int, int, Span, tuple], ...]
    #: per element: its card (duplicate-name messages point at its name)
    cards: tuple[Card, ...]
    #: per port: (times the expansion named it, where first, or None if never)
    port_uses: tuple[tuple[int, "Where | None"], ...]
    #: (node index, times the expansion named it, where first) to count for each copy, for
    #: the nodes after the ports
    other_uses: tuple[tuple[int, int, "Where"], ...]


def instance_shape(sub: SubcktDef, env: Env, child: Env) -> tuple | None:
    """The template key of an instance: the definition, the enclosing scope and the value
    of every parameter of the instance; None if one of them does not evaluate (the
    instance is then expanded card by card, so any error is raised where it is today)."""
    try:
        values = tuple((k, repr(child._get(k, sub.span))) for k in child.exprs)
    except Exception:  # noqa: BLE001 - the card-by-card expansion raises it properly
        return None
    return (id(sub), env, values)


def plain_ports(ports: list[str], full: str, flat: Flat) -> bool:
    """True if the port nodes are distinct, not ground (``0``, or ``gnd`` as a top-level
    card writes it) nor global, and none of them looks like one of the instance's own
    local nodes."""
    low = full.lower() + "."
    for p in ports:
        if p in GROUND_NAMES or p in flat.globals or p.startswith(low):
            return False
    return len(set(ports)) == len(ports)


def _given(e: Element) -> tuple:
    """The values of ``e``'s fields after name, nodes and span, up to the last one that
    differs from its default (a copy passes fewer arguments: a third of its cost)."""
    fields = dataclasses.fields(e)[3:]
    values = [getattr(e, f.name) for f in fields]
    while values and type(values[-1]) is type(fields[len(values) - 1].default) \
            and values[-1] == fields[len(values) - 1].default:
        values.pop()
    return tuple(values)


def make_template(sub: SubcktDef, full: str, ports: list[str], made: list[Element],
                  flat: Flat) -> Template | None:
    """The template of the expansion that made ``made`` (None if it cannot be one)."""
    cards = sub.body.cards
    if len(made) != len(cards) or flat.log is None:
        return None
    low = full.lower() + "."
    seen = [n for e in made for n in e.nodes] + [n for n, _ in flat.log]
    fixed = list(dict.fromkeys(n for n in seen if n == GROUND or n in flat.globals))
    local = tuple(dict.fromkeys(n[len(low):] for n in seen if n.startswith(low)))
    index = {n: i for i, n in enumerate(ports + fixed + [low + x for x in local])}
    if len(index) != len(ports) + len(fixed) + len(local) or any(n not in index for n in seen):
        return None
    suffixes, build = [], []
    for e, card in zip(made, cards):
        if type(e) not in COPYABLE or e.name != (full + "." + card.head).upper():
            return None
        a, b = e.nodes
        suffixes.append("." + card.head.upper())
        build.append((type(e), index[a], index[b], e.span, _given(e)))
    uses: dict[int, list[Where]] = {}
    for n, where in flat.log:
        uses.setdefault(index[n], []).append(where)
    shared = len(ports) + len(fixed)
    port_uses = tuple((len(uses[i]), uses[i][0]) if i in uses else (0, None)
                      for i in range(len(ports)))
    other = tuple((i, len(w), w[0]) for i, w in uses.items()
                  if len(ports) <= i and (i < shared or len(w) == 1))
    return Template(fixed, local, tuple(suffixes), tuple(build), tuple(cards), port_uses,
                    other)


def copy_template(template: Template, full: str, ports: list[str], flat: Flat,
                  card: Card | None = None) -> bool:
    """Add an instance made from ``template``; False (nothing added) if it cannot be.
    With ``card`` (an instance card read from its words), its port fields count as uses
    of the port nodes too, before the template's. (The repeated instances of a big
    netlist are made by :mod:`.copies`, which writes this out per template.)"""
    if not plain_ports(ports, full, flat):
        return False
    dot = full.lower() + "."
    names = [full + sfx for sfx in template.suffixes]
    known = flat.names
    if not known.keys().isdisjoint(names) or flat.copied and any(map(flat.holder, names)):
        return False  # the card-by-card expansion says which
    known.update(zip(names, template.cards))
    for name in names:
        flat.add_dotted(name)
    table = ports + template.fixed + [dot + x for x in template.local]
    uses, first = flat.uses, flat.first
    extra = 0 if card is None else 1
    for i, (times, where) in enumerate(template.port_uses):
        times += extra
        if times:
            node = ports[i]
            count = uses.get(node)
            if count is None:
                uses[node] = times
                first[node] = where if card is None else (card, i)
            else:
                uses[node] = count + times
    for i, times, where in template.other_uses:
        node = table[i]
        count = uses.get(node)
        if count is None:
            uses[node] = times
            first[node] = where
        else:
            uses[node] = count + times
    flat.elements.extend([cls(name, (table[a], table[b]), span, *rest) for name, (
        cls, a, b, span, rest) in zip(names, template.build)])
    return True


def where_span(where: Where) -> Span:
    """The span of a :data:`Where`."""
    if isinstance(where, Span):
        return where
    card, index = where
    return card.fields[index].span


def plain_rlc(card: Card, cls: type, full: str, env: Env,
               node_name: Callable[[str, Where], str],
               models: dict[str, ModelCard]) -> Element | None:
    """The R, L or C of a card written as two node names and a value (``R1 a b 1k``),
    read from its words as :meth:`CardReader.plain` reads its fields; None (nothing
    read) for any other card."""
    words = card.words
    if words is None or len(words) != 3:
        return None
    a, b, v = words
    if a[0] == "{" or b[0] == "{" or "=" in a or "=" in b or "=" in v:
        return None
    braced = v[0] == "{"
    if not braced and models and v.lower() in models:
        return None  # a model name: the general reader
    value = env.by_text.get(v[1:-1] if braced else v)
    if value is None:
        value = env.value_of(card.fields[2])
    return cls(full, (node_name(a, (card, 0)), node_name(b, (card, 1))), card.span, value)
