"""The ``[ports]`` table: the terminations a filter is specified between.

```toml
[ports]
input = { node = "in", ohms = "50" }     # driven by a source of 50 Ω
output = { node = "out", ohms = "50" }   # loaded by 50 Ω ("open" or no ohms: unloaded)
subcircuit = "QM_LPF7"                   # optional: check this subcircuit of the netlist
pins = ["in", "out", "0"]                # optional: the nodes its pins join, in order
```

With ports, the stimulus and the output are the ports': the spec gives neither
``source`` nor ``output``. The cards are added by :func:`netcheck.netlist.ports.with_ports`.
"""

from __future__ import annotations

import re
from typing import Any

from ..netlist.ports import PortSpec
from .reader import SpecReader

__all__ = ["PORT_KEYS", "parse_ports", "check_port_limits"]

PORT_KEYS = {"input": "{ node, ohms }: the input node and the source resistance behind it",
             "output": "{ node, ohms }: the output node and its load ('open': none)",
             "subcircuit": "a subcircuit of the netlist to check, instantiated once",
             "pins": "the nodes the subcircuit's pins join, in order (default: its pin "
                     "names)"}
_END_KEYS = {"node": "node name", "ohms": "resistance, ohms"}
#: what a node or subcircuit name may be on a card: no white space, brackets, braces,
#: quotes, '=' or comment characters
_NAME = re.compile(r"[^\s=(){}\[\],;$*'\"]{1,200}")


def _name(rd: SpecReader, key: str, value: Any) -> str:
    if not isinstance(value, str) or not _NAME.fullmatch(value) or value[0] in "+.":
        rd.fail(key, "expected a node or subcircuit name (no spaces, brackets, quotes or "
                "'='), got " + repr(value)[:80])
    return value


def _end(top: SpecReader, key: str, required_ohms: bool) -> tuple[str, float | None]:
    raw = top.raw(key)
    if raw is None:
        top.fail(key, "missing (required): give { node = \"...\", ohms = \"...\" }")
    rd = SpecReader(raw, top.key_path(key), top.path, _END_KEYS)
    node = _name(rd, "node", rd.raw("node"))
    if isinstance(rd.raw("ohms"), str) and rd.raw("ohms").strip().lower() == "open":
        if required_ohms:
            rd.fail("ohms", "the input port needs a source resistance above 0 Ω (the "
                    "reference of its reflection coefficient)")
        return node, None
    ohms = rd.number("ohms", required=required_ohms, positive=True)
    if node.lower() in ("0", "gnd"):
        rd.fail("node", "a port's node cannot be ground")
    return node, ohms


def parse_ports(table: Any, path: str) -> PortSpec:
    """Validate the ``[ports]`` table (spec-201/202 naming the key)."""
    top = SpecReader(table, "ports", path, PORT_KEYS)
    node_in, rs = _end(top, "input", True)
    node_out, rl = _end(top, "output", False)
    if node_in.lower() == node_out.lower():
        top.fail("output", f"the output port is the input node {node_in!r}; a port's "
                 "response to itself is its impedance, not a transfer")
    sub = top.raw("subcircuit")
    if sub is not None:
        sub = _name(top, "subcircuit", sub)
    pins = top.raw("pins")
    if pins is not None:
        if sub is None:
            top.fail("pins", "pins are for a subcircuit: give subcircuit too")
        if not isinstance(pins, list) or not pins:
            top.fail("pins", "expected a list of node names")
        pins = tuple(_name(top, f"pins[{k}]", p) for k, p in enumerate(pins))
    assert rs is not None
    return PortSpec(node_in, rs, node_out, rl, sub, pins)


def check_port_limits(limits: tuple[Any, ...], ports: PortSpec | None, modes: tuple[str, ...],
                      path: str) -> None:
    """Port limits need ``[ports]``; the output port's reflection and the two-port's
    power figures need a load; the output port is not judged in Monte Carlo (each sample
    would need a second solve with the output driven)."""
    for lim in limits:
        if getattr(lim, "kind", "") != "port":
            continue
        rd = SpecReader({}, f"limits[{lim.index}]", path, {})
        if ports is None:
            rd.fail("kind", "a port limit needs the terminations: add a [ports] table with "
                    "input = { node, ohms } and output = { node, ohms }")
        needs_load = lim.quantity in ("transducer_gain", "insertion_loss") or (
            lim.port == "output" and lim.quantity != "impedance")
        if needs_load and ports.load_ohms is None:
            rd.fail("quantity", f"{lim.quantity} needs a load: give ports.output its ohms")
        if lim.port == "output" and "monte_carlo" in modes:
            rd.fail("port", "the output port is judged in the nominal check and the worst "
                    "case only, not in Monte Carlo yet (each sample would need a second "
                    "solve with the output driven): judge the input port or the two-port "
                    "quantities there")
