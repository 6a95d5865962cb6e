"""Source files, spans, compiler-style caret formatting, and the one safe reader of user files.

Every file a user names (netlist, ``.include``, spec, variant table, earlier result) is read
through :func:`read_text` (or :meth:`SourceFile.read`, which wraps it for netlists).
Before anything is opened the path is ``stat``-ed and anything but a regular file is
refused (a FIFO would block forever, ``/dev/zero`` never ends); a file over
:data:`FILE_MAX_BYTES` is refused unread, and at most that many bytes plus one are ever
read (a file may grow while it is read). UTF-16 and UTF-32 text (a byte-order mark, or
NUL in every other byte) is refused with a message that says so; a UTF-8 byte-order
mark is dropped. Netlists must use LF or CR LF line ends: a
lone carriage return followed by more text on the line (classic Mac OS line ends) is
refused at its position, because the card grammar treats CR as a space and would
silently join the lines. These refusals carry code netlist-117.
"""

from __future__ import annotations

import os
import re
import stat
from array import array
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

__all__ = ["SourceFile", "Span", "format_caret", "read_text", "display_path", "printable",
           "quoted", "clip", "MESSAGE_MAX", "FILE_MAX_BYTES", "CARET_WINDOW", "UNUSABLE_CODE"]

#: the most characters of user text (a name, a line, a value) one message quotes
MESSAGE_MAX = 200
#: the largest input file netcheck reads, in bytes (a netlist, include, spec, table, earlier result)
FILE_MAX_BYTES = 16 * 2**20
#: the most characters of a source line shown above a caret (a window around the column)
CARET_WINDOW = 120
#: the code of an input file that cannot be used at all (not regular, too large, not text)
UNUSABLE_CODE = "netlist-117"

# C0 and C1 control characters except tab, and DEL: a terminal acts on them (colours,
# cursor moves, window titles), so text from an input file never reaches it raw
_CONTROL = {c: f"\\x{c:02x}" for c in (*range(0x00, 0x09), *range(0x0A, 0x20),
                                        *range(0x7F, 0xA0))}
# line and paragraph separators, and every bidirectional mark, embedding, override and
# isolate (Unicode Standard Annex #9): they reorder what a terminal shows
_CONTROL.update({c: f"\\u{c:04x}" for c in (0x061C, 0x200E, 0x200F, *range(0x2028, 0x202F),
                                             *range(0x2066, 0x206A))})


def clip(text: str, limit: int | None) -> str:
    """``text`` cut to ``limit`` characters, the cut marked with the count left out.

    Nothing is escaped (a renderer that escapes for its own format uses this); see
    :func:`printable` for text bound for a terminal or a message.

    >>> clip("Quillmere Instruments", 9), clip("rx40k", 9), clip("rx40k", None)
    ('Quillmere… (12 more characters)', 'rx40k', 'rx40k')
    """
    if limit is None or len(text) <= limit:
        return text
    return f"{text[:limit]}… ({len(text) - limit:,} more characters)"


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


def quoted(text: str, limit: int | None = MESSAGE_MAX) -> str:
    """``text`` in single quotes for a message, made :func:`printable` and bounded.

    >>> quoted("qm_buffer"), quoted("a" + chr(7))
    ("'qm_buffer'", "'a\\\\x07'")
    """
    return f"'{printable(text, limit)}'"


def _mib(size: int) -> str:
    return f"{size / 2**20:.1f} MiB"


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
    #: how the file was decoded: UTF-8, or Latin-1 for a file that is not UTF-8 text
    encoding: str = field(default="utf-8", compare=False)
    _starts: Any = field(default=None, init=False, repr=False, compare=False)

    @classmethod
    def read(cls, path: str | Path, shown: str | None = None, *, error: type[Exception],
             what: str = "netlist", code: str | None = None, at: "Span | None" = None
             ) -> "SourceFile":
        """Read a netlist file through :func:`read_text`.

        A file that is not UTF-8 text is read as Latin-1 (ISO 8859-1, where byte 0xB5 is
        the micro sign) and says so in :attr:`encoding`; everything else :func:`read_text`
        refuses is refused, and so are lone-CR line ends.

        Parameters
        ----------
        path : str or Path
            The file.
        shown : str, optional
            Display path (default: ``path`` as given).
        error : type
            The NetcheckError subclass to raise (the netlist stage's NetlistSyntaxError).
        what : str
            What the file is, for messages ("netlist", "included file").
        code : str, optional
            Code of a file that cannot be read at all (missing, no permission).
        at : Span, optional
            Where the file was named (an ``.include``): errors are placed there.
        """
        shown = str(path) if shown is None else shown
        text = read_text(path, error, what, errors="surrogateescape", code=code, at=at,
                         shown=shown, line_ends=True)
        if _ESCAPED.search(text):
            return cls(shown, text.encode("utf-8", "surrogateescape").decode("latin-1"),
                       "Latin-1")
        return cls(shown, text)

    def _line_starts(self) -> array:
        starts = self._starts
        if starts is None:
            starts, text = array("q", [0]), self.text
            i = text.find("\n")
            while i >= 0:
                starts.append(i + 1)
                i = text.find("\n", i + 1)
            object.__setattr__(self, "_starts", starts)
        return starts

    def line_text(self, line: int) -> str:
        """Return line ``line`` (1-based) without its newline, or ``""``.

        Lines end at ``\\n`` only, as the parser counts them (a form feed or a
        Unicode line separator inside a line does not start a new one).
        """
        starts = self._line_starts()
        if not 1 <= line <= len(starts):
            return ""
        end = starts[line] - 1 if line < len(starts) else len(self.text)
        return self.text[starts[line - 1]:end].removesuffix("\r")

    def span(self, line: int, column: int, end_column: int | None = None) -> "Span":
        """Make a one-line span in this file."""
        return Span(self, line, column, line, end_column if end_column else column + 1)


@dataclass(slots=True, unsafe_hash=True)
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

    Control characters in the line are shown escaped (:func:`printable`) and the caret
    stays under the character it marks; a line longer than :data:`CARET_WINDOW` is
    shown as a window around the column, cut ends marked ``…``.

    Examples
    --------
    >>> src = SourceFile("f.cir", "title\\nR1 a b 0\\n")
    >>> print(format_caret(src.span(2, 8)))
        R1 a b 0
               ^
    >>> line = "x" * 5000 + " 1kk " + "y" * 5000
    >>> top, caret = format_caret(SourceFile("g.cir", line).span(1, 5002, 5005)).split("\\n")
    >>> len(top) < 200, top[caret.index("^"):caret.rindex("^") + 1]
    (True, '1kk')
    """
    text = span.source.line_text(span.line)
    if not text.strip():
        return ""
    col = max(1, span.column)
    width = 1
    if span.end_line == span.line and span.end_column > span.column:
        width = span.end_column - span.column
    width = max(1, min(width, len(text) - col + 2))
    start, end = 0, len(text)
    if end > CARET_WINDOW:
        start = max(0, min(col - 1 - CARET_WINDOW // 2, len(text) - CARET_WINDOW))
        end = start + CARET_WINDOW
    cut = min(col - 1, end)
    before = _shown(text[start:cut])
    marked = _shown(text[cut:min(cut + width, end)])
    after = _shown(text[cut + len(text[cut:min(cut + width, end)]):end])
    left = "…" if start > 0 else ""
    right = "…" if end < len(text) else ""
    pad = " " * (len(left) + len(before))
    return f"    {left}{before}{marked}{after}{right}\n    {pad}{'^' * max(1, len(marked))}"


def _shown(text: str) -> str:
    """A piece of a source line as shown above a caret (tabs one space, controls escaped)."""
    return printable(text.expandtabs(1), None)


_ESCAPED = re.compile("[\udc80-\udcff]")
_LONE_CR = re.compile(r"\r[^\S\n]*\S")
_UTF8 = frozenset({"utf-8", "utf8", "utf-8-sig", "utf_8", "u8"})


def read_text(path: str | Path, error: type[Exception], what: str,
              encoding: str = "utf-8", *, errors: str = "strict", code: str | None = None,
              at: Span | None = None, shown: str | None = None, line_ends: bool = False,
              budget: int = FILE_MAX_BYTES) -> str:
    """Read a user file as text, safely; failures raise ``error(message, ...)``.

    Refused with code netlist-117 (:data:`UNUSABLE_CODE`), before anything is read where
    possible: anything but a regular file (FIFO, device, socket, folder); a file over
    ``budget`` bytes (at most ``budget + 1`` bytes are read, so a growing file is
    caught too); UTF-16 or UTF-32 text (with a message that says so).
    A file that cannot be opened, or (with ``errors="strict"``) is not valid in
    ``encoding``, is refused with ``code`` (default: the error class's own code), as
    before. A UTF-8 byte-order mark is dropped.

    Parameters
    ----------
    path : str or Path
        The file.
    error : type
        A :class:`netcheck.exceptions.NetcheckError` subclass (SpecError,
        BaselineError, NetlistSyntaxError...).
    what : str
        Names the file in messages ("spec", "earlier result", "netlist").
    encoding, errors : str
        How to decode (a UTF-8 variant unless there is a reason).
    code : str, optional
        Code for a file that cannot be opened or decoded.
    at : Span, optional
        Where the file was named (an ``.include`` directive): the error is placed
        there and its message names the file.
    shown : str, optional
        Display path (default: ``path`` as given).
    line_ends : bool
        Refuse a lone carriage return followed by more text on its line (classic Mac
        OS line ends), at its position in the file.
    budget : int
        The most bytes read.
    """
    shown = str(path) if shown is None else shown
    subject = f"{what} {quoted(shown, 400)}" if at is not None else what

    def fail(message: str, err_code: str | None, span: Span | None = at) -> Exception:
        return error(message, span, code=err_code, path=shown)

    try:
        info = os.stat(path)
    except OSError as err:
        raise fail(f"cannot read {subject}: {err.strerror or err}", code) from None
    except ValueError as err:  # a NUL byte in the path
        raise fail(f"cannot read {subject}: {err}", code) from None
    _check_regular(info.st_mode, subject, fail)
    if info.st_size > budget:
        raise fail(f"{subject} is {info.st_size:,} bytes ({_mib(info.st_size)}), over the "
                   f"budget of {budget:,} bytes ({_mib(budget)}) for one input file",
                   UNUSABLE_CODE) from None
    flags = os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOCTTY", 0) | \
        getattr(os, "O_CLOEXEC", 0)
    try:
        fd = os.open(path, flags)
    except OSError as err:
        raise fail(f"cannot read {subject}: {err.strerror or err}", code) from None
    try:
        # the path may have been replaced since the stat: judge what was opened
        _check_regular(os.fstat(fd).st_mode, subject, fail)
        chunks, got = [], 0
        while got <= budget:
            chunk = os.read(fd, min(budget + 1 - got, 2**20))
            if not chunk:
                break
            chunks.append(chunk)
            got += len(chunk)
    except OSError as err:
        raise fail(f"cannot read {subject}: {err.strerror or err}", code) from None
    finally:
        os.close(fd)
    if got > budget:
        raise fail(f"{subject} grew past the budget of {budget:,} bytes ({_mib(budget)}) "
                   "for one input file while it was read", UNUSABLE_CODE)
    text = _decode(b"".join(chunks), encoding, errors, subject, fail, code)
    if line_ends:
        match = _LONE_CR.search(text)
        if match:
            pos = match.start()
            line = text.count("\n", 0, pos) + 1
            col = pos - (text.rfind("\n", 0, pos) + 1) + 1
            raise fail(f"{subject if at is not None else what} has a lone carriage return "
                       "(CR) as a line end here (classic Mac OS line ends); netcheck reads "
                       "LF or CR LF line ends: convert the file's line ends",
                       UNUSABLE_CODE, SourceFile(shown, text).span(line, col))
    return text


_KINDS = ((stat.S_ISDIR, "a folder"), (stat.S_ISFIFO, "a FIFO (named pipe)"),
          (stat.S_ISCHR, "a character device"), (stat.S_ISBLK, "a block device"),
          (stat.S_ISSOCK, "a socket"))


def _check_regular(mode: int, subject: str, fail) -> None:
    if stat.S_ISREG(mode):
        return
    kind = next((name for test, name in _KINDS if test(mode)), "not a regular file")
    raise fail(f"{subject} is {kind}, not a regular file; netcheck reads regular files "
               "only", UNUSABLE_CODE)


def _decode(data: bytes, encoding: str, errors: str, subject: str, fail,
            code: str | None) -> str:
    if encoding.lower() in _UTF8:
        wide = _wide_encoding(data)
        if wide:
            raise fail(f"{subject} is {wide}; netcheck reads UTF-8: save it as UTF-8 "
                       "(or plain ASCII) text", UNUSABLE_CODE)
        if data.startswith(b"\xef\xbb\xbf"):
            data = data[3:]
    try:
        return data.decode(encoding, errors)
    except UnicodeDecodeError as err:
        raise fail(f"{subject} is not UTF-8 text ({err.reason} at byte {err.start})",
                   code) from None
    except LookupError:  # pragma: no cover - a caller's programming error
        raise


def _wide_encoding(data: bytes) -> str:
    """A description of ``data`` as UTF-16/32 text, or ``""`` if it does not look so."""
    if data[:4] in (b"\xff\xfe\x00\x00", b"\x00\x00\xfe\xff"):
        return "UTF-32 text (it starts with a UTF-32 byte-order mark)"
    if data[:2] in (b"\xff\xfe", b"\xfe\xff"):
        order = "little" if data[:1] == b"\xff" else "big"
        return f"UTF-16 text (it starts with a {order}-endian UTF-16 byte-order mark)"
    sample = data[:4096]
    pairs = len(sample) // 2
    if pairs:
        even, odd = sample[0:2 * pairs:2].count(0), sample[1:2 * pairs:2].count(0)
        if max(even, odd) >= 0.3 * pairs and min(even, odd) <= 0.1 * max(even, odd):
            order = "little" if odd > even else "big"
            return (f"UTF-16 text ({order}-endian without a byte-order mark: every other "
                    "byte is NUL)")
    return ""
