"""Netlist text → syntax (cards, directives, subcircuit scopes), each with its Span."""

from __future__ import annotations

import gc
import heapq
import re
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path

from lark import Token, Tree
from lark.exceptions import LarkError, UnexpectedCharacters, UnexpectedInput

from .dialect import Prepared, prepare
from .grammars import parser
from .includes import IncludeKey, chain_text, display, include_path, unselected_sections
from .refusals import title_warning
from .models import blank_model_brackets
from .scan import scan_statements
from ..exceptions import Diagnostic, NetlistSyntaxError
from .source import SourceFile, Span, printable, quoted
from .syntax import (AcCard, Assign, Card, Directive, Field, FuncDef, Item, Netlist, Scope,
                     Statement, SubcktDef)

__all__ = ["Field", "Assign", "Card", "Directive", "Scope", "SubcktDef", "Netlist", "AcCard",
           "parse_statements", "load_netlist", "KNOWN_DIRECTIVES", "TOKENS_MAX",
           "INCLUDE_DEPTH_MAX", "INCLUDES_MAX", "INCLUDE_TEXT_MAX", "SUBCKT_DEPTH_MAX",
           "ELEMENTS_MAX", "TITLE_MAX", "bounded_title"]

# Size budgets of one netlist with its includes (netlist-116). Each is checked before the work
# it bounds is done; real designs stay far below them.
#: the most tokens (names, values, separators) parsed, over the netlist and its includes:
#: about 100,000 cards, parsed in about half a minute with well under 1 GB of memory
TOKENS_MAX = 500_000
#: the deepest chain of nested ``.include`` files
INCLUDE_DEPTH_MAX = 64
#: the most ``.include`` directives followed (a file included twice counts twice)
INCLUDES_MAX = 1_000
#: the most characters of netlist text read, the top file and every inclusion counted
INCLUDE_TEXT_MAX = 64 * 2**20
#: the deepest nesting of ``.subckt`` definitions, and of subcircuit instances
SUBCKT_DEPTH_MAX = 64
#: the most elements a design may flatten into; counted before flattening
ELEMENTS_MAX = 1_000_000
#: the most characters of the title line kept (it names the design in every report); a
#: longer one is cut there and marked with the count left out, never refused
TITLE_MAX = 1_000

#: Dot-directives netcheck acts on; any other directive is warned about (netlist-150) and skipped.
KNOWN_DIRECTIVES = frozenset({"subckt", "ends", "param", "include", "inc", "lib", "endl",
                              "func", "global", "ac", "end", "model"})
#: Directives that only matter to other analyses (transient, operating point...): no warning.
QUIET_DIRECTIVES = frozenset({"title"})


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


def bounded_title(line: str, limit: int = TITLE_MAX) -> str:
    """A netlist's title line as kept: stripped, cut at ``limit`` characters.

    The cut is marked with ``…`` and the number of characters left out, so a report
    shows that the title went on (the file itself is unchanged).

    >>> bounded_title("  Quillmere Instruments - notch, rev A ")
    'Quillmere Instruments - notch, rev A'
    >>> bounded_title("Quillmere " * 3, limit=12)
    'Quillmere Qu… (17 more characters)'
    """
    title = line.strip()
    if len(title) > limit:
        return f"{title[:limit].rstrip()}… ({len(title) - limit:,} more characters)"
    return title


def parse_statements(source: SourceFile, has_title: bool = True) -> tuple[str, tuple[Statement, ...]]:
    """Parse a netlist file's text into its title and statements.

    Parameters
    ----------
    source : SourceFile
        The file. Its first line is the title when ``has_title`` (included files have none).

    Raises
    ------
    NetlistSyntaxError
        With the position of the first character or token that does not fit; netlist-116
        past :data:`TOKENS_MAX` tokens.
    """
    title, stmts, _, _ = _parse(source, has_title, TOKENS_MAX)
    return title, stmts


@contextmanager
def _paused_gc():
    """The cyclic garbage collector off while a parse builds its many small objects (a
    third less time for a large netlist; any cycles are collected once it is back on)."""
    enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if enabled:
            gc.enable()


def _parse(source: SourceFile, has_title: bool, allowed: int, section: str | None = None
           ) -> tuple[str, tuple[Statement, ...], int, Prepared]:
    """:func:`parse_statements` stopping past ``allowed`` tokens; also returns the count
    and what the dialect pre-pass found (notes, the ``.ac`` card)."""
    with _paused_gc():
        return _parse_text(source, has_title, allowed, section)


def _parse_text(source: SourceFile, has_title: bool, allowed: int, section: str | None
                ) -> tuple[str, tuple[Statement, ...], int, Prepared]:
    text = blank_model_brackets(source.text.replace("\r\n", "\n"))
    title = ""
    notes = []
    if source.encoding != "utf-8":
        notes.append(Diagnostic("netlist-158", f"the file is not UTF-8 text: read as "
                                f"{source.encoding} (a µ sign is the micro prefix)",
                                source.span(1, 1)))
    if has_title:
        title, nl, rest = text.partition("\n")
        text = nl + rest  # keep the newline so line numbers stay true
        if (warn := title_warning(source, title)) is not None:
            notes.append(warn)
        title = bounded_title(_TITLE_COMMENT.sub("", title))
    prepared = prepare(source, text, section, allowed)
    prepared.diags[:0] = notes
    text, used = prepared.text, prepared.tokens
    if scanned := scan_statements(source, text, used, allowed, prepared.statements):
        return title, *scanned, prepared  # plain cards, read without the grammar (scan.py)
    try:
        run = parser("netlist.lark").parse_interactive(text)
        for tok in run.iter_parse():
            used += 1
            if used > allowed:
                raise NetlistSyntaxError(
                    f"the netlist is over the budget of {TOKENS_MAX:,} tokens (names, values "
                    "and line ends, its includes counted); netcheck stops reading here",
                    _token_span(source, tok), code="netlist-116")
        tree = run.feed_eof()
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
    if prepared.statements:
        out = list(heapq.merge(out, prepared.statements, key=lambda st: st.span.line))
    return title, tuple(out), used, prepared


#: an inline ``$`` comment on the title line
_TITLE_COMMENT = re.compile(r"[ \t]+\$.*$")


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
            msg = _star_message(text, err.pos_in_stream)
        elif ch == "=":
            msg = "'=' needs a name before it (key=value)"
        elif ch in "{}":
            msg = "unbalanced or nested braces; an expression is written {like*this} on one card"
        elif ch in "\"'":
            msg = "unterminated string"
        else:
            msg = f"unexpected character {quoted(ch)}"
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
        return NetlistSyntaxError(_star_message(text, tok.start_pos), span)
    return NetlistSyntaxError(f"unexpected {quoted(str(tok))}", span)


def _star_message(text: str, pos: int) -> str:
    """What a '*' inside a line means: a product written without braces, or a comment."""
    before = text[pos - 1:pos] if pos > 0 else ""
    if before and not before.isspace():
        return ("'*' inside a value is a product: write the expression in braces, e.g. "
                "{R*2} (a '*' comment starts a line; use ';' or '$' for an inline comment)")
    return "'*' starts a comment only at the beginning of a line; use ';' or '$' for an inline comment"


def _read(path: Path, shown: str, at: Span | None = None) -> SourceFile:
    """A netlist file through the one safe reader (regular file, size budget, UTF-8)."""
    return SourceFile.read(path, shown, error=NetlistSyntaxError, code="netlist-104",
                           what="netlist" if at is None else "included file", at=at)


@dataclass
class _Loading:
    """What reading one netlist has used of its budgets, and the files read so far."""

    root: Path
    sources: list[SourceFile] = field(default_factory=list)
    files: dict[Path, SourceFile] = field(default_factory=dict)  # by resolved path
    parsed: dict[IncludeKey, tuple[SourceFile, tuple[Statement, ...], int]] = field(
        default_factory=dict)
    tokens: int = 0
    text: int = 0
    includes: int = 0
    diags: list[Diagnostic] = field(default_factory=list)
    ac: AcCard | None = None
    temp_c: float | None = None
    #: the ``.lib`` section heads of each file read (None: netlist text), and the
    #: sections selected by ``.lib FILE SECTION`` (file, lower-case name)
    defined: dict[Path | None, list[Field]] = field(default_factory=dict)
    asked: set[tuple[Path | None, str]] = field(default_factory=set)

    def take(self, prepared: Prepared) -> None:
        """Keep a file's notes, and the first ``.ac`` card met."""
        self.diags.extend(prepared.diags)
        if self.ac is None:
            self.ac = prepared.ac
        if self.temp_c is None:
            self.temp_c = prepared.temp_c


def load_netlist(path_or_text: str | Path, root: str | Path | None = None) -> Netlist:
    """Read a netlist (a path, or the netlist text itself) with its includes.

    ``.include "file"`` is resolved relative to the including file and must stay
    inside the design root (the top netlist's directory unless ``root`` is given);
    absolute paths and include cycles are refused. Every file is read through
    :meth:`netcheck.netlist.source.SourceFile.read` (regular files within the size budget
    only), and the whole is bounded (netlist-116): :data:`TOKENS_MAX` tokens,
    :data:`INCLUDE_DEPTH_MAX` nested includes, :data:`INCLUDES_MAX` includes followed
    and :data:`INCLUDE_TEXT_MAX` characters of text, an inclusion repeated counting
    each time; :data:`SUBCKT_DEPTH_MAX` nested ``.subckt`` definitions.

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
    state = _Loading(base.resolve(), [top], text=len(top.text))
    title, stmts, state.tokens, prepared = _parse(top, True, TOKENS_MAX)
    state.take(prepared)
    chain: tuple[IncludeKey, ...] = ((top_path.resolve(), None),) if top_path else ()
    if chain:
        state.files[chain[0][0]] = top
    if prepared.sections:
        state.defined[chain[0][0] if chain else None] = prepared.sections
    diags = state.diags
    flat = _expand(stmts, top_path.resolve().parent if top_path else base, chain, state)
    diags.extend(unselected_sections(state.defined, state.asked))
    scope, names = _group(flat, diags, title)
    return Netlist(title, top, scope, tuple(state.sources), tuple(diags), state.ac, names,
                   state.temp_c)


def _expand(stmts: tuple[Statement, ...], here: Path, chain: tuple[IncludeKey, ...],
            state: _Loading) -> list[Statement]:
    """The statements with every ``.include`` replaced by the file's (``.lib FILE
    SECTION``: by the section's), depth first. A file may select a section of its own.

    Iterative (an explicit stack of open files), so the include depth is limited by
    :data:`INCLUDE_DEPTH_MAX` alone, not by Python's recursion limit.
    """
    out: list[Statement] = []
    stack = [(iter(stmts), here, chain)]
    while stack:
        it, here, chain = stack[-1]
        st = next(it, None)
        if st is None or (isinstance(st, Directive) and st.name == "end"):
            stack.pop()  # '.end' ends the file it is in
            continue
        if not (isinstance(st, Directive) and st.name in ("include", "lib")):
            out.append(st)
            continue
        key, target = include_path(st, here, chain, state.root, state.diags)
        path, section = key[0], st.fields[1].expr_text if key[1] is not None else None
        depth = len(stack)
        if depth > INCLUDE_DEPTH_MAX:
            raise NetlistSyntaxError(
                f"includes nest {depth} deep here, over the budget of {INCLUDE_DEPTH_MAX} "
                f"nested .include files ({chain_text(chain + (key,))})", target.span,
                code="netlist-116")
        state.includes += 1
        if state.includes > INCLUDES_MAX:
            raise NetlistSyntaxError(
                f"this would be include number {state.includes:,}, over the budget of "
                f"{INCLUDES_MAX:,} .include directives followed for one netlist (a file "
                "included from several places counts each time)", target.span, code="netlist-116")
        if key not in state.parsed:
            sub = state.files.get(path)
            if sub is None:
                sub = state.files[path] = _read(path, display(path), at=target.span)
                state.sources.append(sub)
            _check_text(state, len(sub.text), target)
            _, sub_stmts, used, prepared = _parse(sub, False, TOKENS_MAX - state.tokens,
                                                  section)
            if section is not None and not prepared.found_section:
                raise NetlistSyntaxError(
                    f"library {quoted(target.expr_text)} has no section "
                    f"{quoted(section, 60)} (its sections: "
                    f"{', '.join(printable(x.text, 40) for x in prepared.sections) or 'none'})",
                    st.fields[1].span, code="netlist-104")
            state.take(prepared)
            if prepared.sections:
                state.defined.setdefault(path, prepared.sections)
            if key[1] is not None:
                state.asked.add(key)
            state.parsed[key] = (sub, sub_stmts, used)
        else:  # included again: the same text and statements, counted again
            sub, sub_stmts, used = state.parsed[key]
            _check_text(state, len(sub.text), target)
            if state.tokens + used > TOKENS_MAX:
                raise NetlistSyntaxError(
                    f"including {quoted(target.expr_text)} again would take the netlist over "
                    f"the budget of {TOKENS_MAX:,} tokens (its includes counted)",
                    target.span, code="netlist-116")
        state.tokens += used
        stack.append((iter(sub_stmts), path.parent, chain + (key,)))
    return out


def _check_text(state: _Loading, size: int, target: Field) -> None:
    state.text += size
    if state.text > INCLUDE_TEXT_MAX:
        raise NetlistSyntaxError(
            f"with this include the netlist text reaches {state.text:,} characters, over "
            f"the budget of {INCLUDE_TEXT_MAX:,} for one netlist with its includes (a file "
            "included from several places counts each time)", target.span, code="netlist-116")


def _group(stmts: list[Statement], diags: list[Diagnostic], title: str = ""
           ) -> tuple[Scope, tuple[str, ...]]:
    """Group a flat statement list into nested :class:`Scope` objects; also the
    ``.global`` node names (lower case)."""
    # per level: (head, cards, params, subckts, funcs, models)
    stack: list[tuple[Directive | None, list, ...]] = [(None, [], [], [], [], [])]
    names: dict[str, None] = {}
    for st in stmts:
        if isinstance(st, Card):
            stack[-1][1].append(st)
            continue
        if isinstance(st, FuncDef):
            stack[-1][4].append(st)
            continue
        if st.name == "param":
            for item in st.fields:
                if not isinstance(item, Assign):
                    raise NetlistSyntaxError(".param takes name=value pairs", item.span,
                                             code="netlist-101")
                stack[-1][2].append(item)
        elif st.name == "global":
            names.update((f.text.lower(), None) for f in st.fields if isinstance(f, Field))
        elif st.name == "subckt":
            if len(stack) > SUBCKT_DEPTH_MAX:
                raise NetlistSyntaxError(
                    f".subckt definitions nest {len(stack)} deep here, over the budget of "
                    f"{SUBCKT_DEPTH_MAX} levels", st.span, code="netlist-116")
            stack.append((st, [], [], [], [], []))
        elif st.name == "ends":
            if len(stack) == 1:
                hint = (" (the first line of a netlist is its title, so the .subckt "
                        "written there was not read: put a title line above it)"
                        if title.lower().startswith(".subckt") else "")
                raise NetlistSyntaxError(f".ends without a matching .subckt{hint}", st.span)
            head, *parts = stack.pop()
            _check_ends(head, st)
            stack[-1][3].append(_subckt(head, Scope(*map(tuple, parts))))
        elif st.name == "model":
            stack[-1][5].append(st)
        elif st.name not in QUIET_DIRECTIVES:
            diags.append(Diagnostic("netlist-150", f"unknown directive .{printable(st.name)} ignored",
                                    st.span))
    if len(stack) > 1:
        head = stack[-1][0]
        raise NetlistSyntaxError(".subckt has no matching .ends", head.span)
    return Scope(*map(tuple, stack[0][1:])), tuple(names)


def _check_ends(head: Directive, ends: Directive) -> None:
    """``.ends NAME`` must name the ``.subckt`` it closes (a bare ``.ends`` closes any)."""
    if not ends.fields or not head.fields:
        return
    got, want = ends.fields[0], head.fields[0]
    if isinstance(got, Field) and isinstance(want, Field) and got.text.lower() != want.text.lower():
        raise NetlistSyntaxError(f".ends {printable(got.text)} closes .subckt "
                                 f"{printable(want.text)} (opened at line "
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
