"""The lossless transmission line (T): exact in the frequency domain.

``Tname n1 n2 n3 n4 Z0=z TD=t`` or ``Tname n1 n2 n3 n4 Z0=z F=f [NL=nl]``: port 1 is
(n1, n2), port 2 is (n3, n4); the delay is TD, or NL/F for a line NL wavelengths long at
frequency F (NL = 0.25 when not given: a quarter-wave line at F; common practice, no
source).

The line is stamped in Branin's form [1]_: with I1, I2 the currents flowing into the
line at n1 and n3 (and out at n2 and n4), V1, V2 the port voltages and E = exp(−sτ),

    V1 − Z0·I1 = E·(V2 + Z0·I2)
    V2 − Z0·I2 = E·(V1 + Z0·I1)

which is the lossless line's chain (ABCD) matrix [2]_ rewritten through incident and
reflected waves. Unlike the admittance form (Y11 = −j·cot(βl)/Z0, Y12 = j/(Z0·sin βl)),
it has no singularity: nothing is divided by sin βl, so a line of a whole number of
half wavelengths (βl = nπ) needs no special case. E is not a rational function of s, so
the circuit has no finite set of poles and zeros: it is solved directly at every
frequency (never in pole–zero form), and measurements are seeded at the frequencies
where a line is a whole number of quarter wavelengths (:func:`netcheck.mna.assemble.delay_seeds`).

References
----------
.. [1] F. H. Branin, "Transient analysis of lossless transmission lines",
   Proc. IEEE 55(11), 2012-2013, 1967 (cited from memory).
.. [2] D. M. Pozar, "Microwave Engineering", Wiley: the ABCD matrix of a lossless line,
   [[cos βl, jZ0 sin βl], [j sin βl / Z0, cos βl]] (cited from memory).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, ClassVar

from ...exceptions import ElaborationError
from ..source import printable
from .base import Element

if TYPE_CHECKING:  # pragma: no cover
    from ...mna.assemble import Stamper
    from ..reader import CardReader

__all__ = ["TransmissionLine"]

#: NL when a card gives F without NL: a quarter wavelength (common practice, no source)
NL_DEFAULT = 0.25


@dataclass(slots=True, unsafe_hash=True)
class TransmissionLine(Element):
    """``Tname n1 n2 n3 n4 Z0= TD=`` (or ``F= [NL=]``): a lossless line, Z0 in Ω, delay s."""

    z0: float = 50.0
    td: float = 0.0

    letter: ClassVar[str] = "T"
    n_nodes: ClassVar[int] = 4
    has_branch: ClassVar[bool] = True
    #: the second port's current is a second branch unknown, ``<name> port2``
    extra_branches: ClassVar[tuple[str, ...]] = ("port2",)
    unit: ClassVar[str] = "Ω"
    range_why: ClassVar[str] = "its characteristic impedance Z0"

    @property
    def value(self) -> float:
        return self.z0

    @property
    def links(self) -> tuple[tuple[str, str], ...]:
        """Node pairs the line joins for connectivity: each port's two nodes (the ports
        share only the voltage across each: a port with nothing else on it floats, see
        :func:`netcheck.netlist.topology.tie_isolated_ports`)."""
        n1, n2, n3, n4 = self.nodes
        return ((n1, n2), (n3, n4))

    @classmethod
    def from_card(cls, rd: "CardReader") -> "Element":
        nodes = rd.nodes(4)
        opts = rd.take_options(("z0", "zo", "td", "f", "nl"))
        for item in rd.items[rd.pos:]:
            what = (f"{printable(item.key.text)}= is not a parameter of a lossless line"
                    if hasattr(item, "key") else "a value without its key")
            raise ElaborationError(f"{printable(rd.name)}: {what}; the line reads Z0= with "
                                   "TD= or with F= [NL=]", item.span, code="netlist-131")
        rd.finish()

        def need_positive(key: str, label: str) -> float:
            v, span = opts[key]
            if not v > 0 or v == float("inf"):
                raise ElaborationError(f"{printable(rd.name)}: {label}={v:g} must be a "
                                       "positive number", span, code="netlist-131")
            return v

        if "zo" in opts and "z0" not in opts:
            opts["z0"] = opts.pop("zo")
        if "z0" not in opts:
            raise ElaborationError(f"{printable(rd.name)}: a transmission line needs its "
                                   "characteristic impedance Z0= (e.g. Z0=50)", rd.span,
                                   code="netlist-131")
        z0 = need_positive("z0", "Z0")
        if "td" in opts:
            if "f" in opts or "nl" in opts:
                raise ElaborationError(f"{printable(rd.name)}: give the length either as "
                                       "TD= or as F= [NL=], not both", opts["td"][1],
                                       code="netlist-131")
            td = need_positive("td", "TD")
        elif "f" in opts:
            nl = need_positive("nl", "NL") if "nl" in opts else NL_DEFAULT
            td = nl / need_positive("f", "F")
        else:
            raise ElaborationError(f"{printable(rd.name)}: a transmission line needs its "
                                   "length: TD= (delay, s) or F= with NL= (NL wavelengths "
                                   "at F; NL=0.25 if not given)", rd.span, code="netlist-131")
        return cls(rd.name, nodes, rd.span, z0, td)

    def stamp(self, st: "Stamper", value: Any) -> None:
        n1, n2, n3, n4 = self.nodes
        k1, k2 = st.branch(self.name), st.branch(f"{self.name} port2")
        for (a, b, k), (c, d, other) in (((n1, n2, k1), (n3, n4, k2)),
                                         ((n3, n4, k2), (n1, n2, k1))):
            st.incidence(a, b, k)             # KCL, and V(own port) in the row
            st.add("G", k, k, -value)         # − Z0·I(own)
            st.delayed_node(k, c, -1.0, self.td)       # − E·V(other port)
            st.delayed_node(k, d, 1.0, self.td)
            st.delayed(k, other, -value, self.td)      # − E·Z0·I(other)
