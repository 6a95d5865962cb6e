"""netcheck: prove a filter netlist's frequency response meets its spec.

Public API
----------
read_netlist(path_or_text) -> Circuit
Circuit.ac(source, node, ref="0", freqs=...) -> Response
load_netlist, elaborate
NetcheckError and its subclasses

The names are imported on first use, so ``import netcheck`` (and the command line's
``--help``/``--version``) does not load numpy, scipy or lark.
"""

from __future__ import annotations

import importlib
from typing import Any

__version__ = "0.1.0"

#: public name → module that defines it
_EXPORTS = {
    "Circuit": "api", "read_netlist": "api", "elaborate": "api", "load_netlist": "api",
    "NetcheckError": "exceptions", "NetlistSyntaxError": "exceptions",
    "ElaborationError": "exceptions", "SpecError": "exceptions",
    "SingularCircuitError": "exceptions", "MeasurementError": "exceptions",
    "RenderError": "exceptions", "NetcheckWarning": "exceptions",
}

__all__ = ["__version__", *_EXPORTS]


def __getattr__(name: str) -> Any:
    module = _EXPORTS.get(name)
    if module is None:
        raise AttributeError(f"module 'netcheck' has no attribute {name!r}")
    value = getattr(importlib.import_module(f".{module}", __name__), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(__all__)
