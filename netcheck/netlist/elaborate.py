"""Flatten subcircuits and resolve parameters: Netlist → Circuit."""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field
from typing import Callable, Collection

import numpy as np

from .elements import ELEMENTS, Element, Inductor, VoltageSource
from ..exceptions import CODES, Diagnostic, ElaborationError
from .expressions import Name, evaluate, parse_expression
from .parse import (ELEMENTS_MAX, Assign, Card, Field, Netlist, Scope, SubcktDef, _arrows,
                    check_size)
from .source import SourceFile, Span, printable, quoted
from .topology import check_topology, lint_nodes

__all__ = ["Circuit", "PartModel", "elaborate", "CardReader", "GROUND",
           "ELEMENTS_MAX", "DIAGNOSTICS_PER_CODE", "summarise_diagnostics", "VALUE_MAX",
           "VALUE_MIN", "subckt_names"]

GROUND = "0"
_GROUND_ALIASES = frozenset({"0", "gnd"})
#: the most warnings of one code a circuit keeps; the rest are counted in one more
DIAGNOSTICS_PER_CODE = 10
#: largest magnitude of a value that is stamped into the circuit matrix (R, L, C, the gain
#: of E, F, G, H and the coefficient of K); NC118 above it. With frequencies from 1e-6 to
#: 1e15 Hz (the sweep budget), 1/R, ωL, ωC and a gain then stay between about 6e-206 and
#: 7e215, so every entry of G + jωC is a normal double with more than 1e90 of headroom
#: on either side of the floating-point range for the sums and products a solve forms
VALUE_MAX = 1e200
#: smallest magnitude of a non-zero stamped value (see :data:`VALUE_MAX`)
VALUE_MIN = 1e-200


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


class Env:
    """A parameter scope: lazy, memoised, with recursion detection."""

    def __init__(self, parent: "Env | None", label: str) -> None:
        self.parent, self.label = parent, label
        self.exprs: dict[str, tuple[Field, "Env"]] = {}
        self.values: dict[str, float] = {}
        self.active: list[str] = []
        # parsed expressions by field, shared by every scope of one elaboration: a card
        # inside a subcircuit is parsed once, however many instances there are
        self.parsed: dict[int, tuple[Field, object]] = parent.parsed if parent else {}

    def fix(self, key: str, value: float) -> None:
        """Bind ``key`` to a number (a variant's override of a ``.param``)."""
        self.exprs[key.lower()] = (None, self)  # type: ignore[assignment]
        self.values[key.lower()] = float(value)

    def define(self, assign: Assign, where: "Env | None" = None) -> None:
        """Bind ``key`` to ``value`` (evaluated lazily in ``where``, default self)."""
        key = assign.key.text.lower()
        if assign.key.kind != "word" or not key.replace("_", "a").isalnum() or key[0].isdigit():
            raise ElaborationError(f"{quoted(assign.key.text)} is not a parameter name",
                                   assign.key.span, code="NC101")
        self.exprs[key] = (assign.value, where or self)
        self.values.pop(key, None)

    def lookup(self, ref: Name) -> float:
        """Value of ``ref`` in this scope or an enclosing one."""
        env: Env | None = self
        while env is not None:
            if ref.name in env.exprs:
                return env._get(ref.name, ref.span)
            env = env.parent
        if ref.name == "pi":
            return float(np.pi)
        raise ElaborationError(f"undefined parameter {quoted(ref.name)}", ref.span, code="NC102")

    def _get(self, key: str, used_at: Span) -> float:
        if key in self.values:
            return self.values[key]
        if key in self.active:
            cycle = _arrows(self.active[self.active.index(key):] + [key])
            raise ElaborationError(f"parameter {quoted(key)} is defined in terms of itself "
                                   f"({cycle})", used_at, code="NC103")
        fld, where = self.exprs[key]
        self.active.append(key)
        try:
            value = where.value_of(fld)
        finally:
            self.active.pop()
        self.values[key] = value
        return value

    def value_of(self, fld: Field) -> float:
        """Evaluate a value field (a quantity, a parameter name or an ``{expression}``)."""
        if fld.kind == "string" and not fld.expr_text.strip():
            raise ElaborationError("empty value", fld.span, code="NC101")
        got = self.parsed.get(id(fld))
        if got is not None and got[0] is fld:
            expr = got[1]
        else:
            expr = parse_expression(fld.expr_text, fld.span.source, fld.span.line,
                                    fld.expr_column)
            self.parsed[id(fld)] = (fld, expr)
        try:
            return evaluate(expr, self.lookup)
        except RecursionError:
            raise ElaborationError("expression or chain of parameters is nested too deeply",
                                   fld.span, code="NC101") from None


class CardReader:
    """Reads one card's fields in order for :meth:`Element.from_card`."""

    def __init__(self, card: Card, name: str, env: Env, node_of: Callable[[Field], str],
                 ref_of: Callable[[str], str]) -> None:
        self.card, self.name, self.env = card, name, env
        self.span = card.span
        self._node_of, self._ref_of = node_of, ref_of
        self.items = list(card.fields)
        self.pos = 0

    def _next(self, what: str) -> Field:
        if self.pos >= len(self.items):
            raise ElaborationError(f"{_name(self.card)}: missing {what}", self._end_span(),
                                   code="NC105")
        item = self.items[self.pos]
        if isinstance(item, Assign):
            raise ElaborationError(f"{_name(self.card)}: expected {what}, found "
                                   f"{printable(item.key.text)}=...", item.span, code="NC105")
        self.pos += 1
        return item

    def _end_span(self) -> Span:
        last = self.items[-1].span if self.items else self.card.name.span
        return Span(last.source, last.end_line, last.end_column, last.end_line,
                    last.end_column + 1)

    def nodes(self, count: int) -> tuple[str, ...]:
        """Read ``count`` node names."""
        out = []
        for i in range(count):
            fld = self._next(f"node {i + 1} of {count}")
            if fld.kind != "word":
                raise ElaborationError("a node name cannot be an expression", fld.span,
                                       code="NC105")
            out.append(self._node_of(fld))
        return tuple(out)

    def value(self, what: str) -> float:
        """Read and evaluate a value."""
        return self.env.value_of(self._next(what))

    def reference(self, what: str) -> str:
        """Read the (scope-qualified) name of another element."""
        fld = self._next(what)
        if fld.kind != "word":
            raise ElaborationError(f"{what} must be an element name", fld.span, code="NC105")
        return self._ref_of(fld.text)

    def more(self) -> bool:
        """True if fields remain."""
        return self.pos < len(self.items)

    def more_values(self) -> bool:
        """True if the next field is a value (not a keyword such as AC/DC)."""
        return self.more() and self.peek_keyword() not in ("ac", "dc")

    def peek_keyword(self) -> str:
        """The next field's text, lower case ('' if it is not a plain word)."""
        item = self.items[self.pos]
        return item.text.lower() if isinstance(item, Field) and item.kind == "word" else ""

    def skip(self) -> None:
        """Step over the next field."""
        self.pos += 1

    def unexpected(self, hint: str) -> None:
        """Raise for the next field."""
        item = self.items[self.pos]
        raise ElaborationError(f"{_name(self.card)}: {hint}", item.span, code="NC105")

    def finish(self) -> None:
        """Refuse left-over fields."""
        if self.more():
            item = self.items[self.pos]
            text = item.text if isinstance(item, Field) else \
                f"{item.key.text}={item.value.text}"
            raise ElaborationError(f"{_name(self.card)}: unexpected extra field "
                                   f"{quoted(text)}", item.span, code="NC105")


@dataclass
class _Flat:
    elements: list[Element] = field(default_factory=list)
    names: dict[str, Span] = field(default_factory=dict)
    node_spans: dict[str, list[Span]] = field(default_factory=dict)
    diags: list[Diagnostic] = field(default_factory=list)
    #: lower-case names of the subcircuits whose instances are part models
    models: frozenset[str] = frozenset()
    #: the part models found, in the order they were expanded
    found: list[PartModel] = field(default_factory=list)
    #: how many part-model instances the expansion is inside (the outermost one counts)
    depth: int = 0


def subckt_names(netlist: Netlist) -> tuple[str, ...]:
    """The names of every ``.subckt`` the netlist defines, at any depth, as written.

    Examples
    --------
    >>> from .parse import load_netlist
    >>> subckt_names(load_netlist("t\\n.subckt QX10 a b\\nC0 a b 5p\\n.ends\\nR1 a 0 1\\n"))
    ('QX10',)
    """
    out: list[str] = []
    stack = [netlist.top]
    while stack:
        scope = stack.pop()
        for sub in scope.subckts:
            out.append(sub.name.text)
            stack.append(sub.body)
    return tuple(dict.fromkeys(out))


def elaborate(netlist: Netlist, allow_negative: bool = False,
              overrides: dict[str, float] | None = None,
              part_models: Collection[str] = ()) -> Circuit:
    """Flatten ``netlist`` into a :class:`Circuit` and check it can be solved.

    Parameters
    ----------
    netlist : Netlist
        Parsed netlist.
    allow_negative : bool
        Accept negative R, L and C (for behavioural models); zero is never accepted.
    overrides : dict, optional
        Global ``.param`` values replacing the netlist's (variants of a family).
    part_models : collection of str, optional
        Names of subcircuits (case-insensitive) whose every instance models one
        physical part (the spec's ``part_models``): each instance is recorded as a
        :class:`PartModel` in :attr:`Circuit.part_models`. A part model inside another
        one is part of the outer one's model.

    Raises
    ------
    ElaborationError
        For undefined references, wrong node counts, recursion, duplicate names, bad
        values and topologies that make the MNA system singular.
    """
    top_env = Env(None, "top")
    for assign in netlist.top.params:
        top_env.define(assign)
    for key, value in (overrides or {}).items():
        top_env.fix(key, value)
    check_size(netlist.top)
    flat = _Flat(diags=list(netlist.diagnostics),
                 models=frozenset(n.lower() for n in part_models))
    _instantiate(netlist.top, "", {}, top_env, {}, (), flat, allow_negative)
    elements = tuple(flat.elements)
    _check_references(elements)
    nodes = tuple(dict.fromkeys(n for e in elements for n in e.nodes if n != GROUND))
    check_topology(elements, nodes)
    flat.diags.extend(lint_nodes(flat.node_spans))
    where = netlist.top.params[0].span if netlist.top.params else None
    params = tuple(sorted((k, top_env._get(k, where)) for k in top_env.exprs))
    return Circuit(netlist.title, elements, nodes, netlist.sources,
                   summarise_diagnostics(flat.diags), params, tuple(flat.found))


def summarise_diagnostics(diags: list[Diagnostic], keep: int = DIAGNOSTICS_PER_CODE
                          ) -> tuple[Diagnostic, ...]:
    """At most ``keep`` diagnostics of each code, in order, and one summary per code cut.

    20,000 dangling nodes must not become 20,000 warnings on the terminal, in JSON and in
    the PDF: the summary (same code and severity) says how many more there were and sits
    at the first one left out.

    Examples
    --------
    >>> src = SourceFile("f.cir", "t\\n")
    >>> many = [Diagnostic("NC152", f"node 'n{i}' has only one connection", src.span(1, 1))
    ...         for i in range(25)]
    >>> out = summarise_diagnostics(many)
    >>> len(out), out[-1].message  # doctest: +NORMALIZE_WHITESPACE
    (11, '15 more NC152 warnings (node with one connection) not listed, the first of them
    here; netcheck lists the first 10 of each code')
    """
    seen: dict[str, int] = {}
    first_cut: dict[str, Diagnostic] = {}
    out: list[Diagnostic] = []
    for d in diags:
        seen[d.code] = seen.get(d.code, 0) + 1
        if seen[d.code] <= keep:
            out.append(d)
        else:
            first_cut.setdefault(d.code, d)
    for code, d in first_cut.items():
        what = CODES.get(code, "").removesuffix(" (warning)")
        label = f"{d.severity}s" if d.severity.endswith(("warning", "note", "error")) else \
            "diagnostics"
        out.append(Diagnostic(code, f"{seen[code] - keep:,} more {code} {label} "
                              f"({what}) not listed, the first of them here; netcheck lists "
                              f"the first {keep} of each code", d.span, d.severity))
    return tuple(out)


def _name(card: Card) -> str:
    """A card's name as messages show it (escaped, bounded)."""
    return printable(card.name.text, 80)


def _list(names: list[str], most: int = 10) -> str:
    """Up to ``most`` names, comma separated and bounded, and how many more."""
    shown = ", ".join(printable(n, 60) for n in names[:most])
    return shown + (f" and {len(names) - most:,} more" if len(names) > most else "")


def _instantiate(scope: Scope, prefix: str, portmap: dict[str, str], env: Env,
                 visible: dict[str, SubcktDef], stack: tuple[str, ...], flat: _Flat,
                 allow_negative: bool) -> None:
    defs = dict(visible)
    here: dict[str, SubcktDef] = {}
    for sub in scope.subckts:
        key = sub.name.text.lower()
        if key in here:
            first = here[key].name.span
            raise ElaborationError(f"subcircuit {quoted(sub.name.text)} defined twice (first "
                                   f"at {printable(first.path)}:{first.line})", sub.name.span,
                                   code="NC106")
        here[key] = defs[key] = sub
        ports: dict[str, Field] = {}
        for port in sub.ports:
            if port.text.lower() in ports:
                raise ElaborationError(f"subcircuit {quoted(sub.name.text)} lists port "
                                       f"{quoted(port.text)} twice", port.span, code="NC106")
            ports[port.text.lower()] = port

    def node_of(fld: Field) -> str:
        low = fld.text.lower()
        if low in _GROUND_ALIASES:
            name = GROUND
        elif low in portmap:
            name = portmap[low]
        else:
            name = prefix.lower() + low
        flat.node_spans.setdefault(name, []).append(fld.span)
        return name

    def ref_of(text: str) -> str:
        return (prefix + text).upper()

    for card in scope.cards:
        full = (prefix + card.name.text).upper()
        if full in flat.names:
            first = flat.names[full]
            raise ElaborationError(f"duplicate element name {printable(full)} (first defined "
                                   f"at {printable(first.path)}:{first.line})", card.name.span,
                                   code="NC106")
        flat.names[full] = card.name.span
        letter = card.letter
        if letter == "X":
            _expand_instance(card, full, prefix, env, defs, stack, flat, allow_negative,
                             node_of)
            continue
        cls = ELEMENTS.get(letter)
        if cls is None:
            known = ", ".join(sorted(ELEMENTS) + ["X"])
            raise ElaborationError(f"unknown element letter {quoted(letter)} in "
                                   f"{quoted(card.name.text)} "
                                   f"(netcheck knows {known})", card.name.span, code="NC105")
        element = cls.from_card(CardReader(card, full, env, node_of, ref_of))
        if cls.passive:
            _check_passive(element, card, allow_negative)
        _check_range(element, card)
        flat.elements.append(element)
        _lint_value(element, card, flat)


def _expand_instance(card: Card, full: str, prefix: str, env: Env,
                     defs: dict[str, SubcktDef], stack: tuple[str, ...], flat: _Flat,
                     allow_negative: bool, node_of: Callable[[Field], str]) -> None:
    words = [f for f in card.fields if isinstance(f, Field)]
    assigns = [f for f in card.fields if isinstance(f, Assign)]
    words = [w for w in words if w.text.lower() not in ("params:", "params")]
    if not words:
        raise ElaborationError(f"{_name(card)}: missing subcircuit name", card.span,
                               code="NC105")
    sub_field, node_fields = words[-1], words[:-1]
    sub = defs.get(sub_field.text.lower())
    if sub is None:
        known = _list(sorted(d.name.text for d in defs.values())) or "none defined"
        raise ElaborationError(f"undefined subcircuit {quoted(sub_field.text)} (known: "
                               f"{known})", sub_field.span, code="NC107")
    key = sub.name.text.lower()
    if key in stack:
        raise ElaborationError(f"subcircuit {quoted(sub.name.text)} instantiates itself "
                               f"({_arrows(stack + (key,))})", card.name.span, code="NC109")
    if len(node_fields) != len(sub.ports):
        raise ElaborationError(f"{_name(card)}: subcircuit {printable(sub.name.text)} has "
                               f"{len(sub.ports)} port(s), got {len(node_fields)} node(s)",
                               card.span, code="NC108")
    child_map: dict[str, str] = {}
    for port, fld in zip(sub.ports, node_fields):
        child_map[port.text.lower()] = node_of(fld)
    child = Env(env, full)
    for assign in sub.params:
        child.define(assign)
    for assign in sub.body.params:
        child.define(assign)
    declared = {a.key.text.lower() for a in sub.params}
    for assign in assigns:
        if assign.key.text.lower() not in declared and declared:
            raise ElaborationError(f"subcircuit {printable(sub.name.text)} has no parameter "
                                   f"{quoted(assign.key.text)} (it has "
                                   f"{_list(sorted(declared))})",
                                   assign.key.span, code="NC102")
        child.define(assign, where=env)
    if key not in flat.models or flat.depth:
        _instantiate(sub.body, full + ".", child_map, child, defs, stack + (key,), flat,
                     allow_negative)
        return
    # a part model: each port gets a stand-in node of its own while the body expands,
    # so every element node reached through a port is known by port, then the stand-ins
    # are replaced by the nodes the ports connect to
    outside = [child_map[p.text.lower()] for p in sub.ports]
    stand_in = {}
    for i, port in enumerate(sub.ports):
        alias = f"{full.lower()}.\0{i}"   # NUL: no netlist can write this node name
        child_map[port.text.lower()] = alias
        stand_in[alias] = i
    start = len(flat.elements)
    flat.depth += 1
    try:
        _instantiate(sub.body, full + ".", child_map, child, defs, stack + (key,), flat,
                     allow_negative)
    finally:
        flat.depth -= 1
    through: list[tuple[str, int, int]] = []
    for k in range(start, len(flat.elements)):
        e = flat.elements[k]
        if not any(n in stand_in for n in e.nodes):
            continue
        through.extend((e.name, j, stand_in[n]) for j, n in enumerate(e.nodes)
                       if n in stand_in)
        flat.elements[k] = dataclasses.replace(
            e, nodes=tuple(outside[stand_in[n]] if n in stand_in else n for n in e.nodes))
    for alias, i in stand_in.items():
        spans = flat.node_spans.pop(alias, None)
        if spans:
            flat.node_spans.setdefault(outside[i], []).extend(spans)
    flat.found.append(PartModel(full, sub.name.text, tuple(p.text for p in sub.ports),
                                tuple(outside), tuple(through), card.name.span))


def _check_passive(element: Element, card: Card, allow_negative: bool) -> None:
    value = element.value
    span = card.fields[2].span if len(card.fields) > 2 else card.span
    if value == 0:
        raise ElaborationError(f"{printable(element.name)} has value 0; a zero "
                               f"{type(element).__name__.lower()}"
                               " cannot be solved (use a small value or remove it)", span,
                               code="NC110")
    if value < 0 and not allow_negative:
        raise ElaborationError(f"{printable(element.name)} has negative value {value:g}; pass "
                               "--allow-negative (allow_negative=True) if this is intended",
                               span, code="NC110")


#: what an out-of-range value of each letter would make overflow or vanish
_RANGE_WHY = {
    "R": "its conductance 1/R", "L": "its reactance ωL", "C": "its susceptance ωC",
    "K": "its mutual inductance", "E": "its gain", "F": "its gain", "G": "its gain",
    "H": "its gain",
}


def _check_range(element: Element, card: Card) -> None:
    """NC118 for a stamped value whose magnitude is non-zero but outside
    [:data:`VALUE_MIN`, :data:`VALUE_MAX`] (independent sources stamp no value)."""
    why = _RANGE_WHY.get(element.letter)
    if why is None:
        return
    size = abs(element.value)
    if size == 0 or VALUE_MIN <= size <= VALUE_MAX:
        return
    fields = [f for f in card.fields if isinstance(f, Field)]
    span = fields[-1].span if fields else card.span
    unit = f" {element.unit}" if element.unit else ""
    side = "above" if size > VALUE_MAX else "below"
    raise ElaborationError(
        f"{printable(element.name)} = {element.value:g}{unit} is {side} the range of part "
        f"values netcheck solves (magnitude {VALUE_MIN:g} to {VALUE_MAX:g}): {why} would "
        "leave floating-point range in the circuit matrix; give a value inside the range",
        span, code="NC118")


def _lint_value(element: Element, card: Card, flat: _Flat) -> None:
    """Warn about ``1M`` on a resistor or inductor (SPICE reads milli, rarely meant)."""
    if element.letter not in ("R", "L") or len(card.fields) < 3:
        return
    fld = card.fields[2]
    if not isinstance(fld, Field) or fld.kind != "word":
        return
    text = fld.text
    i = 0
    while i < len(text) and (text[i].isdigit() or text[i] in ".eE+-"):
        i += 1
    suffix = text[i:]
    if suffix[:1] == "M" and not suffix.lower().startswith(("meg", "mil")):
        what = "milliohms" if element.letter == "R" else "millihenries"
        flat.diags.append(Diagnostic(
            "NC151", f"{printable(element.name)} = {printable(text)} reads as "
            f"{element.value:g} ({what}: SPICE 'M' is milli); write "
            f"{printable(text[:i])}meg if mega was meant", fld.span))


def _check_references(elements: tuple[Element, ...]) -> None:
    by_name = {e.name: e for e in elements}
    for e in elements:
        for ref in e.controls():
            target = by_name.get(ref)
            want = Inductor if e.letter == "K" else VoltageSource
            if target is None or not isinstance(target, want):
                kind = "inductor" if want is Inductor else "voltage source"
                found = "" if target is None else (f" ({ref} is not "
                                                   f"{'an' if want is Inductor else 'a'} {kind})")
                raise ElaborationError(f"{printable(e.name)} refers to {kind} "
                                       f"{printable(ref.split('.')[-1])}, "
                                       f"which is not defined in its scope{found}", e.span,
                                       code="NC107" if e.letter != "K" else "NC114")
        if e.letter == "K":
            k = e.value
            if not -1.0 <= k <= 1.0:
                raise ElaborationError(f"{printable(e.name)}: coupling coefficient {k:g} is "
                                       "outside [-1, 1]", e.span, code="NC114")
            if e.inductors[0] == e.inductors[1]:
                raise ElaborationError(f"{printable(e.name)} couples "
                                       f"{printable(e.inductors[0])} to itself", e.span,
                                       code="NC114")
