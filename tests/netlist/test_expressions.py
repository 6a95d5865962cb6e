"""Parameter expressions: grammar/expr.lark and netcheck's own evaluator."""

from __future__ import annotations

import math
import re

import pytest
from hypothesis import given
from hypothesis import strategies as st

from netcheck import ElaborationError, NetlistSyntaxError, read_netlist
from netcheck.netlist.expressions import evaluate, parse_expression
from netcheck.netlist.source import SourceFile


def value(text: str, **params: float) -> float:
    """Evaluate ``text`` as if written ``R1 a 0 {text}`` on line 2 of a netlist."""
    src = SourceFile("expr.cir", f"title\nR1 a 0 {{{text}}}\n")

    def lookup(ref):
        if ref.name in params:
            return params[ref.name]
        if ref.name == "pi":
            return math.pi
        raise ElaborationError(f"undefined {ref.name}", ref.span, code="netlist-102")

    return evaluate(parse_expression(text, src, 2, 9), lookup)


def netlist_value(params: str, expr: str) -> float:
    """Value of R1 in a netlist with ``.param`` line ``params`` and R1 = {expr}."""
    ckt = read_netlist(f"t\n.param {params}\nR1 a 0 {{{expr}}}\nR2 a 0 1\n")
    return ckt.element("R1").value


class TestPrecedence:
    # Reference: the conventional precedence of arithmetic (power binds tighter than
    # unary minus and is right-associative, as in Fortran and Python). Each expected
    # value is Python's own evaluation of the same expression with ^ written as **.
    @pytest.mark.parametrize("text,expected", [
        ("-2^2", -2 ** 2),            # -4: power before unary minus
        ("2^3^2", 2 ** 3 ** 2),       # 512: right-associative
        ("2^-1", 2 ** -1),            # 0.5: unary minus in the exponent
        ("2**3", 2 ** 3),
        ("-2**2", -2 ** 2),
        ("2*3+4", 2 * 3 + 4),
        ("2+3*4", 2 + 3 * 4),
        ("(2+3)*4", (2 + 3) * 4),
        ("10/4/5", 10 / 4 / 5),       # left-associative division
        ("2-3-4", 2 - 3 - 4),         # left-associative subtraction
        ("-(2)^2", -(2) ** 2),
        ("2^-1^2", 2 ** -1 ** 2),
        ("--2", -(-2)),
        ("+-+1", +-+1),
        ("2*-3", 2 * -3),
        ("1-2^2*3", 1 - 2 ** 2 * 3),
        ("(1)", 1),
    ])
    def test_table(self, text, expected):
        assert value(text) == expected

    def test_quantities_with_suffixes(self):
        # engineering notation inside expressions reads like plain values
        assert value("1k*2") == 2000.0
        assert value("4k7") == 4700.0
        assert value("10u") == 1e-05
        assert value("2*1meg") == 2e6


class TestFunctions:
    # Reference: Python's math module (C99 libm), the documented meaning of each name.
    @pytest.mark.parametrize("text,expected", [
        ("sqrt(2)", math.sqrt(2)), ("exp(1.5)", math.exp(1.5)), ("log(10)", math.log(10)),
        ("log10(1000)", 3.0), ("sin(0.3)", math.sin(0.3)), ("cos(0.3)", math.cos(0.3)),
        ("tan(0.3)", math.tan(0.3)), ("atan(1)", math.pi / 4), ("abs(-3)", 3.0),
        ("min(3,1,2)", 1.0), ("max(3,1,2)", 3.0), ("min(7)", 7.0), ("max(-7)", -7.0),
        ("SQRT(4)", 2.0), ("Max(1, 2)", 2.0),
    ])
    def test_table(self, text, expected):
        assert value(text) == pytest.approx(expected, rel=1e-15)

    def test_pi(self):
        assert value("pi") == math.pi
        assert value("PI") == math.pi
        assert value("2*pi*1k") == 2 * math.pi * 1000

    @pytest.mark.parametrize("text,match", [
        ("foo(1)", "unknown function 'foo'"), ("sqrt(1,2)", "takes 1 argument"),
        ("sqrt()", "takes 1 argument, got 0"), ("min()", "or more, got 0"),
    ])
    def test_bad_calls(self, text, match):
        with pytest.raises(NetlistSyntaxError, match=match) as info:
            value(text)
        assert info.value.code == "netlist-101"

    @pytest.mark.parametrize("text", ["1/0", "log(-1)", "sqrt(-1)", "10^400", "exp(1000)",
                                      "(-8)^(1/3)", "0^-1", "log10(0)"])
    def test_no_value(self, text):
        # outside each function's domain (math module docs) or beyond the largest double
        with pytest.raises(ElaborationError) as info:
            value(text)
        assert info.value.code == "netlist-101"
        assert "has no value" in info.value.message or "not finite" in info.value.message


class TestParameters:
    def test_names(self):
        assert value("a*2+b", a=3.0, b=1.0) == 7.0

    def test_netlist_params_and_case(self):
        assert netlist_value("Rbase=1k", "2*RBASE") == 2000.0
        assert netlist_value("a=2 b={a^3}", "b+a") == 10.0
        # defined after use: parameters of a scope are not order-dependent
        ckt = read_netlist("t\nR1 a 0 {x}\n.param x=5\nR2 a 0 1\n")
        assert ckt.element("R1").value == 5.0

    def test_coupled_bp_sample_values(self, samples):
        # closed form: a tank resonates at f0 = 1/(2 pi sqrt(L C)), so
        # C = 1/((2 pi f0)^2 L); loaded Q = R/(w0 L); critical coupling k = 1/Q
        ckt = read_netlist(str(samples / "coupled_bp.cir"))
        f0, lt, r = 455e3, 100e-6, 2e3
        w0 = 2 * math.pi * f0
        assert ckt.element("CP").value == pytest.approx(1 / (w0 ** 2 * lt), rel=1e-14)
        assert ckt.element("K1").value == pytest.approx(w0 * lt / r, rel=1e-14)

    def test_undefined_name_has_position(self):
        with pytest.raises(ElaborationError) as info:
            read_netlist("t\nR2 a 0 1\nR1 a 0 {2*zz}\n")
        err = info.value
        assert err.code == "netlist-102"
        assert str(err.span) == "<text>:3:11"
        assert "undefined parameter 'zz'" in err.message

    def test_recursion_has_position(self):
        with pytest.raises(ElaborationError) as info:
            read_netlist("t\n.param a={b} b={a}\nR1 n 0 {a}\nR2 n 0 1\n")
        err = info.value
        assert err.code == "netlist-103"
        assert "a -> b -> a" in err.message
        assert (err.span.line, err.span.column) == (2, 17)

    def test_self_reference(self):
        with pytest.raises(ElaborationError, match=r"a -> a") as info:
            read_netlist("t\n.param a={a+1}\nR1 n 0 {a}\nR2 n 0 1\n")
        assert info.value.code == "netlist-103"

    def test_long_chain_is_an_error_not_a_crash(self):
        # 400 parameters each defined by the next: deeper than Python's stack
        chain = " ".join(f"p{i}={{p{i + 1}}}" for i in range(400))
        with pytest.raises(ElaborationError, match="nested too deeply"):
            read_netlist(f"t\n.param {chain} p400=1\nR1 a 0 {{p0}}\nR2 a 0 1\n")


class TestNoWayToPython:
    @pytest.mark.parametrize("text", [
        "__import__('os')", "__import__(\"os\").system(\"touch pwned\")", "a.b", "x[0]",
        "'s'", '"s"', "lambda: 1", "lambda x: x", "a if b else c", "[1]", "{1}",
        "1;2", "a=1", "open('f')", "x.__class__", "2 3", "1,2", "sqrt.__doc__", "#1",
        "`1`", "a @ b", "1 // 2", "1 % 2", "~1", "not 1", "1 < 2", "f'{1}'",
    ])
    def test_refused_as_syntax(self, text):
        with pytest.raises(NetlistSyntaxError) as info:
            value(text, a=1.0, b=1.0, c=1.0, x=1.0)
        assert info.value.code == "netlist-101"
        assert info.value.span.line == 2

    def test_nothing_is_executed(self, tmp_path, monkeypatch):
        monkeypatch.chdir(tmp_path)
        text = "t\nR1 a 0 {__import__('os').system('touch pwned')}\nR2 a 0 1\n"
        with pytest.raises(NetlistSyntaxError) as info:
            read_netlist(text)
        assert not (tmp_path / "pwned").exists()
        # the caret points at the first character the grammar refuses: the quote
        assert str(info.value.span) == f"<text>:2:{text.splitlines()[1].index(chr(39)) + 1}"

    def test_undefined_dunder_name_is_only_a_name(self):
        # a bare identifier is a parameter name, never a Python object
        with pytest.raises(ElaborationError, match="undefined parameter '__builtins__'"):
            read_netlist("t\nR1 a 0 {__builtins__}\nR2 a 0 1\n")

    def test_error_positions_are_file_positions(self):
        with pytest.raises(NetlistSyntaxError) as info:
            read_netlist("t\nR2 a 0 1\nR1 a 0 {2*a.b}\n")
        first = info.value.format().splitlines()
        assert first[0].startswith("<text>:3:12: error netlist-101: unexpected '.'")
        assert first[2].index("^") == first[1].index("a.b") + 1

    def test_string_field_is_an_expression_too(self):
        ckt = read_netlist("t\nR1 a 0 '2*3'\nR2 a 0 1\n")
        assert ckt.element("R1").value == 6.0
        with pytest.raises(NetlistSyntaxError):
            read_netlist("t\nR1 a 0 '__import__(\"os\")'\nR2 a 0 1\n")


class TestRobustness:
    @pytest.mark.parametrize("text", ["-" * 3000 + "1", "+".join(["1"] * 3000),
                                      "2^" * 1500 + "2", "(" * 3000 + "1" + ")" * 3000])
    def test_deep_nesting_is_an_error_or_a_value(self, text):
        # never a RecursionError from the parser or the evaluator
        try:
            value(text)
        except (NetlistSyntaxError, ElaborationError) as err:
            assert err.code == "netlist-101"

    @pytest.mark.parametrize("text,match", [("", "empty expression"), ("1+", "ends too early"),
                                            ("()", "unexpected ')'"), ("max(1,)", "')'")])
    def test_malformed(self, text, match):
        with pytest.raises(NetlistSyntaxError, match=re.escape(match)):
            value(text)


# Fully parenthesised random arithmetic: the parse must keep the tree, and the value
# must equal the same arithmetic done directly in Python floats (IEEE 754 operations).
_leaf = st.integers(min_value=1, max_value=999).map(lambda n: (str(n), float(n)))


def _combine(children):
    ops = st.sampled_from(["+", "-", "*", "/"])
    return st.tuples(children, ops, children).map(_apply) | children.map(
        lambda c: ("-(" + c[0] + ")", -c[1]))


def _apply(t):
    (ta, va), op, (tb, vb) = t
    # a division by zero anywhere makes the whole expression an error (netlist-101), even where
    # IEEE arithmetic would carry on (1/(1/0) = 0): NaN marks it and propagates
    out = {"+": va + vb, "-": va - vb, "*": va * vb, "/": va / vb if vb else math.nan}[op]
    return f"({ta}){op}({tb})", out


@given(st.recursive(_leaf, _combine, max_leaves=12))
def test_random_parenthesised_arithmetic(tree):
    text, expected = tree
    if not math.isfinite(expected):
        with pytest.raises(ElaborationError):
            value(text)
    else:
        assert value(text) == expected


@pytest.mark.parametrize("text, expected", [
    # references: Python's math module (an independent implementation of each function)
    ("pow(10, 6/20)", math.pow(10, 0.3)), ("atan2(1, -1)", math.atan2(1, -1)),
    ("asin(0.5)", math.asin(0.5)), ("acos(0.5)", math.acos(0.5)),
    ("sinh(1)", math.sinh(1)), ("cosh(1)", math.cosh(1)), ("tanh(0.5)", math.tanh(0.5)),
    # a level in dB to a ratio, the form a filter library writes (common practice)
    ("1k/(pow(10, 3/20) - 1)", 1e3 / (10 ** 0.15 - 1)),
])
def test_more_functions(text, expected):
    assert value(text) == pytest.approx(expected, rel=1e-15)
