"""The operating-point section of a spec's report: each device's region and figures, and
the node voltages the small-signal response was taken around."""

from __future__ import annotations

from typing import Any

from ..netlist.units import format_eng
from ..result import SpecResult
from .formatting import shown_name

__all__ = ["bias_view", "NODES_SHOWN"]

#: the most node voltages the PDF lists (the JSON result carries them all)
NODES_SHOWN = 60
#: how the figures' names read (the JSON keeps plain-letter names)
_LABEL = {"rpi": "rπ", "Cpi": "Cπ", "Cmu": "Cμ"}
#: how each method of finding the operating point reads in the report
_METHOD = {"Newton": "Newton's method from zero",
           "conductance stepping": "conductance stepping (Newton from zero did not converge)",
           "source stepping": "source stepping (Newton from zero and conductance stepping "
                              "did not converge)"}


def _value(value: float | None, unit: str) -> str:
    return f"∞ {unit}" if value is None else format_eng(value, unit)


def bias_view(s: SpecResult) -> dict[str, Any] | None:
    """The view of ``s``'s ``operating_point`` block; None for a circuit without devices."""
    op = s.extra_value("operating_point")
    if not isinstance(op, dict):
        return None
    devices = [{"name": shown_name(d["name"]), "kind": d["kind"].upper(),
                "region": d["region"],
                "figures": ", ".join(f"{_LABEL.get(q['name'], q['name'])} "
                                     f"{_value(q['value'], q['unit'])}"
                                     for q in d["quantities"])}
               for d in op["devices"]]
    nodes = [{"node": shown_name(n["node"]), "volts": format_eng(n["volts"], "V")}
             for n in op["nodes"][:NODES_SHOWN]]
    more = max(0, len(op["nodes"]) - NODES_SHOWN)
    return {"devices": devices, "nodes": nodes, "more_nodes": more,
            "method": _METHOD.get(op["method"], op["method"]),
            "iterations": op["iterations"], "temperature": f"{op['temperature_c']:g} °C"}
