"""Parameter expressions: parse with grammar/expr.lark, evaluate with our own code."""

from __future__ import annotations

import functools
import math
import re
from dataclasses import dataclass
from typing import Callable

from lark import Token, Transformer, Tree, v_args
from lark.exceptions import LarkError, UnexpectedCharacters, UnexpectedInput, VisitError

from .grammars import parser
from ..exceptions import ElaborationError, NetlistSyntaxError
from .source import SourceFile, Span, quoted
from .units import UnitError, parse_quantity

__all__ = ["Expr", "Num", "Name", "Call", "BinOp", "Neg", "parse_expression", "FUNCTIONS",
           "CONSTANTS", "EXPR_MAX"]


@dataclass(frozen=True, slots=True)
class Num:
    """A literal quantity."""

    value: float
    span: Span


@dataclass(frozen=True, slots=True)
class Name:
    """A parameter (or constant) reference; names are case-insensitive."""

    name: str
    span: Span


@dataclass(frozen=True, slots=True)
class Call:
    """A call of one of :data:`FUNCTIONS`."""

    func: str
    args: tuple["Expr", ...]
    span: Span
    #: a ``.func`` user function (evaluated by the caller's ``call``)
    user: bool = False


@dataclass(frozen=True, slots=True)
class BinOp:
    """A binary arithmetic operation (``+ - * / ^``)."""

    op: str
    left: "Expr"
    right: "Expr"
    span: Span


@dataclass(frozen=True, slots=True)
class Neg:
    """Unary minus."""

    operand: "Expr"
    span: Span


Expr = Num | Name | Call | BinOp | Neg

#: Functions an expression may call: name -> (minimum args, maximum args, function).
FUNCTIONS: dict[str, tuple[int, int, Callable[..., float]]] = {
    "sqrt": (1, 1, math.sqrt), "exp": (1, 1, math.exp), "log": (1, 1, math.log),
    "log10": (1, 1, math.log10), "sin": (1, 1, math.sin), "cos": (1, 1, math.cos),
    "tan": (1, 1, math.tan), "atan": (1, 1, math.atan), "abs": (1, 1, abs),
    "min": (1, 64, lambda *a: min(a)), "max": (1, 64, lambda *a: max(a)),
    "pow": (2, 2, math.pow), "atan2": (2, 2, math.atan2), "asin": (1, 1, math.asin),
    "acos": (1, 1, math.acos), "sinh": (1, 1, math.sinh), "cosh": (1, 1, math.cosh),
    "tanh": (1, 1, math.tanh),
}
CONSTANTS: dict[str, float] = {"pi": math.pi}
#: the longest expression read, in characters (its parse tree grows with its length)
EXPR_MAX = 10_000


def _binop(op: str) -> Callable[..., Expr]:
    def build(self: "_ToAst", meta, left: Expr, right: Expr) -> Expr:
        return BinOp(op, left, right, self._span(meta))
    return build


@v_args(meta=True, inline=True)
class _ToAst(Transformer):
    """Map expr.lark rules to the frozen AST, shifting positions into the file."""

    def __init__(self, source: SourceFile, line: int, column: int,
                 user: frozenset[str] = frozenset()) -> None:
        super().__init__()
        self.source, self.line, self.column, self.user = source, line, column, user

    def _span(self, meta) -> Span:
        line = self.line + meta.line - 1
        col = (self.column + meta.column - 1) if meta.line == 1 else meta.column
        end_col = (self.column + meta.end_column - 1) if meta.end_line == 1 else meta.end_column
        return Span(self.source, line, col, self.line + meta.end_line - 1, end_col)

    def number(self, meta, tok: Token) -> Num:
        span = self._span(meta)
        try:
            return Num(parse_quantity(str(tok)), span)
        except UnitError as err:
            raise NetlistSyntaxError(str(err), span, code="netlist-101") from None

    def name(self, meta, tok: Token) -> Name:
        return Name(str(tok).lower(), self._span(meta))

    def call(self, meta, func: Token, *args: Expr) -> Call:
        span = self._span(meta)
        fname = str(func).lower()
        if fname in self.user:  # a .func: its argument count is checked when called
            return Call(fname, tuple(a for a in args if a is not None), span, True)
        if fname not in FUNCTIONS:
            raise NetlistSyntaxError(
                f"unknown function {quoted(str(func), 60)}; available: "
                f"{', '.join(sorted(FUNCTIONS))}, or one defined with .func",
                span, code="netlist-101")
        lo, hi, _ = FUNCTIONS[fname]
        if not lo <= len(args) <= hi:
            raise NetlistSyntaxError(f"{fname}() takes {lo} argument{'s' if lo > 1 else ''}"
                                     f"{' or more' if hi > lo else ''}, got {len(args)}",
                                     span, code="netlist-101")
        return Call(fname, tuple(a for a in args if a is not None), span)

    def neg(self, meta, operand: Expr) -> Expr:
        return Neg(operand, self._span(meta))

    add = _binop("+")
    sub = _binop("-")
    mul = _binop("*")
    div = _binop("/")
    pow = _binop("^")


def parse_expression(text: str, source: SourceFile, line: int, column: int,
                     user: frozenset[str] = frozenset()) -> Expr:
    """Parse ``text`` found at ``line``:``column`` of ``source`` into an :data:`Expr`.

    ``user`` names the ``.func`` user functions the expression may call (a user function
    of a built-in's name replaces it).

    Raises
    ------
    NetlistSyntaxError
        With the position of the offending character inside the file.

    Examples
    --------
    >>> src = SourceFile("<text>", "x {2*pi}")
    >>> parse_expression("2*pi", src, 1, 4).op
    '*'
    """
    if not text.strip():
        raise NetlistSyntaxError("empty expression", source.span(line, column), code="netlist-101")
    if len(text) > EXPR_MAX:
        raise NetlistSyntaxError(f"expression is {len(text):,} characters long, over the "
                                 f"budget of {EXPR_MAX:,}; split it with .param",
                                 source.span(line, column), code="netlist-101")
    if "\n" in text:  # a value never spans lines today; keep the general path for it
        return _parse_at(text, source, line, column, user)
    quantity = _QUANTITY.match(text)
    if quantity is not None and quantity.end() == len(text):
        # a plain number (what most cards hold): the token the grammar would read alone
        span = Span(source, line, column, line, column + len(text))
        try:
            return Num(parse_quantity(text), span)
        except UnitError as err:
            raise NetlistSyntaxError(str(err), span, code="netlist-101") from None
    if _NAME.fullmatch(text):
        return Name(text.lower(), Span(source, line, column, line, column + len(text)))
    try:
        template = _template(text, user)
    except (NetlistSyntaxError, RecursionError):
        template = None
    if template is None:  # an error: raised where it is, with its position in the file
        return _parse_at(text, source, line, column, user)
    try:
        return _relocate(template, source, line, column - 1)
    except RecursionError:
        return _parse_at(text, source, line, column, user)


#: the expression grammar's QUANTITY and NAME terminals (grammar/expr.lark)
_QUANTITY = re.compile(r"(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?[A-Za-zµμ]*\d*[A-Za-z]*")
_NAME = re.compile(r"[A-Za-z_][A-Za-z0-9_]*")
#: a source file for the position-free parses kept by :func:`_template`
_NOWHERE = SourceFile("<expression>", "")


@functools.lru_cache(maxsize=4096)
def _template(text: str, user: frozenset[str]) -> Expr:
    """``text`` parsed once as if at line 1, column 1 (cached by text: a netlist repeats
    the same expressions on many cards); :func:`_relocate` places a copy in the file."""
    return _parse_at(text, _NOWHERE, 1, 1, user)


def _relocate(expr: Expr, source: SourceFile, line: int, shift: int) -> Expr:
    """A copy of a one-line :func:`_template` expression at ``line``, its columns shifted
    by ``shift`` (the ASTs are frozen; only their spans differ)."""
    sp = expr.span
    span = Span(source, line, sp.column + shift, line, sp.end_column + shift)
    match expr:
        case Num():
            return Num(expr.value, span)
        case Name():
            return Name(expr.name, span)
        case Neg():
            return Neg(_relocate(expr.operand, source, line, shift), span)
        case BinOp():
            return BinOp(expr.op, _relocate(expr.left, source, line, shift),
                         _relocate(expr.right, source, line, shift), span)
        case Call():
            return Call(expr.func, tuple(_relocate(a, source, line, shift) for a in expr.args),
                        span, expr.user)
    raise TypeError(f"not an expression: {expr!r}")  # pragma: no cover - programming error


def _parse_at(text: str, source: SourceFile, line: int, column: int,
              user: frozenset[str]) -> Expr:
    """Parse ``text`` with the expression grammar, positions relative to ``line``:``column``."""
    try:
        tree = parser("expr.lark").parse(text)
    except UnexpectedInput as err:
        col = column + err.column - 1 if err.line == 1 else err.column
        span = source.span(line + max(err.line, 1) - 1, max(col, 1))
        if isinstance(err, UnexpectedCharacters):
            bad = text[err.pos_in_stream] if err.pos_in_stream < len(text) else "end"
            hint = ""
            if bad in ".[]'\"":
                hint = " (expressions hold numbers, parameter names, + - * / ^ and functions only)"
            msg = f"unexpected {quoted(bad)} in expression{hint}"
        else:
            tok = getattr(err, "token", None)
            msg = ("expression ends too early" if tok is None or tok.type == "$END"
                   else f"unexpected {quoted(str(tok), 60)} in expression")
        raise NetlistSyntaxError(msg, span, code="netlist-101") from None
    except LarkError as err:
        raise NetlistSyntaxError(f"bad expression: {err}", source.span(line, column),
                                 code="netlist-101") from None
    try:
        if isinstance(tree, Token):  # a lone terminal that no rule wrapped
            tree = Tree("number" if tree.type == "QUANTITY" else "name", [tree])
        return _ToAst(source, line, column, user).transform(tree)
    except VisitError as err:
        if isinstance(err.orig_exc, NetlistSyntaxError):
            raise err.orig_exc from None
        if isinstance(err.orig_exc, RecursionError):
            raise _too_deep(source, line, column) from None
        raise
    except RecursionError:
        raise _too_deep(source, line, column) from None


def _too_deep(source: SourceFile, line: int, column: int) -> NetlistSyntaxError:
    return NetlistSyntaxError("expression is nested too deeply; split it with .param",
                              source.span(line, column), code="netlist-101")


def evaluate(expr: Expr, lookup: Callable[[Name], float],
             call: Callable[[Call, list[float]], float] | None = None) -> float:
    """Evaluate ``expr``; ``lookup`` resolves parameter names (and raises if undefined),
    ``call`` evaluates a user (``.func``) function with its argument values.

    Raises
    ------
    ElaborationError
        For arithmetic that has no value (division by zero, log of a negative, overflow).
    """
    match expr:
        case Num(value=value):
            return value
        case Name():
            return lookup(expr)
        case Neg(operand=operand):
            return -evaluate(operand, lookup, call)
        case BinOp(op=op, left=left, right=right, span=span):
            a, b = evaluate(left, lookup, call), evaluate(right, lookup, call)
            try:
                if op == "+":
                    out = a + b
                elif op == "-":
                    out = a - b
                elif op == "*":
                    out = a * b
                elif op == "/":
                    out = a / b
                else:
                    out = math.pow(a, b)
            except (ZeroDivisionError, OverflowError, ValueError) as err:
                raise ElaborationError(f"{a:g} {op} {b:g} has no value ({err})", span,
                                       code="netlist-101") from None
            return _finite(out, span)
        case Call(func=func, args=args, span=span):
            values = [evaluate(a, lookup, call) for a in args]
            if expr.user and call is not None:
                return call(expr, values)
            try:
                return _finite(float(FUNCTIONS[func][2](*values)), span)
            except (ValueError, OverflowError) as err:
                shown = ", ".join(f"{v:g}" for v in values)
                raise ElaborationError(f"{func}({shown}) has no value ({err})", span,
                                       code="netlist-101") from None
    raise TypeError(f"not an expression: {expr!r}")  # pragma: no cover - programming error


def _finite(value: float, span: Span) -> float:
    if not math.isfinite(value):
        raise ElaborationError(f"expression value is not finite ({value})", span, code="netlist-101")
    return value
