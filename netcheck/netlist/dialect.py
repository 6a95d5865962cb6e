"""The line-level pre-pass: the dialect of netlists engineers already have, made plain.

Before the card grammar parses a file, one pass over its lines (cheap string tests per
line, work only on the lines that need it) takes off what belongs to other analyses and
reads the dot-cards whose arguments the card grammar does not take:

* ignored, one note per kind per file (netlist-155): analysis, output and option cards
  (:data:`IGNORED`) whatever their arguments, ``.control … .endc`` blocks whole;
  transient source functions on V and I cards (netlist-156; the AC part is used);
* comments: whole-line ``;``, inline ``$`` and ``//`` after white space;
* read here and handed on as statements: ``.param`` (braces optional, several
  assignments, continuation lines), ``.func``, ``.global``, ``.include``/``.inc``,
  ``.lib FILE [SECTION]`` and ``.lib SECTION … .endl`` sections; the first ``.ac`` card
  (or ``ac`` command of a control block) is recorded as the netlist's own sweep;
* refused precisely (netlist-120): LAPLACE, FREQ, TABLE, B cards not ``V={…}``/``I={…}``
  (refusals.py), placeholders, other ``(`` on element cards. POLY cards lose their
  brackets and commas (columns kept); ``VALUE={…}``, ``V={…}``, ``I={…}`` stay whole.

Ignored lines are blanked, never removed, so every line and column stays where it is
in the file. Unknown directives are still warned about (netlist-150).
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

from ..exceptions import CODES, Diagnostic, NetlistSyntaxError
from .card_forms import card_form_edits
from .line_text import has_endl, has_function, lines_to_visit, strip_comment
from .refusals import REFUSED_CODE, behavioural_refusal, device_advice
from .source import SourceFile, Span, printable, quoted
from .syntax import AcCard, Assign, Directive, Field, FuncDef
from .units import UnitError, parse_quantity

__all__ = ["IGNORED", "SOURCE_FUNCTIONS", "Prepared", "prepare"]

#: Dot-cards of other analyses, outputs and options: read, ignored, one note per kind.
IGNORED = {
    "tran": "transient analysis", "op": "operating-point analysis", "dc": "DC sweep",
    "noise": "noise analysis", "four": "Fourier analysis", "print": "output",
    "plot": "output", "probe": "output", "save": "output", "meas": "measurement",
    "measure": "measurement", "options": "simulator option", "option": "simulator option",
    "opt": "simulator option", "temp": "temperature", "ic": "initial condition",
    "nodeset": "initial guess", "width": "output width", "backanno": "schematic back-annotation",
    "net": "two-port output", "step": "parameter stepping", "sens": "sensitivity analysis",
    "tf": "transfer-function analysis", "pz": "pole-zero analysis",
    "disto": "distortion analysis", "graph": "output", "lin": "output", "wrdata": "output",
    "fft": "output", "mc": "Monte Carlo run", "wc": "worst-case run", "sp": "S-parameter analysis",
    "hb": "harmonic-balance analysis", "pss": "periodic analysis", "data": "data table",
    "loadbias": "bias file", "savebias": "bias file", "csparam": "output",
    "ferret": "file download", "keep": "output", "savecurrents": "output",
}
#: Transient source functions: ignored on V and I cards, with or without parentheses.
SOURCE_FUNCTIONS = frozenset({"sin", "sine", "pulse", "pwl", "exp", "sffm", "am",
                              "trnoise", "trrandom"})
#: Directives read here (their arguments are not plain fields).
_READ_HERE = frozenset({"param", "func", "global", "include", "inc", "lib", "endl", "ac",
                        "control", "endc"})
#: Directives that would change the circuit in a way netcheck does not follow: refused.
_CHANGES_CIRCUIT = {
    **dict.fromkeys(("if", "elseif", "else", "endif"),
                    "a conditional netlist: netcheck does not evaluate the conditions and "
                    "would read every branch; keep the branch you mean (or make the choice "
                    "a .param and the variants of a spec)"),
    "alter": "the cards after .alter change the circuit for a second run; netcheck reads "
             "one circuit: check each version as its own netlist, or as variants of a spec",
}
#: Directives left to the card grammar.
_GRAMMAR = frozenset({"subckt", "ends", "model", "title", "end"})

_TOKEN = re.compile(r"""\{[^{}\n]*\}|"[^"\n]*"|'[^'\n]*'|[=(),]|;.*|[^\s=(),{}"';]+""")
_DIRECTIVE = re.compile(r"\.([A-Za-z][A-Za-z0-9_]*)")
_BEHAVIOURAL = re.compile(r"(?i)\b(laplace|freq|table|value|poly)\b")
_PLACEHOLDER = re.compile(r"^(#[^#\s]+#|<[^<>\s]+>)$")
_NAME = re.compile(r"[A-Za-z_][A-Za-z0-9_]*$")


@dataclass
class Prepared:
    """What the pre-pass made of one file."""

    text: str
    statements: list = field(default_factory=list)
    diags: list = field(default_factory=list)
    ac: AcCard | None = None
    #: the first ``.temp`` card's temperature, °C (None: none)
    temp_c: float | None = None
    #: the section asked for was found (``.lib FILE SECTION``)
    found_section: bool = False
    #: the section heads (``.lib SECTION``) of the file, each its name as a Field
    sections: list = field(default_factory=list)
    #: the fields the pre-pass read into statements (counted in the token budget)
    tokens: int = 0


@dataclass
class _Tok:
    text: str
    line: int   # 0-based index into the lines
    col: int    # 0-based


class _Pass:
    """One pass over one file's lines."""

    def __init__(self, source: SourceFile, text: str, section: str | None,
                 allowed: int) -> None:
        self.source, self.section, self.allowed = source, section, allowed
        self.text, self.lines = text, text.split("\n")
        self.out = Prepared("")
        self.notes: dict[str, list] = {}   # kind -> [first span, count, message]
        self.sources_seen: dict[str, list] = {}
        self.has_endl = section is not None or has_endl(text)

    # ---- small helpers -------------------------------------------------------------
    def span(self, tok: _Tok) -> Span:
        return Span(self.source, tok.line + 1, tok.col + 1, tok.line + 1,
                    tok.col + 1 + len(tok.text))

    def line_span(self, i: int) -> Span:
        line = self.lines[i]
        col = len(line) - len(line.lstrip()) + 1
        return Span(self.source, i + 1, col, i + 1, len(line.rstrip()) + 1)

    def note(self, key: str, span: Span, message: str, code: str = "netlist-155") -> None:
        got = self.notes.get(key)
        if got is None:
            self.notes[key] = [span, 1, message, code]
        else:
            got[1] += 1

    def blank(self, i: int, start: int = 0, end: int | None = None) -> None:
        line = self.lines[i]
        end = len(line) if end is None else end
        self.lines[i] = line[:start] + " " * (end - start) + line[end:]

    def drop(self, i: int) -> int:
        """Blank line ``i`` (outside the section being read); the next line's index."""
        self.lines[i] = ""
        return i + 1

    def refuse(self, message: str, span: Span, code: str = REFUSED_CODE) -> None:
        raise NetlistSyntaxError(message, span, code=code)

    def group(self, i: int) -> list[int]:
        """Line ``i`` and the continuation lines ('+' first) that follow it."""
        out, j, n = [i], i + 1, len(self.lines)
        while j < n:
            s = self.lines[j].lstrip()
            if not s or s[0] == "*":
                j += 1
                continue
            if s[0] == ";":
                self.lines[j] = ""
                j += 1
                continue
            if s[0] != "+":
                break
            self.lines[j] = strip_comment(self.lines[j])
            out.append(j)
            j += 1
        return out

    def tokens(self, lines: list[int]) -> list[_Tok]:
        out = []
        for k, i in enumerate(lines):
            line = self.lines[i]
            start = 0
            if k:  # a continuation line: after its '+'
                start = line.index("+") + 1
            for m in _TOKEN.finditer(line, start):
                if m.group().startswith(";"):
                    break
                out.append(_Tok(m.group(), i, m.start()))
        self.out.tokens += len(out)
        if self.out.tokens > self.allowed:
            raise NetlistSyntaxError(
                "the netlist is over its budget of tokens (names, values and line ends, "
                "its includes counted); netcheck stops reading here",
                self.span(out[-1]), code="netlist-116")
        return out

    # ---- the pass ------------------------------------------------------------------
    def run(self) -> Prepared:
        if self.section is None and not self.has_endl:
            # no .lib section to keep or drop: only the lines :func:`lines_to_visit`
            # gives can need anything (a big generated netlist is little else)
            i = 0
            for k in lines_to_visit(self.text):
                if k >= i:
                    i, _ = self.step(k, True)
                    if i < 0:
                        break
        else:
            i, keep = 0, self.section is None  # outside a .lib section, or in the one asked for
            while 0 <= i < len(self.lines):
                i, keep = self.step(i, keep)
        self.finish()
        return self.out

    def step(self, i: int, keep: bool) -> tuple[int, bool]:
        """Read line ``i`` (and the continuation lines it takes): the next line to read
        (-1 after ``.end``) and whether the lines from there on are kept."""
        lines = self.lines
        line = lines[i]
        s = line.lstrip()
        if not s or s[0] == "*":
            return i + 1, keep
        c = s[0]
        if c == ";":
            lines[i] = ""
            return i + 1, keep
        if "$" in line or "//" in line:
            line = lines[i] = strip_comment(line)
            s = line.lstrip()
            if not s:
                return i + 1, keep
        if c == "+":
            if not keep:
                lines[i] = ""
            return i + 1, keep
        if c == ".":
            m = _DIRECTIVE.match(s)
            name = m.group(1).lower() if m else ""
            if name == "end" and keep:
                return -1, keep
            if name in ("lib", "endl") and self.has_endl:
                return self.section_line(i, name, keep)
            if not keep:
                return self.drop(i), keep
            if name == "control":
                return self.control(i), keep
            if name in _GRAMMAR:
                return i + 1, keep
            group = self.group(i)
            self.directive(name, group)
            for j in group:
                lines[j] = ""
            return group[-1] + 1, keep
        if not keep:
            return self.drop(i), keep
        upper = c.upper()
        if upper in "VI" and has_function(s):
            group = self.group(i)
            self.source_card(group)
            return group[-1] + 1, keep
        if "(" in line or "#" in line or "<" in line or (upper in "EFGHB" and
                                                          _BEHAVIOURAL.search(s)):
            self.check_card(self.group(i))
        return i + 1, keep

    def temp_card(self, args: list[_Tok], span: Span) -> None:
        """``.temp T [T2 ...]`` (or ``.temp = T``): the first card's first temperature is
        the parts' (TC1/TC2) and the devices'; the rest is said in a note."""
        if args[0].text == "=":
            args = args[1:]
            if not args:
                self.refuse(".temp = needs a temperature in °C", span, code="netlist-101")
                return
        try:
            value = parse_quantity(args[0].text)
        except UnitError as err:
            self.refuse(f".temp: {err}", self.span(args[0]), code="netlist-101")
            return
        if not -273.15 < value < 1000.0:
            self.refuse(f".temp {value:g}: a temperature in °C above absolute zero "
                        "(-273.15) and below 1000 is needed", self.span(args[0]),
                        code="netlist-101")
        if self.out.temp_c is not None:
            self.note("temp-more", span, "another .temp card ignored: the first one sets "
                      "the temperature", code="netlist-165")
            return
        self.out.temp_c = value
        more = (f" (the other temperatures on the card, {', '.join(t.text for t in args[1:])}"
                ", are for a stepped run: ignored)") if len(args) > 1 else ""
        self.note("temp", span, f".temp {value:g} read: parts with TC1/TC2 take their values "
                  f"at {value:g} °C, and semiconductor devices are solved there (their "
                  f"model parameters scaled from TNOM){more}", code="netlist-165")

    def finish(self) -> None:
        self.out.text = "\n".join(self.lines)
        for key, (span, count, message, code) in self.notes.items():
            more = f" ({count - 1:,} more in this file)" if count > 1 else ""
            severity = "note" if CODES.get(code, "").endswith("(note)") else "warning"
            self.out.diags.append(Diagnostic(code, message + more, span, severity))
        if self.sources_seen:
            names = sorted(self.sources_seen)
            span, count = self.sources_seen[names[0]][0], sum(v[1] for v in
                                                              self.sources_seen.values())
            funcs = ", ".join(n.upper() for n in names)
            self.out.diags.append(Diagnostic(
                "netlist-156", f"transient source function{'s' if count > 1 else ''} "
                f"{funcs} ignored on {count:,} source card{'s' if count > 1 else ''}: "
                "netcheck uses the AC part of a V or I card (a card with none is a unit "
                "stimulus)", span))
        self.out.diags.sort(key=lambda d: (d.span.line, d.span.column) if d.span else (0, 0))

    # ---- directives ----------------------------------------------------------------
    def control(self, i: int) -> int:
        """Skip a ``.control`` block whole; an ``ac`` command in it may give the sweep."""
        start, n = i, len(self.lines)
        self.note("control", self.line_span(i), ".control block skipped whole (commands "
                  "for another program's interactive session)")
        self.lines[i] = ""
        i += 1
        while i < n:
            s = self.lines[i].strip()
            low = s.lower()
            if low.startswith(".endc") and (len(low) == 5 or not low[5].isalnum()):
                self.lines[i] = ""
                return i + 1
            if low.startswith("ac ") and self.out.ac is None:
                toks = [_Tok(m.group(), i, m.start()) for m in _TOKEN.finditer(self.lines[i])]
                self.out.ac = self.ac_card(toks, quiet=True)
            self.lines[i] = ""
            i += 1
        self.note("control-open", self.line_span(start),
                  ".control block has no .endc: skipped to the end of the file")
        return i

    def directive(self, name: str, group: list[int]) -> None:
        toks = self.tokens(group)
        head, args = toks[0], toks[1:]
        span = self.span(head)
        if name == "temp" and args:
            self.temp_card(args, span)
        elif name in IGNORED:
            self.note(name, span, f".{name} card ignored ({IGNORED[name]}): it belongs "
                      "to another analysis (netcheck solves the small-signal AC circuit)")
        elif name == "ac":
            card = self.ac_card(toks)
            if card is not None and (self.out.ac is None or self.out.ac.in_control):
                self.out.ac = card  # an .ac card wins over a control block's command
            elif card is not None:
                self.note("ac-more", span, "another .ac card ignored: the first one is the "
                          "netlist's own sweep")
        elif name == "param":
            self.out.statements.append(Directive("param", self.assigns(args, span), span))
        elif name == "func":
            self.out.statements.append(self.func(args, span))
        elif name == "global":
            fields = tuple(Field("word", t.text, self.span(t)) for t in args
                           if t.text != ",")
            self.out.statements.append(Directive("global", fields, span))
        elif name in ("include", "inc", "lib"):
            self.out.statements.append(self.include(name, group[0], head))
        elif name in _CHANGES_CIRCUIT:
            self.refuse(f".{name}: {_CHANGES_CIRCUIT[name]}", span)
        elif name in ("endl", "endc"):
            self.note(name, span, f".{name} without its opening card ignored")
        else:
            self.note(f"unknown-{name}", span, f"unknown directive .{printable(name, 60)} "
                      "ignored", code="netlist-150")

    def ac_card(self, toks: list[_Tok], quiet: bool = False) -> AcCard | None:
        words = [t.text for t in toks[1:]]
        span = self.span(toks[0])
        try:
            kind = words[0].lower()
            if kind not in ("dec", "oct", "lin") or len(words) != 4:
                raise ValueError
            points = parse_quantity(words[1])
            start, stop = parse_quantity(words[2]), parse_quantity(words[3])
            if points != int(points) or points < 1 or not 0 < start < stop:
                raise ValueError
        except (ValueError, UnitError, IndexError):
            if not quiet:
                self.note("ac-unused", span, "this .ac card is not 'dec|oct|lin N fstart "
                          "fstop' with 0 < fstart < fstop: it cannot be the default sweep "
                          "(give --start, --stop and --ppd)")
            return None
        return AcCard(kind, int(points), start, stop, span, quiet)

    def assigns(self, toks: list[_Tok], span: Span) -> tuple[Assign, ...]:
        out, k, n = [], 0, len(toks)
        while k < n:
            key = toks[k]
            if key.text == "=":
                raise NetlistSyntaxError("'=' needs a name before it (key=value)",
                                         self.span(key), code="netlist-101")
            if k + 1 >= n or toks[k + 1].text != "=":
                raise NetlistSyntaxError(
                    f".param takes name=value pairs; {quoted(key.text, 60)} has no value "
                    "(a symbolic parameter cannot be solved: give it a value)",
                    self.span(key), code="netlist-101")
            m = k + 2
            while m < n and not (m + 1 < n and toks[m + 1].text == "=" and
                                 _NAME.match(toks[m].text) and toks[m - 1].text != "="):
                m += 1
            if m == k + 2:
                raise NetlistSyntaxError("'=' needs a value after it (key=value)",
                                         self.span(toks[k + 1]), code="netlist-101")
            value = self.value_field(toks[k + 2:m])
            key_f = Field("word", key.text, self.span(key))
            out.append(Assign(key_f, value, Span(self.source, key.line + 1, key.col + 1,
                                                 value.span.end_line, value.span.end_column)))
            k = m
        return tuple(out)

    def value_field(self, toks: list[_Tok]) -> Field:
        first, last = toks[0], toks[-1]
        if len(toks) == 1 and first.text[0] in "{\"'":
            kind = "braced" if first.text[0] == "{" else "string"
            return Field(kind, first.text, self.span(first))
        if first.line == last.line:
            text = self.lines[first.line][first.col:last.col + len(last.text)]
        else:
            text = " ".join(t.text for t in toks)
        text = "".join(t[1:-1] if t[:1] == "{" else t for t in _split_braces(text))
        return Field("word", text, Span(self.source, first.line + 1, first.col + 1,
                                        last.line + 1, last.col + 1 + len(last.text)))

    def func(self, toks: list[_Tok], span: Span) -> FuncDef:
        texts = [t.text for t in toks]
        if len(texts) < 4 or not _NAME.match(texts[0]) or texts[1] != "(" or ")" not in texts:
            raise NetlistSyntaxError(".func is written .func name(arg, ...) {expression}",
                                     span, code="netlist-101")
        close = texts.index(")")
        args = tuple(t.lower() for t in texts[2:close] if t != ",")
        if not all(_NAME.match(a) for a in args):
            raise NetlistSyntaxError(".func arguments are names", span, code="netlist-101")
        body = toks[close + 1:]
        if body and body[0].text == "=":
            body = body[1:]
        if not body:
            raise NetlistSyntaxError(f".func {printable(texts[0], 60)} has no body "
                                     "expression", span, code="netlist-101")
        return FuncDef(texts[0].lower(), args, self.value_field(body), span)

    def include(self, name: str, i: int, head: _Tok) -> Directive:
        line = self.lines[i]
        rest_col = head.col + len(head.text)
        rest = line[rest_col:].split(";")[0].rstrip()
        col = rest_col + len(rest) - len(rest.lstrip())
        rest = rest.strip()
        span = self.span(head)
        if not rest:
            return Directive("include", (), span)
        if rest[0] in "\"'" and rest.find(rest[0], 1) < 0:
            raise NetlistSyntaxError("unterminated string", Span(self.source, i + 1, col + 1,
                                                                 i + 1, col + 2))
        if rest[0] in "\"'" and rest.find(rest[0], 1) > 0:
            end = rest.find(rest[0], 1) + 1
            parts = [(rest[:end], col, "string")]
            tail = rest[end:]
            if tail.strip():
                parts.append((tail.strip(), col + end + len(tail) - len(tail.lstrip()), "word"))
        else:
            words = rest.split()
            if name == "lib" and len(words) == 2:
                parts = [(words[0], col, "word"),
                         (words[1], col + rest.rindex(words[1]), "word")]
            else:
                parts = [(rest, col, "word")]
        fields = tuple(Field(kind, text, Span(self.source, i + 1, c + 1, i + 1,
                                              c + 1 + len(text))) for text, c, kind in parts)
        return Directive("lib" if name == "lib" else "include", fields, span)

    def section_line(self, i: int, name: str, keep: bool) -> tuple[int, bool]:
        """A ``.lib`` or ``.endl`` line in a file with sections."""
        toks = self.tokens([i])
        if name == "endl":
            self.lines[i] = ""
            return i + 1, self.section is None
        if len(toks) == 2 and toks[1].text[0] not in "\"'":  # .lib SECTION: a section head
            label = toks[1].text
            self.out.sections.append(Field("word", label, self.span(toks[1])))
            self.lines[i] = ""
            wanted = self.section is not None and label.lower() == self.section.lower()
            self.out.found_section |= wanted
            return i + 1, wanted
        if keep:  # .lib FILE SECTION inside the part being read
            self.out.statements.append(self.include("lib", i, toks[0]))
        self.lines[i] = ""
        return i + 1, keep

    # ---- element cards -------------------------------------------------------------
    def source_card(self, group: list[int]) -> None:
        """Blank the transient functions of a V or I card; ``DC(15)`` becomes ``DC 15``."""
        toks = self.tokens(group)
        k, n = 3, len(toks)
        name = toks[0].text
        while k < n:
            word = toks[k].text.lower()
            if word in SOURCE_FUNCTIONS:
                if k + 1 < n and toks[k + 1].text == "(":
                    m = _matching(toks, k + 1)
                    if m is None:
                        self.refuse(f"{printable(name, 80)}: {toks[k].text}( has no closing "
                                    "')'", self.span(toks[k + 1]), code="netlist-100")
                    end = m + 1
                else:
                    end = k + 1
                    while end < n and _is_value(toks[end].text) and not (
                            end + 1 < n and toks[end + 1].text == "="):
                        end += 1
                got = self.sources_seen.setdefault(word if word != "sine" else "sin",
                                                   [self.span(toks[k]), 0])
                got[1] += 1
                for t in toks[k:end]:
                    self.blank(t.line, t.col, t.col + len(t.text))
                k = end
            elif word == "dc" and k + 1 < n and toks[k + 1].text == "(":
                m = _matching(toks, k + 1)
                if m is None or m != k + 3:
                    self.refuse(f"{printable(name, 80)}: DC( takes one value, e.g. DC(15)",
                                self.span(toks[k + 1]), code="netlist-100")
                for t in (toks[k + 1], toks[m]):
                    self.blank(t.line, t.col, t.col + 1)
                k = m + 1
            elif word in "()":
                self.refuse(f"{printable(name, 80)}: unexpected {word!r} on a source card; "
                            "netcheck reads DC and AC values (DC 0 AC 1, AC 1 0, DC(15)) "
                            "and ignores the transient functions "
                            f"{', '.join(sorted(f.upper() for f in SOURCE_FUNCTIONS))}",
                            self.span(toks[k]), code="netlist-100")
            else:
                k += 1
        self.check_card(group)

    def check_card(self, group: list[int], toks: list[_Tok] | None = None) -> None:
        """Refuse, by name, what an element card holds that netcheck cannot solve."""
        toks = self.tokens(group) if toks is None else toks
        if not toks:
            return
        name = toks[0].text
        letter = name[0].upper()
        shown = printable(name, 80)
        for t in toks[1:]:
            if _PLACEHOLDER.match(t.text):
                self.refuse(f"{shown}: {quoted(t.text, 60)} is an optimiser's placeholder, "
                            "not a value: substitute the values (or .param names with "
                            ".param values) before checking", self.span(t))
        # POLY, LAPLACE and unbraced expression forms, made readable for the card reader
        edits = card_form_edits(toks) if letter in "EFGHB" else None
        for i, start, end, text in edits or ():
            self.lines[i] = self.lines[i][:start] + text + self.lines[i][end:]
        advice = device_advice(letter, name) if letter in "BSWAU" and not edits else None
        if advice is not None and any(t.text in "()" for t in toks):
            self.refuse(advice, self.span(toks[0]))
        if edits is not None:
            return
        if letter in "EFGHB":
            got = behavioural_refusal(name, [t.text for t in toks])
            if got is not None:
                k, message, code = got
                self.refuse(message, self.span(toks[k]), code=code)
        for t in toks[1:]:
            if t.text in "()":
                self.refuse(f"{shown}: unexpected {t.text!r}: netcheck cards take plain "
                            "fields; write expressions in braces, e.g. {2*(a+b)}", self.span(t), code="netlist-100")


def _split_braces(text: str) -> list[str]:
    """``text`` split around ``{…}`` groups (kept whole), so braces inside an unbraced
    ``.param`` value can be taken off."""
    out, pos = [], 0
    for m in re.finditer(r"\{[^{}]*\}", text):
        out += [text[pos:m.start()], m.group()]
        pos = m.end()
    out.append(text[pos:])
    return out


def _matching(toks: list[_Tok], k: int) -> int | None:
    depth = 0
    for m in range(k, len(toks)):
        if toks[m].text == "(":
            depth += 1
        elif toks[m].text == ")":
            depth -= 1
            if depth == 0:
                return m
    return None


def _is_value(text: str) -> bool:
    if text[0] in "{\"'" or text == ",":
        return True
    try:
        parse_quantity(text)
    except (UnitError, ValueError):
        return False
    return True


def prepare(source: SourceFile, text: str, section: str | None = None,
            allowed: int = 10**9) -> Prepared:
    """Pre-pass one file's text (its title line already blank): see the module doc.

    Raises
    ------
    NetlistSyntaxError
        netlist-120 for a construct netcheck does not solve, named with what would work
        instead; netlist-101 for a ``.param`` or ``.func`` that cannot be read.
    """
    return _Pass(source, text, section, allowed).run()
