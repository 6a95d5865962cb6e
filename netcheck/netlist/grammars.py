"""Load the shipped lark grammars (installed package data, or the source tree)."""

from __future__ import annotations

import functools
from importlib import resources
from pathlib import Path

from lark import Lark

__all__ = ["grammar_text", "parser"]


def grammar_text(name: str) -> str:
    """Return the text of ``grammar/<name>`` as shipped with the package."""
    try:
        return resources.files("netcheck.grammar").joinpath(name).read_text("utf-8")
    except (ModuleNotFoundError, FileNotFoundError):
        # running from a source checkout: grammar/ sits beside netcheck/
        return (Path(__file__).resolve().parents[2] / "grammar" / name).read_text("utf-8")


@functools.cache
def parser(name: str) -> Lark:
    """A cached LALR parser for ``grammar/<name>`` with positions on every node."""
    return Lark(grammar_text(name), parser="lalr", propagate_positions=True,
                maybe_placeholders=False)
