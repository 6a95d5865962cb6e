"""Parameter scopes: ``.param`` and subcircuit parameters, evaluated lazily (Env)."""

from __future__ import annotations

import numpy as np

from ..exceptions import ElaborationError
from .expressions import Call, Name, evaluate, parse_expression
from .includes import arrows as _arrows
from .parse import Assign, Field
from .syntax import FuncDef
from .source import Span, quoted

__all__ = ["Env"]


class Env:
    """A parameter scope: lazy, memoised, with recursion detection."""

    def __init__(self, parent: "Env | None", label: str) -> None:
        self.parent, self.label = parent, label
        self.exprs: dict[str, tuple[Field, "Env"]] = {}
        self.values: dict[str, float] = {}
        self.active: list[str] = []
        # parsed expressions by field, shared by every scope of one elaboration: a card
        # inside a subcircuit is parsed once, however many instances there are
        self.parsed: dict[int, tuple[Field, object]] = parent.parsed if parent else {}
        #: ``.func`` user functions defined in this scope, by lower-case name
        self.funcs: dict[str, FuncDef] = {}
        #: values of the expression texts evaluated here, by text: many cards write the same
        #: expression (a value that evaluated once evaluates the same again, every parameter
        #: it uses being memoised); emptied whenever a definition here changes
        self.by_text: dict[str, float] = {}

    def define_func(self, fd: FuncDef) -> None:
        """Define a ``.func`` user function in this scope."""
        self.funcs[fd.name] = fd
        self.by_text.clear()

    def func_names(self) -> frozenset[str]:
        """The user functions visible here (this scope and the enclosing ones)."""
        env, names = self, set()
        while env is not None:
            names.update(env.funcs)
            env = env.parent
        return frozenset(names)

    def call(self, expr: Call, values: list[float]) -> float:
        """Evaluate a user function: its body with its arguments bound, in its own scope."""
        env: Env | None = self
        while env is not None and expr.func not in env.funcs:
            env = env.parent
        if env is None:  # pragma: no cover - parse_expression refuses unknown functions
            raise ElaborationError(f"unknown function {quoted(expr.func)}", expr.span,
                                   code="netlist-101")
        fd = env.funcs[expr.func]
        if len(values) != len(fd.args):
            raise ElaborationError(f"{fd.name}() takes {len(fd.args)} argument"
                                   f"{'s' if len(fd.args) != 1 else ''}, got {len(values)}",
                                   expr.span, code="netlist-101")
        scope = Env(env, f"{env.label}.{fd.name}")
        for name, value in zip(fd.args, values):
            scope.fix(name, value)
        return scope.value_of(fd.body)

    def fix(self, key: str, value: float) -> None:
        """Bind ``key`` to a number (a variant's override of a ``.param``)."""
        self.exprs[key.lower()] = (None, self)  # type: ignore[assignment]
        self.values[key.lower()] = float(value)
        self.by_text.clear()

    def define(self, assign: Assign, where: "Env | None" = None) -> None:
        """Bind ``key`` to ``value`` (evaluated lazily in ``where``, default self)."""
        key = assign.key.text.lower()
        if assign.key.kind != "word" or not key.replace("_", "a").isalnum() or key[0].isdigit():
            raise ElaborationError(f"{quoted(assign.key.text)} is not a parameter name",
                                   assign.key.span, code="netlist-101")
        self.exprs[key] = (assign.value, where or self)
        self.values.pop(key, None)
        self.by_text.clear()

    def lookup(self, ref: Name) -> float:
        """Value of ``ref`` in this scope or an enclosing one."""
        env: Env | None = self
        while env is not None:
            if ref.name in env.exprs:
                return env._get(ref.name, ref.span)
            env = env.parent
        if ref.name == "pi":
            return float(np.pi)
        raise ElaborationError(f"undefined parameter {quoted(ref.name)}", ref.span, code="netlist-102")

    def _get(self, key: str, used_at: Span) -> float:
        if key in self.values:
            return self.values[key]
        if key in self.active:
            cycle = _arrows(self.active[self.active.index(key):] + [key])
            raise ElaborationError(f"parameter {quoted(key)} is defined in terms of itself "
                                   f"({cycle})", used_at, code="netlist-103")
        fld, where = self.exprs[key]
        self.active.append(key)
        try:
            value = where.value_of(fld)
        finally:
            self.active.pop()
        self.values[key] = value
        return value

    def value_of(self, fld: Field) -> float:
        """Evaluate a value field (a quantity, a parameter name or an ``{expression}``)."""
        text = fld.expr_text
        if fld.kind == "string" and not text.strip():
            raise ElaborationError("empty value", fld.span, code="netlist-101")
        value = self.by_text.get(text)
        if value is not None:
            return value
        value = self._evaluate(fld)
        self.by_text[text] = value
        return value

    def _evaluate(self, fld: Field) -> float:
        got = self.parsed.get(id(fld))
        if got is not None and got[0] is fld:
            expr = got[1]
        else:
            expr = parse_expression(fld.expr_text, fld.span.source, fld.span.line,
                                    fld.expr_column, self.func_names())
            self.parsed[id(fld)] = (fld, expr)
        try:
            return evaluate(expr, self.lookup, self.call)
        except RecursionError:
            raise ElaborationError("expression or chain of parameters is nested too deeply",
                                   fld.span, code="netlist-101") from None

