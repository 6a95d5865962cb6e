"""The convenience API above the stages: read a netlist and solve it in two calls.

``read_netlist(text).ac("VIN", "out", freqs=f)`` runs the netlist stage (parse,
elaborate) and the MNA stage (assemble, solve); the stages themselves never call each
other back, so the convenience lives here, at the top.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Collection
from typing import TYPE_CHECKING

import numpy as np

from .netlist.elaborate import GROUND
from .netlist.elaborate import Circuit as _Circuit
from .netlist.elaborate import elaborate as _elaborate
from .netlist.parse import Netlist, _paused_gc, load_netlist

if TYPE_CHECKING:  # pragma: no cover
    from .mna.solve import Response

__all__ = ["Circuit", "read_netlist", "elaborate", "load_netlist"]


@dataclasses.dataclass(frozen=True, slots=True)
class Circuit(_Circuit):
    """A flat circuit (:class:`netcheck.netlist.elaborate.Circuit`) that can solve itself."""

    def ac(self, source: str, node: str, ref: str = GROUND,
           freqs: np.ndarray | None = None) -> "Response":
        """Small-signal frequency response from ``source`` to ``V(node) − V(ref)``.

        Parameters
        ----------
        source : str
            Independent V or I source giving the stimulus (unit amplitude; all other
            independent sources are set to zero).
        node, ref : str
            Output node and reference node (ground by default).
        freqs : array_like
            Frequencies in Hz (positive).

        Returns
        -------
        Response
            ``transfer`` is V/V for a voltage stimulus, V/A for a current stimulus.
        """
        from .mna.assemble import assemble
        from .mna.solve import solve

        if freqs is None:
            raise ValueError("freqs: give the frequencies to solve at, in Hz")
        return solve(assemble(self, source, node, ref), freqs)


def _solvable(circuit: _Circuit) -> Circuit:
    return Circuit(**{f.name: getattr(circuit, f.name) for f in dataclasses.fields(_Circuit)})


def elaborate(netlist: Netlist, allow_negative: bool = False,
              overrides: dict[str, float] | None = None,
              part_models: Collection[str] = ()) -> Circuit:
    """:func:`netcheck.netlist.elaborate.elaborate`, returning a :class:`Circuit` with
    :meth:`Circuit.ac`."""
    return _solvable(_elaborate(netlist, allow_negative, overrides, part_models))


def read_netlist(path_or_text: str, root: str | None = None, allow_negative: bool = False,
                 overrides: dict[str, float] | None = None) -> Circuit:
    """Read, parse and elaborate a netlist file (or netlist text) into a :class:`Circuit`.

    Examples
    --------
    >>> ckt = read_netlist('''series RLC
    ... V1 in 0 AC 1
    ... R1 in a 50
    ... L1 a b 10m
    ... C1 b 0 1.5n
    ... ''')
    >>> [e.name for e in ckt.elements], ckt.nodes
    (['V1', 'R1', 'L1', 'C1'], ('in', 'a', 'b'))
    """
    with _paused_gc():  # one collection after reading and flattening, not one after each
        return elaborate(load_netlist(path_or_text, root), allow_negative, overrides)
