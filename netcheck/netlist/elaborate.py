"""Flatten subcircuits and check the result: Netlist → Circuit.

Parameter scopes are :mod:`netcheck.netlist.params`, the card reader the element kinds
use is :mod:`netcheck.netlist.reader`, the Circuit and PartModel types are
:mod:`netcheck.netlist.circuit`; this module re-exports the names importers use.
"""

from __future__ import annotations

import dataclasses
from typing import Callable, Collection

from ..exceptions import CODES, Diagnostic, ElaborationError
from .circuit import GROUND, GROUND_NAMES, Circuit, PartModel
from .device_models import check_temperature
from .elements import ELEMENTS, Element, Inductor, VoltageSource
from .elements.base import of_classes
from .elements.devices import DEVICE_NOTE_CODE, Device, with_series_resistors
from .models import NOMINAL_C, ModelCard, read_model
from .refusals import REFUSED_CODE, device_advice
from .params import Env
from .parse import (ELEMENTS_MAX, Assign, Card, Field, Netlist, Scope, SubcktDef,
                    _paused_gc)
from .includes import arrows as _arrows
from .sizing import check_size
from .copies import copy_by_words, remember_words
from .flat import (COPYABLE, Flat, copy_template, make_template, plain_ports, plain_rlc,
                   instance_shape, Where)
from .reader import CardReader, card_label
from .source import printable, quoted
from .topology import check_topology, lint_nodes, number_nodes, tie_isolated_ports

__all__ = ["Circuit", "PartModel", "elaborate", "CardReader", "GROUND",
           "ELEMENTS_MAX", "DIAGNOSTICS_PER_CODE", "summarise_diagnostics", "VALUE_MAX",
           "VALUE_MIN", "subckt_names"]

#: the most warnings of one code a circuit keeps; the rest are counted in one more
DIAGNOSTICS_PER_CODE = 10
#: largest magnitude of a value that is stamped into the circuit matrix (R, L, C, the gain
#: of E, F, G, H and the coefficient of K); netlist-118 above it. With frequencies from 1e-6 to
#: 1e15 Hz (the sweep budget), 1/R, ωL, ωC and a gain then stay between about 6e-206 and
#: 7e215, so every entry of G + jωC is a normal double with more than 1e90 of headroom
#: on either side of the floating-point range for the sums and products a solve forms
VALUE_MAX = 1e200
#: smallest magnitude of a non-zero stamped value (see :data:`VALUE_MAX`)
VALUE_MIN = 1e-200


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
    for fd in netlist.top.funcs:
        top_env.define_func(fd)
    for key, value in (overrides or {}).items():
        top_env.fix(key, value)
    check_size(netlist.top)
    flat = Flat(diags=list(netlist.diagnostics),
                models=frozenset(n.lower() for n in part_models),
                globals=frozenset(netlist.globals))
    with _paused_gc():  # flattening makes many small objects, as parsing does
        _instantiate(netlist.top, "", {}, top_env, {}, (), flat, allow_negative, {})
    flat.by_words.clear()  # the copiers refer back to the flattening: no cycle left behind
    flat.copiers.clear()
    _one_note_for_initial_conditions(flat.diags)
    classes = set(map(type, flat.elements))  # for the checks below, each by class first
    flat.diags.extend(tie_isolated_ports(flat.elements, classes))
    elements = tuple(flat.elements)
    _check_probes(elements, classes)
    _check_references(elements, classes)
    numbered = number_nodes(elements)
    nodes = tuple(numbered[0])[1:]  # after ground, in the order they first appear
    check_topology(elements, nodes, classes, numbered)
    flat.diags.extend(lint_nodes(flat.single_nodes()))
    where = netlist.top.params[0].span if netlist.top.params else None
    params = tuple(sorted((k, top_env._get(k, where)) for k in top_env.exprs))
    temp_c = NOMINAL_C if netlist.temp_c is None else netlist.temp_c
    if temp_c != NOMINAL_C:  # each part with TC1/TC2 at the netlist's temperature
        elements = tuple(dataclasses.replace(e, magnitude=e.value_at(temp_c))
                         if getattr(e, "tc1", 0.0) or getattr(e, "tc2", 0.0) else e
                         for e in elements)
        for e in elements:  # each device's model at it (netlist-166 out of range)
            if isinstance(e, Device):
                check_temperature(e, temp_c)
    return Circuit(netlist.title, elements, nodes, netlist.sources,
                   summarise_diagnostics(flat.diags), params, tuple(flat.found), temp_c)


def summarise_diagnostics(diags: list[Diagnostic], keep: int = DIAGNOSTICS_PER_CODE
                          ) -> tuple[Diagnostic, ...]:
    """At most ``keep`` diagnostics of each code, in order, and one summary per code cut.

    20,000 dangling nodes must not become 20,000 warnings on the terminal, in JSON and in
    the PDF: the summary (same code and severity) says how many more there were and sits
    at the first one left out.

    Examples
    --------
    >>> from .source import SourceFile
    >>> src = SourceFile("f.cir", "t\\n")
    >>> many = [Diagnostic("netlist-152", f"node 'n{i}' has only one connection", src.span(1, 1))
    ...         for i in range(25)]
    >>> out = summarise_diagnostics(many)
    >>> len(out), out[-1].message  # doctest: +NORMALIZE_WHITESPACE
    (11, '15 more netlist-152 warnings (node with one connection) not listed, the first of them
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


def _one_note_for_initial_conditions(diags: list[Diagnostic]) -> None:
    """The netlist-160 notes of every card merged into one, at the first (in place)."""
    ics = [k for k, d in enumerate(diags) if d.code == "netlist-160"]
    if len(ics) < 2:
        return
    names = [diags[k].message.split(": IC=")[0] for k in ics]
    first = diags[ics[0]]
    diags[ics[0]] = Diagnostic("netlist-160", f"IC= (an initial condition) on {_list(names)} "
                               "has no meaning in a frequency-domain check; ignored",
                               first.span, "note")
    for k in reversed(ics[1:]):
        del diags[k]


def _list(names: list[str], most: int = 10) -> str:
    """Up to ``most`` names, comma separated and bounded, and how many more."""
    shown = ", ".join(printable(n, 60) for n in names[:most])
    return shown + (f" and {len(names) - most:,} more" if len(names) > most else "")


def _scope_models(scope: Scope, outer: dict[str, ModelCard]) -> dict[str, ModelCard]:
    """The ``.model`` cards visible in ``scope``: its own over those of enclosing scopes."""
    if not scope.models:
        return outer
    out = dict(outer)
    here: dict[str, ModelCard] = {}
    for st in scope.models:
        card = read_model(st)
        key = card.name.lower()
        if key in here:
            raise ElaborationError(f"model {quoted(card.name)} defined twice (first at line "
                                   f"{here[key].span.line})", st.span, code="netlist-130")
        here[key] = out[key] = card
    return out


def _instantiate(scope: Scope, prefix: str, portmap: dict[str, str], env: Env,
                 visible: dict[str, SubcktDef], stack: tuple[str, ...], flat: Flat,
                 allow_negative: bool, models: dict[str, ModelCard]) -> None:
    defs = dict(visible)
    models = _scope_models(scope, models)
    here: dict[str, SubcktDef] = {}
    for sub in scope.subckts:
        key = sub.name.text.lower()
        if key in here:
            first = here[key].name.span
            raise ElaborationError(f"subcircuit {quoted(sub.name.text)} defined twice (first "
                                   f"at {printable(first.path)}:{first.line})", sub.name.span,
                                   code="netlist-106")
        here[key] = defs[key] = sub
        ports: dict[str, Field] = {}
        for port in sub.ports:
            if port.text.lower() in ports:
                raise ElaborationError(f"subcircuit {quoted(sub.name.text)} lists port "
                                       f"{quoted(port.text)} twice", port.span, code="netlist-106")
            ports[port.text.lower()] = port

    low_prefix = prefix.lower()

    def resolve(text: str) -> str:
        low = text.lower()
        if low in GROUND_NAMES:
            return GROUND
        if low in portmap:
            return portmap[low]
        if low in flat.globals:
            return low
        return low_prefix + low

    uses, first = flat.uses, flat.first

    def node_name(text: str, where: Where) -> str:
        name = resolve(text)
        count = uses.get(name)
        if count is None:
            uses[name] = 1
            first[name] = where
        else:
            uses[name] = count + 1
        if flat.log is not None:
            flat.log.append((name, where))
        return name

    def node_of(fld: Field) -> str:
        return node_name(fld.text, fld.span)

    def ref_of(text: str) -> str:
        return (prefix + text).upper()

    for card in scope.cards:
        full = (prefix + card.head).upper()
        if full in flat.names or flat.copied and "." in full and flat.holder(full):
            was = (flat.names.get(full) or flat.holder(full)).name.span  # type: ignore[union-attr]
            raise ElaborationError(f"duplicate element name {printable(full)} (first defined "
                                   f"at {printable(was.path)}:{was.line})", card.name.span,
                                   code="netlist-106")
        flat.names[full] = card
        if "." in full:
            flat.add_dotted(full)
        letter = card.letter
        if letter == "X":
            if not copy_by_words(card, full, env, defs, flat, resolve if prefix else None):
                _expand_instance(card, full, prefix, env, defs, stack, flat, allow_negative,
                                 node_of, models)
            continue
        cls = ELEMENTS.get(letter)
        if card.words is not None and cls in COPYABLE:
            element = plain_rlc(card, cls, full, env, node_name, models)
            if element is not None:
                if not VALUE_MIN <= element.magnitude <= VALUE_MAX:  # else nothing to say
                    _check_passive(element, card, allow_negative)
                    _check_range(element, card)
                flat.elements.append(element)
                if "M" in card.words[2]:
                    _lint_value(element, card, flat)
                continue
        if cls is None:
            advice = device_advice(letter, card.name.text)
            if advice is not None:
                named = [f.text for f in card.fields if isinstance(f, Field)
                         and f.text.lower() in models]
                if named:  # the device's model card was read: say which one
                    advice += f" (its model {printable(named[0])} was read and kept)"
                raise ElaborationError(advice, card.name.span, code=REFUSED_CODE)
            known = ", ".join(sorted(ELEMENTS) + ["X"])
            raise ElaborationError(f"unknown element letter {quoted(letter)} in "
                                   f"{quoted(card.name.text)} "
                                   f"(netcheck knows {known})", card.name.span, code="netlist-105")
        element = cls.from_card(CardReader(card, full, env, node_of, ref_of,
                                           lambda text: models.get(text.lower())))
        for note in getattr(element, "notes", ()):
            if note.code != DEVICE_NOTE_CODE or note not in flat.diags:
                flat.diags.append(note)
        if isinstance(element, Device):
            flat.elements.extend(with_series_resistors(element))
            continue
        if cls.passive:
            _check_passive(element, card, allow_negative)
        _check_range(element, card)
        flat.elements.append(element)
        _lint_value(element, card, flat)


def _expand_instance(card: Card, full: str, prefix: str, env: Env,
                     defs: dict[str, SubcktDef], stack: tuple[str, ...], flat: Flat,
                     allow_negative: bool, node_of: Callable[[Field], str],
                     models: dict[str, ModelCard]) -> None:
    words = [f for f in card.fields if isinstance(f, Field)]
    assigns = [f for f in card.fields if isinstance(f, Assign)]
    words = [w for w in words if w.text.lower() not in ("params:", "params")]
    if not words:
        raise ElaborationError(f"{card_label(card)}: missing subcircuit name", card.span,
                               code="netlist-105")
    sub_field, node_fields = words[-1], words[:-1]
    sub = defs.get(sub_field.text.lower())
    if sub is None:
        known = _list(sorted(d.name.text for d in defs.values())) or "none defined"
        raise ElaborationError(f"undefined subcircuit {quoted(sub_field.text)} (known: "
                               f"{known})", sub_field.span, code="netlist-107")
    key = sub.name.text.lower()
    if key in stack:
        raise ElaborationError(f"subcircuit {quoted(sub.name.text)} instantiates itself "
                               f"({_arrows(stack + (key,))})", card.name.span, code="netlist-109")
    if len(node_fields) != len(sub.ports):
        raise ElaborationError(f"{card_label(card)}: subcircuit {printable(sub.name.text)} has "
                               f"{len(sub.ports)} port(s), got {len(node_fields)} node(s)",
                               card.span, code="netlist-108")
    child_map: dict[str, str] = {}
    for port, fld in zip(sub.ports, node_fields):
        child_map[port.text.lower()] = node_of(fld)
    child = _child_env(sub, env, full, assigns)
    if key not in flat.models or flat.depth:
        shape = None
        rlc = flat.rlc.get(id(sub))
        if rlc is None:
            rlc = flat.rlc[id(sub)] = all(c.letter in "RCL" for c in sub.body.cards)
        if rlc and not flat.depth:
            shape = instance_shape(sub, env, child)
            if shape is None:  # a parameter did not evaluate: start afresh, card by card
                child = _child_env(sub, env, full, assigns)
        ports = [child_map[p.text.lower()] for p in sub.ports]
        template = flat.copies.get(shape) if shape is not None else None
        if template is not None and copy_template(template, full, ports, flat):
            remember_words(card, sub, env, template, flat)
            return
        start, said = len(flat.elements), len(flat.diags)
        if shape is not None and plain_ports(ports, full, flat):
            flat.log = []
        try:
            _instantiate(sub.body, full + ".", child_map, child, defs, stack + (key,), flat,
                         allow_negative, models)
            if flat.log is not None and len(flat.diags) == said:
                made = make_template(sub, full, ports, flat.elements[start:], flat)
                if made is not None:
                    flat.copies[shape] = made
                    remember_words(card, sub, env, made, flat)
        finally:
            flat.log = None
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
                     allow_negative, models)
    finally:
        flat.depth -= 1
    through: list[tuple[str, int, int]] = []
    for k in range(start, len(flat.elements)):
        e = flat.elements[k]
        if not any(n in stand_in for n in e.nodes):
            continue
        through.extend((e.name, j, stand_in[n]) for j, n in enumerate(e.nodes)
                       if n in stand_in)
        flat.elements[k] = dataclasses.replace(e, nodes=_outside(e.nodes, stand_in, outside),
                                               **_outside_inputs(e, stand_in, outside))
    for alias, i in stand_in.items():
        count = flat.uses.pop(alias, None)
        if count:
            flat.note_node(outside[i], flat.first.pop(alias), count)
    flat.found.append(PartModel(full, sub.name.text, tuple(p.text for p in sub.ports),
                                tuple(outside), tuple(through), card.name.span))


def _outside(nodes: tuple[str, ...], stand_in: dict[str, int], outside: list[str]
             ) -> tuple[str, ...]:
    """``nodes`` with each part-model stand-in replaced by the node its port connects to."""
    return tuple(outside[stand_in[n]] if n in stand_in else n for n in nodes)


def _outside_inputs(e: Element, stand_in: dict[str, int], outside: list[str]) -> dict:
    """The ``inputs`` of a behavioural element (its ``v()`` controls name nodes too) with
    the stand-ins replaced, as a ``dataclasses.replace`` argument; none for others."""
    if "inputs" not in {f.name for f in dataclasses.fields(e)}:
        return {}
    return {"inputs": tuple(c[:1] + _outside(c[1:], stand_in, outside) if c[0] == "v" else c
                            for c in e.inputs)}  # type: ignore[attr-defined]


def _child_env(sub: SubcktDef, env: Env, full: str, assigns: list[Assign]) -> Env:
    """The parameter scope of one instance of ``sub``: its defaults, its body's ``.param``
    and ``.func``, and the instance's own assignments (evaluated in ``env``)."""
    child = Env(env, full)
    for assign in sub.params:
        child.define(assign)
    for assign in sub.body.params:
        child.define(assign)
    for fd in sub.body.funcs:
        child.define_func(fd)
    declared = {a.key.text.lower() for a in sub.params}
    for assign in assigns:
        if assign.key.text.lower() not in declared and declared:
            raise ElaborationError(f"subcircuit {printable(sub.name.text)} has no parameter "
                                   f"{quoted(assign.key.text)} (it has "
                                   f"{_list(sorted(declared))})",
                                   assign.key.span, code="netlist-102")
        child.define(assign, where=env)
    return child


def _check_passive(element: Element, card: Card, allow_negative: bool) -> None:
    value = element.value
    if value > 0:
        return
    span = card.fields[2].span if len(card.fields) > 2 else card.span
    if value == 0 and element.letter != "R":  # a 0 Ω resistor is a wire
        raise ElaborationError(f"{printable(element.name)} has value 0; a zero "
                               f"{type(element).__name__.lower()}"
                               " cannot be solved (use a small value or remove it)", span,
                               code="netlist-110")
    if value < 0 and not allow_negative:
        raise ElaborationError(f"{printable(element.name)} has negative value {value:g}; pass "
                               "--allow-negative (allow_negative=True) if this is intended",
                               span, code="netlist-110")


def _check_range(element: Element, card: Card) -> None:
    """netlist-118 for a stamped value whose magnitude is non-zero but outside
    [:data:`VALUE_MIN`, :data:`VALUE_MAX`] (independent sources stamp no value)."""
    why = element.range_why
    if not why:
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
        span, code="netlist-118")


def _lint_value(element: Element, card: Card, flat: Flat) -> None:
    """Warn about ``1M`` on a resistor or inductor (SPICE reads milli, rarely meant)."""
    if element.letter not in ("R", "L"):
        return
    if card.words is not None:
        if len(card.words) < 3 or "M" not in card.words[2] or "=" in card.words[2]:
            return
    if len(card.fields) < 3:
        return
    fld = card.fields[2]
    if not isinstance(fld, Field) or fld.kind != "word":
        return
    text = fld.text
    i = 0
    while i < len(text) and (text[i].isdigit() or text[i] in ".eE+-"):
        i += 1
    suffix = text[i:]
    if i and suffix[:1] == "M" and not suffix.lower().startswith(("meg", "mil")):
        what = "milliohms" if element.letter == "R" else "millihenries"
        flat.diags.append(Diagnostic(
            "netlist-151", f"{printable(element.name)} = {printable(text)} reads as "
            f"{element.value:g} ({what}: SPICE 'M' is milli); write "
            f"{printable(text[:i])}meg if mega was meant", fld.span))


def _check_probes(elements: tuple[Element, ...], classes: set[type] | None = None) -> None:
    """Each v() of a behavioural expression names a node some element connects to (netlist-115),
    each i() a voltage source (netlist-107), at the place the expression writes it."""
    probing = [e for e in of_classes(elements, lambda cls: hasattr(cls, "probe_spans"), classes)
               if e.probe_spans]  # type: ignore[attr-defined]
    if not probing:
        return
    by_name = {e.name: e for e in elements}
    known = {GROUND}
    for e in elements:
        known.update(e.nodes[:2] if getattr(e, "probe_spans", None) is not None else e.nodes)
    for e in probing:
        for control, span in zip(e.inputs, e.probe_spans):  # type: ignore[attr-defined]
            if control[0] == "i":
                target = by_name.get(control[1])
                if not isinstance(target, VoltageSource):
                    found = "" if target is None else f" ({printable(control[1])} is not one)"
                    raise ElaborationError(
                        f"{printable(e.name)}: i() names voltage source "
                        f"{printable(control[1].split('.')[-1])}, which is not defined in "
                        f"its scope{found}; i() reads the current of a V card", span,
                        code="netlist-107")
                continue
            for node in control[1:]:
                if node not in known:
                    raise ElaborationError(
                        f"{printable(e.name)}: v() names node {printable(node)}, which no "
                        "element connects to", span, code="netlist-115")


def _check_references(elements: tuple[Element, ...], classes: set[type] | None = None
                      ) -> None:
    refers = of_classes(elements, lambda cls: cls.controls is not Element.controls, classes)
    if not refers:
        return
    by_name = {e.name: e for e in elements}
    for e in refers:
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
                                       code="netlist-107" if e.letter != "K" else "netlist-114")
        if e.letter == "K":
            k = e.value
            if not -1.0 <= k <= 1.0:
                raise ElaborationError(f"{printable(e.name)}: coupling coefficient {k:g} is "
                                       "outside [-1, 1]", e.span, code="netlist-114")
            twice = next((n for i, n in enumerate(e.inductors) if n in e.inductors[:i]), None)
            if twice is not None:
                raise ElaborationError(f"{printable(e.name)} couples "
                                       f"{printable(twice)} to itself", e.span,
                                       code="netlist-114")
