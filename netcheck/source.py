"""Source files, spans and compiler-style caret formatting."""

from __future__ import annotations

import os
from dataclasses import dataclass, field
from pathlib import Path

__all__ = ["SourceFile", "Span", "format_caret", "read_text", "display_path", "printable",
           "MESSAGE_MAX"]

#: the most characters of user text (a name, a line, a value) one message quotes
MESSAGE_MAX = 200

# C0 and C1 control characters except tab, and DEL: a terminal acts on them (colours,
# cursor moves, window titles), so text from an input file never reaches it raw
_CONTROL = {c: f"\\x{c:02x}" for c in (*range(0x00, 0x09), *range(0x0A, 0x20),
                                        *range(0x7F, 0xA0))}
_CONTROL.update({0x2028: "\\u2028", 0x2029: "\\u2029", 0x202E: "\\u202e",
                 0x202D: "\\u202d", 0x2066: "\\u2066", 0x2067: "\\u2067",
                 0x2068: "\\u2068", 0x2069: "\\u2069"})


def printable(text: str, limit: int | None = MESSAGE_MAX) -> str:
    """``text`` made safe to print: control characters escaped, cut to ``limit`` characters.

    Text from netlists and specs (names, titles, source lines) is quoted in messages
    and on the terminal; an escape sequence in it must not act on the terminal, and a
    50 MB line must not become a 50 MB message. Bidirectional overrides are escaped
    too, so what is shown is what is in the file. A cut is marked with the number of
    characters left out.

    >>> print(printable("R1" + chr(27) + "[2J a b 1k"))
    R1\\x1b[2J a b 1k
    >>> printable("x" * 30, limit=10)
    'xxxxxxxxxx… (20 more characters)'
    """
    extra = 0
    if limit is not None and len(text) > limit:
        text, extra = text[:limit], len(text) - limit
    text = text.translate(_CONTROL)
    return f"{text}… ({extra} more characters)" if extra else text


def display_path(path: str) -> str:
    """A path as reports and notes show it (normalised; empty stays empty).

    >>> display_path("specs/../sample_netlists/rx40k.cir"), display_path("")
    ('sample_netlists/rx40k.cir', '')
    """
    return os.path.normpath(path) if path else path


@dataclass(frozen=True, slots=True)
class SourceFile:
    """The text of one input file, kept so errors can quote their line.

    Parameters
    ----------
    path : str
        Display path (as the user gave it, or ``"<text>"``).
    text : str
        Full file contents.
    """

    path: str
    text: str = field(repr=False)

    @classmethod
    def read(cls, path: str | Path) -> "SourceFile":
        """Read a file as UTF-8 (undecodable bytes are replaced, never fatal)."""
        data = Path(path).read_bytes()
        return cls(str(path), data.decode("utf-8", errors="replace"))

    def line_text(self, line: int) -> str:
        """Return line ``line`` (1-based) without its newline, or ``""``.

        Lines end at ``\\n`` only, as the parser counts them (a form feed or a
        Unicode line separator inside a line does not start a new one).
        """
        lines = self.text.split("\n")
        if 1 <= line <= len(lines):
            return lines[line - 1].removesuffix("\r")
        return ""

    def span(self, line: int, column: int, end_column: int | None = None) -> "Span":
        """Make a one-line span in this file."""
        return Span(self, line, column, line, end_column if end_column else column + 1)


@dataclass(frozen=True, slots=True)
class Span:
    """A region of a source file: 1-based line and column, end exclusive."""

    source: SourceFile
    line: int
    column: int
    end_line: int
    end_column: int

    @property
    def path(self) -> str:
        """Display path of the file the span is in."""
        return self.source.path

    def __str__(self) -> str:
        return f"{self.source.path}:{self.line}:{self.column}"

    def __repr__(self) -> str:
        return f"Span({self.source.path!r}, {self.line}, {self.column})"


def format_caret(span: Span) -> str:
    """Return the source line of ``span`` and a caret line under it.

    Examples
    --------
    >>> src = SourceFile("f.cir", "title\\nR1 a b 0\\n")
    >>> print(format_caret(src.span(2, 8)))
        R1 a b 0
               ^
    """
    text = span.source.line_text(span.line).expandtabs(1)
    if not text.strip():
        return ""
    width = 1
    if span.end_line == span.line and span.end_column > span.column:
        width = span.end_column - span.column
    width = max(1, min(width, len(text) - span.column + 2))
    pad = " " * (span.column - 1)
    return f"    {text}\n    {pad}{'^' * width}"


def read_text(path: str | Path, error: type[Exception], what: str,
              encoding: str = "utf-8") -> str:
    """Read a user file strictly as text; failures raise ``error(message, path=...)``.

    ``error`` is a :class:`netcheck.exceptions.NetcheckError` subclass; ``what`` names
    the file in messages ("spec", "baseline").
    """
    shown = str(path)
    try:
        data = Path(path).read_bytes()
    except OSError as err:
        raise error(f"cannot read {what}: {err.strerror or err}", path=shown) from None
    try:
        return data.decode(encoding)
    except UnicodeDecodeError as err:
        raise error(f"{what} is not UTF-8 text ({err.reason} at byte {err.start})",
                    path=shown) from None
