"""Instance cards made from an earlier instance's template by code written for it.

A generated netlist instantiates one subcircuit tens of thousands of times, each card
writing the same ``key=value`` words as an earlier one (``X7 n7 n8 sect params:
rs={rbase*2}``). The first such card is expanded card by card and kept as a
:class:`~.flat.Template`; every later one only names its elements and local nodes, counts
its nodes and makes its elements. :func:`make_copier` writes that work out as one
straight-line function per template (its element names, classes, spans and values bound
as constants, the loops over ports, nodes and elements unrolled), as :mod:`dataclasses`
writes ``__init__``: a copy then costs about half of what the general loop of
:func:`~.flat.copy_template` does, which is most of the time a big generated netlist takes
to read (benchmarks/bench_read.py). Both make exactly the same elements, names and node
counts; a template too big to write out is copied by the general loop.
"""

from __future__ import annotations

from typing import Callable

from .circuit import GROUND_NAMES
from .flat import Flat, Template, copy_template
from .params import Env
from .syntax import Card, SubcktDef

__all__ = ["make_copier", "remember_words", "copy_by_words", "words_key"]

#: the largest template written out as code of its own (elements, ports); bigger ones are
#: copied by :func:`~.flat.copy_template`
MOST_ELEMENTS = 64
MOST_PORTS = 12

#: the code of each template shape met so far, by its text (at most this many kept)
_COMPILED: dict[str, object] = {}
_COMPILED_MOST = 256

#: ``copier(full, ports, card)``: add the instance ``full`` (upper case) whose ports reach
#: the nodes ``ports``, written by ``card``; False (nothing added) where it cannot be
Copier = Callable[[str, list[str], Card], bool]


def make_copier(template: Template, flat: Flat) -> Copier:
    """The function that adds a copy of ``template`` to ``flat`` for an instance card, as
    :func:`~.flat.copy_template` with that card does.

    The code depends only on the template's shape (how many ports, nodes and elements,
    which nodes each element joins); every name, value and count is bound by name, so a
    netlist with many templates of one shape (a section repeated inside each of many
    banks) compiles it once (:data:`_COMPILED`)."""
    nports = len(template.port_uses)
    if len(template.suffixes) > MOST_ELEMENTS or nports > MOST_PORTS:
        return lambda full, ports, card: copy_template(template, full, ports, flat, card)
    ns: dict[str, object] = {
        "GROUND_NAMES": GROUND_NAMES, "shared": flat.globals, "dotted": flat.dotted,
        "copied": flat.copied, "add_dotted": flat.add_dotted, "uses": flat.uses,
        "first": flat.first, "out": flat.elements,
        "INFO": ({suffix: k for k, suffix in enumerate(template.suffixes)}, template.cards)}
    port = [f"p{i}" for i in range(nports)]
    table = port + [f"F{j}" for j in range(len(template.fixed))] + \
        [f"l{j}" for j in range(len(template.local))]
    ns.update((f"F{j}", node) for j, node in enumerate(template.fixed))
    code = ["def copy(full, ports, card):"]
    if port:
        code.append(f"    {', '.join(port)}, = ports")
    code.append('    dot = full.lower() + "."')
    # the ports reach distinct ordinary nodes (plain_ports)
    for p in port:
        code.append(f"    if {p} in GROUND_NAMES or {p} in shared or {p}.startswith(dot):")
        code.append("        return False")
    same = [f"{a} == {b}" for i, a in enumerate(port) for b in port[i + 1:]]
    if same:
        code += [f"    if {' or '.join(same)}:", "        return False"]
    # the element names are new: no name made so far starts with the instance's name and
    # a dot, and no copy's name is the instance's name up to a dot (Flat.dotted, copied;
    # where one is, the card-by-card expansion says whether two names are the same). The
    # copy is recorded by its name only (Flat.holder finds its elements' cards).
    code += ["    if full in dotted:", "        return False",
             '    if "." in full:',
             "        k = full.find('.')",
             "        while k > 0:",
             "            if full[:k] in copied:",
             "                return False",
             "            k = full.find('.', k + 1)"]
    for k, suffix in enumerate(template.suffixes):
        ns[f"S{k}"] = suffix
        code.append(f"    n{k} = full + S{k}")
    for j, name in enumerate(template.local):
        ns[f"L{j}"] = name
        code.append(f"    l{j} = dot + L{j}")
    # node uses: the card's port fields first, then the template's
    counts = []
    for i, (times, _) in enumerate(template.port_uses):
        ns[f"T{i}"] = times + 1
        counts.append((port[i], f"T{i}", f"(card, {i})"))
    for m, (i, times, where) in enumerate(template.other_uses):
        ns[f"U{m}"], ns[f"W{m}"] = times, where
        counts.append((table[i], f"U{m}", f"W{m}"))
    for node, times, where in counts:
        code += [f"    c = uses.get({node})", "    if c is None:",
                 f"        uses[{node}] = {times}", f"        first[{node}] = {where}",
                 "    else:", f"        uses[{node}] = c + {times}"]
    made = []
    for k, (cls, a, b, span, rest) in enumerate(template.build):
        ns[f"K{k}"], ns[f"SP{k}"] = cls, span
        values = []
        for q, value in enumerate(rest):
            ns[f"V{k}_{q}"] = value
            values.append(f"V{k}_{q}")
        made.append(f"K{k}({', '.join([f'n{k}', f'({table[a]}, {table[b]})', f'SP{k}'] + values)})")
    code += ["    copied[full] = INFO", '    if "." in full:', "        add_dotted(full)",
             f"    out.extend(({', '.join(made)},))", "    return True"]
    source = "\n".join(code)
    compiled = _COMPILED.get(source)
    if compiled is None:
        if len(_COMPILED) >= _COMPILED_MOST:
            _COMPILED.clear()
        compiled = _COMPILED[source] = compile(source, "<netcheck copier>", "exec")
    exec(compiled, ns)  # noqa: S102 - our own code, every value bound by name
    return ns.pop("copy")  # type: ignore[return-value]  (its globals need not hold it)


def _split(words: tuple[str, ...]) -> tuple[tuple[str, ...], tuple[str, ...]] | None:
    """An instance card's words as (the nodes then the subcircuit, the ``key=value``
    assignments after them, ``params:`` dropped); None for a card with fewer than two
    such words or with an assignment among the nodes (the general path reads those)."""
    k = len(words)
    while k and "=" in words[k - 1]:
        k -= 1  # words[k:] are the assignments
    j = k - 1 if k and words[k - 1].lower() in ("params:", "params") else k
    heads = words[:j]
    if j < 2 or any("=" in w for w in heads):
        return None
    return heads, words[k:]


def words_key(card: Card, sub: SubcktDef, env: Env) -> tuple | None:
    """The :attr:`Flat.by_words` key of an instance card of ``sub`` in ``env``."""
    split = None if card.words is None else _split(card.words)
    if split is None:
        return None
    return (id(sub), env, len(split[0]) - 1, split[1])


def remember_words(card: Card, sub: SubcktDef, env: Env, template: Template,
                   flat: Flat) -> None:
    """Copy later cards that write the same words as ``card`` from ``template``."""
    key = words_key(card, sub, env)
    if key is not None:
        copier = flat.copiers.get(id(template))
        if copier is None:
            copier = flat.copiers[id(template)] = make_copier(template, flat)
        flat.by_words[key] = copier


def copy_by_words(card: Card, full: str, env: Env, defs: dict[str, SubcktDef], flat: Flat,
                  resolve: Callable[[str], str] | None) -> bool:
    """Make the instance ``card`` from the template of an earlier card of the same
    definition, scope, node count and assignments as written; False (nothing made) when
    there is none or it cannot be used. ``resolve`` gives the circuit node of a node name
    in the card's scope; None at the top level, where that is the name in lower case (a
    copy refuses ground, ``0`` or ``gnd``, and global nodes as ports all the same)."""
    words = card.words
    if words is None or flat.depth or not flat.by_words or flat.log is not None:
        return False
    split = _split(words)
    if split is None:
        return False
    heads, assigns = split
    sub = defs.get(heads[-1].lower())
    copier = None if sub is None else flat.by_words.get((id(sub), env, len(heads) - 1,
                                                         assigns))
    if copier is None:
        return False
    if resolve is None:
        return copier(full, [w.lower() for w in heads[:-1]], card)
    return copier(full, [resolve(w) for w in heads[:-1]], card)
