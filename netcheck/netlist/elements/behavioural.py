"""Behavioural sources: the output an expression of circuit quantities (B; the VALUE
forms of E and G are in :mod:`.controlled`, subclasses of its E and G).

``Ename n+ n- VALUE={expr}`` and ``Bname n+ n- V={expr}`` hold v(n+) − v(n−) at the
expression's value; ``Gname n+ n- VALUE={expr}`` and ``Bname n+ n- I={expr}`` drive its
value as a current from n+ through the source to n−. The expression reads ``v(a)``,
``v(a,b)`` and ``i(Vx)`` besides numbers, ``.param`` names and the functions of
parameter expressions (netcheck.netlist.gradients). The sources are not linear: the
circuit is solved at its DC operating point and each replaced there by a
:class:`~.controlled.LinearisedSource` whose gains are the expression's exact gradient.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, ClassVar

from ...exceptions import ElaborationError
from ..source import Span, printable
from ..syntax import Field
from .base import Element
from .controlled import _OutputKind, _Behavioural

if TYPE_CHECKING:  # pragma: no cover
    from ..reader import CardReader

__all__ = ["BehaviouralSource"]

_REFUSED = "netlist-120"


@dataclass(slots=True, unsafe_hash=True)
class BehaviouralSource(_Behavioural, _OutputKind, Element):
    """``Bname n+ n- V={expr}`` (v(n+) − v(n−) = expr, with its own branch current) or
    ``Bname n+ n- I={expr}`` (current expr from n+ through the source to n−)."""

    output_kind: str = "v"
    expression: Any = None
    inputs: tuple[tuple[str, ...], ...] = ()
    probe_spans: tuple[Span, ...] = ()

    letter: ClassVar[str] = "B"
    n_nodes: ClassVar[int] = 2

    @property
    def unit(self) -> str:  # type: ignore[override]
        return "V" if self.output_kind == "v" else "A"

    @classmethod
    def from_card(cls, rd: "CardReader") -> "Element":
        outputs = rd.nodes(2)
        kind = rd.peek_assign()
        if kind in ("v", "i"):
            fld = rd.assigned_field()
        elif rd.peek_keyword() in ("v", "i") and _braced_next(rd):
            # V {expr}: the pre-pass's reading of V=<expression to the end of the line>
            kind = rd.peek_keyword()
            rd.skip()
            fld = rd.items[rd.pos]
            rd.skip()
        else:
            raise ElaborationError(
                f"{printable(rd.name)} is a behavioural source in a form netcheck does not "
                "read: write Bname n+ n- V={expression} (a voltage) or "
                "Bname n+ n- I={expression} (a current)", rd.field_span(), code=_REFUSED)
        sensed, tree, inputs, spans = cls.read_expression(rd, fld)
        rd.finish()
        return cls(rd.name, outputs + sensed, rd.span, kind, tree, inputs, spans)


def _braced_next(rd: "CardReader") -> bool:
    """True if the field after the next one is an expression in braces."""
    k = rd.pos + 1
    item = rd.items[k] if k < len(rd.items) else None
    return isinstance(item, Field) and item.kind == "braced"
