"""The report's data step: CheckResult → formatted per-spec views and the document context."""

from __future__ import annotations

from pathlib import Path
from typing import Any

from ..runs.provenance import GitState, git_state
from ..result import (HAZARD_SEVERITY, MODEL_STATEMENT, CheckResult,
                      LimitResult, SpecResult, Status, hazard_warranted)
from ..netlist.units import format_eng, format_si
from ..spec.limits import LIMITS
from .formatting import (LISTING_ROWS_MAX, LISTING_TOTAL_MAX, MEASUREMENTS, caution_view,
                         cell_text, date_text, display_path, format_margin, format_measured,
                         listing, shown_name, status_view, unit_of)
from ..render.findings import row_name
from .plot_gain import limit_tag
from .view_family import family_views
from .view_bias import bias_view
from .view_noise import noise_view
from .view_stress import stress_view
from .view_tolerance import tolerance_view

__all__ = ["build_context", "methods_section", "METHODS_STATEMENT"]

_ENGINES = {
    "dense": "dense: (G + jωC)·x = b solved directly at every grid point (LAPACK LU)",
    "sparse": "sparse: (G + jωC)·x = b factorised at every grid point (SuperLU)",
    "pole-zero": "pole–zero form from the generalized eigenvalues of the MNA pencil, checked "
                 "against direct solves",
}

#: sections of docs/methods.md for the result kinds that are not limit kinds (a limit
#: kind's section is :meth:`~netcheck.spec.limits.base.Limit.methods_anchor`)
_METHOD_SECTIONS = {"stress": "stress", "worst_case": "worst-case", "yield": "monte-carlo"}


def methods_section(kind: str) -> str | None:
    """The anchor of docs/methods.md that tells how a result of ``kind`` is measured."""
    if kind in LIMITS:
        return LIMITS[kind].methods_anchor()
    return _METHOD_SECTIONS.get(kind)


def _method(lim: LimitResult) -> str:
    """The one-line method statement of a result: its own, or its kind's (an error result
    of a limit kind records none)."""
    return lim.method or (LIMITS[lim.kind].METHOD if lim.kind in LIMITS else "")


def _recorded_git(value: Any) -> GitState | None:
    """A git state the result already carries (``extra["git"]``: GitState or its dict)."""
    if isinstance(value, GitState):
        return value
    if isinstance(value, dict) and "text" in value:
        return GitState(value.get("commit"), value.get("dirty"), str(value["text"]),
                        tuple(value.get("changed_inputs", ())))
    return None


def _limit_row(lim: LimitResult, spec_path: str) -> dict[str, Any]:
    fig = lim.figures  # as many figures as tell the bounds and the value apart
    return {
        "name": row_name(lim), "kind": lim.kind, **status_view(lim.status),
        "measured": fig.measured, "bound": fig.bound, "margin": fig.margin,
        # bounds that needed more figures may wrap after "…" (the others stay on one line)
        "bound_cell": fig.bound if fig.place is None else cell_text(fig.bound),
        "bound_wraps": fig.place is not None,
        "at": fig.at or "—", "at_full": fig.at_full, "below_floor": lim.below_floor,
        "definition": lim.definition,
        "method": _method(lim), "method_ref": methods_section(lim.kind),
        "message": lim.message, "unit": lim.unit or "(dimensionless)",
        "where": f"{display_path(spec_path)}:{lim.line}" if lim.line else
        display_path(spec_path),
    }


def _order_key(r: LimitResult) -> tuple[int, int]:
    return -r.status.rank, r.index


def _order(limits: tuple[LimitResult, ...]) -> list[LimitResult]:
    return sorted(limits, key=_order_key)


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
        items = [f"{shown_name(lim.name)}: {format_measured(lim)} against {lim.bound_text}, "
                 f"margin {format_margin(lim)}" for lim in failed]
        items += [f"{shown_name(lim.name)}: not measured ({lim.message or 'no value'})"
                  for lim in errored]
    elif total:
        skipped = f" ({n['skipped']} skipped)" if n["skipped"] else ""
        headline = f"PASS: all {n['pass']} limit{'s' if n['pass'] != 1 else ''} met{skipped}."
        items = ["every margin is zero or more"]
    else:
        headline, items = "PASS: the spec has no limits to judge.", []
    shown = 5
    return {**status_view(s.status),
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


def _role(s: SpecResult, k: int, path: str) -> str:
    """What the ``k``-th input file of a spec is: the spec, the netlist or an included file."""
    return "spec" if path == s.spec else "netlist" if k == 0 else "included file"


def _spec_view(s: SpecResult, number: int, with_plots: bool = True) -> dict[str, Any]:
    from .plot_response import spec_plots

    hashes = dict(s.inputs)
    inputs = [{"path": display_path(path), "role": _role(s, k, path), "sha256": digest}
              for k, (path, digest) in enumerate(s.inputs)]
    design = [i["path"] for i in inputs if i["role"] != "spec"] or (
        [display_path(s.netlist)] if s.netlist else [])
    git = _recorded_git(s.extra_value("git"))
    if git is None:
        git = git_state(Path(s.spec).parent, tuple(p for p, _ in s.inputs))
    sources, rows_left = [], LISTING_TOTAL_MAX
    for k, (path, text) in enumerate(s.source_text):
        shown = listing(text, max_rows=min(LISTING_ROWS_MAX, rows_left))
        rows_left -= len(shown["rows"])
        sources.append({"path": display_path(path), "sha256": hashes.get(path, ""),
                        "role": _role(s, k, path), **shown})
    cautions = [caution_view(c) for c in s.cautions]
    measurements = [{"label": MEASUREMENTS.get(k, (k, ""))[0], "value": format_eng(v, unit_of(k))}
                    for k, v in s.measurements]
    tolerance = tolerance_view(s, with_plots)
    stress = stress_view(s)
    bias = bias_view(s)
    noise = noise_view(s)
    shown = {"git", "stress", "operating_point", "noise"} | ({"tolerance"} if tolerance else set())
    extra = [(k, _extra_rows(v)) for k, v in s.extra if k not in shown]
    n = s.counts
    return {
        "number": number, "label": s.label, "title": s.title, "variant": s.variant,
        "spec": display_path(s.spec), "netlist": display_path(s.netlist),
        "design_files": design, "status": s.status.value, "word": s.status.word,
        "verdict": _verdict(s), "error": s.error, "counts": n, "total": len(s.limits),
        "inputs": inputs, "git": git, "sweep": _sweep_view(s),
        # "tag": the limit's number as the plots tag it (#1 is the first limit of the spec)
        "rows": [{**_limit_row(lim, s.spec), "tag": limit_tag(k)}
                 for k, lim in sorted(enumerate(s.limits), key=lambda p: _order_key(p[1]))],
        "measurements": measurements,
        # hazard cautions at the top of the spec's report; the others in its Cautions section
        "cautions": [c for c in cautions if c["severity"] != HAZARD_SEVERITY],
        "hazards": [c for c in cautions if c["severity"] == HAZARD_SEVERITY],
        "plots": spec_plots(s) if with_plots else (), "sources": sources, "extra": extra,
        "anchor": f"spec-{number}", "tolerance": tolerance, "stress": stress, "bias": bias,
        "noise": noise,
    }


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


#: the report's one citation of the methods document, in the front matter; each limit's
#: method line names its section (:func:`methods_section`)
METHODS_STATEMENT = ("How the circuit is solved, how each limit is measured, what the model "
                     "leaves out, and the references: docs/methods.md in netcheck's "
                     "documentation. Each limit's method line names its section there "
                     "(methods.md#gain, for instance).")

#: the hazardous-voltage caution of the front matter, after the model statement (which
#: already says to verify by measurement); the terminal and the other documents print
#: :data:`netcheck.result.HAZARD_CAUTION`
_HAZARD_PRACTICE = ("Resonant parts can see far more than the input voltage (the spec "
                    "reports name the parts): follow local codes and licensed practice at "
                    "hazardous voltages.")


def build_context(result: CheckResult, with_plots: bool = True) -> dict[str, Any]:
    """Everything the templates show, formatted (pure apart from the git queries).

    Parameters
    ----------
    result : CheckResult
        The run to report.
    with_plots : bool
        Draw the figures (matplotlib); without, every ``plots`` entry is empty.

    Returns
    -------
    dict
        ``specs`` (one view per spec), ``families`` (one view per family of variants),
        the run's verdict in words, its date, tool version and cautions.
    """
    specs = [_spec_view(s, k + 1, with_plots) for k, s in enumerate(result.specs)]
    families = family_views(result, specs, with_plots)
    n = result.counts
    failing = [v for v in specs if v["status"] in ("fail", "error")]
    word = result.status.word
    if not result.specs:
        sentence = "No specs were checked."
    elif failing:
        names = "; ".join(f"{shown_name(v['label'])} ({v['verdict']['word']})"
                          for v in failing)
        sentence = (f"{word}: {len(failing)} of {len(specs)} specs did not pass: {names}.")
    else:
        sentence = f"PASS: all {len(specs)} specs met every limit."
    return {
        "combined": len(specs) != 1, "specs": specs, "families": families,
        **status_view(result.status), "sentence": sentence, "counts": n,
        "date": date_text(result.created_utc), "created_utc": result.created_utc,
        "tool_version": result.tool_version,
        # once per document, in its front matter: the model statement always, the
        # hazardous-voltage caution when some spec warrants it
        "model_statement": MODEL_STATEMENT, "methods_statement": METHODS_STATEMENT,
        "hazard": _HAZARD_PRACTICE if hazard_warranted(result.specs) else "",
        "run_cautions": [caution_view(c) for c in result.cautions],
        "title": shown_name(specs[0]["label"]) if len(specs) == 1 else
        f"Compliance report: {len(specs)} specs",
    }
