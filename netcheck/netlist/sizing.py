"""The size budget of a design, counted before it is flattened (netlist-116)."""

from __future__ import annotations

from ..exceptions import ElaborationError
from . import parse as budgets  # the *_MAX constants, read at each use
from .includes import arrows as _arrows
from .source import printable
from .syntax import Card, Field, Scope, SubcktDef

__all__ = ["check_size"]


def _instance_target(card: Card) -> str | None:
    """The subcircuit an X card names (its last plain word), or None."""
    if card.words is not None:
        for w in reversed(card.words):
            if "=" not in w and w.lower() not in ("params:", "params"):
                return w
        return None
    fields = [f.text for f in card.fields if isinstance(f, Field)
              and f.text.lower() not in ("params:", "params")]
    return fields[-1] if fields else None


def check_size(top: Scope) -> None:
    """Refuse, before flattening, a design over :data:`ELEMENTS_MAX` elements or with
    subcircuit instances nested deeper than :data:`SUBCKT_DEPTH_MAX` (netlist-116).

    Each subcircuit definition's flattened element count and nesting depth is counted
    once per scope it is used from (memoised), so a nest of 10 instances of 10
    instances of ... costs one count per level, not one per element. Instances that
    cannot be resolved, or that recurse, count nothing here: flattening reports them.
    """
    sizer = _Sizer()
    defs = {sub.name.text.lower(): sub for sub in top.subckts}
    total = 0
    counts: dict[str | None, int] = {}  # by the subcircuit an X card names, as written
    for card in top.cards:
        if card.letter != "X":
            added = 1
        else:
            target = _instance_target(card)
            added = counts.get(target, -1)
            if added < 0:  # the same name at the top level flattens the same
                added = counts[target] = sizer.instance(card, defs, 0, (), 1)[0]
        total += added
        if total > budgets.ELEMENTS_MAX:
            target = _instance_target(card) if card.letter == "X" else None
            what = (f"{printable(card.name.text, 80)} instantiates subcircuit "
                    f"{printable(target, 60)}, which flattens to {added:,} elements: "
                    if target is not None else "")
            raise ElaborationError(
                f"{what}the design is over the budget of {budgets.ELEMENTS_MAX:,} elements here "
                f"({total:,} so far; instances inside instances multiply)", card.name.span,
                code="netlist-116")


class _Sizer:
    """Element counts and nesting depths of subcircuit instances, without flattening."""

    def __init__(self) -> None:
        self.memo: dict[tuple[int, int], tuple[int, int]] = {}
        self.contexts: dict[tuple[int, int], tuple[int, dict[str, SubcktDef]]] = {}

    def _defs(self, ctx: int, visible: dict[str, SubcktDef], scope: Scope
              ) -> tuple[int, dict[str, SubcktDef]]:
        """The definitions seen inside ``scope`` (as :func:`_instantiate` builds them),
        with a small number naming that set for the memo."""
        if not scope.subckts:
            return ctx, visible
        key = (ctx, id(scope))
        got = self.contexts.get(key)
        if got is None:
            defs = dict(visible)
            defs.update((sub.name.text.lower(), sub) for sub in scope.subckts)
            got = self.contexts[key] = (len(self.contexts) + 1, defs)
        return got

    def instance(self, card: Card, defs: dict[str, SubcktDef], ctx: int,
                 stack: tuple[str, ...], depth: int) -> tuple[int, int]:
        """(elements, levels) of the instance ``card`` at nesting level ``depth``."""
        target = _instance_target(card)
        sub = defs.get(target.lower()) if target is not None else None
        if sub is None or sub.name.text.lower() in stack:
            return 0, 0
        key = sub.name.text.lower()
        if depth > budgets.SUBCKT_DEPTH_MAX:
            raise ElaborationError(
                f"{printable(card.name.text, 80)} nests subcircuit instances {depth} levels deep "
                f"({_arrows(stack + (key,))}), over the budget of {budgets.SUBCKT_DEPTH_MAX} levels",
                card.name.span, code="netlist-116")
        memo_key = (id(sub), ctx)
        got = self.memo.get(memo_key)
        if got is None:
            inner_ctx, inner = self._defs(ctx, defs, sub.body)
            count, levels = 0, 0
            for inner_card in sub.body.cards:
                if inner_card.letter != "X":
                    count += 1
                    continue
                n, lv = self.instance(inner_card, inner, inner_ctx, stack + (key,), depth + 1)
                count, levels = count + n, max(levels, lv)
            got = self.memo[memo_key] = (count, levels + 1)
        if depth - 1 + got[1] > budgets.SUBCKT_DEPTH_MAX:
            raise ElaborationError(
                f"{printable(card.name.text, 80)} instantiates subcircuit "
                f"{printable(sub.name.text, 60)}, "
                f"which nests {got[1]} levels of instances; here that makes "
                f"{depth - 1 + got[1]}, over the budget of {budgets.SUBCKT_DEPTH_MAX} levels",
                card.name.span, code="netlist-116")
        return got
