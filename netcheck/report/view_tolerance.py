"""View data of the tolerance section: Monte Carlo yield, worst case, sensitivities."""

from __future__ import annotations

from typing import Any

from ..result import LimitResult, SpecResult, Status
from ..netlist.units import digits_at, format_eng, tell_apart
from ..analyses.worstcase import MAX_CORNER_PARTS
from .formatting import (MEASUREMENTS, caution_view, cell_text, coefficient, format_fraction,
                         format_interval, format_margin, format_range, signed, status_view,
                         tolerance_text, unit_of)
from .lookup import analysis_block, nominal_limits

__all__ = ["tolerance_view", "SAMPLE_COLUMNS"]

_MODE_WORDS = {"nominal": "nominal", "worst_case": "worst case (EVA, RSS, corners)",
               "monte_carlo": "Monte Carlo"}
_DISTRIBUTIONS = {
    "uniform": "uniform: every value between the tolerance ends equally likely",
    "normal": "normal, with the tolerance at 3 standard deviations",
    "truncnormal": "normal (tolerance at 3 standard deviations), cut at the tolerance ends",
}
_PART_UNITS = {"R": "Ω", "C": "F", "L": "H"}
#: the worst-case JSON's ``decided_by`` as the table words it
_DECIDED = {"corners": "corners", "linear estimate": "EVA"}
#: worst samples per table of part values
SAMPLE_COLUMNS = 4


def _part_unit(name: str) -> str:
    return _PART_UNITS.get(name.rsplit(".", 1)[-1][:1].upper(), "")


def _monte_carlo_view(s: SpecResult, mc: dict[str, Any], nominal: dict[str, LimitResult],
                      wc: dict[str, Any] | None) -> dict[str, Any]:
    n = int(mc.get("samples") or 0)
    y = mc.get("yield")
    ci = mc.get("yield_ci") or [None, None]
    passed = mc.get("passed")
    if passed is None:  # a result written before the count was recorded
        passed = round(y * n) if y is not None else None
    yrow = next((lim for lim in s.limits if lim.kind == "yield"), None)
    if yrow is not None and yrow.lower is not None:
        required = {"text": f"required ≥ {format_fraction(yrow.lower)}",
                    **status_view(yrow.status),
                    "margin": f"{format_margin(yrow)} ({signed(100.0 * (yrow.margin or 0.0), '')} "
                              "percentage points)" if yrow.margin is not None else "—"}
        below = ci[0] is not None and ci[0] < yrow.lower
    else:
        required, below = None, False
    parts = [{"part": p["part"], "nominal": format_eng(p["nominal"], _part_unit(p["part"])),
              "tolerance": _band_text(p), "distribution": p.get("distribution") or "",
              "group": "" if p.get("group") is None else
              f"group\u00a0{p['group']} (ρ\u00a0=\u00a0{p.get('correlation', 1):g})"}
             for p in mc.get("parts", ())]
    # a column of distributions when the parts differ, one of groups when any track
    per_part = len({p["distribution"] for p in parts}) > 1
    tracking = [{"group": t["group"], "parts": ", ".join(t["parts"]),
                 "asked": f"{t['correlation']:g}",
                 "seen": "—" if t.get("sample_correlation") is None else
                 f"{t['sample_correlation']:.3f}"} for t in mc.get("tracking", ())]
    nominal_values = {p["part"]: p["nominal"] for p in mc.get("parts", ())}
    for p in mc.get("params", ()):  # the elements that follow a toleranced .param
        nominal_values.update(p.get("element_nominal") or {})
    limits, samples = [], {}
    units = {lim.name: lim.unit for lim in s.limits}  # stress rows too
    by_name = {lim.name: lim for lim in s.limits}
    for e in mc.get("limits", ()):
        unit = units.get(e["name"], "")
        worst = e.get("worst_sample")
        measured_in = e.get("measured_in")
        bounds = by_name.get(e["name"])
        # the worst sample's value with as many figures as tell it from the bounds
        place = tell_apart([e.get("worst_measured")] + (
            [bounds.lower, bounds.upper] if bounds is not None else []), unit)
        limits.append({
            "name": e["name"], "yield": format_fraction(e.get("yield")),
            "measured_in": "—" if measured_in is None else f"{measured_in} of {n}",
            "unmeasured": 0 if measured_in is None else n - measured_in,
            "ci": format_interval(e.get("yield_ci")),
            "p01": signed(e.get("margin_p01"), unit), "p50": signed(e.get("margin_p50"), unit),
            "p99": signed(e.get("margin_p99"), unit),
            "worst": "—" if worst is None else f"#{worst}",
            "worst_measured": "—" if e.get("worst_measured") is None else
            format_eng(e["worst_measured"], unit, digits_at(e["worst_measured"], unit, place)),
            "all_inside": e.get("yield") == 1.0})
        if worst is not None:
            entry = samples.setdefault(worst, {"sample": worst, "limits": [],
                                               "values": e.get("worst_values") or {}})
            entry["limits"].append(e["name"])
    sample_list = list(samples.values())
    names = list(nominal_values) or sorted({k for e in sample_list for k in e["values"]})
    worst_tables = []
    for i in range(0, len(sample_list), SAMPLE_COLUMNS):
        chunk = sample_list[i:i + SAMPLE_COLUMNS]
        rows = []
        for part in names:
            cells = []
            for e in chunk:
                v = e["values"].get(part)
                base = nominal_values.get(part)
                dev = "" if v is None or not base else f"{100.0 * (v / base - 1.0):+.2f} %"
                cells.append({"value": "—" if v is None else format_eng(v, _part_unit(part)),
                              "deviation": dev})
            rows.append({"part": part, "nominal": "—" if part not in nominal_values else
                         format_eng(nominal_values[part], _part_unit(part)), "cells": cells})
        worst_tables.append({"samples": chunk, "rows": rows})
    spread = []
    meas = mc.get("measurements") or {}
    wc_meas = (wc or {}).get("measurements") or {}
    hist = mc.get("histogram") or {}
    same = hist.get("same_as")
    keys = [k for k in MEASUREMENTS if k in meas] + [k for k in meas if k not in MEASUREMENTS]
    never = []  # key figures measured in no sample: named, not tabled
    for key in keys:
        st, unit = meas[key], unit_of(key)
        if st.get("mean") is None:
            never.append(MEASUREMENTS.get(key, (key, ""))[0])
            continue
        w = wc_meas.get(key) or {}
        nominal_value = s.measurement(key)
        spread.append(_spread_row(
            MEASUREMENTS.get(key, (key, ""))[0], st, unit, n,
            "—" if nominal_value is None else format_eng(nominal_value, unit),
            _range_cell(w.get("min"), w.get("max"), unit), key == same))
    if hist.get("stats") and same is None:
        # the histogram's quantity is no key figure: its own row, over the same samples
        lim = nominal.get(hist.get("name", ""))
        unit = lim.unit if lim is not None else ""
        spread.insert(0, _spread_row(
            str(hist["name"]), hist["stats"], unit, n,
            "—" if lim is None or lim.measured is None else format_eng(lim.measured, unit),
            "—", True))
    return {
        "has_stress": any(r["name"].startswith("stress: ") for r in limits),
        "samples": n, "seed": mc.get("seed"), "passed": passed,
        "failed": None if passed is None else n - passed,
        "distribution": "per part (the table above; normal: half the band at 3 standard "
                        "deviations)" if per_part else
        _DISTRIBUTIONS.get(mc.get("distribution"), str(mc.get("distribution"))),
        "per_part": per_part, "tracking": tracking,
        "params": [{"param": p["param"], "nominal": format_eng(p["nominal"], ""),
                    "tolerance": _band_text(p), "distribution": p.get("distribution", ""),
                    "elements": ", ".join(p.get("elements", ()))}
                   for p in mc.get("params", ())],
        "asymmetric": any("/" in p["tolerance"] or "," in p["tolerance"] for p in parts),
        "temperature": None if not mc.get("temperature") else
        "one temperature per sample, uniform over the range, shared by every part: drawn "
        f"{mc['temperature']['min_c']:.1f} °C … {mc['temperature']['max_c']:.1f} °C",
        "yield": format_fraction(y), "ci": format_interval(ci),
        "ci_lo": format_fraction(ci[0]), "ci_hi": format_fraction(ci[1]),
        "ci_method": mc.get("ci_method") or "not recorded", "required": required,
        "below": below, "parts": parts, "limits": limits, "worst_tables": worst_tables,
        "spread": spread, "has_eva_spread": any(r["eva"] != "—" for r in spread),
        "partial": any(r["partial"] for r in spread), "never": never,
        "unmeasured": any(r["unmeasured"] for r in limits),
        "histogram_n": None if not hist.get("counts") else
        f"{hist.get('n', int(sum(hist['counts'])))} of {n}",
    }


def _band_text(p: dict[str, Any]) -> str:
    """``±5 %``, or ``−20 % / +80 %`` for an asymmetric band; a temperature coefficient and
    ageing follow (``±5 %, ±30 ppm/K, ageing ±1 %``)."""
    low, high = p.get("low"), p.get("high")
    if low is None or high is None or low == -high:
        text = tolerance_text(p.get("tolerance")) if p.get("tolerance") else "0 %"
    else:
        text = f"{100.0 * low:+.4g} % / {100.0 * high:+.4g} %".replace("-", "−")

    def pair(lo: float, hi: float, scale: float, unit: str) -> str:
        if lo == -hi:  # the number and its unit kept on one line
            return f"±{scale * hi:.4g}\u00a0{unit}"
        return f"{scale * lo:+.4g} … {scale * hi:+.4g}\u00a0{unit}".replace("-", "−")

    if p.get("tc"):
        text += ", " + pair(*p["tc"], 1e6, "ppm/K")
    elif p.get("tc12"):
        text += f", TC1 {p['tc12'][0]:g}/K, TC2 {p['tc12'][1]:g}/K² (netlist)"
    if p.get("ageing"):
        text += ", ageing " + pair(*p["ageing"], 100.0, "%")
    return text


def _spread_row(label: str, st: dict[str, Any], unit: str, samples: int, nominal: str,
                eva: str, in_histogram: bool) -> dict[str, Any]:
    """One row of the key-figures table: the figures over the samples where the quantity
    was measured, with how many those are (``n of N``)."""
    count = st.get("n")
    if count is None:  # a result written before the count was recorded
        count = samples if st.get("mean") is not None else 0
    total = st.get("samples") or samples
    dash = st.get("mean") is None
    return {"label": label, "nominal": nominal,
            "mean": "—" if dash else format_eng(st["mean"], unit),
            "std": "—" if dash else format_eng(st["std"], unit),
            "p": _range_cell(st.get("p01"), st.get("p99"), unit),
            "minmax": _range_cell(st.get("min"), st.get("max"), unit), "eva": eva,
            "n": f"{count} of {total}", "partial": count < total,
            "in_histogram": in_histogram}


def _worst_case_view(s: SpecResult, wc: dict[str, Any], nominal: dict[str, LimitResult],
                     tolerances: dict[str, dict[str, Any]]) -> dict[str, Any]:
    by_name = {lim.name: lim for lim in s.limits if lim.kind == "worst_case"}
    n_parts = wc.get("parts")
    corners = wc.get("corners")
    rows, differences = [], []
    entries = {e["name"]: e for e in wc.get("limits", ())}
    for e in wc.get("limits", ()):
        lim = nominal.get(e["name"])
        unit = lim.unit if lim is not None else ""
        final = by_name.get(f"worst case: {e['name']}")
        status = final.status if final is not None else Status(e.get("status", "pass"))
        has_corners = e.get("corners_min") is not None
        margin = final.margin if final is not None else min(
            [v for v in (e.get("margin"), e.get("corners_margin")) if v is not None],
            default=None)
        # the row to the decimal place that tells the bounds, the nominal value and the
        # worst case that decides apart (a narrow window reads 9.99998 … 10.00002 MHz,
        # not 10.00 … 10.00 MHz)
        worst = [e.get("worst_min", e.get("min")), e.get("worst_max", e.get("max"))]
        place = tell_apart([e.get("measured_nominal")] + worst
                           + ([lim.lower, lim.upper] if lim is not None else []), unit)
        allowed = "—" if lim is None else _bound_text(lim.lower, lim.upper, unit, place)
        cell = (lambda t: t) if place is None else cell_text  # long ones break after "…"
        rows.append({
            "name": e["name"], "nominal": _at(e["measured_nominal"], unit, place),
            "eva": cell(format_range(e.get("min"), e.get("max"), unit, place)),
            "rss": cell(format_range(e.get("rss_min"), e.get("rss_max"), unit, place)),
            "corners": cell(format_range(e.get("corners_min"), e.get("corners_max"), unit,
                                         place)) if has_corners else "—",
            "allowed": cell(allowed),
            "eva_margin": signed(e.get("margin"), unit, place),
            "corners_margin": signed(e.get("corners_margin"), unit, place)
            if has_corners else "—",
            "margin": signed(margin, unit, place),
            "decided": _DECIDED.get(e.get("decided_by"), ""), **status_view(status)})
        if not has_corners:
            continue
        eva_m, cor_m = e.get("margin"), e.get("corners_margin")
        head = (f"EVA gives {format_range(e.get('min'), e.get('max'), unit, place)} (margin "
                f"{signed(eva_m, unit, place)}); the corners give "
                f"{format_range(e.get('corners_min'), e.get('corners_max'), unit, place)} "
                f"(margin {signed(cor_m, unit, place)}).")
        text = head + " " + _eva_versus_corners(e, unit)
        differences.append({"name": e["name"], "text": text, "differs": bool(e.get("eva_differs"))})
    sens = []
    for block in wc.get("sensitivities", ()):
        unit = block.get("unit", "")
        e = entries.get(block["name"], {})
        half = None
        if e.get("max") is not None and e.get("measured_nominal") is not None:
            half = e["max"] - e["measured_nominal"]
        log_unit = unit in ("dB", "deg")
        items = []
        for item in block.get("top", ()):
            d = item.get("per_unit_log")
            c = item.get("contribution")
            entry = tolerances.get(item["part"])
            tol = None
            if entry is None and d and c is not None:
                tol = c / d
            direction = "—" if d is None else "value rises" if d > 0 else "value falls" \
                if d < 0 else "no effect"
            items.append({
                "part": item["part"], "direction": direction,
                "normalised": "—" if log_unit else coefficient(item.get("sensitivity")),
                "per_percent": signed(None if d is None else d / 100.0, unit),
                "tolerance": _band_text(entry) if entry is not None else tolerance_text(tol),
                "contribution": signed(c, unit),
                "share": "—" if c is None or not half else f"{100.0 * abs(c) / half:.1f} %"})
        sens.append({"name": block["name"], "unit": unit or "(dimensionless)",
                     "method": e.get("sensitivity_method", "not recorded"),
                     "log_unit": log_unit, "rows": items,
                     "more": max(0, (n_parts or 0) - len(items))})
    return {"parts": n_parts, "corners": corners, "rows": rows, "differences": differences,
            "sensitivities": sens, "rss": bool(wc.get("rss")),
            "any_log_unit": any(b["log_unit"] for b in sens),
            "corner_text": f"all {corners} corners (every part at either tolerance end"
                           + (f"; the {n_parts} parts are {wc['variables']} variables, each "
                              "fully tracking group moving as one"
                              if wc.get("variables", n_parts) != n_parts else "")
                           + ") were also evaluated" if corners else
                           f"corners were not evaluated (more than "
                           f"{wc.get('corner_cap', MAX_CORNER_PARTS)} toleranced parts)"}


def _range_cell(lo: float | None, hi: float | None, unit: str) -> str:
    """A range for a narrow cell; one that needed more figures breaks after ``…`` only."""
    text = format_range(lo, hi, unit)
    return text if lo is None or hi is None or tell_apart([lo, hi], unit) is None \
        else cell_text(text)


def _at(value: float | None, unit: str, place: int | None) -> str:
    """``value`` printed to the decimal ``place`` of its row (``—`` when missing)."""
    return "—" if value is None else format_eng(value, unit, digits_at(value, unit, place))


def _bound_text(lo: float | None, hi: float | None, unit: str, place: int | None) -> str:
    """Bounds as :attr:`LimitResult.bound_text` prints them, to the row's decimal place."""
    if lo is not None and hi is not None:
        return f"{_at(lo, unit, place)} … {_at(hi, unit, place)}"
    if lo is not None:
        return f"≥ {_at(lo, unit, place)}"
    return "—" if hi is None else f"≤ {_at(hi, unit, place)}"


def _eva_versus_corners(e: dict[str, Any], unit: str) -> str:
    """Which of EVA and the corners decides a worst-case limit, and why, in words."""
    eva_m, cor_m = e.get("margin"), e.get("corners_margin")
    lost = e.get("corners_unmeasurable") or 0
    inside = e.get("faces_unmeasurable") or 0
    if lost:
        return (f"The quantity cannot be measured at {lost} "
                f"corner{'s' if lost != 1 else ''} (the corners' range covers the others), "
                "so no worst case is established.")
    if inside:
        return (f"The quantity cannot be measured at {inside} face "
                f"centre{'s' if inside != 1 else ''} of the tolerance box (a part alone at "
                "a tolerance end), so no worst case is established.")
    monotone = e.get("monotone")
    shown = "Monotone in every part: the corners decide."
    if not e.get("eva_differs") or eva_m is None or cor_m is None:
        return "They agree." + (f" {shown}" if monotone else "")
    gap = abs(eva_m - cor_m)
    scale = max(abs(eva_m), abs(cor_m), abs((e.get("max") or 0.0) - (e.get("min") or 0.0)),
                1e-300)
    close = gap < 0.01 * scale
    if monotone:
        if cor_m < eva_m:
            lead = f"The corners come {format_eng(gap, unit)} closer to the limit."
        else:
            lead = (f"EVA comes {format_eng(gap, unit)} closer to the limit; no point of "
                    "the box does.")
        return f"{lead} {shown}"
    if cor_m < eva_m:
        lead = f"The corners come {format_eng(gap, unit)} closer to the limit and decide."
        why = ("Over these tolerances the response is not linear in the parts, so the "
               "first-order sum behind EVA understates the worst corner.")
    else:
        lead = f"EVA comes {format_eng(gap, unit)} closer to the limit and decides."
        why = ("No corner reaches as far as the first-order sum of every part's worst "
               "effect: EVA is the more cautious here.")
    if close:
        why = ("The two agree to within 1 % of the margin, so over these tolerances the "
               "response is close to linear in the parts.")
    parts = e.get("not_monotone_in") or []
    if monotone is False:
        named = f" in {', '.join(parts)}" if parts else ""
        why += (f" The quantity is not shown monotone{named} over the tolerance box, so "
                "neither is known to bound it and the more cautious decides.")
    return f"{lead} {why}"


def tolerance_view(s: SpecResult, with_plots: bool = True) -> dict[str, Any] | None:
    """The tolerance section: Monte Carlo yield, worst case and sensitivities, formatted.

    None when the spec carries no tolerance block. With ``with_plots``, the section holds
    the histogram of the deciding measurement (matplotlib is imported only then).
    """
    tol = analysis_block(s, "tolerance")
    if tol is None:
        return None
    from .plot_tolerance import histogram_plot

    nominal = nominal_limits(s)
    mc = analysis_block(s, "tolerance", "monte_carlo")
    wc = analysis_block(s, "tolerance", "worst_case")
    tolerances = {p["part"]: p for p in (mc or {}).get("parts", ())}
    plot = histogram_plot(s) if with_plots and mc is not None else None
    modes = [m for m in tol.get("modes", ()) if isinstance(m, str)]
    return {
        "modes": ", ".join(_MODE_WORDS.get(m, m) for m in modes) or "none recorded",
        "parts": tol.get("parts", 0),
        "mc": None if mc is None else _monte_carlo_view(s, mc, nominal, wc),
        "wc": None if wc is None else _worst_case_view(s, wc, nominal, tolerances),
        "plots": (plot,) if plot is not None else (),
        "cautions": [caution_view(c) for c in s.cautions if c.code in ("spec-202",)],
    }
