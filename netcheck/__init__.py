"""netcheck: prove a filter netlist's frequency response meets its spec.

Public API
----------
read_netlist(path_or_text) -> Circuit
Circuit.ac(source, node, ref="0", freqs=...) -> Response
load_netlist, elaborate, assemble, solve
NetcheckError and its subclasses
"""

from __future__ import annotations

__version__ = "0.1.0"

from .elaborate import Circuit, elaborate, read_netlist
from .exceptions import (ElaborationError, MeasurementError, NetcheckError, NetcheckWarning,
                         NetlistSyntaxError, RenderError, SingularCircuitError, SpecError)
from .parse import load_netlist

__all__ = [
    "__version__", "Circuit", "read_netlist", "load_netlist", "elaborate",
    "NetcheckError", "NetlistSyntaxError", "ElaborationError", "SpecError",
    "SingularCircuitError", "MeasurementError", "RenderError", "NetcheckWarning",
]
