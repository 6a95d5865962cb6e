"""The unit of work, :class:`Job`, and a variants CSV table read into jobs, one a row."""

from __future__ import annotations

import csv
import hashlib
import io
from collections import Counter
from dataclasses import dataclass
from pathlib import Path
from typing import Iterable

from ..exceptions import NetcheckError, SpecError
from ..netlist.source import printable
from ..netlist.units import UnitError, parse_value

__all__ = ["Job", "read_variant_table", "MAX_VARIANT_ROWS", "variant_error", "shown_names"]

#: Budget (spec-205, docs/spec-format.md#budgets): rows of one variants table
MAX_VARIANT_ROWS = 100_000


@dataclass(frozen=True, slots=True)
class Job:
    """One unit of work: a spec, optionally one variant of it.

    A variant from a CSV table carries its own row, not the table: ``row`` (the line
    it starts on), ``row_text`` (the header line and its own lines, as written) and the
    SHA-256 of the whole table, computed once for all its rows.
    """

    spec: str
    variant: str | None = None
    overrides: tuple[tuple[str, float], ...] = ()
    netlist: str | None = None
    table: str | None = None
    design_root: str | None = None
    row: int | None = None
    row_text: str = ""
    table_sha256: str = ""
    allow_negative: bool = False
    #: store exactly evaluated plot points with the curves (only a PDF draws them)
    plot_detail: bool = True


def variant_error(path: str, where: str, message: str, code: str = "spec-202") -> SpecError:
    """A SpecError in the spec at ``path``, placed at the key ``where`` of its variants."""
    return SpecError(f"{where}: {message}", code=code, path=path, where=where)


def shown_names(names: list[str], most: int = 10) -> str:
    """Names for a message: each bounded, at most ``most`` of them."""
    shown = ", ".join(printable(n, 60) for n in names[:most])
    return shown + (f" and {len(names) - most} more" if len(names) > most else "")


def _read_table_text(spec_path: str, csv_path: Path) -> str:
    """The table's text, through the guarded reader; a clear error naming the file."""
    from ..netlist.source import read_text

    try:
        text = read_text(csv_path, SpecError, "variants table")
    except NetcheckError as err:
        hint = ("; save the table as UTF-8 (a spreadsheet's 'CSV UTF-8' format, or "
                "iconv -f latin1 -t utf-8)") if "not UTF-8 text" in err.message else ""
        raise variant_error(spec_path, "variants.table", f"{csv_path}: {err.message}{hint}",
                            code=err.code if err.code != "spec-200" else "spec-202") from None
    return text.removeprefix("\ufeff")  # the byte-order mark spreadsheets write


def read_variant_table(spec_path: str, csv_path: str | Path,
                       design_root: str | None = None) -> list[Job]:
    """One Job per row of a variants CSV table (header ``name,<param>,...``).

    The table is read through :func:`netcheck.netlist.source.read_text` (a regular file within
    the size budget, UTF-8); each job keeps its own row and the table's SHA-256, so
    memory stays linear in the number of rows.

    Raises
    ------
    SpecError
        At ``variants.table``, naming the file and its line: unreadable or not UTF-8,
        a bad header or cell, a field over csv's size limit, more than
        :data:`MAX_VARIANT_ROWS` rows (spec-205).
    """
    csv_path = Path(csv_path)
    text = _read_table_text(spec_path, csv_path)
    digest = hashlib.sha256(text.encode("utf-8")).hexdigest()
    fail = lambda line, msg, code="spec-202": variant_error(  # noqa: E731
        spec_path, "variants.table", f"{csv_path}:{line}: {msg}", code)
    seen: list[str] = []

    def lines() -> Iterable[str]:
        for line in io.StringIO(text, newline=""):
            seen.append(line)
            yield line

    reader = csv.reader(lines(), strict=True)  # a stray quote is an error, not a merge
    header: list[str] | None = None
    header_text = ""
    jobs: list[Job] = []
    line = 0
    while True:
        first = reader.line_num + 1
        seen.clear()
        try:
            row = next(reader)
        except StopIteration:
            break
        except csv.Error as err:
            raise fail(reader.line_num or first, f"not readable as CSV ({err}); a cell over "
                       f"{csv.field_size_limit() // 1024} KiB or a stray quote or NUL "
                       "character is not a table of parameter values") from None
        line = first
        if not any(c.strip() for c in row):
            continue
        raw = "".join(seen).rstrip("\r\n")
        if header is None:
            header = [h.strip() for h in row]
            header_text = raw
            if header[0].lower() != "name" or len(header) < 2:
                raise fail(line, "header must be name,<param>,<param>...")
            params = [h.lower() for h in header[1:]]
            twice = sorted(k for k, n in Counter(params).items() if n > 1)
            if "" in params or twice:
                raise fail(line, "every column after name needs its own parameter name"
                           + (f"; repeated: {shown_names(twice)}" if twice else ""))
            continue
        if len(jobs) >= MAX_VARIANT_ROWS:
            raise fail(line, f"more than {MAX_VARIANT_ROWS:,} variant rows, over the budget "
                       f"of {MAX_VARIANT_ROWS:,} rows a table; split the family", "spec-205")
        if len(row) != len(header):
            raise fail(line, f"{len(row)} fields, header has {len(header)}")
        name = row[0].strip()
        if not name:
            raise fail(line, "the variant has no name (first column)")
        values = []
        for key, cell in zip(header[1:], row[1:]):
            try:
                values.append((key.lower(), parse_value(cell.strip(), key)))
            except UnitError as err:
                raise fail(line, str(err)) from None
        jobs.append(Job(spec_path, name, tuple(values), table=str(csv_path),
                        design_root=design_root, row=line,
                        row_text=f"{header_text}\n{raw}", table_sha256=digest))
    if header is None:
        raise fail(1, "header must be name,<param>,<param>... (the table is empty)")
    return jobs
