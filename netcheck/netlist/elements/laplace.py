"""Laplace-domain controlled sources: ``E``/``G`` with a rational transfer function H(s).

``Ename n+ n- nc+ nc- LAPLACE={H(s)}`` (voltage out) and ``Gname n+ n- nc+ nc- LAPLACE={H(s)}``
(current n+ → through the source → n−): the output is H(s) times the control voltage
v(nc+) − v(nc−). H is an expression in ``s`` and the netlist's parameters built with
``+ − * /`` and whole powers (``s^2``); functions of parameters alone are allowed, a
function of ``s`` is not (it would not be rational: a delay ``exp(-s*T)`` needs a line).

H = N(s)/D(s) is realised exactly as linear states, so the circuit stays a matrix pencil
G + sC and every engine (pole–zero included) keeps working. With m = max(deg N, deg D)
and w the solution of D(s)·w = u (u the control voltage), the states are
w_k = (s/ω0)^k·w for k = 0 … m−1 (ω0 a frequency scale, below) and

    Σ_k d_k·ω0^k·w_k (+ d_m·ω0^(m−1)·s·w_{m−1} when deg D = m) = u     (row of w_0)
    w_k − (s/ω0)·w_{k−1} = 0                                       (row of w_k, k ≥ 1)
    y = Σ_k n_k·ω0^k·w_k (+ n_m·ω0^(m−1)·s·w_{m−1} when deg N = m)

so y = N(s)/D(s)·u (the controllable canonical form of state-space theory, common
practice, no source). ω0 = (|d_lo|/|d_hi|)^(1/(hi − lo)) over the lowest and highest
non-zero coefficients of D keeps the states of one size near the poles, and N and D are
divided alike so the largest scaled coefficient of D is 1. An improper H (deg N > deg D, an impedance such as
R + sL + 1/(sC)) is realised the same way. Common powers of s in N and D are cancelled;
other common factors are kept (the pole–zero pairs they add cancel in the response).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, Callable, ClassVar

import numpy as np

from ...exceptions import ElaborationError
from ..expressions import BinOp, Call, Expr, Name, Neg, evaluate, parse_expression
from ..source import Span, printable
from ..syntax import Field
from .controlled import FORMS, VCCS, VCVS

if TYPE_CHECKING:  # pragma: no cover
    from ...mna.assemble import Stamper
    from ..reader import CardReader

__all__ = ["LaplaceVCVS", "LaplaceVCCS", "rational", "DEGREE_MAX"]

#: the highest degree of N or D read (a higher one is refused: its states' scale spreads
#: beyond what a double keeps)
DEGREE_MAX = 20
Poly = np.ndarray  # coefficients in ascending powers of s


def _trim(p: Poly) -> Poly:
    nz = np.flatnonzero(p)
    return p[:nz[-1] + 1] if nz.size else np.zeros(1)


def _add(a: Poly, b: Poly) -> Poly:
    out = np.zeros(max(a.size, b.size))
    out[:a.size] += a
    out[:b.size] += b
    return _trim(out)


def rational(expr: Expr, lookup: Callable[[Name], float],
             call: Callable[[Call, list[float]], float] | None = None) -> tuple[Poly, Poly]:
    """(N, D), coefficients in ascending powers of s, of the rational expression ``expr``
    in ``s`` (``lookup`` gives the other names' values). Raises ElaborationError for what
    is not rational in s."""

    def has_s(e: Expr) -> bool:
        match e:
            case Name(name=name):
                return name == "s"
            case Neg(operand=o):
                return has_s(o)
            case BinOp(left=a, right=b):
                return has_s(a) or has_s(b)
            case Call(args=args):
                return any(has_s(x) for x in args)
        return False

    def walk(e: Expr) -> tuple[Poly, Poly]:
        if not has_s(e):
            return np.array([evaluate(e, lookup, call)]), np.ones(1)
        match e:
            case Name():
                return np.array([0.0, 1.0]), np.ones(1)
            case Neg(operand=o):
                n, d = walk(o)
                return -n, d
            case BinOp(op=op, left=a, right=b, span=span):
                if op == "^":
                    k = evaluate(b, lookup, call) if not has_s(b) else math.nan
                    if not (k == int(k) and abs(k) <= DEGREE_MAX):
                        raise ElaborationError("LAPLACE: a power of an expression in s must be "
                                               f"a whole number from -{DEGREE_MAX} to "
                                               f"{DEGREE_MAX}", span, code="netlist-101")
                    n, d = walk(a)
                    n, d = (n, d) if k >= 0 else (d, n)
                    pn, pd = np.ones(1), np.ones(1)
                    for _ in range(abs(int(k))):
                        pn, pd = np.convolve(pn, n), np.convolve(pd, d)
                    return pn, pd
                na, da = walk(a)
                nb, db = walk(b)
                if op == "+":
                    return _add(np.convolve(na, db), np.convolve(nb, da)), np.convolve(da, db)
                if op == "-":
                    return _add(np.convolve(na, db), -np.convolve(nb, da)), np.convolve(da, db)
                if op == "*":
                    return np.convolve(na, nb), np.convolve(da, db)
                if not np.any(nb):
                    raise ElaborationError("LAPLACE: division by zero", span,
                                           code="netlist-101")
                return np.convolve(na, db), np.convolve(da, nb)
            case Call(func=func, span=span):
                raise ElaborationError(f"LAPLACE: {func}() of s is not a rational function of s "
                                       "(only + - * / and whole powers of s are); write the "
                                       "response as a ratio of polynomials", span,
                                       code="netlist-101")
        raise AssertionError(e)

    n, d = walk(expr)
    n, d = _trim(n), _trim(d)
    if not np.any(d):
        raise ElaborationError("LAPLACE: the denominator is zero", _span(expr),
                               code="netlist-101")
    while n.size > 1 and d.size > 1 and n[0] == 0 and d[0] == 0:  # a common power of s
        n, d = n[1:], d[1:]
    if max(n.size, d.size) - 1 > DEGREE_MAX:
        raise ElaborationError(f"LAPLACE: degree {max(n.size, d.size) - 1} is over the "
                               f"{DEGREE_MAX} netcheck reads", _span(expr), code="netlist-101")
    if not (np.all(np.isfinite(n)) and np.all(np.isfinite(d))):
        raise ElaborationError("LAPLACE: a coefficient is not finite", _span(expr),
                               code="netlist-101")
    return n, d


def _span(expr: Expr) -> Span:
    return expr.span


@dataclass(slots=True, unsafe_hash=True)
class _Laplace:
    """What the two forms share: the coefficients and the realisation's stamp."""

    #: no single value is stamped (the coefficients are; netlist-118 does not apply)
    range_why: ClassVar[str] = ""

    @property
    def states(self) -> int:
        """m = max(deg N, deg D): the number of state unknowns."""
        return max(len(self.numerator), len(self.denominator)) - 1

    @property
    def extra_branches(self) -> tuple[str, ...]:  # type: ignore[override]
        return tuple(f"state{k}" for k in range(self.states))

    @property
    def has_branch(self) -> bool:  # type: ignore[override]
        return True

    @property
    def value(self) -> float:
        """The DC gain N(0)/D(0) (NaN when D(0) = 0: a pole at DC)."""
        return float(self.numerator[0] / self.denominator[0]) if self.denominator[0] else \
            float("nan")

    def stamp(self, st: "Stamper", value: Any) -> None:
        n, d = np.asarray(self.numerator), np.asarray(self.denominator)
        m = self.states
        out = st.branch(self.name)
        p, q, cp, cn = self.nodes
        if self.letter == "E":
            st.incidence(p, q, out)                       # v+ − v− − y = 0
        else:
            st.add_node_row("G", p, out, 1.0)             # i_out leaves n+, enters n−
            st.add_node_row("G", q, out, -1.0)
            st.add("G", out, out, 1.0)                    # i_out − y = 0
        if m == 0:  # a constant: y = n0/d0 · u
            st.add_node_col("G", out, cp, -n[0] / d[0])
            st.add_node_col("G", out, cn, n[0] / d[0])
            return
        w = [st.branch(f"{self.name} state{k}") for k in range(m)]
        scale = self.scale
        powers = scale ** np.arange(m + 1)
        size = max(abs(dk) * powers[k] for k, dk in enumerate(d))  # D/size: row of size 1
        powers = powers / size
        for k, dk in enumerate(d):                       # the row of w_0: D(s)·w = u
            if dk and k < m:
                st.add("G", w[0], w[k], dk * powers[k])
            elif dk:
                st.add("C", w[0], w[m - 1], dk * powers[m - 1])
        st.add_node_col("G", w[0], cp, -1.0)
        st.add_node_col("G", w[0], cn, 1.0)
        for k in range(1, m):                            # w_k = (s/ω0)·w_{k−1}
            st.add("G", w[k], w[k], 1.0)
            st.add("C", w[k], w[k - 1], -1.0 / scale)
        for k, nk in enumerate(n):                       # y = N(s)·w
            if nk and k < m:
                st.add("G", out, w[k], -nk * powers[k])
            elif nk:
                st.add("C", out, w[m - 1], -nk * powers[m - 1])

    @property
    def scale(self) -> float:
        """ω0, the states' frequency scale (rad/s): (|d_lo|/|d_hi|)^(1/(hi − lo)) over the
        lowest and highest non-zero coefficients of D, so the scaled ones are of one size
        near the poles (1 when D has one term)."""
        d = self.denominator
        lo = next(k for k, x in enumerate(d) if x)
        hi = len(d) - 1
        return float((abs(d[lo]) / abs(d[hi])) ** (1.0 / (hi - lo))) if hi > lo else 1.0

    @classmethod
    def read(cls, rd: "CardReader") -> Any:
        """``n+ n- nc+ nc- LAPLACE {H}`` (or ``LAPLACE={H}``) or ``n+ n- LAPLACE {v(a[,b])} {H}``."""
        if rd.peek_keyword(2) == "laplace":
            outputs = rd.nodes(2)
            rd.skip()
            span = rd.field_span()
            control = _CONTROL.fullmatch(_braced(rd, "the controlling voltage {v(node)}").expr_text)
            if control is None:
                raise ElaborationError(f"{printable(rd.name)}: the control of a LAPLACE source "
                                       "is {v(node)} or {v(node,node)}", span,
                                       code="netlist-105")
            nodes = outputs + (rd.node_at(control.group(1), span),
                               rd.node_at(control.group(2) or "0", span))
        else:
            nodes = rd.nodes(4)
            if rd.peek_assign() == "laplace":
                field = rd.assigned_field()
                return cls._made(rd, nodes, field)
            rd.skip()
        return cls._made(rd, nodes, _braced(rd, "the transfer function {H(s)}"))

    @classmethod
    def _made(cls, rd: "CardReader", nodes: tuple[str, ...], field: Field) -> Any:
        rd.finish()
        expr = parse_expression(field.expr_text, field.span.source, field.span.line,
                                field.expr_column, rd.env.func_names())
        n, d = rational(expr, rd.env.lookup, rd.env.call)
        return cls(rd.name, nodes, rd.span, 0.0, "", tuple(float(x) for x in n),
                   tuple(float(x) for x in d))


def _braced(rd: "CardReader", what: str) -> Field:
    if not rd.more():
        raise ElaborationError(f"{printable(rd.name)}: missing {what} in braces",
                               rd.field_span(), code="netlist-105")
    item = rd.items[rd.pos]
    if not isinstance(item, Field) or item.kind != "braced":
        rd.unexpected(f"expected {what} in braces")
    rd.skip()
    return item  # type: ignore[return-value]


def _wants(rd: "CardReader") -> bool:
    return rd.peek_keyword(2) == "laplace" or rd.peek_keyword(4) == "laplace" or \
        rd.peek_assign(4) == "laplace"


#: ``v(a)`` or ``v(a, b)``, the control of the ``LAPLACE {control} {H}`` form
_CONTROL = re.compile(r"\s*[vV]\s*\(\s*([^\s,()]+)\s*(?:,\s*([^\s,()]+)\s*)?\)\s*")


@dataclass(slots=True, unsafe_hash=True)
class LaplaceVCVS(_Laplace, VCVS):
    """``Ename n+ n- nc+ nc- LAPLACE={H(s)}``: v+ − v− = H(s)·(v(nc+) − v(nc−))."""

    numerator: tuple[float, ...] = ()
    denominator: tuple[float, ...] = (1.0,)


@dataclass(slots=True, unsafe_hash=True)
class LaplaceVCCS(_Laplace, VCCS):
    """``Gname n+ n- nc+ nc- LAPLACE={H(s)}``: current H(s)·(v(nc+) − v(nc−)) flows n+ → n−."""

    numerator: tuple[float, ...] = ()
    denominator: tuple[float, ...] = (1.0,)


FORMS["E"].append((_wants, LaplaceVCVS.read))
FORMS["G"].append((_wants, LaplaceVCCS.read))
