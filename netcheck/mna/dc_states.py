"""Which DC state a circuit with devices is checked in: device terminal currents, the small
conductance across junctions that ties otherwise unresolved nodes, and the stability of
a solution.

A circuit can have several DC solutions (a latch: two stable states and one unstable
between them). Newton from zero may land on the unstable one, where the circuit never
stays. :func:`unstable_poles` finds the small-signal poles in the right half-plane of a
linearised circuit; :func:`netcheck.mna.bias.linearised` then looks for a stable state by
source stepping in small steps (all sources rising together from zero, as at power-up),
and keeps the unstable one, with its warning (analysis-309), only when that finds none.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import scipy.linalg as la

from ..netlist.circuit import Circuit
from ..netlist.elements.devices import Bjt, Diode, Jfet
from . import devices as eq
from .stamp import Stamper

__all__ = ["junction_pairs", "across", "unstable_poles", "STABILITY_MAX_UNKNOWNS",
           "diode_terminals", "bjt_terminals", "mos_terminals", "jfet_terminals"]

#: circuits up to this many unknowns have their operating point's stability checked when
#: it is solved (a dense eigenvalue problem); larger ones get the check of the response
STABILITY_MAX_UNKNOWNS = 300


def junction_pairs(d: Any) -> tuple[tuple[int, int], ...]:
    """The terminal pairs (positions in the device's nodes) each junction of ``d`` joins:
    a diode's anode and cathode; a bipolar transistor's or JFET's base/gate to emitter/
    source and to collector/drain; none for a MOSFET (its bulk junctions are not
    modelled)."""
    if isinstance(d, Diode):
        return ((0, 1),)
    if isinstance(d, (Bjt, Jfet)):
        return ((1, 2), (1, 0))
    return ()


def across(pairs: tuple[tuple[int, int], ...], k: int, g: float) -> np.ndarray:
    """The k × k conductance matrix of ``g`` between each pair of terminals."""
    m = np.zeros((k, k))
    for a, b in pairs:
        m[a, a] += g
        m[b, b] += g
        m[a, b] -= g
        m[b, a] -= g
    return m


def unstable_poles(small: Circuit) -> np.ndarray | None:
    """The poles s (rad/s) of linearised circuit ``small`` with Re s > 0, from the
    generalised eigenvalues of G x = −s C x; None when the circuit is too large for a
    dense solve (:data:`STABILITY_MAX_UNKNOWNS`) or has delayed entries."""
    st = Stamper(small)
    st.stamp_all()
    if st.n > STABILITY_MAX_UNKNOWNS or st.delay_table() is not None:
        return None
    g, c = st.sparse("G").toarray(), st.sparse("C").toarray()
    with np.errstate(all="ignore"):
        s = la.eigvals(g, -c)
    s = s[np.isfinite(s)]
    if not s.size:
        return s
    # a pole at the origin (a DC-free loop) rounds to either side: only a real part
    # clearly above the rounding of the largest pole counts
    tol = 1e-9 * max(float(np.max(np.abs(s))), 1.0)
    return s[s.real > tol]


# Each device's currents into its terminals (in node order) and their Jacobian with
# respect to the terminal voltages, from the device equations' partial derivatives: the
# Newton companions take them at the (limited) bias point, the small-signal elements at
# the operating point.

def diode_terminals(j: eq.Junction) -> tuple[np.ndarray, np.ndarray]:
    return np.array([j.i, -j.i]), j.g * np.array([[1.0, -1.0], [-1.0, 1.0]])


def bjt_terminals(q: eq.BjtPoint) -> tuple[np.ndarray, np.ndarray]:
    # rows: collector, base, emitter; columns d/d(vc, vb, ve)
    dic = np.array([-q.dic_dvbc, q.dic_dvbe + q.dic_dvbc, -q.dic_dvbe])
    dib = np.array([-q.dib_dvbc, q.dib_dvbe + q.dib_dvbc, -q.dib_dvbe])
    return np.array([q.ic, q.ib, -(q.ic + q.ib)]), np.array([dic, dib, -(dic + dib)])


def mos_terminals(q: eq.MosPoint) -> tuple[np.ndarray, np.ndarray]:
    # rows and columns: drain, gate, source, bulk (gate and bulk draw no current)
    did = np.array([q.gds, q.gm, -(q.gm + q.gds + q.gmbs), q.gmbs])
    jac = np.zeros((4, 4))
    jac[0], jac[2] = did, -did
    return np.array([q.id, 0.0, -q.id, 0.0]), jac


def jfet_terminals(q: eq.JfetPoint) -> tuple[np.ndarray, np.ndarray]:
    # rows and columns: drain, gate, source; the gate junctions to source and drain
    gs, gd = q.gate_source, q.gate_drain
    did = np.array([q.gds, q.gm, -(q.gm + q.gds)])
    dgs = np.array([0.0, gs.g, -gs.g])
    dgd = np.array([-gd.g, gd.g, 0.0])
    return (np.array([q.id - gd.i, gs.i + gd.i, -q.id - gs.i]),
            np.array([did - dgd, dgs + dgd, -did - dgs]))
