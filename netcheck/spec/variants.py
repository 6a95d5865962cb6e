"""The ``[variants]`` table of a spec: a family of variants checked against one spec."""

from __future__ import annotations

from dataclasses import dataclass

from .reader import SpecReader

__all__ = ["VARIANT_KEYS", "VariantSet", "Variants", "parse_variants"]

VARIANT_KEYS = {"table": "CSV file next to the spec: header name,<param>,...; one variant a row",
                "set": "array of {name, params = {param = value}} tables",
                "netlists": "list of netlist paths or globs sharing this spec (relative to it)"}


@dataclass(frozen=True, slots=True)
class VariantSet:
    """One ``[[variants.set]]`` entry: a name and its ``.param`` overrides (lower case)."""

    name: str
    params: tuple[tuple[str, float], ...] = ()


@dataclass(frozen=True, slots=True)
class Variants:
    """The ``[variants]`` table as written and checked: the CSV table's path as written,
    the sets, and the netlist paths or globs. The files are read, confined to the design
    root and counted against their budgets when the jobs are expanded
    (:mod:`netcheck.runs.jobs`): only then is the family known."""

    table: str | None = None
    sets: tuple[VariantSet, ...] = ()
    netlists: tuple[str, ...] = ()


def parse_variants(table: object, path: str) -> Variants:
    """The :class:`Variants` of the raw ``[variants]`` table of the spec at ``path``
    (SpecError with the key path when a key, a type or a value is wrong)."""
    rd = SpecReader(table, "variants", path, VARIANT_KEYS)
    written = rd.text("table") if rd.has("table") else None
    sets = rd.raw("set", [])
    if not isinstance(sets, list):
        rd.fail("set", "expected an array of tables ([[variants.set]])")
    parsed = []
    for i, entry in enumerate(sets):
        sub = SpecReader(entry, f"variants.set[{i}]", path, {"name": "", "params": ""})
        name = sub.text("name", required=True)
        params = sub.raw("params", {})
        if not isinstance(params, dict):
            sub.fail("params", "expected a table of parameter = value")
        values = tuple((k.lower(), sub.number("params", value=v, label=f"params.{k}"))
                       for k, v in params.items())
        parsed.append(VariantSet(name, values))
    patterns = rd.raw("netlists", [])
    if isinstance(patterns, str):
        patterns = [patterns]
    if not isinstance(patterns, list) or not all(isinstance(p, str) and p.strip()
                                                 for p in patterns):
        rd.fail("netlists", f"expected a list of paths or globs, got {patterns!r:.80}")
    return Variants(written, tuple(parsed), tuple(patterns))
