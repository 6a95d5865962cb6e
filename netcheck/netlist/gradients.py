"""Behavioural expressions: read from a card, then valued with their exact gradient.

A behavioural source (``E … VALUE={expr}``, ``G … VALUE={expr}``, ``B … V={expr}`` or
``I={expr}``) writes its output as an expression of circuit quantities: ``v(a)`` (node
a against ground), ``v(a,b)`` (a minus b) and ``i(Vx)`` (the current through voltage
source Vx, from its + node through the source to its − node). :func:`read_expression`
parses it with the parameter-expression grammar (netcheck.netlist.expressions), turns
every ``.param`` name into its number, writes each ``.func`` call out with its body, and
replaces each ``v()``/``i()`` by a :class:`Probe` — the index of one control.

:func:`value_and_gradient` then values the tree at control values ``u`` together with
its gradient over ``u``, by forward-mode automatic differentiation (each node of the
tree carries its value and its exact gradient, combined by the chain rule; Griewank &
Walther, *Evaluating Derivatives*, 2nd ed., SIAM 2008, ch. 3). There is no finite
difference anywhere. Where the value or the derivative does not exist (a division by
zero, a logarithm of a negative number, the derivative of sqrt at 0) it raises
:class:`NoValue` at the operator's place in the file.

The kinks: abs, min and max take the derivative of the branch they take — abs(x) is x
for x ≥ 0 (slope +1 at 0) and −x below; min and max take the first argument of a tie.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from ..exceptions import ElaborationError, NetlistSyntaxError
from .expressions import FUNCTIONS, BinOp, Call, Name, Neg, Num, parse_expression
from .source import Span, printable
from .syntax import Field

if TYPE_CHECKING:  # pragma: no cover
    from .reader import CardReader

__all__ = ["Probe", "NoValue", "read_expression", "value_and_gradient", "DERIVATIVES",
           "PROBES", "describe"]

#: the functions of circuit quantities a behavioural expression may call
PROBES = ("v", "i")
#: deepest nesting of .func calls written out in one expression
_INLINE_MAX = 64
#: deepest expression tree valued (one stack frame per level, within Python's 1000)
DEPTH_MAX = 600


@dataclass(frozen=True, slots=True)
class Probe:
    """Control number ``index`` of the source (a ``v()`` or ``i()`` in the expression)."""

    index: int
    span: Span


class NoValue(ArithmeticError):
    """The expression (or its derivative) has no value at the control values given."""

    def __init__(self, message: str, span: Span) -> None:
        super().__init__(message)
        self.message, self.span = message, span


def _sign(x: float) -> float:
    return 1.0 if x >= 0 else -1.0


def _first(pick: Callable[..., float]) -> Callable[..., list[float]]:
    """Partials of min or max: 1 for the first argument equal to the result, 0 for the rest."""
    def partials(*a: float) -> list[float]:
        k = a.index(pick(a))
        return [1.0 if j == k else 0.0 for j in range(len(a))]
    return partials


def _pow_partials(a: float, b: float, need: Sequence[bool] = (True, True)) -> list[float]:
    """∂(a^b)/∂a = b·a^(b−1), ∂(a^b)/∂b = a^b·ln a (0 for a = 0 < b, the limit); each
    only where ``need`` asks (a^b of a negative a has a value and a derivative in a but
    none in b)."""
    da = 0.0 if b == 0 or not need[0] else b * math.pow(a, b - 1.0)
    db = 0.0 if (a == 0 and b > 0) or not need[1] else math.pow(a, b) * math.log(a)
    return [da, db]


#: each function's partial derivatives at its argument values (standard calculus tables,
#: e.g. Abramowitz & Stegun, *Handbook of Mathematical Functions*, ch. 4)
DERIVATIVES: dict[str, Callable[..., list[float]]] = {
    "sqrt": lambda x: [0.5 / math.sqrt(x)],
    "exp": lambda x: [math.exp(x)],
    "log": lambda x: [1.0 / x],
    "log10": lambda x: [1.0 / (x * math.log(10.0))],
    "sin": lambda x: [math.cos(x)],
    "cos": lambda x: [-math.sin(x)],
    "tan": lambda x: [1.0 / math.cos(x) ** 2],
    "atan": lambda x: [1.0 / (1.0 + x * x)],
    "abs": lambda x: [_sign(x)],
    "min": _first(min),
    "max": _first(max),
    "pow": _pow_partials,
    "atan2": lambda y, x: [x / (x * x + y * y), -y / (x * x + y * y)],
    "asin": lambda x: [1.0 / math.sqrt(1.0 - x * x)],
    "acos": lambda x: [-1.0 / math.sqrt(1.0 - x * x)],
    "sinh": lambda x: [math.cosh(x)],
    "cosh": lambda x: [math.sinh(x)],
    "tanh": lambda x: [1.0 - math.tanh(x) ** 2],
}
_BINARY: dict[str, Callable[[float, float], float]] = {
    "+": lambda a, b: a + b, "-": lambda a, b: a - b, "*": lambda a, b: a * b,
    "/": lambda a, b: a / b, "^": math.pow,
}


def _binary_partials(op: str, a: float, b: float, need: Sequence[bool]) -> list[float]:
    if op == "+":
        return [1.0, 1.0]
    if op == "-":
        return [1.0, -1.0]
    if op == "*":
        return [b, a]
    if op == "/":
        return [1.0 / b, -a / (b * b)]
    return _pow_partials(a, b, need)


def value_and_gradient(expr: Any, u: Sequence[float]) -> tuple[float, np.ndarray]:
    """The value of a :func:`read_expression` tree at controls ``u`` and its gradient
    d(value)/du (exact, forward mode). Raises :class:`NoValue` where either has none."""
    return _dual(expr, u)


def _dual(expr: Any, u: Sequence[float]) -> tuple[float, np.ndarray]:
    match expr:
        case Num(value=value):
            return value, np.zeros(len(u))
        case Probe(index=k):
            grad = np.zeros(len(u))
            grad[k] = 1.0
            return float(u[k]), grad
        case Neg(operand=operand):
            a, da = _dual(operand, u)
            return -a, -da
        case BinOp(op=op, left=left, right=right, span=span):
            args = [_dual(left, u), _dual(right, u)]
            return _combine(f"{{}} {op} {{}}", _BINARY[op],
                            lambda a, b, need: _binary_partials(op, a, b, need), args, span)
        case Call(func=func, args=args, span=span):
            values = []
            for a in args:  # a loop, not a comprehension: one stack frame per level
                values.append(_dual(a, u))
            partials = DERIVATIVES[func]
            return _combine(f"{func}({', '.join(['{}'] * len(args))})",
                            FUNCTIONS[func][2], _pow_partials if func == "pow" else
                            lambda *v, need: partials(*v), values, span)
    raise TypeError(f"not a behavioural expression: {expr!r}")  # pragma: no cover


def _combine(form: str, f: Callable[..., float],
             partials: Callable[..., list[float]], args: list[tuple[float, np.ndarray]],
             span: Span) -> tuple[float, np.ndarray]:
    """f of the arguments and, by the chain rule, its gradient; ``partials(*values,
    need=...)`` gives ∂f/∂(each argument) (those not needed may be left 0)."""
    values = [a for a, _ in args]

    def shown() -> str:  # the operation with its argument values, for a message
        return form.format(*(f"{v:g}" for v in values))

    try:
        value = float(f(*values))
    except (ZeroDivisionError, ValueError, OverflowError) as err:
        raise NoValue(f"{shown()} has no value ({err})", span) from None
    if not math.isfinite(value):
        raise NoValue(f"{shown()} is not finite ({value})", span)
    grad = np.zeros(len(args[0][1]))
    need = [bool(g.any()) for _, g in args]
    if any(need):
        try:
            d = partials(*values, need=need)
        except (ZeroDivisionError, ValueError, OverflowError) as err:
            raise NoValue(f"{shown()} has no derivative ({err})", span) from None
        for dk, (_, g), wanted in zip(d, args, need):
            if wanted:
                if not math.isfinite(dk):
                    raise NoValue(f"{shown()} has no finite derivative", span)
                grad = grad + dk * g
    return value, grad


# ------------------------------------------------------------------ reading

def read_expression(rd: "CardReader", fld: Field) -> tuple[Any, tuple[tuple[str, ...], ...],
                                                              tuple[Span, ...]]:
    """The behavioural expression of field ``fld`` of the card ``rd`` reads:
    (tree, controls, where each control is first written). Each control is
    ``("v", node+, node-)`` or ``("i", source)``, its names resolved in the card's scope."""
    env = rd.env
    try:
        tree = parse_expression(fld.expr_text, fld.span.source, fld.span.line,
                                fld.expr_column, env.func_names() | frozenset(PROBES))
    except NetlistSyntaxError as err:
        if err.message.startswith("unknown function"):
            err = NetlistSyntaxError(err.message + "; in a behavioural expression also "
                                     "v(node), v(node, node) and i(voltage source)",
                                     err.span, code=err.code)
        raise err from None
    reading = _Reading(rd)
    try:
        out = reading.compile(tree, env, {}, 0)
    except RecursionError:
        out = None
    if out is None or _depth(out) > DEPTH_MAX:
        raise ElaborationError(f"behavioural expression is nested more than {DEPTH_MAX} "
                               "deep (its .func calls written out); split it into "
                               "sources or .func functions of fewer levels", fld.span,
                               code="netlist-101")
    return out, tuple(reading.controls), tuple(reading.spans)


def _depth(expr: Any) -> int:
    """The depth of an expression tree (counted without recursion)."""
    deepest, stack = 0, [(expr, 1)]
    while stack:
        node, d = stack.pop()
        deepest = max(deepest, d)
        match node:
            case Neg(operand=operand):
                stack.append((operand, d + 1))
            case BinOp(left=left, right=right):
                stack += [(left, d + 1), (right, d + 1)]
            case Call(args=args):
                stack += [(a, d + 1) for a in args]
    return deepest


class _Reading:
    """One expression being read: the controls found so far."""

    def __init__(self, rd: "CardReader") -> None:
        self.rd = rd
        self.controls: list[tuple[str, ...]] = []
        self.spans: list[Span] = []

    def compile(self, expr: Any, env: Any, bound: dict[str, Any], depth: int) -> Any:
        match expr:
            case Num():
                return expr
            case Name(name=name, span=span):
                if name in bound:
                    return bound[name]
                return Num(env.lookup(expr), span)
            case Neg(operand=operand, span=span):
                return Neg(self.compile(operand, env, bound, depth), span)
            case BinOp(op=op, left=left, right=right, span=span):
                return BinOp(op, self.compile(left, env, bound, depth),
                             self.compile(right, env, bound, depth), span)
            case Call(func=func, args=args, span=span):
                if func in PROBES:
                    return self.probe(func, args, span)
                values = tuple(self.compile(a, env, bound, depth) for a in args)
                if expr.user:
                    return self.inline(expr, values, env, depth)
                return Call(func, values, span)
        raise TypeError(f"not an expression: {expr!r}")  # pragma: no cover

    def inline(self, call: Call, args: tuple[Any, ...], env: Any, depth: int) -> Any:
        """A ``.func`` call written out: its body with the arguments in place."""
        if depth >= _INLINE_MAX:
            raise ElaborationError(f"{call.func}() calls .func functions more than "
                                   f"{_INLINE_MAX} deep (a function that calls itself?)",
                                   call.span, code="netlist-101")
        home = env
        while home is not None and call.func not in home.funcs:
            home = home.parent
        fd = home.funcs[call.func]
        if len(args) != len(fd.args):
            raise ElaborationError(f"{fd.name}() takes {len(fd.args)} argument"
                                   f"{'s' if len(fd.args) != 1 else ''}, got {len(args)}",
                                   call.span, code="netlist-101")
        body = fd.body
        tree = parse_expression(body.expr_text, body.span.source, body.span.line,
                                body.expr_column, home.func_names() | frozenset(PROBES))
        return self.compile(tree, home, dict(zip(fd.args, args)), depth + 1)

    def probe(self, func: str, args: tuple[Any, ...], span: Span) -> Probe:
        """``v(a)``, ``v(a,b)`` or ``i(Vx)``: the index of its control."""
        texts = []
        for a in args:
            if not isinstance(a, (Name, Num)):
                raise ElaborationError(f"{func}() takes {'node' if func == 'v' else 'source'} "
                                       "names, not expressions", a.span, code="netlist-101")
            sp = a.span
            texts.append((sp.source.line_text(sp.line)[sp.column - 1:sp.end_column - 1], sp))
        if func == "v" and len(texts) in (1, 2):
            nodes = tuple(self.rd.node_at(t, sp) for t, sp in texts)
            # one node: against ground ("0", netcheck.netlist.circuit.GROUND)
            key: tuple[str, ...] = ("v", nodes[0], nodes[1] if len(nodes) == 2 else "0")
        elif func == "i" and len(texts) == 1:
            key = ("i", self.rd.element_ref(texts[0][0]))
        else:
            form = "v(node) or v(node, node)" if func == "v" else "i(voltage source)"
            raise ElaborationError(f"{func}() takes {len(texts)} argument"
                                   f"{'s' if len(texts) != 1 else ''} here; write {form}",
                                   span, code="netlist-101")
        if key not in self.controls:
            self.controls.append(key)
            self.spans.append(span)
        return Probe(self.controls.index(key), span)


def describe(control: tuple[str, ...]) -> str:
    """A control as the expression writes it: ``v(a)``, ``v(a,b)``, ``i(V1)``."""
    if control[0] == "i":
        return f"i({printable(control[1].split('.')[-1], 60)})"
    a, b = control[1], control[2]
    return f"v({printable(a, 60)})" if b == "0" else f"v({printable(a, 60)},{printable(b, 60)})"

