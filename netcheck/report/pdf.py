"""The PDF compliance report: CheckResult → view data → jinja2 HTML + CSS → weasyprint PDF.

A data step (:func:`build_context`, in ``context.py`` with one ``view_*.py`` module per
analysis section) turns the result into plain, already formatted values; the templates
in ``templates/`` only lay them out, with autoescaping on, so text from netlists and
specs is always shown literally. weasyprint runs with a LockedFetcher
(:func:`locked_fetcher`) that serves only the report's own plots (SVG documents kept in
memory under ``netcheck-embedded:`` URLs, drawn as vectors) and refuses every other URL,
so no file, network or data resource is ever read while rendering, and nothing is
attached to the PDF. The stylesheet is passed as a string.

Text from the inputs is bounded so that no input makes the layout slow: names and
titles (the templates' ``name`` filter) to :data:`~netcheck.render.NAME_SHOWN_MAX`
characters, any other printed text to :data:`~netcheck.render.TEXT_SHOWN_MAX`, and the
appendix listings to :data:`~netcheck.report.formatting.LISTING_ROWS_MAX` rows a file
(:data:`~netcheck.report.formatting.LISTING_TOTAL_MAX` a spec); every cut says so.

jinja2, weasyprint and matplotlib are imported inside functions only.
"""

from __future__ import annotations

import contextlib
import datetime as _dt
import functools
import os
import re
import threading
from collections.abc import Iterator
from pathlib import Path
from typing import IO, Any

from ..exceptions import RenderError
from ..runs.provenance import GitState, git_state
from ..result import CheckResult, SpecResult
from .context import build_context
from ..render import TEXT_SHOWN_MAX
from ..netlist.source import clip
from .formatting import (format_fraction, format_interval, format_margin, format_measured,
                         format_range, shown_name)

__all__ = ["render", "render_per_spec", "render_bytes", "report_names", "build_context",
           "git_state", "GitState", "locked_fetcher", "html_to_pdf", "font_clock",
           "require_libraries",
           "format_margin", "format_fraction", "format_interval", "format_range",
           "format_measured"]


#: what to install when the Pango library, which weasyprint loads at import, is missing
PANGO_HINT = ("install the Pango library (Debian/Ubuntu: apt-get install libpango-1.0-0 "
              "libpangoft2-1.0-0 libharfbuzz-subset0; Fedora: dnf install pango)")


def require_libraries() -> None:
    """Import the libraries the report needs, or say in one line what to install.

    jinja2, weasyprint and matplotlib are ordinary dependencies of netcheck, so they are
    missing only from a broken install; weasyprint also needs the Pango system library,
    which pip cannot install.

    Raises
    ------
    RenderError
        Naming the missing package or library and how to install it.
    """
    for name in ("jinja2", "matplotlib", "weasyprint"):
        try:
            __import__(name)
        except ImportError as err:
            raise RenderError(
                f"the PDF report needs the Python package {err.name or name}, which is not "
                "installed: reinstall netcheck with pip (it is one of its dependencies)",
                code="run-400") from None
        except OSError as err:  # weasyprint could not load a system library
            detail = " ".join(str(err).split())[:200]
            raise RenderError(f"the PDF report cannot load a system library ({detail}): "
                              f"{PANGO_HINT}", code="run-400") from None


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


def _bounded(value: Any) -> Any:
    """Every text a template prints, cut at :data:`~netcheck.render.TEXT_SHOWN_MAX`
    characters (the cut marked): a net under the views' own bounds, so no text from an
    input can make the layout take minutes. Markup (already escaped) passes as it is."""
    if isinstance(value, str) and len(value) > TEXT_SHOWN_MAX and \
            not hasattr(value, "__html__"):
        return clip(value, TEXT_SHOWN_MAX)
    return value


@functools.lru_cache(maxsize=1)
def _environment() -> Any:
    """The templates' environment: autoescaping, every printed text bounded
    (:func:`_bounded`), and the ``name`` filter for names and titles
    (:func:`~netcheck.report.formatting.shown_name`)."""
    import jinja2

    env = jinja2.Environment(loader=jinja2.PackageLoader("netcheck.report", "templates"),
                             autoescape=True, undefined=jinja2.StrictUndefined,
                             trim_blocks=True, lstrip_blocks=True, finalize=_bounded)
    env.filters["name"] = shown_name
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


_CLOCK_LOCK = threading.Lock()


def _epoch_seconds(created_utc: str) -> int:
    """Seconds since 1970 of a ``YYYY-MM-DDTHH:MM:SSZ`` stamp; 0 when there is none.

    >>> _epoch_seconds("2026-01-01T00:00:00Z"), _epoch_seconds("")
    (1767225600, 0)
    """
    try:
        t = _dt.datetime.strptime(created_utc, "%Y-%m-%dT%H:%M:%SZ")
    except (TypeError, ValueError):
        return 0
    return int(t.replace(tzinfo=_dt.timezone.utc).timestamp())


@contextlib.contextmanager
def font_clock(created_utc: str) -> Iterator[None]:
    """Pin the time stamped into embedded font subsets to the report's own time.

    Without HarfBuzz's subsetter (libharfbuzz-subset0), weasyprint subsets fonts with
    fontTools, whose ``TTFont.save`` writes the current time into each subset's
    ``head.modified`` field, so two runs a second apart gave different PDF bytes.
    fontTools takes that time from ``SOURCE_DATE_EPOCH`` when it is set (the
    reproducible-builds convention), so it is set, for the duration of the rendering
    only, to the report's creation time (which itself comes from ``SOURCE_DATE_EPOCH``
    or the clock, once per run). HarfBuzz's subsetter keeps the font's own stamp; the
    report is reproducible either way. The previous value is restored afterwards.
    """
    with _CLOCK_LOCK:
        old = os.environ.get("SOURCE_DATE_EPOCH")
        os.environ["SOURCE_DATE_EPOCH"] = str(_epoch_seconds(created_utc))
        try:
            yield
        finally:
            if old is None:
                os.environ.pop("SOURCE_DATE_EPOCH", None)
            else:
                os.environ["SOURCE_DATE_EPOCH"] = old


def html_to_pdf(html: str, stream: IO[bytes], fetcher: Any = None, css: str | None = None,
                created_utc: str = "") -> None:
    """Render ``html`` with the report stylesheet as PDF into ``stream``.

    ``fetcher`` (default: a LockedFetcher with no resources) answers every URL request;
    nothing is attached to the PDF. ``created_utc`` (``YYYY-MM-DDTHH:MM:SSZ``) is the
    time stamped into embedded fonts (see :func:`font_clock`).
    """
    from weasyprint import CSS, HTML

    fetcher = fetcher if fetcher is not None else locked_fetcher()
    sheet = _stylesheet() if css is None else CSS(string=css, url_fetcher=fetcher)
    with font_clock(created_utc):
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
    html_to_pdf(html, stream, fetcher, created_utc=result.created_utc)


def render_bytes(result: CheckResult, fetcher: Any = None) -> bytes:
    """The PDF report as bytes."""
    import io

    buf = io.BytesIO()
    render(result, buf, None, fetcher)
    return buf.getvalue()


def render_per_spec(result: CheckResult, directory: str | os.PathLike,
                    options: Any = None, *, guard: Any = None,
                    on_error: Any = None) -> list[Path]:
    """One PDF per spec in ``directory`` (see :func:`report_names`); returns the paths written.

    Parameters
    ----------
    result : CheckResult
    directory : str or path-like
        The folder (created if needed).
    options : RenderOptions, optional
    guard : netcheck.render.outputs.OutputGuard, optional
        The run's inputs and other outputs: a report file that would replace one of
        them is refused (``run-401``) and the next is written.
    on_error : callable, optional
        ``on_error(path, exception)`` for a report that could not be written (refused,
        a write error, or a bug while rendering it); the others are still written.
        Without it the first such exception is raised after all the others are written.
    """
    from ..render.outputs import open_output

    written, failures = [], []
    for s, name in zip(result.specs, report_names(result.specs)):
        one = CheckResult((s,), result.tool_version, result.created_utc, result.cautions)
        path = Path(directory) / name
        try:
            if guard is not None:
                guard.claim(path, "--pdf")
            with open_output(path, binary=True) as stream:
                render(one, stream, options)
        except Exception as exc:  # noqa: BLE001 - one report's trouble spares the others
            if on_error is None:
                failures.append(exc)
            else:
                on_error(path, exc)
            continue
        written.append(path)
    if failures:
        raise failures[0]
    return written
