"""What a result found, in the words every output uses: the headline of a spec and of
a run, the worst limit, and where a caution points.

Headlines say what was found, not only a verdict word::

    3 of 4 limits missed; worst: resonance: bandwidth -6.924 kHz
    all 4 limits met
    12 specs: 3 of 59 limits missed (worst: resonance: bandwidth -6.924 kHz in specs/a.toml)

**The worst limit** of a spec or a run is the missed limit that is furthest outside
its bound *relative to the bound*, so that margins in different units can be ranked
(:func:`shortfall`): a margin divided by the allowed span ``upper - lower`` for a
two-sided limit, by the magnitude of the bound for a one-sided one (by 1, the margin
as it stands, when that bound is zero). A limit that could not be measured ranks worse
than any margin; a missed limit without a margin ranks after those and before every
margin. Ties go to the first limit in spec order.

A limit's name in a headline is cut to :data:`~netcheck.render.NAME_SHOWN_MAX` characters.

**A location** is written as the diagnostics print theirs: ``path:line:col: severity
code: message``, with the path normalised (``specs/../sample_netlists/x.cir`` →
``sample_netlists/x.cir``, :func:`netcheck.netlist.source.display_path`, as the PDF
report and SARIF show paths); an absolute path stays absolute, as it was given.
"""

from __future__ import annotations

import math

from ..netlist.source import clip, display_path
from ..result import Caution, CheckResult, LimitResult, SpecResult, Status
from . import NAME_SHOWN_MAX

__all__ = ["row_name", "shortfall", "worst_limit", "spec_headline", "run_headline", "location",
           "caution_line", "MARK"]

#: the symbol before a spec's or the run's headline (never colour alone)
MARK = {Status.PASS: "✓", Status.FAIL: "✗", Status.ERROR: "!", Status.SKIPPED: "-"}


def row_name(lim: LimitResult) -> str:
    """A limit row's name as the reports list it: with the output it judged in brackets
    in a spec with named outputs (``low channel stop-band [low]``), else the name."""
    return f"{lim.name} [{lim.output}]" if lim.output else lim.name


def _plural(n: int, word: str) -> str:
    return f"{n} {word}{'s' if n != 1 else ''}"


def shortfall(lim: LimitResult) -> float:
    """How far ``lim`` is outside its bound, relative to the bound (negative: outside).

    ``margin / (upper - lower)`` for a two-sided limit, ``margin / |bound|`` for a
    one-sided one, the plain margin when that scale is zero or not finite. ``-inf`` for
    a limit that could not be measured or has no margin (so it ranks worst).
    """
    if lim.status is Status.ERROR or lim.margin is None or math.isnan(lim.margin):
        return -math.inf
    lo, hi = lim.lower, lim.upper
    if lo is not None and hi is not None:
        scale = hi - lo
    else:
        bound = lo if lo is not None else hi
        scale = abs(bound) if bound is not None else 1.0
    if not math.isfinite(scale) or scale <= 0:
        scale = 1.0
    return lim.margin / scale


def _rank(lim: LimitResult) -> tuple[int, float]:
    """Sort key, smallest = worst: unmeasured, then missed without margin, then by shortfall."""
    if lim.status is Status.ERROR:
        return (0, 0.0)
    if lim.margin is None or math.isnan(lim.margin):
        return (1, 0.0)
    return (2, shortfall(lim))


def worst_limit(limits) -> LimitResult | None:
    """The worst of the missed or unmeasured ``limits`` (see the module notes), or None
    when every limit was met or not applicable."""
    bad = [lim for lim in limits if lim.status in (Status.FAIL, Status.ERROR)]
    if not bad:
        return None
    return min(bad, key=_rank)  # min keeps the first of equals


def _worst_text(lim: LimitResult) -> str:
    name = clip(lim.name, NAME_SHOWN_MAX)  # a headline stays a line, whatever the name
    if lim.status is Status.ERROR:
        return f"{name} could not be measured"
    if lim.margin is None:
        return f"{name} missed"
    return f"{name} {lim.figures.margin}"


def _tally(counts: dict[str, int]) -> str:
    """``3 of 4 limits missed``, ``1 of 4 limits could not be measured``, ``all 4 limits
    met``, with ``, 1 could not be measured`` when both kinds are there."""
    judged = counts["pass"] + counts["fail"] + counts["error"]
    if not counts["fail"] and not counts["error"]:
        if judged == 0:
            return "no limits judged"
        return {1: "1 limit met", 2: "both limits met"}.get(judged, f"all {judged} limits met")
    limits = "limit" if judged == 1 else "limits"
    if counts["fail"]:
        text = f"{counts['fail']} of {judged} {limits} missed"
        if counts["error"]:
            text += f", {counts['error']} could not be measured"
        return text
    return f"{counts['error']} of {judged} {limits} could not be measured"


def spec_headline(s: SpecResult) -> str:
    """What one spec result found: ``3 of 4 limits missed; worst: resonance: bandwidth
    -6.924 kHz``, ``all 4 limits met``, ``not checked`` (its error follows it)."""
    if s.error:
        return "not checked"
    counts = s.counts
    text = _tally(counts)
    worst = worst_limit(s.limits)
    if worst is not None and counts["fail"] + counts["error"] > 1:
        text += f"; worst: {_worst_text(worst)}"
    elif worst is not None:
        text += f" ({_worst_text(worst)})"
    if counts["skipped"]:
        text += f"; {counts['skipped']} not applicable"
    return text


def run_headline(result: CheckResult) -> str:
    """What the whole run found: ``12 specs: all 59 limits met`` or ``12 specs: 3 of 59
    limits missed (worst: resonance: bandwidth -6.924 kHz in specs/a.toml)``, then the
    limits not applicable and the specs not checked when there are any."""
    counts = result.counts
    text = f"{_plural(len(result.specs), 'spec')}: {_tally(counts)}"
    worst, where = None, None
    for s in result.specs:
        w = worst_limit(s.limits)
        if w is not None and (worst is None or _rank(w) < _rank(worst)):
            worst, where = w, s
    if worst is not None and where is not None:
        several = counts["fail"] + counts["error"] > 1
        text += f" ({'worst: ' if several else ''}{_worst_text(worst)} in " \
                f"{display_path(where.spec)}"
        text += f" [{clip(where.variant, NAME_SHOWN_MAX)}])" if where.variant else ")"
    if counts["skipped"]:
        text += f"; {counts['skipped']} not applicable"
    not_checked = sum(1 for s in result.specs if s.error)
    if not_checked:
        text += f"; {_plural(not_checked, 'spec')} not checked"
    return text


def location(path: str | None, line: int | None = None, column: int | None = None) -> str:
    """``path:line:col`` (as far as known), the path normalised; '' without a path."""
    if not path:
        return ""
    where = display_path(path)
    if line is not None:
        where += f":{line}"
        if column is not None:
            where += f":{column}"
    return where


def caution_line(caution: Caution) -> str:
    """``[path:line:col: ]severity code: message`` for one caution (the form errors use)."""
    where = location(caution.path, caution.line, caution.column)
    return f"{where + ': ' if where else ''}{caution.severity} {caution.code}: {caution.message}"
