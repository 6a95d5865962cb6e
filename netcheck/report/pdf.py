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
import os
import re
import shutil
import subprocess
from dataclasses import dataclass
from pathlib import Path
from typing import IO, Any

from ..result import SAFETY_CAUTION, CheckResult, LimitResult, SpecResult, Status
from ..units import format_eng, format_si

__all__ = ["render", "render_per_spec", "render_bytes", "report_names", "build_context",
           "git_state", "GitState", "locked_fetcher", "html_to_pdf", "format_margin",
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


from ..provenance import GIT_TIMEOUT_S, GitState, git_state  # noqa: E402  (re-exported)


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
        "combined": len(specs) != 1, "specs": specs, "status": result.status.value,
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
    resources = {}
    for view in context["specs"]:
        urls = []
        for k, plot in enumerate(view["plots"], 1):
            url = f"{EMBED_SCHEME}:plot-{view['number']}-{k}.svg"
            resources[url] = (plot.svg.encode("utf-8"), "image/svg+xml")
            urls.append(url)
        view["plot_urls"] = urls
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
