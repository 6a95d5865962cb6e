"""View data of the part-stress section: peak voltage, current and power against ratings."""

from __future__ import annotations

import math
from typing import Any

from ..result import STRESS_CAUTION_CODE, SpecResult, Status
from ..netlist.units import digits_at, format_eng, format_si, tell_apart
from .formatting import caution_view, display_path, signed, status_view
from .lookup import analysis_block

__all__ = ["stress_view", "headroom_text"]

_STRESS_UNITS = {"voltage": "V", "current": "A", "power": "W"}
_STRESS_QUANTITY = {"voltage": "voltage (peak)", "current": "current (peak)",
                    "power": "power (average)"}


def _stress_unit(e: dict[str, Any]) -> str:
    return _STRESS_UNITS.get(str(e.get("quantity", "")), "")


def _two_figures(x: float) -> str:
    """``x`` (≥ 1) to two significant figures without an exponent: 2.1, 10, 120."""
    r = float(f"{x:.2g}")
    decimals = max(0, 1 - math.floor(math.log10(r)))
    return f"{r:.{decimals}f}"


def headroom_text(peak: float | None, rating: float | None) -> str:
    """How far a part's stress lies under (or over) its rating, as a ratio in words.

    rating / peak for a part within its rating (``2.1× under rating``), peak / rating for
    one over it (``1.3× over rating``), to two significant figures; ``—`` without both.

    Examples
    --------
    >>> headroom_text(23.8, 50.0), headroom_text(65.0, 50.0), headroom_text(0.0, 50.0)
    ('2.1× under rating', '1.3× over rating', 'no stress')
    """
    if peak is None or rating is None or not rating > 0 or not math.isfinite(peak):
        return "—"
    if peak <= 0:
        return "no stress"
    if peak == rating:
        return "at rating"
    if peak > rating:
        return f"{_two_figures(peak / rating)}× over rating"
    return f"{_two_figures(rating / peak)}× under rating"


def _stress_cells(e: dict[str, Any]) -> dict[str, Any]:
    """The cells a stress entry shows in both tables (nominal and Monte Carlo), formatted."""
    q = str(e.get("quantity", ""))
    unit = _stress_unit(e)
    peak, rating = e.get("peak"), e.get("rating")
    place = tell_apart([peak, rating], unit)  # a peak just under its rating reads so
    return {
        "part": e.get("part", "?"), "quantity": _STRESS_QUANTITY.get(q, q),
        "peak": "—" if peak is None else format_eng(peak, unit, digits_at(peak, unit, place)),
        "rating": "—" if rating is None else format_eng(rating, unit,
                                                        digits_at(rating, unit, place)),
        "margin": signed(e.get("margin"), unit),
        "headroom": headroom_text(peak, rating),
        "at": "—" if e.get("at_hz") is None else format_si(e["at_hz"], "Hz", 5),
        **status_view(Status(e.get("status", "error")))}


def stress_view(s: SpecResult) -> dict[str, Any] | None:
    """The part-stress section: one row per part and quantity, with the stress cautions.

    None when the spec carries no stress block. Rows of the Monte Carlo stress screen
    (worst sample per part and quantity) follow when the tolerance block has them.
    """
    data = s.extra_value("stress")
    if not isinstance(data, list) or not data:
        return None
    by_name = {lim.name: lim for lim in s.limits if lim.kind == "stress"}
    rows = []
    for e in data:
        lim = by_name.get(f"stress: {e.get('part')} {e.get('quantity', '')}")
        status = Status(e.get("status", "error"))
        margin = e.get("margin")
        if status is Status.PASS:
            words = "within its rating"
        elif status is Status.FAIL:
            words = "over its rating" + (f" by {format_eng(-margin, _stress_unit(e))}"
                                         if margin is not None else "")
        elif status is Status.SKIPPED:
            words = "not applicable"
        else:
            words = "not measured" + (f": {lim.message}" if lim is not None and lim.message
                                      else "")
        rows.append({
            **_stress_cells(e), "words": words,
            "definition": lim.definition if lim is not None else "",
            "where": f"{display_path(s.spec)}:{lim.line}" if lim is not None and lim.line
            else ""})
    mc = analysis_block(s, "tolerance", "monte_carlo")
    mc_rows = [{**_stress_cells(e), "sample": "—" if e.get("sample") is None else
                f"#{e['sample']}"} for e in (mc or {}).get("stress") or ()]
    worst = max((Status(r["status"]) for r in rows + mc_rows), key=lambda x: x.rank)
    over = sum(1 for r in rows if r["status"] == "fail")
    unmeasured = sum(1 for r in rows if r["status"] == "error")
    if over or unmeasured:
        parts = ([f"{over} over {'its' if over == 1 else 'their'} rating"] if over else []) + (
            [f"{unmeasured} not measured"] if unmeasured else [])
        summary = f"{len(rows)} part ratings checked: " + " and ".join(parts) + "."
    else:
        summary = f"All {len(rows)} part ratings checked are met." if len(rows) > 1 else \
            "The part rating checked is met."
    return {"rows": rows, "summary": summary, "status": worst.value, "mc_rows": mc_rows,
            "mc_samples": (mc or {}).get("samples"),
            "cautions": [caution_view(c) for c in s.cautions if c.code == STRESS_CAUTION_CODE]}
