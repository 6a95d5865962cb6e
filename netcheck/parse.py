"""Netlist text → syntax (cards, directives, subcircuit scopes), each with its Span."""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from lark import Token, Tree
from lark.exceptions import LarkError, UnexpectedCharacters, UnexpectedInput

from ._grammars import parser
from .exceptions import Diagnostic, NetlistSyntaxError
from .source import SourceFile, Span

__all__ = ["Field", "Assign", "Card", "Directive", "Scope", "SubcktDef", "Netlist",
           "parse_statements", "load_netlist", "KNOWN_DIRECTIVES"]

#: Dot-directives netcheck acts on; any other directive is warned about (NC150) and skipped.
KNOWN_DIRECTIVES = frozenset({"subckt", "ends", "param", "include", "end"})
#: Directives that only matter to other analyses (transient, operating point...): no warning.
QUIET_DIRECTIVES = frozenset({"title"})


@dataclass(frozen=True, slots=True)
class Field:
    """One field of a card: ``kind`` is ``word``, ``braced`` (``{expr}``) or ``string``."""

    kind: str
    text: str
    span: Span

    @property
    def expr_text(self) -> str:
        """The text to read as an expression (braces or quotes taken off)."""
        return self.text[1:-1] if self.kind in ("braced", "string") else self.text

    @property
    def expr_column(self) -> int:
        """Column where :attr:`expr_text` starts."""
        return self.span.column + (1 if self.kind in ("braced", "string") else 0)


@dataclass(frozen=True, slots=True)
class Assign:
    """A ``key=value`` field."""

    key: Field
    value: Field
    span: Span


Item = Field | Assign


@dataclass(frozen=True, slots=True)
class Card:
    """An element line: a name and its fields, continuation lines joined."""

    name: Field
    fields: tuple[Item, ...]
    span: Span

    @property
    def letter(self) -> str:
        """The element letter (first character of the name, upper case)."""
        return self.name.text[0].upper()


@dataclass(frozen=True, slots=True)
class Directive:
    """A dot-directive; ``name`` is lower case without the dot."""

    name: str
    fields: tuple[Item, ...]
    span: Span


Statement = Card | Directive


@dataclass(frozen=True, slots=True)
class SubcktDef:
    """A ``.subckt`` definition: ports, default parameters and body."""

    name: Field
    ports: tuple[Field, ...]
    params: tuple[Assign, ...]
    body: "Scope"
    span: Span


@dataclass(frozen=True, slots=True)
class Scope:
    """What one level of hierarchy declares: cards, ``.param`` assignments, subcircuits."""

    cards: tuple[Card, ...] = ()
    params: tuple[Assign, ...] = ()
    subckts: tuple[SubcktDef, ...] = ()


@dataclass(frozen=True, slots=True)
class Netlist:
    """A parsed netlist with its includes expanded and its hierarchy grouped."""

    title: str
    source: SourceFile
    top: Scope
    sources: tuple[SourceFile, ...] = ()
    diagnostics: tuple[Diagnostic, ...] = field(default=())


def _span(source: SourceFile, meta) -> Span:
    return Span(source, meta.line, meta.column, meta.end_line, meta.end_column)


def _token_span(source: SourceFile, tok: Token) -> Span:
    return Span(source, tok.line, tok.column, tok.end_line or tok.line,
                tok.end_column or tok.column + len(tok))


def _item(source: SourceFile, node: Tree) -> Item:
    if node.data == "assign":
        key, value = (_item(source, child) for child in node.children)
        return Assign(key, value, _span(source, node.meta))
    tok = node.children[0]
    return Field(str(node.data), str(tok), _token_span(source, tok))


def parse_statements(source: SourceFile, has_title: bool = True) -> tuple[str, tuple[Statement, ...]]:
    """Parse a netlist file's text into its title and statements.

    Parameters
    ----------
    source : SourceFile
        The file. Its first line is the title when ``has_title`` (included files have none).

    Raises
    ------
    NetlistSyntaxError
        With the position of the first character or token that does not fit.
    """
    text = source.text.replace("\r\n", "\n")
    title = ""
    if has_title:
        title, nl, rest = text.partition("\n")
        text = nl + rest  # keep the newline so line numbers stay true
        title = title.strip()
    try:
        tree = parser("netlist.lark").parse(text)
    except UnexpectedInput as err:
        raise _syntax_error(source, text, err) from None
    except LarkError as err:  # pragma: no cover - lark internals
        raise NetlistSyntaxError(f"cannot parse: {err}", source.span(1, 1)) from None
    out: list[Statement] = []
    for node in tree.children:
        if not isinstance(node, Tree):
            continue
        head, *rest_nodes = node.children
        items = tuple(_item(source, child) for child in rest_nodes)
        span = _span(source, node.meta)
        if node.data == "directive":
            out.append(Directive(str(head)[1:].lower(), items, span))
        elif str(head).startswith("+"):
            raise NetlistSyntaxError("a continuation line ('+') has no card to continue",
                                     _token_span(source, head))
        else:
            out.append(Card(Field("word", str(head), _token_span(source, head)), items, span))
    return title, tuple(out)


def _syntax_error(source: SourceFile, text: str, err: UnexpectedInput) -> NetlistSyntaxError:
    line, col = max(err.line, 1), max(err.column, 1)
    span = source.span(line, col)
    if isinstance(err, UnexpectedCharacters):
        ch = text[err.pos_in_stream] if err.pos_in_stream < len(text) else ""
        if ch == "+":
            msg = "a continuation line ('+') has no card to continue"
        elif ch in "()":
            msg = f"unexpected {ch!r}: netcheck cards take plain fields; write expressions in braces, e.g. {{2*(a+b)}}"
        elif ch == "*":
            msg = "'*' starts a comment only at the beginning of a line; use ';' for an inline comment"
        elif ch == "=":
            msg = "'=' needs a name before it (key=value)"
        elif ch in "{}":
            msg = "unbalanced or nested braces; an expression is written {like*this} on one card"
        elif ch in "\"'":
            msg = "unterminated string"
        else:
            msg = f"unexpected character {ch!r}"
        return NetlistSyntaxError(msg, span)
    tok = getattr(err, "token", None)
    expected = set(getattr(err, "expected", ()) or ())
    if expected and expected <= {"NAME", "BRACED", "STRING", "_CONTINUATION"}:  # after "="
        return NetlistSyntaxError("'=' needs a value after it (key=value)", span)
    if tok is None or tok.type == "$END":
        return NetlistSyntaxError("unexpected end of file", span)
    if str(tok) == "=":
        return NetlistSyntaxError("'=' needs a name before it (key=value)", span)
    if tok.type == "_HEAD_COMMENT":  # the only terminal that starts with '*' mid-line
        return NetlistSyntaxError("'*' starts a comment only at the beginning of a line; "
                                  "use ';' for an inline comment", span)
    return NetlistSyntaxError(f"unexpected {str(tok)!r}", span)


def _read(path: Path, shown: str) -> SourceFile:
    try:
        return SourceFile(shown, path.read_bytes().decode("utf-8", errors="replace"))
    except (OSError, ValueError) as err:  # ValueError: a NUL byte in the path
        raise NetlistSyntaxError(f"cannot read netlist: {getattr(err, 'strerror', None) or err}",
                                 path=shown, code="NC104") from None


def load_netlist(path_or_text: str | Path, root: str | Path | None = None) -> Netlist:
    """Read a netlist (a path, or the netlist text itself) with its includes.

    ``.include "file"`` is resolved relative to the including file and must stay
    inside the design root (the top netlist's directory unless ``root`` is given);
    absolute paths and include cycles are refused.

    Parameters
    ----------
    path_or_text : str or Path
        A file path, or netlist text (any string containing a newline).
    root : str or Path, optional
        Design root that includes may not leave.
    """
    if isinstance(path_or_text, str) and "\n" in path_or_text:
        top = SourceFile("<text>", path_or_text)
        base = Path(root) if root is not None else Path.cwd()
        top_path = None
    else:
        top_path = Path(path_or_text)
        top = _read(top_path, str(path_or_text))
        base = Path(root) if root is not None else top_path.resolve().parent
    title, stmts = parse_statements(top, has_title=True)
    sources: list[SourceFile] = [top]
    diags: list[Diagnostic] = []
    chain = [top_path.resolve()] if top_path is not None else []
    flat = _expand(stmts, top_path.resolve().parent if top_path else base, base.resolve(),
                   chain, sources, diags)
    scope = _group(flat, diags)
    return Netlist(title, top, scope, tuple(sources), tuple(diags))


def _expand(stmts: tuple[Statement, ...], here: Path, root: Path, chain: list[Path],
            sources: list[SourceFile], diags: list[Diagnostic]) -> list[Statement]:
    out: list[Statement] = []
    for st in stmts:
        if isinstance(st, Directive) and st.name == "end":
            break
        if not (isinstance(st, Directive) and st.name == "include"):
            out.append(st)
            continue
        if len(st.fields) != 1 or not isinstance(st.fields[0], Field):
            raise NetlistSyntaxError('.include takes one file name, e.g. .include "parts.lib"',
                                     st.span, code="NC104")
        target = st.fields[0]
        name = target.expr_text
        if Path(name).is_absolute() or name.startswith("~"):
            raise NetlistSyntaxError(f"absolute include path {name!r} refused; give a path "
                                     "relative to the including file", target.span, code="NC104")
        try:
            path = (here / name).resolve()
            found = path.is_file()
        except (OSError, ValueError) as err:  # a NUL byte, a name too long for the OS
            raise NetlistSyntaxError(f"include path {name!r} cannot be used: {err}",
                                     target.span, code="NC104") from None
        if not path.is_relative_to(root):
            raise NetlistSyntaxError(f"include {name!r} leaves the design root {root}; "
                                     "use --root to widen it", target.span, code="NC104")
        if path in chain:
            cycle = " -> ".join(p.name for p in chain[chain.index(path):] + [path])
            raise NetlistSyntaxError(f"include cycle: {cycle}", target.span, code="NC104")
        if not found:
            raise NetlistSyntaxError(f"included file {name!r} not found (looked for {path})",
                                     target.span, code="NC104")
        sub = _read(path, _display(path, root))
        sources.append(sub)
        _, sub_stmts = parse_statements(sub, has_title=False)
        out.extend(_expand(sub_stmts, path.parent, root, chain + [path], sources, diags))
    return out


def _display(path: Path, root: Path) -> str:
    try:
        return str(path.relative_to(Path.cwd()))
    except ValueError:
        return str(path)


def _group(stmts: list[Statement], diags: list[Diagnostic]) -> Scope:
    """Group a flat statement list into nested :class:`Scope` objects."""
    stack: list[tuple[Directive | None, list, list, list]] = [(None, [], [], [])]
    for st in stmts:
        if isinstance(st, Card):
            stack[-1][1].append(st)
            continue
        if st.name == "param":
            for item in st.fields:
                if not isinstance(item, Assign):
                    raise NetlistSyntaxError(".param takes name=value pairs", item.span,
                                             code="NC101")
                stack[-1][2].append(item)
        elif st.name == "subckt":
            stack.append((st, [], [], []))
        elif st.name == "ends":
            if len(stack) == 1:
                raise NetlistSyntaxError(".ends without a matching .subckt", st.span)
            head, cards, params, subs = stack.pop()
            _check_ends(head, st)
            stack[-1][3].append(_subckt(head, Scope(tuple(cards), tuple(params), tuple(subs))))
        elif st.name not in QUIET_DIRECTIVES:
            diags.append(Diagnostic("NC150", f"unknown directive .{st.name} ignored", st.span))
    if len(stack) > 1:
        head = stack[-1][0]
        raise NetlistSyntaxError(".subckt has no matching .ends", head.span)
    _, cards, params, subs = stack[0]
    return Scope(tuple(cards), tuple(params), tuple(subs))


def _check_ends(head: Directive, ends: Directive) -> None:
    """``.ends NAME`` must name the ``.subckt`` it closes (a bare ``.ends`` closes any)."""
    if not ends.fields or not head.fields:
        return
    got, want = ends.fields[0], head.fields[0]
    if isinstance(got, Field) and isinstance(want, Field) and got.text.lower() != want.text.lower():
        raise NetlistSyntaxError(f".ends {got.text} closes .subckt {want.text} (opened at line "
                                 f"{head.span.line}); check the nesting", got.span)


def _subckt(head: Directive, body: Scope) -> SubcktDef:
    fields = list(head.fields)
    if not fields or not isinstance(fields[0], Field) or fields[0].kind != "word":
        raise NetlistSyntaxError(".subckt needs a name, then its port nodes", head.span)
    name, ports, params = fields[0], [], []
    seen_params_kw = False
    for item in fields[1:]:
        if isinstance(item, Assign):
            params.append(item)
        elif item.kind == "word" and item.text.lower() in ("params:", "params"):
            seen_params_kw = True
        elif seen_params_kw:
            raise NetlistSyntaxError("after 'params:' only name=value pairs may follow",
                                     item.span)
        elif item.kind != "word":
            raise NetlistSyntaxError("subcircuit ports are node names", item.span)
        else:
            ports.append(item)
    return SubcktDef(name, tuple(ports), tuple(params), body, head.span)
