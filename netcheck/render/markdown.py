"""Markdown summary renderer for CI job summaries and merge-request comments.

Layout (GitHub-flavoured Markdown tables; every status is a word, never a colour):

1. ``## ✗ <what the run found>`` (:func:`netcheck.render.findings.run_headline`: the
   limits missed of those judged and the worst of them) and one sentence with the spec
   and limit counts;
2. for each family (several specs sharing a spec file, told apart by ``variant``) a matrix
   of variants × limit names whose cells read ``PASS +0.420 dB``;
3. for each spec a ``###`` section headed by its title and what it found
   (:func:`~netcheck.render.findings.spec_headline`): an error block when it could not
   be checked, and a
   table (status, limit, measured, allowed, margin, at), most severe first (errors,
   failures, skipped, passed; spec order within each), then notes for limits that carry
   a message;
4. the cautions, each written once as ``path:line:col: severity code: message`` (the
   form of the terminal and the JUnit output), naming the specs they came from unless every spec
   has it; when some spec carries a hazard caution (:func:`netcheck.result.hazard_warranted`),
   the hazardous-voltage caution closes the summary, once, as a quoted paragraph.

Text that comes from the user's files (titles, names, paths, messages) goes through
:func:`md_text`, which backslash-escapes Markdown punctuation (``|`` included, so
table cells stay intact), folds line breaks and shows control characters as ``\\xNN``.
It is bounded too: names and titles to :data:`~netcheck.render.NAME_SHOWN_MAX`
characters (:func:`md_name`), anything else to :data:`~netcheck.render.TEXT_SHOWN_MAX`,
each cut marked with the count left out. A spec that could not be loaded has no
netlist, and its section says so instead of naming one.
"""

from __future__ import annotations

from typing import IO

from ..result import (HAZARD_CAUTION, Caution, CheckResult, LimitResult, SpecResult, Status,
                      hazard_warranted)
from ..netlist.source import clip
from . import NAME_SHOWN_MAX, TEXT_SHOWN_MAX, RenderOptions
from ..netlist.source import display_path
from .findings import MARK, caution_line, row_name, run_headline, spec_headline

__all__ = ["render", "md_text", "md_name"]

# Punctuation that opens or closes inline Markdown anywhere in a line: code, emphasis,
# links/images, raw HTML, entities, GFM strikethrough and table cells, math. CommonMark
# §2.4 allows a backslash before any ASCII punctuation, so escaping is always safe; the
# block markers (``#``, ``-``, ``>``...) only act at the start of a line, where user
# text never stands in this layout.
_SPECIAL = frozenset("\\`*_[]<>|~&$")

# line separators and bidirectional embeddings, overrides and isolates: shown as escapes,
# so what the summary shows is what is in the file (a terminal given ``--summary-md -``
# or a rendered page cannot reorder it)
_INVISIBLE = frozenset("\u2028\u2029\u202a\u202b\u202c\u202d\u202e\u2066\u2067\u2068\u2069")

def md_text(value: object, limit: int | None = TEXT_SHOWN_MAX) -> str:
    r"""``value`` as inline Markdown text that renders exactly as written.

    Cut to ``limit`` characters first (the cut marked with the count left out).

    Examples
    --------
    >>> md_text("a|b *c*")
    'a\\|b \\*c\\*'
    >>> md_text("two\nlines\x1b")
    'two lines\\x1b'
    >>> md_text("Quillmere_Instruments", 9)
    'Quillmere… (12 more characters)'
    """
    out = []
    for ch in clip(str(value), limit):
        if ch in "\r\n":
            out.append(" ")
        elif ch in _SPECIAL:
            out.append("\\" + ch)
        elif ch == "\t":
            out.append(" ")
        elif ord(ch) < 0x20 or 0x7f <= ord(ch) < 0xa0:
            out.append(f"\\x{ord(ch):02x}")
        elif 0xd800 <= ord(ch) < 0xe000 or ch in _INVISIBLE:
            out.append(f"\\u{ord(ch):04x}")
        else:
            out.append(ch)
    return "".join(out)


def md_name(value: object) -> str:
    """A name or title (a spec's label, a limit's or variant's name) as :func:`md_text`
    shows it, cut at :data:`~netcheck.render.NAME_SHOWN_MAX` characters."""
    return md_text(value, NAME_SHOWN_MAX)


def _fenced(text: str) -> list[str]:
    """``text`` as a fenced code block whose fence no backtick run inside can close."""
    longest = run = 0
    for ch in text:
        run = run + 1 if ch == "`" else 0
        longest = max(longest, run)
    fence = "`" * max(3, longest + 1)
    body = "".join(f"\\x{ord(c):02x}" if (ord(c) < 0x20 and c not in "\n\t")
                   or 0x7f <= ord(c) < 0xa0 else f"\\u{ord(c):04x}" if c in _INVISIBLE else c
                   for c in text.rstrip("\n"))
    return [fence + "text", body, fence]


def _row(cells: list[str]) -> str:
    return "| " + " | ".join(cells) + " |"


def _limit_row(lim: LimitResult) -> str:
    fig = lim.figures  # as many figures as tell the bounds and the value apart
    return _row([lim.status.word, md_name(row_name(lim)), fig.measured, fig.bound, fig.margin,
                 fig.at or "—"])


def _spec_section(spec: SpecResult) -> list[str]:
    shown = md_text(display_path(spec.spec))
    files = (f"Spec {shown}, netlist {md_text(display_path(spec.netlist))}." if spec.netlist
             else f"Spec {shown}; netlist unknown (spec not loaded).")
    lines = [f"### {MARK[spec.status]} {md_name(spec.label)} — {md_text(spec_headline(spec))}",
             "", files, ""]
    if spec.error is not None:
        lines += ["Could not be checked:", ""] + _fenced(spec.error) + [""]
    if spec.limits:
        lines.append(_row(["Status", "Limit", "Measured", "Allowed", "Margin", "At"]))
        lines.append("|---|---|---:|---|---:|---:|")
        ordered = sorted(spec.limits, key=lambda lim: (-lim.status.rank, lim.index))
        lines += [_limit_row(lim) for lim in ordered]
        lines.append("")
        # a tolerance verdict says what decided it (and a yield its interval) even when
        # met, and so does a gain at the numerical floor and a value stated against a
        # measured level
        notes = [lim for lim in ordered if lim.message and (
            lim.status is not Status.PASS or lim.kind in ("yield", "worst_case")
            or lim.below_floor or lim.reference_db is not None)]
        if notes:
            lines += [f"- {lim.status.word} {md_name(lim.name)}: {md_text(lim.message)}"
                      for lim in notes]
            lines.append("")
    return lines


def _cell(found: list[LimitResult]) -> str:
    if not found:
        return "—"
    parts = []
    for lim in found:
        margin = "" if lim.margin is None else " " + lim.figures.margin
        parts.append(lim.status.word + margin)
    return "; ".join(parts)


def _families(result: CheckResult) -> list[tuple[str, list[SpecResult]]]:
    groups: dict[str, list[SpecResult]] = {}
    for spec in result.specs:
        groups.setdefault(spec.spec, []).append(spec)
    out = []
    for path, members in groups.items():
        variants = {m.variant for m in members if m.variant is not None}
        if len(variants) >= 2:
            out.append((path, members))
    return out


def _matrix(path: str, members: list[SpecResult]) -> list[str]:
    names: list[str] = []
    for spec in members:
        for lim in spec.limits:
            if lim.name not in names:
                names.append(lim.name)
    lines = [f"### Family: {md_text(path)}", "",
             _row(["Variant", "Verdict"] + [md_name(n) for n in names]),
             "|---|---|" + "---:|" * len(names)]
    for spec in members:
        cells = [_cell([lim for lim in spec.limits if lim.name == n]) for n in names]
        variant = "—" if spec.variant is None else md_name(spec.variant)
        lines.append(_row([variant, spec.status.word] + cells))
    return lines + [""]


def _cautions(result: CheckResult) -> list[str]:
    found: dict[Caution, list[str]] = {}
    for caution in result.cautions:
        found.setdefault(caution, [])
    for spec in result.specs:
        for caution in spec.cautions:
            labels = found.setdefault(caution, [])
            if spec.label not in labels:
                labels.append(spec.label)
    everyone = {spec.label for spec in result.specs}
    items = []
    for caution, labels in found.items():
        text = f"- {md_text(caution_line(caution))}"
        if labels and set(labels) != everyone:
            text += " (" + "; ".join(md_name(label) for label in labels) + ")"
        items.append(text)
    lines = ["## Cautions", ""] + items + [""] if items else []
    if hazard_warranted(result.specs):  # once per document, only when a result warrants it
        lines += [f"> Caution: {md_text(HAZARD_CAUTION)}", ""]
    return lines


def _tally(counts: dict[Status, int]) -> str:
    """``2 PASS, 1 FAIL, 0 ERROR`` (SKIP only when there is one)."""
    shown = [Status.PASS, Status.FAIL, Status.ERROR]
    if counts.get(Status.SKIPPED):
        shown.append(Status.SKIPPED)
    return ", ".join(f"{counts.get(s, 0)} {s.word}" for s in shown)


def _headline(result: CheckResult) -> list[str]:
    status = result.status
    specs = len(result.specs)
    by_spec = {s: sum(1 for spec in result.specs if spec.status is s) for s in Status}
    by_limit = {s: result.counts[s.value] for s in Status}
    limits = sum(by_limit.values())
    sentence = (f"{specs} spec{'s' if specs != 1 else ''} checked: {_tally(by_spec)}. "
                f"{limits} limit{'s' if limits != 1 else ''}: {_tally(by_limit)}.")
    stamp = f"netcheck {md_text(result.tool_version)}"
    if result.created_utc:
        stamp += f", {md_text(result.created_utc)}"
    return [f"## {MARK[status]} {md_text(run_headline(result))}", "", sentence, "",
            f"_{stamp}_", ""]


def render(result: CheckResult, stream: IO[str], options: RenderOptions) -> None:
    """Write ``result`` to ``stream`` as a Markdown summary.

    Parameters
    ----------
    result : CheckResult
        The judged run; nothing is recomputed.
    stream : IO[str]
        Text stream to write to.
    options : RenderOptions
        Unused; accepted for the common renderer signature.
    """
    lines = _headline(result)
    for path, members in _families(result):
        lines += _matrix(path, members)
    for spec in result.specs:
        lines += _spec_section(spec)
    lines += _cautions(result)
    while lines and lines[-1] == "":
        lines.pop()
    stream.write("\n".join(lines) + "\n")
