"""View data of the family overview: the variants of one spec side by side, closest margins."""

from __future__ import annotations

import math
from typing import Any

from ..result import CheckResult, LimitResult, Status
from .formatting import display_path, format_margin, shown_name, status_view

__all__ = ["family_views", "FAMILY_COLUMNS"]

#: limit names per family summary table (the table repeats the variant column)
FAMILY_COLUMNS = 4


def _family_cell(found: LimitResult | None, checked: bool) -> dict[str, str]:
    if not checked:
        return {"status": "error", "word": "NOT CHECKED", "symbol": "!", "margin": ""}
    if found is None:
        return {"status": "none", "word": "—", "symbol": "", "margin": "not in this variant"}
    return {**status_view(found.status), "margin": format_margin(found)
            if found.margin is not None else ""}


def family_views(result: CheckResult, views: list[dict[str, Any]],
                 with_plots: bool = True) -> list[dict[str, Any]]:
    """One view per family: ≥ 2 variants of one spec file, in the order they were checked.

    ``views`` are the spec views of ``result.specs`` (same order), whose anchors, numbers
    and verdicts the family tables link to.
    """
    from .plot_family import family_plots

    groups: dict[str, list[int]] = {}
    for k, s in enumerate(result.specs):
        groups.setdefault(s.spec, []).append(k)
    out = []
    for path, index in groups.items():
        members = [result.specs[k] for k in index]
        if len({m.variant for m in members if m.variant is not None}) < 2:
            continue
        names = list(dict.fromkeys(lim.name for m in members for lim in m.limits))
        rows = []
        for k, m in zip(index, members):
            by = {}
            for lim in m.limits:
                by.setdefault(lim.name, lim)
            rows.append({"variant": m.variant or "(no variant)", "anchor": views[k]["anchor"],
                         "number": views[k]["number"], "status": m.status.value,
                         "word": views[k]["verdict"]["word"],
                         "symbol": views[k]["verdict"]["symbol"],
                         "cells": [_family_cell(by.get(n), not m.error) for n in names]})
        closest = []
        for n in names:
            found = [(lim, m) for m in members for lim in m.limits
                     if lim.name == n and lim.margin is not None and math.isfinite(lim.margin)]
            if found:
                lim, _ = min(found, key=lambda x: x[0].margin)
                tied = [shown_name(m.variant or m.label) for x, m in found
                        if abs(x.margin - lim.margin) <= 1e-9 * max(1.0, abs(lim.margin))]
                closest.append(f"{format_margin(lim)} ({', '.join(tied)})")
            else:
                closest.append("—")
        tables = []
        for i in range(0, len(names), FAMILY_COLUMNS):
            sl = slice(i, i + FAMILY_COLUMNS)
            tables.append({"names": names[sl], "closest": closest[sl],
                           "rows": [{**r, "cells": r["cells"][sl]} for r in rows]})
        bad = [r for r in rows if r["status"] in ("fail", "error")]
        if bad:
            sentence = (f"{len(bad)} of {len(rows)} variants did not pass: "
                        + "; ".join(f"{shown_name(r['variant'])} ({r['word']})" for r in bad)
                        + ".")
        else:
            sentence = f"All {len(rows)} variants met every limit."
        status = max((m.status for m in members), key=lambda x: x.rank)
        status = Status.PASS if status is Status.SKIPPED else status
        out.append({
            "number": len(out) + 1, "anchor": f"family-{len(out) + 1}",
            "title": members[0].title, "spec": display_path(path), "count": len(members),
            **status_view(status), "sentence": sentence, "tables": tables, "names": names,
            "plots": family_plots(members) if with_plots else ()})
    return out
