"""Ports a spec declares: the terminations a filter is specified between, added to the
netlist so a two-port (or a file that only defines subcircuits) is checked as the
datasheet states it, without editing the file.

The input port is driven by a 1 V (AC) source behind its resistance Rs; the output port
is loaded by RL (or left open). A current source of zero AC value at the output is the
probe for the output impedance (it is the stimulus of a second solve only; the other
independent sources are zero there, so the input is terminated in Rs). The cards are
parsed from a text of their own (``<ports of SPEC>``), so an error in them names the
spec, and appended to the top level of the netlist; with ``subcircuit``, one instance of
that subcircuit, named X<subcircuit>, joins its pins to the nodes named.

The names below are reserved: a netlist that already uses one is refused (spec-203).
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

from ..exceptions import ElaborationError
from .parse import _group, parse_statements
from .source import SourceFile
from .syntax import Card, Netlist

__all__ = ["PortSpec", "with_ports", "PORT_SOURCE", "PORT_PROBE", "PORT_ELEMENTS",
           "PORT_NODE"]

#: the stimulus behind the input port's resistance, and that resistance
PORT_SOURCE, PORT_RS = "VNC_PORT_IN", "RNC_PORT_IN"
#: the output port's load, and the probe of the output impedance
PORT_RL, PORT_PROBE = "RNC_PORT_OUT", "INC_PORT_OUT"
#: the node between the stimulus and Rs
PORT_NODE = "nc_port_emf"
#: every element the ports add (not parts: never toleranced, stressed or linted)
PORT_ELEMENTS = frozenset({PORT_SOURCE, PORT_RS, PORT_RL, PORT_PROBE})


@dataclass(frozen=True, slots=True)
class PortSpec:
    """The ports of a spec: the input node and its source resistance (Ω, > 0), the output
    node and its load (Ω; None: open), and optionally a subcircuit to instantiate with its
    pins joined to ``pins`` (default: nodes named as its own pins)."""

    input_node: str
    source_ohms: float
    output_node: str
    load_ohms: float | None = None
    subcircuit: str | None = None
    pins: tuple[str, ...] | None = None

    def transducer_offset_db(self) -> float:
        """Transducer gain in dB minus 20 log10 |H| (H = V(out)/E): 10 log10(4Rs/RL)."""
        assert self.load_ohms is not None
        return 10.0 * math.log10(4.0 * self.source_ohms / self.load_ohms)

    def insertion_offset_db(self) -> float:
        """Insertion loss in dB plus 20 log10 |H|: 20 log10(RL/(Rs + RL)), the gain of the
        source joined straight to the load."""
        assert self.load_ohms is not None
        return 20.0 * math.log10(self.load_ohms / (self.source_ohms + self.load_ohms))


def with_ports(netlist: Netlist, ports: PortSpec, origin: str) -> Netlist:
    """``netlist`` with the port cards of ``ports`` added at its top level (``origin``:
    the spec's path, for the cards' source name). ElaborationError (netlist-107) names a
    subcircuit the netlist does not define or a pin count that does not match; a reserved
    name already in the netlist is refused too."""
    used = {c.head.upper() for c in netlist.top.cards}
    dut = f"X{ports.subcircuit}".upper() if ports.subcircuit is not None else None
    taken = sorted(used & (PORT_ELEMENTS | ({dut} if dut else set())))
    if taken:
        raise ElaborationError(f"the netlist already has an element named {taken[0]}, a "
                               "name the spec's [ports] use for the terminations; rename it",
                               None, code="netlist-107")
    lines = [f"* the ports of {origin}"]
    if ports.subcircuit is not None:
        sub = next((s for s in netlist.top.subckts
                    if s.name.text.lower() == ports.subcircuit.lower()), None)
        if sub is None:
            known = ", ".join(s.name.text for s in netlist.top.subckts[:12]) or "none"
            raise ElaborationError(f"ports.subcircuit: the netlist defines no subcircuit "
                                   f"{ports.subcircuit!r} (defined: {known})", None,
                                   code="netlist-107")
        pins = ports.pins if ports.pins is not None else tuple(p.text for p in sub.ports)
        if len(pins) != len(sub.ports):
            raise ElaborationError(f"ports.pins: {len(pins)} node names for subcircuit "
                                   f"{sub.name.text}, which has {len(sub.ports)} pins "
                                   f"({' '.join(p.text for p in sub.ports)})", None,
                                   code="netlist-107")
        # the instance is X<subcircuit>, so its parts are X<subcircuit>.<part>
        lines.append(f"X{sub.name.text} {' '.join(pins)} {sub.name.text}")
    lines += [f"{PORT_SOURCE} {PORT_NODE} 0 AC 1",
              f"{PORT_RS} {PORT_NODE} {ports.input_node} {ports.source_ohms!r}",
              f"{PORT_PROBE} 0 {ports.output_node} AC 0"]
    if ports.load_ohms is not None:
        lines.append(f"{PORT_RL} {ports.output_node} 0 {ports.load_ohms!r}")
    source = SourceFile(f"<ports of {origin}>", "\n".join(lines) + "\n")
    _, stmts = parse_statements(source, has_title=False)
    scope, _ = _group(list(stmts), [])
    cards: tuple[Card, ...] = netlist.top.cards + scope.cards
    return dataclasses.replace(netlist, top=dataclasses.replace(netlist.top, cards=cards),
                               sources=netlist.sources + (source,))

