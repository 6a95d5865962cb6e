"""Terminal table: one compact, aligned table per spec, failures first, then the run's headline."""

from __future__ import annotations

from typing import IO, Any

from ..result import (HAZARD_CAUTION, MODEL_STATEMENT, Caution, CheckResult, LimitResult,
                      SpecResult, Status, hazard_warranted)
from ..netlist.source import MESSAGE_MAX, display_path, printable
from .findings import MARK, caution_line, row_name, run_headline, spec_headline

__all__ = ["render", "LINE_MAX", "ERROR_LINES_MAX"]

#: the most characters of one printed line made of user text (a message, an error line)
LINE_MAX = 1000
#: the most lines of one error message shown in the table (the rest are counted)
ERROR_LINES_MAX = 40

_COLOURS = {Status.PASS: "32", Status.FAIL: "31;1", Status.ERROR: "35;1", Status.SKIPPED: "33"}
_MARK = {Status.PASS: " ", Status.FAIL: "✗", Status.ERROR: "!", Status.SKIPPED: "-"}
#: row kinds whose message is shown whatever their status
_SAYS_HOW = ("yield", "worst_case")


def _clean(text: str, limit: int = MESSAGE_MAX) -> str:
    """``text`` with control characters (and bidirectional overrides) shown as escapes,
    so a title or a message from an input file cannot move the cursor, colour the
    terminal or reorder what is shown; cut to ``limit`` characters."""
    return printable(text, limit)


def _lines(text: str) -> list[str]:
    """A multi-line message from an input, each line made safe, at most ERROR_LINES_MAX."""
    lines = text.split("\n")  # only newlines break lines; other separators are escaped
    out = [_clean(ln, LINE_MAX) for ln in lines[:ERROR_LINES_MAX]]
    if len(lines) > ERROR_LINES_MAX:
        out.append(f"… ({len(lines) - ERROR_LINES_MAX} more lines)")
    return out


def _paint(text: str, status: Status, color: bool) -> str:
    return f"\x1b[{_COLOURS[status]}m{text}\x1b[0m" if color else text


def _row(lim: LimitResult) -> list[str]:
    fig = lim.figures  # as many figures as tell the bounds and the value apart
    return [_MARK[lim.status], lim.status.word, _clean(row_name(lim)), fig.measured, fig.bound,
            fig.margin, fig.at]


def _says_why(lim: LimitResult) -> bool:
    """Whether the row's message is shown under it whatever its status: an error says
    why, a tolerance verdict what decided it, a gain at the numerical floor what it is,
    a value stated against a measured level what that level is."""
    return bool(lim.message) and (lim.status is Status.ERROR or lim.kind in _SAYS_HOW
                                  or lim.below_floor or lim.reference_db is not None)


def _order(limits: tuple[LimitResult, ...]) -> list[LimitResult]:
    return sorted(limits, key=lambda r: (-r.status.rank, r.index))


def _spec_block(s: SpecResult, color: bool) -> list[str]:
    head = (f"{_paint(MARK[s.status], s.status, color)} {_clean(s.label)} — "
            f"{_paint(_clean(spec_headline(s)), s.status, color)}  "
            f"({_clean(display_path(s.spec))})")
    lines = [head]
    if s.error:
        lines += ["    " + ln for ln in _lines(s.error)]
        return lines
    rows = [["", "", "limit", "measured", "allowed", "margin", "at"]]
    rows += [_row(lim) for lim in _order(s.limits)]
    widths = [max(len(r[i]) for r in rows) for i in range(len(rows[0]))]
    for k, r in enumerate(rows):
        cells = [c.ljust(w) if i in (0, 1, 2) else c.rjust(w) for i, (c, w) in
                 enumerate(zip(r, widths))]
        text = "  " + "  ".join(cells).rstrip()
        if k > 0:
            lim = _order(s.limits)[k - 1]
            text = _paint(text, lim.status, color) if lim.status is not Status.PASS else text
            # an error says why; a tolerance verdict what decided it (yield: of how many
            # samples, with its interval; worst case: the corners or the linear estimate)
            if _says_why(lim):
                text += "".join("\n      " + ln for ln in _lines(lim.message))
        lines.append(text)
    lines += _cautions(s.cautions)
    return lines


def _cautions(cautions: tuple[Caution, ...]) -> list[str]:
    out = []
    for c in cautions:
        out.append(_clean(f"  {caution_line(c)}", LINE_MAX))
    return out


def _families(result: CheckResult) -> dict[str, list[SpecResult]]:
    groups: dict[str, list[SpecResult]] = {}
    for s in result.specs:
        if s.variant is not None:
            groups.setdefault(s.spec, []).append(s)
    return {k: v for k, v in groups.items() if len(v) > 1}


def _family_block(path: str, members: list[SpecResult]) -> list[str]:
    """Variants × limits matrix of margins, with the verdict in words in every cell."""
    names = list(dict.fromkeys(lim.name for s in members for lim in s.limits))
    header = ["variant", "status"] + [_clean(n) for n in names]
    rows = [header]
    for s in members:
        by = {lim.name: lim for lim in s.limits}
        cells = [_clean(s.variant or ""), s.status.word]
        for n in names:
            lim = by.get(n)
            if lim is None:
                cells.append("—")
            elif lim.margin is None:
                cells.append(lim.status.word)
            else:
                cells.append(f"{lim.status.word} {lim.figures.margin}")
        if s.error:
            cells += ["(not checked)"] * (len(header) - len(cells))
        rows.append(cells)
    widths = [max(len(r[i]) if i < len(r) else 0 for r in rows) for i in range(len(header))]
    out = [f"family {_clean(path)}: {len(members)} variants, margins per limit"]
    for r in rows:
        out.append("  " + "  ".join(c.ljust(w) for c, w in zip(r, widths)).rstrip())
    return out


def render(result: CheckResult, stream: IO[str], options: Any = None) -> None:
    """Write the terminal report of ``result`` to ``stream``."""
    color = bool(getattr(options, "color", False))
    verbose = bool(getattr(options, "verbose", False))
    quiet = bool(getattr(options, "quiet", False))  # only what did not pass, and the summary
    for s in result.specs:
        if not (quiet and s.status is Status.PASS):
            stream.write("\n".join(_spec_block(s, color)) + "\n\n")
    for path, members in _families(result).items():
        if not (quiet and all(m.status is Status.PASS for m in members)):
            stream.write("\n".join(_family_block(path, members)) + "\n\n")
    run_wide = _cautions(result.cautions)
    if verbose:  # the general statement, once, only when asked for
        run_wide.append(_clean(f"Note: {MODEL_STATEMENT}", LINE_MAX))
    if run_wide:
        stream.write("\n".join(run_wide) + "\n\n")
    if hazard_warranted(result.specs):  # once per run, only when a result warrants it
        stream.write(f"Caution: {HAZARD_CAUTION}\n\n")
    status = result.status
    stream.write(f"{_paint(MARK[status], status, color)} "
                 f"{_paint(_clean(run_headline(result), LINE_MAX), status, color)}\n")
