"""Renderers: each is ``render(result, stream, options) -> None`` over one CheckResult.

The registry maps a format name to ``"module:function"``; the module is imported
only when that format is asked for, so heavy dependencies stay unloaded otherwise.
"""

from __future__ import annotations

import importlib
from dataclasses import dataclass, field
from typing import IO, Any, Callable

from ..result import CheckResult

__all__ = ["RENDERERS", "RenderOptions", "get_renderer", "render_to", "NAME_SHOWN_MAX",
           "TEXT_SHOWN_MAX"]

#: The most characters of a name or title (a spec's title, a limit's or variant's name)
#: the Markdown summary and the PDF report show; a cut is marked with the count left
#: out. The spec loader already refuses longer than 1,000 (spec-205); this keeps headings
#: and table cells readable, and a report cheap, whatever the result holds.
NAME_SHOWN_MAX = 200
#: The most characters of any other text from the inputs (a path, a message, an error
#: with its traceback) the Markdown summary and the PDF report show in one place.
TEXT_SHOWN_MAX = 8_192

#: format name → (``module:function``, binary output?)
RENDERERS: dict[str, tuple[str, bool]] = {
    "text": ("netcheck.render.text:render", False),
    "json": ("netcheck.render.jsonreport:render", False),
    "junit": ("netcheck.render.junitreport:render", False),
    "sarif": ("netcheck.render.sarifreport:render", False),
    "markdown": ("netcheck.render.markdown:render", False),
    "pdf": ("netcheck.report.pdf:render", True),
}


@dataclass(frozen=True, slots=True)
class RenderOptions:
    """Options a renderer may read; each ignores what it does not use."""

    color: bool = False
    verbose: bool = False
    #: terminal only: show the specs that did not pass and the summary (``--quiet``)
    quiet: bool = False
    extra: dict[str, Any] = field(default_factory=dict)


def get_renderer(name: str) -> Callable[[CheckResult, IO, RenderOptions], None]:
    """Import and return the renderer registered as ``name``."""
    target, _ = RENDERERS[name]
    module, func = target.split(":")
    return getattr(importlib.import_module(module), func)


def render_to(name: str, result: CheckResult, path: str,
              options: RenderOptions | None = None, *, guard: Any = None) -> None:
    """Render ``result`` as ``name`` into ``path`` (``-`` = stdout), atomically.

    ``guard`` (an :class:`netcheck.render.outputs.OutputGuard`) holds the run's inputs, which
    ``path`` may not name. Raises :class:`netcheck.exceptions.RenderError` when the file
    is refused or cannot be written; a file that was there is then left as it was.
    """
    from .outputs import open_output
    _, binary = RENDERERS[name]
    renderer = get_renderer(name)
    with open_output(path, binary=binary, guard=guard) as stream:
        renderer(result, stream, options or RenderOptions())
