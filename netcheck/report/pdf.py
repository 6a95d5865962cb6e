"""The PDF compliance report: CheckResult → view data → jinja2 HTML + CSS → weasyprint PDF.

A data step (:func:`build_context`) turns the result into plain, already formatted
values; the templates in ``templates/`` only lay them out, with autoescaping on, so
text from netlists and specs is always shown literally. weasyprint runs with a
LockedFetcher (:func:`locked_fetcher`) that serves only the report's own plots (SVG
documents kept in memory under ``netcheck-embedded:`` URLs, drawn as vectors) and
refuses every other URL, so no file, network or data resource is ever read while
rendering, and nothing is attached to the PDF. The stylesheet is passed as a string.

jinja2, weasyprint and matplotlib are imported inside functions only.
"""

from __future__ import annotations

import functools
import math
import os
import re
from pathlib import Path
from typing import IO, Any

from ..result import SAFETY_CAUTION, CheckResult, LimitResult, SpecResult, Status
from ..units import format_eng, format_si

__all__ = ["render", "render_per_spec", "render_bytes", "report_names", "build_context",
           "git_state", "GitState", "locked_fetcher", "html_to_pdf", "format_margin",
           "format_fraction", "format_interval", "format_range",
           "format_measured"]

_SYMBOL = {Status.PASS: "✓", Status.FAIL: "✗", Status.ERROR: "!", Status.SKIPPED: "–"}
_ENGINES = {
    "dense": "the MNA system (G + jωC)·x = b solved directly at every grid point (LAPACK LU)",
    "sparse": "the MNA system (G + jωC)·x = b factorised at every grid point (SuperLU)",
    "pole-zero": "the transfer function in pole–zero product form from the generalised "
                 "eigenvalues of the MNA pencil (Moler & Stewart, 1973), checked against "
                 "direct solves at check points; any point whose error estimate is too large "
                 "is solved directly",
}
#: measurement key → (label, unit) for the key-figures table
_MEASUREMENTS = {
    "f_peak_hz": ("peak frequency", "Hz"), "peak_gain_db": ("peak gain", "dB"),
    "f_low_hz": ("lower half-power edge f_low", "Hz"),
    "f_high_hz": ("upper half-power edge f_high", "Hz"),
    "bandwidth_hz": ("half-power bandwidth f_high − f_low", "Hz"),
    "f_center_hz": ("centre f_center = √(f_low·f_high)", "Hz"),
    "q": ("Q = f_center / bandwidth", ""),
}


# --------------------------------------------------------------------------- formatting


def format_measured(lim: LimitResult) -> str:
    """Measured value as the report prints it (``—`` when none)."""
    return "—" if lim.measured is None else format_eng(lim.measured, lim.unit)


def format_margin(lim: LimitResult) -> str:
    """Signed margin as the report prints it: ``+0.429 dB`` inside, ``-1.2 dB`` outside."""
    if lim.margin is None:
        return "—"
    return ("+" if lim.margin >= 0 else "") + format_eng(lim.margin, lim.unit)


def _measurement_unit(key: str) -> str:
    for suffix, unit in (("_hz", "Hz"), ("_db", "dB"), ("_s", "s"), ("_deg", "deg"),
                         ("_ohm", "Ω")):
        if key.endswith(suffix):
            return unit
    return ""


#: characters per appendix line: the 176 mm text width at 7 pt DejaVu Sans Mono (0.602 em)
LISTING_COLUMNS = 118


def listing_rows(text: str, columns: int = LISTING_COLUMNS) -> list[tuple[str, str]]:
    """(line number, text) rows of a file listing; long lines wrap without a number.

    Examples
    --------
    >>> listing_rows("a\\tb\\n" + "x" * 20, columns=10)
    [('1', 'a   b'), ('2', 'xxxxxxxx'), (' ', 'xxxxxxxx'), (' ', 'xxxx')]
    """
    lines = text.splitlines() or [""]
    width = len(str(len(lines)))
    room = max(8, columns - width - 1)
    rows = []
    for no, line in enumerate(lines, 1):
        line = line.expandtabs(4)
        chunks = [line[i:i + room] for i in range(0, len(line), room)] or [""]
        rows.append((str(no).rjust(width), chunks[0]))
        rows += [(" " * width, c) for c in chunks[1:]]
    return rows


def _display_path(path: str) -> str:
    return os.path.normpath(path) if path else path


def _date_text(created_utc: str) -> str:
    m = re.fullmatch(r"(\d{4}-\d\d-\d\d)T(\d\d:\d\d:\d\d)Z", created_utc or "")
    return f"{m[1]} {m[2]} UTC" if m else (created_utc or "not recorded")


def _slug(text: str) -> str:
    return re.sub(r"[^A-Za-z0-9._-]+", "_", text).strip("._") or "variant"


def report_names(specs: tuple[SpecResult, ...]) -> list[str]:
    """File names for per-spec reports: ``<spec stem>[-<variant>].pdf``, made unique.

    Examples
    --------
    >>> from netcheck.result import SpecResult, Status
    >>> s = lambda p, v=None: SpecResult(p, "", "", Status.PASS, variant=v)
    >>> report_names((s("a/rx.toml"), s("b/rx.toml"), s("rx.toml", "low Q")))
    ['rx.pdf', 'rx-2.pdf', 'rx-low_Q.pdf']
    """
    names, seen = [], set()
    for s in specs:
        base = Path(s.spec).stem or "spec"
        if s.variant:
            base = f"{base}-{_slug(s.variant)}"
        name, k = f"{base}.pdf", 2
        while name.lower() in seen:
            name, k = f"{base}-{k}.pdf", k + 1
        seen.add(name.lower())
        names.append(name)
    return names


# --------------------------------------------------------------------------- git


from ..provenance import GitState, git_state  # noqa: E402


def _recorded_git(value: Any) -> GitState | None:
    """A git state the result already carries (``extra["git"]``: GitState or its dict)."""
    if isinstance(value, GitState):
        return value
    if isinstance(value, dict) and "text" in value:
        return GitState(value.get("commit"), value.get("dirty"), str(value["text"]),
                        tuple(value.get("changed_inputs", ())))
    return None


# --------------------------------------------------------------------------- view data


def _limit_row(lim: LimitResult, spec_path: str) -> dict[str, Any]:
    return {
        "name": lim.name, "kind": lim.kind, "status": lim.status.value,
        "word": lim.status.word, "symbol": _SYMBOL[lim.status],
        "measured": format_measured(lim), "bound": lim.bound_text,
        "margin": format_margin(lim), "at": "—" if lim.at_hz is None else
        format_si(lim.at_hz, "Hz", 5), "at_full": "" if lim.at_hz is None else
        format_si(lim.at_hz, "Hz", 7), "definition": lim.definition, "method": lim.method,
        "message": lim.message, "unit": lim.unit or "(dimensionless)",
        "where": f"{_display_path(spec_path)}:{lim.line}" if lim.line else
        _display_path(spec_path),
    }


def _order(limits: tuple[LimitResult, ...]) -> list[LimitResult]:
    return sorted(limits, key=lambda r: (-r.status.rank, r.index))


def _verdict(s: SpecResult) -> dict[str, Any]:
    """The verdict in words for page 1: a headline and the limits that decide it."""
    n = s.counts
    total = len(s.limits)
    plural = "s" if total != 1 else ""
    if s.error:
        first = s.error.strip().splitlines()[0] if s.error.strip() else "unknown error"
        return {"word": "NOT CHECKED", "status": "error", "symbol": "!",
                "headline": "ERROR: this spec could not be checked, so no limit in it is "
                            "shown to be met.", "reasons": [first], "more": 0}
    failed = [lim for lim in _order(s.limits) if lim.status is Status.FAIL]
    errored = [lim for lim in _order(s.limits) if lim.status is Status.ERROR]
    if failed or errored:
        parts = []
        if failed:
            parts.append(f"{len(failed)} of {total} limit{plural} failed")
        if errored:
            parts.append(f"{len(errored)} could not be measured")
        word = "FAIL" if failed else "ERROR"
        headline = f"{word}: {' and '.join(parts)}."
        items = [f"{lim.name}: {format_measured(lim)} against {lim.bound_text}, margin "
                 f"{format_margin(lim)}" for lim in failed]
        items += [f"{lim.name}: not measured ({lim.message or 'no value'})" for lim in errored]
    elif total:
        skipped = f" ({n['skipped']} skipped)" if n["skipped"] else ""
        headline = f"PASS: all {n['pass']} limit{'s' if n['pass'] != 1 else ''} met{skipped}."
        items = ["every margin is zero or more"]
    else:
        headline, items = "PASS: the spec has no limits to judge.", []
    shown = 5
    return {"word": s.status.word, "status": s.status.value, "symbol": _SYMBOL[s.status],
            "headline": headline, "reasons": items[:shown], "more": max(0, len(items) - shown)}


def _sweep_view(s: SpecResult) -> dict[str, Any]:
    sw = dict(s.sweep)
    if not sw:
        return {}
    method = str(sw.get("method", ""))
    out = sw.get("output", ["?", "0"])
    out_text = f"V({out[0]})" if len(out) < 2 or out[1] in ("0", "gnd") else \
        f"V({out[0]}) − V({out[1]})"
    unit = "V" if sw.get("stimulus_unit", "V") == "V" else "A"
    return {
        "start": format_si(float(sw.get("start_hz", 0.0)), "Hz"),
        "stop": format_si(float(sw.get("stop_hz", 0.0)), "Hz"),
        "ppd": sw.get("points_per_decade", "?"), "points": sw.get("points", "?"),
        "method": method, "engine": _ENGINES.get(method, f"the '{method}' solver engine"),
        "unknowns": sw.get("unknowns", "?"), "seeds": sw.get("seeds", 0),
        "source": sw.get("source", "?"), "output": out_text,
        "transfer": f"{out_text} / {sw.get('source', '?')}",
        "transfer_unit": "V/V" if unit == "V" else "V/A (transimpedance)",
        "gain_unit": "dB" if unit == "V" else "dB re 1 V/A",
    }


def _caution_view(c: Any) -> dict[str, str]:
    where = ""
    if c.path:
        where = _display_path(c.path) + (f":{c.line}" if c.line else "") + (
            f":{c.column}" if c.line and c.column else "")
    return {"code": c.code, "severity": c.severity, "message": c.message, "where": where}


def _spec_view(s: SpecResult, number: int, with_plots: bool = True) -> dict[str, Any]:
    from .plots import spec_plots

    hashes = dict(s.inputs)
    inputs = []
    for k, (path, digest) in enumerate(s.inputs):
        role = "spec" if path == s.spec else "netlist" if k == 0 else "included file"
        inputs.append({"path": _display_path(path), "role": role, "sha256": digest})
    design = [i["path"] for i in inputs if i["role"] != "spec"] or (
        [_display_path(s.netlist)] if s.netlist else [])
    git = _recorded_git(s.extra_value("git"))
    if git is None:
        git = git_state(Path(s.spec).parent, tuple(p for p, _ in s.inputs))
    sources = []
    for k, (path, text) in enumerate(s.source_text):
        role = "spec" if path == s.spec else "netlist" if k == 0 else "included file"
        sources.append({"path": _display_path(path), "sha256": hashes.get(path, ""),
                        "role": role, "rows": listing_rows(text)})
    cautions = [_caution_view(c) for c in s.cautions if c.code != "safety"]
    measurements = [{"label": _MEASUREMENTS.get(k, (k, ""))[0],
                     "value": format_eng(v, _MEASUREMENTS[k][1] if k in _MEASUREMENTS
                                         else _measurement_unit(k))}
                    for k, v in s.measurements]
    tolerance = _tolerance_view(s, with_plots)
    stress = _stress_view(s)
    shown = {"git", "stress"} | ({"tolerance"} if tolerance else set())
    extra = [(k, _extra_rows(v)) for k, v in s.extra if k not in shown]
    n = s.counts
    return {
        "number": number, "label": s.label, "title": s.title, "variant": s.variant,
        "spec": _display_path(s.spec), "netlist": _display_path(s.netlist),
        "design_files": design, "status": s.status.value, "word": s.status.word,
        "verdict": _verdict(s), "error": s.error, "counts": n, "total": len(s.limits),
        "inputs": inputs, "git": git, "sweep": _sweep_view(s),
        "rows": [_limit_row(lim, s.spec) for lim in _order(s.limits)],
        "measurements": measurements, "cautions": cautions,
        "hazards": [c for c in cautions if c["severity"] == "caution"],
        "plots": spec_plots(s) if with_plots else (), "sources": sources, "extra": extra,
        "anchor": f"spec-{number}", "tolerance": tolerance, "stress": stress,
    }


# --------------------------------------------------------------------------- analyses


#: margins beyond this are the Monte Carlo block's stand-in for "not measured" samples
_ABSURD = 1e200
_MODE_WORDS = {"nominal": "nominal", "worst_case": "worst case (EVA, RSS, corners)",
               "monte_carlo": "Monte Carlo"}
_DISTRIBUTIONS = {
    "uniform": "uniform: every value between the tolerance ends equally likely",
    "normal": "normal, with the tolerance at 3 standard deviations",
    "truncnormal": "normal (tolerance at 3 standard deviations), cut at the tolerance ends",
}
_PART_UNITS = {"R": "Ω", "C": "F", "L": "H"}
_STRESS_UNITS = {"voltage": "V", "current": "A", "power": "W"}
_STRESS_QUANTITY = {"voltage": "voltage (peak)", "current": "current (peak)",
                    "power": "power (average)"}
#: limit names per family summary table (the table repeats the variant column)
FAMILY_COLUMNS = 4
#: worst samples per table of part values
SAMPLE_COLUMNS = 4


def _signed(value: float | None, unit: str) -> str:
    """``+1.200 kHz`` / ``-0.5 dB``; ``—`` when missing, ``not measured`` for the stand-in."""
    if value is None or not math.isfinite(value):
        return "—"
    if abs(value) > _ABSURD:
        return "not measured"
    value = float(value) + 0.0  # no "-0"
    return ("+" if value >= 0 else "") + format_eng(value, unit)


def format_fraction(value: float | None) -> str:
    """A yield or other fraction as the report prints it: ``99.81 %``.

    Examples
    --------
    >>> format_fraction(0.9980829527), format_fraction(1.0), format_fraction(None)
    ('99.81 %', '100.00 %', '—')
    """
    if value is None or not math.isfinite(value):
        return "—"
    return f"{100.0 * value:.2f} %"


def format_interval(ci: Any) -> str:
    """A yield interval ``[lo, hi]`` as ``99.81 % – 100.00 %``."""
    if not isinstance(ci, (list, tuple)) or len(ci) != 2:
        return "—"
    return f"{format_fraction(ci[0])} – {format_fraction(ci[1])}"


def format_range(lo: float | None, hi: float | None, unit: str) -> str:
    """A range as the tolerance tables print it, the unit written once when shared.

    Examples
    --------
    >>> format_range(39e3, 41e3, "Hz"), format_range(-25.7, -24.9, "dB")
    ('39.00 … 41.00 kHz', '-25.700 … -24.900 dB')
    >>> format_range(999.0, 1.2e3, "Hz"), format_range(11.59, 12.46, "")
    ('999.0 Hz … 1.200 kHz', '11.59 … 12.46')
    """
    if lo is None or hi is None:
        return "—"
    a, b = format_eng(lo, unit), format_eng(hi, unit)
    if " " in a and " " in b and a.split(" ", 1)[1] == b.split(" ", 1)[1]:
        return f"{a.split(' ', 1)[0]} … {b}"
    return f"{a} … {b}"


_range = format_range


def _coefficient(x: float | None) -> str:
    """A signed dimensionless coefficient: ``+0.500``, ``-9.1e-10``, ``0``."""
    if x is None or not math.isfinite(x):
        return "—"
    if x == 0:
        return "0"
    return f"{x:+.3f}" if abs(x) >= 1e-3 else f"{x:+.1e}"


def _part_unit(name: str) -> str:
    return _PART_UNITS.get(name.rsplit(".", 1)[-1][:1].upper(), "")


def _tolerance_text(t: float | None) -> str:
    return "—" if t is None else f"±{100.0 * t:.4g} %"


def _nominal_rows(s: SpecResult) -> dict[str, LimitResult]:
    out: dict[str, LimitResult] = {}
    for lim in s.limits:
        if lim.kind not in ("yield", "worst_case", "stress"):
            out.setdefault(lim.name, lim)
    return out


def _unit_of(key: str) -> str:
    return _MEASUREMENTS[key][1] if key in _MEASUREMENTS else _measurement_unit(key)


def _monte_carlo_view(s: SpecResult, mc: dict[str, Any], nominal: dict[str, LimitResult],
                      wc: dict[str, Any] | None) -> dict[str, Any]:
    n = int(mc.get("samples") or 0)
    y = mc.get("yield")
    ci = mc.get("yield_ci") or [None, None]
    passed = round(y * n) if y is not None else None
    yrow = next((lim for lim in s.limits if lim.kind == "yield"), None)
    if yrow is not None and yrow.lower is not None:
        required = {"text": f"required ≥ {format_fraction(yrow.lower)}", "status": yrow.status.value,
                    "word": yrow.status.word, "symbol": _SYMBOL[yrow.status],
                    "margin": f"{format_margin(yrow)} ({_signed(100.0 * (yrow.margin or 0.0), '')} "
                              "percentage points)" if yrow.margin is not None else "—"}
        below = ci[0] is not None and ci[0] < yrow.lower
    else:
        required, below = None, False
    parts = [{"part": p["part"], "nominal": format_eng(p["nominal"], _part_unit(p["part"])),
              "tolerance": _tolerance_text(p.get("tolerance"))} for p in mc.get("parts", ())]
    nominal_values = {p["part"]: p["nominal"] for p in mc.get("parts", ())}
    limits, samples = [], {}
    for e in mc.get("limits", ()):
        lim = nominal.get(e["name"])
        unit = lim.unit if lim is not None else ""
        worst = e.get("worst_sample")
        limits.append({
            "name": e["name"], "yield": format_fraction(e.get("yield")),
            "ci": format_interval(e.get("yield_ci")),
            "p01": _signed(e.get("margin_p01"), unit), "p50": _signed(e.get("margin_p50"), unit),
            "p99": _signed(e.get("margin_p99"), unit),
            "worst": "—" if worst is None else f"#{worst}",
            "worst_measured": "—" if e.get("worst_measured") is None else
            format_eng(e["worst_measured"], unit),
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
    keys = [k for k in _MEASUREMENTS if k in meas] + [k for k in meas if k not in _MEASUREMENTS]
    for key in keys:
        st, unit = meas[key], _unit_of(key)
        if st.get("mean") is None:
            continue
        w = wc_meas.get(key) or {}
        nominal_value = s.measurement(key)
        spread.append({
            "label": _MEASUREMENTS.get(key, (key, ""))[0],
            "nominal": "—" if nominal_value is None else format_eng(nominal_value, unit),
            "mean": format_eng(st["mean"], unit), "std": format_eng(st["std"], unit),
            "p": _range(st.get("p01"), st.get("p99"), unit),
            "minmax": _range(st.get("min"), st.get("max"), unit),
            "eva": _range(w.get("min"), w.get("max"), unit)})
    return {
        "samples": n, "seed": mc.get("seed"), "passed": passed,
        "failed": None if passed is None else n - passed,
        "distribution": _DISTRIBUTIONS.get(mc.get("distribution"), str(mc.get("distribution"))),
        "yield": format_fraction(y), "ci": format_interval(ci),
        "ci_lo": format_fraction(ci[0]), "ci_hi": format_fraction(ci[1]),
        "ci_method": mc.get("ci_method") or "not recorded", "required": required,
        "below": below, "parts": parts, "limits": limits, "worst_tables": worst_tables,
        "spread": spread, "has_eva_spread": any(r["eva"] != "—" for r in spread),
    }


def _worst_case_view(s: SpecResult, wc: dict[str, Any], nominal: dict[str, LimitResult],
                     tolerances: dict[str, float]) -> dict[str, Any]:
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
        rows.append({
            "name": e["name"], "nominal": format_eng(e["measured_nominal"], unit),
            "eva": _range(e.get("min"), e.get("max"), unit),
            "rss": _range(e.get("rss_min"), e.get("rss_max"), unit),
            "corners": _range(e.get("corners_min"), e.get("corners_max"), unit)
            if has_corners else "—",
            "allowed": lim.bound_text if lim is not None else "—",
            "eva_margin": _signed(e.get("margin"), unit),
            "corners_margin": _signed(e.get("corners_margin"), unit) if has_corners else "—",
            "margin": _signed(margin, unit), "status": status.value, "word": status.word,
            "symbol": _SYMBOL[status]})
        if not has_corners:
            continue
        eva_m, cor_m = e.get("margin"), e.get("corners_margin")
        head = (f"EVA gives {_range(e.get('min'), e.get('max'), unit)} (margin "
                f"{_signed(eva_m, unit)}); the corners give "
                f"{_range(e.get('corners_min'), e.get('corners_max'), unit)} (margin "
                f"{_signed(cor_m, unit)}).")
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
            tol = tolerances.get(item["part"])
            if tol is None and d and c is not None:
                tol = c / d
            direction = "—" if d is None else "value rises" if d > 0 else "value falls" \
                if d < 0 else "no effect"
            items.append({
                "part": item["part"], "direction": direction,
                "normalised": "—" if log_unit else _coefficient(item.get("sensitivity")),
                "per_percent": _signed(None if d is None else d / 100.0, unit),
                "tolerance": _tolerance_text(tol), "contribution": _signed(c, unit),
                "share": "—" if c is None or not half else f"{100.0 * abs(c) / half:.1f} %"})
        sens.append({"name": block["name"], "unit": unit or "(dimensionless)",
                     "method": e.get("sensitivity_method", "not recorded"),
                     "log_unit": log_unit, "rows": items,
                     "more": max(0, (n_parts or 0) - len(items))})
    return {"parts": n_parts, "corners": corners, "rows": rows, "differences": differences,
            "sensitivities": sens, "rss": bool(wc.get("rss")),
            "any_log_unit": any(b["log_unit"] for b in sens),
            "corner_text": f"all {corners} corners (every part at either tolerance end) were "
                           "also evaluated" if corners else
                           f"corners were not evaluated (more than "
                           f"{_MAX_CORNER_PARTS} toleranced parts)"}


_MAX_CORNER_PARTS = 12


def _eva_versus_corners(e: dict[str, Any], unit: str) -> str:
    """Which of EVA and the corners decides a worst-case limit, and by how much, in words."""
    eva_m, cor_m = e.get("margin"), e.get("corners_margin")
    if not e.get("eva_differs") or eva_m is None or cor_m is None:
        return "They agree."
    gap = abs(eva_m - cor_m)
    scale = max(abs(eva_m), abs(cor_m), abs((e.get("max") or 0.0) - (e.get("min") or 0.0)),
                1e-300)
    if cor_m < eva_m:
        lead = f"The corners come {format_eng(gap, unit)} closer to the limit and decide."
        why = ("Over these tolerances the response is not linear in the parts, so the "
               "first-order sum behind EVA understates the worst corner.")
    else:
        lead = f"EVA comes {format_eng(gap, unit)} closer to the limit and decides."
        why = ("No corner reaches as far as the first-order sum of every part's worst "
               "effect: EVA is the more cautious here.")
    if gap < 0.01 * scale:
        why = ("The two agree to within 1 % of the margin, so over these tolerances the "
               "response is close to linear in the parts.")
    return f"{lead} {why}"


def _tolerance_view(s: SpecResult, with_plots: bool = True) -> dict[str, Any] | None:
    """The tolerance section: Monte Carlo yield, worst case and sensitivities, formatted."""
    tol = s.extra_value("tolerance")
    if not isinstance(tol, dict):
        return None
    from .plots import histogram_plot

    nominal = _nominal_rows(s)
    mc, wc = tol.get("monte_carlo"), tol.get("worst_case")
    mc = mc if isinstance(mc, dict) else None
    wc = wc if isinstance(wc, dict) else None
    tolerances = {p["part"]: p.get("tolerance") for p in (mc or {}).get("parts", ())}
    plot = histogram_plot(s) if with_plots and mc is not None else None
    modes = [m for m in tol.get("modes", ()) if isinstance(m, str)]
    return {
        "modes": ", ".join(_MODE_WORDS.get(m, m) for m in modes) or "none recorded",
        "parts": tol.get("parts", 0),
        "mc": None if mc is None else _monte_carlo_view(s, mc, nominal, wc),
        "wc": None if wc is None else _worst_case_view(s, wc, nominal, tolerances),
        "plots": (plot,) if plot is not None else (),
        "cautions": [_caution_view(c) for c in s.cautions if c.code in ("NC202",)],
    }


def _stress_view(s: SpecResult) -> dict[str, Any] | None:
    """The part-stress section: one row per part and quantity, with the stress cautions."""
    data = s.extra_value("stress")
    if not isinstance(data, list) or not data:
        return None
    by_name = {lim.name: lim for lim in s.limits if lim.kind == "stress"}
    rows = []
    for e in data:
        q = str(e.get("quantity", ""))
        unit = _STRESS_UNITS.get(q, "")
        lim = by_name.get(f"stress: {e.get('part')} {q}")
        status = Status(e.get("status", "error"))
        peak, rating, margin = e.get("peak"), e.get("rating"), e.get("margin")
        if status is Status.PASS:
            words = "within its rating"
        elif status is Status.FAIL:
            words = "over its rating" + (f" by {format_eng(-margin, unit)}"
                                         if margin is not None else "")
        elif status is Status.SKIPPED:
            words = "not applicable"
        else:
            words = "not measured" + (f": {lim.message}" if lim is not None and lim.message
                                      else "")
        rows.append({
            "part": e.get("part", "?"), "quantity": _STRESS_QUANTITY.get(q, q),
            "peak": "—" if peak is None else format_eng(peak, unit),
            "rating": "—" if rating is None else format_eng(rating, unit),
            "margin": _signed(margin, unit),
            "used": f"{100.0 * peak / rating:.0f} %" if peak is not None and rating else "—",
            "at": "—" if e.get("at_hz") is None else format_si(e["at_hz"], "Hz", 5),
            "status": status.value, "word": status.word, "symbol": _SYMBOL[status],
            "words": words, "definition": lim.definition if lim is not None else "",
            "where": f"{_display_path(s.spec)}:{lim.line}" if lim is not None and lim.line
            else ""})
    tol = s.extra_value("tolerance")
    mc = tol.get("monte_carlo") if isinstance(tol, dict) else None
    mc_rows = []
    for e in (mc or {}).get("stress") or ():
        q = str(e.get("quantity", ""))
        unit = _STRESS_UNITS.get(q, "")
        status = Status(e.get("status", "error"))
        peak, rating = e.get("peak"), e.get("rating")
        mc_rows.append({
            "part": e.get("part", "?"), "quantity": _STRESS_QUANTITY.get(q, q),
            "peak": "—" if peak is None else format_eng(peak, unit),
            "rating": "—" if rating is None else format_eng(rating, unit),
            "margin": _signed(e.get("margin"), unit),
            "used": f"{100.0 * peak / rating:.0f} %" if peak is not None and rating else "—",
            "at": "—" if e.get("at_hz") is None else format_si(e["at_hz"], "Hz", 5),
            "sample": "—" if e.get("sample") is None else f"#{e['sample']}",
            "status": status.value, "word": status.word, "symbol": _SYMBOL[status]})
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
            "cautions": [_caution_view(c) for c in s.cautions if c.code == "stress"]}


def _family_cell(found: LimitResult | None, checked: bool) -> dict[str, str]:
    if not checked:
        return {"status": "error", "word": "NOT CHECKED", "symbol": "!", "margin": ""}
    if found is None:
        return {"status": "none", "word": "—", "symbol": "", "margin": "not in this variant"}
    return {"status": found.status.value, "word": found.status.word,
            "symbol": _SYMBOL[found.status], "margin": format_margin(found)
            if found.margin is not None else ""}


def _family_views(result: CheckResult, views: list[dict[str, Any]],
                  with_plots: bool = True) -> list[dict[str, Any]]:
    """One view per family: ≥ 2 variants of one spec file, in the order they were checked."""
    from .plots import family_plots

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
                tied = [m.variant or m.label for x, m in found
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
                        + "; ".join(f"{r['variant']} ({r['word']})" for r in bad) + ".")
        else:
            sentence = f"All {len(rows)} variants met every limit."
        status = max((m.status for m in members), key=lambda x: x.rank)
        status = Status.PASS if status is Status.SKIPPED else status
        out.append({
            "number": len(out) + 1, "anchor": f"family-{len(out) + 1}",
            "title": members[0].title, "spec": _display_path(path), "count": len(members),
            "status": status.value, "word": status.word, "symbol": _SYMBOL[status],
            "sentence": sentence, "tables": tables, "names": names,
            "plots": family_plots(members) if with_plots else ()})
    return out


def _extra_rows(value: Any, prefix: str = "", depth: int = 2,
                limit: int = 16) -> list[tuple[str, str]]:
    """A further analysis block flattened to (key, value) rows for a short overview.

    Tables nest into dotted keys down to ``depth`` levels; deeper tables and arrays
    are summarised by their size (the JSON result carries them in full).

    Examples
    --------
    >>> _extra_rows({"modes": ["nominal"], "mc": {"samples": 200, "counts": [1, 2, 3],
    ...              "stats": {"q": {"min": 1.0}}}})
    [('mc.counts', '3 values'), ('mc.samples', '200'), ('mc.stats', '1 entry'), ('modes', 'nominal')]
    """
    rows: list[tuple[str, str]] = []
    key = prefix[:-1] or "value"
    if isinstance(value, dict):
        if depth == 0:
            rows.append((key, f"{len(value)} entr{'y' if len(value) == 1 else 'ies'}"))
        else:
            for k in sorted(value, key=str):
                rows += _extra_rows(value[k], f"{prefix}{k}.", depth - 1, limit)
    elif isinstance(value, (list, tuple)):
        if value and all(isinstance(v, str) for v in value):
            rows.append((key, ", ".join(value)))
        else:
            kind = "entries" if any(isinstance(v, (dict, list)) for v in value) else "values"
            rows.append((key, f"{len(value)} {kind}"))
    elif isinstance(value, float):
        rows.append((key, f"{value:.6g}"))
    else:
        rows.append((key, str(value)))
    if not prefix and len(rows) > limit:
        rows = rows[:limit] + [("…", f"{len(rows) - limit} more in the JSON result")]
    return rows


def build_context(result: CheckResult, with_plots: bool = True) -> dict[str, Any]:
    """Everything the templates show, formatted (pure apart from the git queries)."""
    specs = [_spec_view(s, k + 1, with_plots) for k, s in enumerate(result.specs)]
    families = _family_views(result, specs, with_plots)
    n = result.counts
    failing = [v for v in specs if v["status"] in ("fail", "error")]
    word = result.status.word
    if not result.specs:
        sentence = "No specs were checked."
    elif failing:
        names = "; ".join(f"{v['label']} ({v['verdict']['word']})" for v in failing)
        sentence = (f"{word}: {len(failing)} of {len(specs)} specs did not pass: {names}.")
    else:
        sentence = f"PASS: all {len(specs)} specs met every limit."
    return {
        "combined": len(specs) != 1, "specs": specs, "families": families,
        "status": result.status.value,
        "word": word, "symbol": _SYMBOL[result.status], "sentence": sentence, "counts": n,
        "date": _date_text(result.created_utc), "created_utc": result.created_utc,
        "tool_version": result.tool_version, "safety": SAFETY_CAUTION,
        "run_cautions": [_caution_view(c) for c in result.cautions if c.code != "safety"],
        "title": specs[0]["label"] if len(specs) == 1 else
        f"Compliance report: {len(specs)} specs",
    }


# --------------------------------------------------------------------------- rendering


#: URL scheme of the report's own embedded resources (the plots); nothing else is served
EMBED_SCHEME = "netcheck-embedded"


@functools.lru_cache(maxsize=1)
def _fetcher_class() -> type:
    from weasyprint.urls import URLFetcher, URLFetcherResponse

    class LockedFetcher(URLFetcher):
        """A weasyprint URL fetcher that serves only the report's own embedded resources.

        ``resources`` maps ``netcheck-embedded:`` URLs to (bytes, media type). Every
        other URL (``file:``, ``http:``, ``https:``, ``data:``...) is refused. Each
        request is recorded in ``requests``.
        """

        def __init__(self, resources: dict[str, tuple[bytes, str]] | None = None) -> None:
            super().__init__(timeout=1, allowed_protocols=(), allow_redirects=False,
                             fail_on_errors=False)
            self.resources = dict(resources or {})
            self.requests: list[str] = []

        def fetch(self, url: str, headers: Any = None) -> Any:
            self.requests.append(url)
            if url in self.resources:
                body, media_type = self.resources[url]
                return URLFetcherResponse(url, body, {"Content-Type": media_type})
            raise ValueError(f"the netcheck report fetches nothing (refused {url[:80]!r})")

    return LockedFetcher


def locked_fetcher(resources: dict[str, tuple[bytes, str]] | None = None) -> Any:
    """A new LockedFetcher serving only ``resources``; ``.requests`` records every URL."""
    return _fetcher_class()(resources)


def _embed_plots(context: dict[str, Any]) -> dict[str, tuple[bytes, str]]:
    """Give every plot a ``netcheck-embedded:`` URL; return the URL → SVG bytes table."""
    resources: dict[str, tuple[bytes, str]] = {}

    def embed(plots: Any, stem: str) -> list[str]:
        urls = []
        for k, plot in enumerate(plots, 1):
            url = f"{EMBED_SCHEME}:{stem}-{k}.svg"
            resources[url] = (plot.svg.encode("utf-8"), "image/svg+xml")
            urls.append(url)
        return urls

    for view in context["specs"]:
        view["plot_urls"] = embed(view["plots"], f"plot-{view['number']}")
        if view.get("tolerance"):
            view["tolerance"]["plot_urls"] = embed(view["tolerance"]["plots"],
                                                   f"tolerance-{view['number']}")
    for fam in context.get("families", ()):
        fam["plot_urls"] = embed(fam["plots"], f"family-{fam['number']}")
    return resources


@functools.lru_cache(maxsize=1)
def _environment() -> Any:
    import jinja2

    env = jinja2.Environment(loader=jinja2.PackageLoader("netcheck.report", "templates"),
                             autoescape=True, undefined=jinja2.StrictUndefined,
                             trim_blocks=True, lstrip_blocks=True)
    return env


@functools.lru_cache(maxsize=1)
def _stylesheet_text() -> str:
    from importlib import resources

    return resources.files("netcheck.report").joinpath("templates/report.css").read_text("utf-8")


@functools.lru_cache(maxsize=1)
def _stylesheet() -> Any:
    """The parsed report stylesheet (parsed once; it refers to no URL)."""
    from weasyprint import CSS

    return CSS(string=_stylesheet_text(), url_fetcher=locked_fetcher())


def html_to_pdf(html: str, stream: IO[bytes], fetcher: Any = None, css: str | None = None) -> None:
    """Render ``html`` with the report stylesheet as PDF into ``stream``.

    ``fetcher`` (default: a LockedFetcher with no resources) answers every URL request;
    nothing is attached to the PDF.
    """
    from weasyprint import CSS, HTML

    fetcher = fetcher if fetcher is not None else locked_fetcher()
    sheet = _stylesheet() if css is None else CSS(string=css, url_fetcher=fetcher)
    HTML(string=html, url_fetcher=fetcher, base_url=None).write_pdf(
        target=stream, stylesheets=[sheet], attachments=[], pdf_identifier=False,
        presentational_hints=False)


def render_html(result: CheckResult) -> tuple[str, dict[str, tuple[bytes, str]]]:
    """The report as HTML, and the embedded resources (plots) it refers to."""
    context = build_context(result)
    resources = _embed_plots(context)
    return _environment().get_template("report.html.j2").render(**context), resources


def render(result: CheckResult, stream: IO[bytes], options: Any = None,
           fetcher: Any = None) -> None:
    """Write the PDF report of every spec in ``result`` to the binary ``stream``.

    ``fetcher``, for tests, is a LockedFetcher to use (its resources are replaced by
    the report's plots).
    """
    html, resources = render_html(result)
    if fetcher is None:
        fetcher = locked_fetcher(resources)
    else:
        fetcher.resources = dict(resources)
    html_to_pdf(html, stream, fetcher)


def render_bytes(result: CheckResult, fetcher: Any = None) -> bytes:
    """The PDF report as bytes."""
    import io

    buf = io.BytesIO()
    render(result, buf, None, fetcher)
    return buf.getvalue()


def render_per_spec(result: CheckResult, directory: str | os.PathLike,
                    options: Any = None) -> list[Path]:
    """One PDF per spec in ``directory`` (see :func:`report_names`); returns the paths."""
    from ..outputs import open_output

    written = []
    for s, name in zip(result.specs, report_names(result.specs)):
        one = CheckResult((s,), result.tool_version, result.created_utc, result.cautions)
        path = Path(directory) / name
        with open_output(path, binary=True) as stream:
            render(one, stream, options)
        written.append(path)
    return written
