"""Source files, spans and compiler-style caret formatting."""

from __future__ import annotations

import os
from dataclasses import dataclass, field
from pathlib import Path

__all__ = ["SourceFile", "Span", "format_caret", "read_text", "display_path"]


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
