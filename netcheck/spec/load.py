"""Spec files (TOML, read with tomllib) → a validated, frozen Spec."""

from __future__ import annotations

import dataclasses
import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .guard import (MAX_FREQUENCY_HZ, MAX_LIMITS, MAX_NESTING, MAX_PATH_CHARS,
                          MAX_SWEEP_POINTS, MAX_TEXT_CHARS, MIN_FREQUENCY_HZ,
                          MIN_SWEEP_POINTS, check_count, check_text, check_text_lengths,
                          confine, design_root, inside_root, key_path_at, long_string,
                          nesting_depth, resolve_design_root, table_depth, text_budget,
                          validate_sweep)
from ..exceptions import TEXT_MAX, SpecError
from ..netlist.source import UNUSABLE_CODE, SourceFile, printable, read_text
from .reader import SWEEP_KEYS, SpecReader, Sweep, shown_value
from ..netlist.ports import PORT_SOURCE, PortSpec
from .outputs import check_output_names, limit_output, output_node, parse_outputs
from .ports import check_port_limits, parse_ports
from .stress import StressLimit, parse_stress, stress_lines
from .tolerances import Analysis, Tolerances, parse_analysis, parse_tolerances
from .variants import Variants, parse_variants

__all__ = ["Sweep", "Spec", "load_spec", "parse_spec", "read_toml", "validate_sweep",
           "design_root", "inside_root", "SpecReader", "TOP_KEYS", "locate",
           "MAX_SWEEP_POINTS", "MIN_SWEEP_POINTS", "MAX_FREQUENCY_HZ", "MIN_FREQUENCY_HZ",
           "MAX_NESTING", "MAX_LIMITS", "MAX_TEXT_CHARS", "MAX_PATH_CHARS", "part_models"]


#: Top-level keys of a spec and what they hold (for docs, did-you-mean and the loader).
TOP_KEYS: dict[str, str] = {
    "title": "report title (default: the netlist's title line)",
    "netlist": "netlist path, relative to the spec file",
    "source": "independent source giving the stimulus",
    "output": "output node, or [positive, negative] for a differential output",
    "outputs": "named outputs: a table of name = node or [positive, negative] (instead of "
               "output; the first is the main one, limits name theirs with output = name)",
    "root": "design root that .include may not leave (relative to the spec file)",
    "allow_negative": "accept negative R, L, C values",
    "sweep": "sweep table: start, stop, points_per_decade",
    "limits": "array of limit tables",
    "tolerances": "part tolerances",
    "analysis": "nominal / worst case / Monte Carlo settings",
    "stress": "array of part-stress limits",
    "variants": "variant family",
    "ports": "the terminations: input { node, ohms } driven through Rs, output { node, "
             "ohms } loaded by RL (instead of source and output)",
    "part_models": "subcircuits that each model one physical part (names, globs allowed), "
                   "e.g. [\"QX10\"]: no E-series lint inside, stress judged at the ports",
}
@dataclass(frozen=True, slots=True)
class Spec:
    """A validated spec file, complete when loaded.

    ``stress``, ``tolerances``, ``analysis`` and ``variants`` hold the parsed
    ``[[stress]]``, ``[tolerances]``, ``[analysis]`` and ``[variants]`` tables (None
    when the spec has no such table), so every error in them is raised by
    :func:`parse_spec`. What needs the circuit (matching part names and globs against
    the netlist) is left to the analyses; what needs other files (the variant CSV
    table, the netlist globs) to the expansion of the jobs (:mod:`netcheck.runs.jobs`).
    """

    path: str
    title: str
    netlist: str
    source: str
    output: tuple[str, str]
    sweep: Sweep
    limits: tuple[Any, ...]
    root: str | None = None
    allow_negative: bool = False
    text: str = field(default="", repr=False)
    tables: tuple[tuple[str, Any], ...] = field(default=(), repr=False)
    design_root: str | None = None
    #: subcircuit names (fnmatch globs, case-insensitive) that each model one physical part
    part_models: tuple[str, ...] = ()
    #: the ``[[stress]]`` tables (:mod:`netcheck.spec.stress`); None when there are none
    stress: tuple[StressLimit, ...] | None = None
    #: the ``[tolerances]`` table (:mod:`netcheck.spec.tolerances`); None when absent
    tolerances: Tolerances | None = None
    #: the ``[analysis]`` table (:mod:`netcheck.spec.tolerances`); None when absent
    analysis: Analysis | None = None
    #: the ``[variants]`` table (:mod:`netcheck.spec.variants`); None when absent
    variants: Variants | None = None
    #: the ``[ports]`` table (:mod:`netcheck.spec.ports`); None when absent (then
    #: ``source`` and ``output`` are the spec's own)
    ports: PortSpec | None = None
    #: the named outputs of ``[outputs]`` (name, (node, reference)), the main one first;
    #: () for a spec with the single ``output`` key
    outputs: tuple[tuple[str, tuple[str, str]], ...] = ()
    #: the output each limit judges, by name, parallel to ``limits``; () without outputs
    limit_outputs: tuple[str, ...] = ()

    def output_of(self, k: int) -> str | None:
        """The name of the output ``limits[k]`` (k its position in ``limits``) judges;
        None for a spec without ``[outputs]``."""
        return self.limit_outputs[k] if self.limit_outputs else None

    def output_pair(self, name: str | None) -> tuple[str, str]:
        """(node, reference) of the output named ``name`` (None: the main one)."""
        return dict(self.outputs).get(name, self.output) if name else self.output

    def table(self, key: str) -> Any:
        """A raw top-level table as written (tolerances, analysis, stress, variants)."""
        return dict(self.tables).get(key)


_LONE_CR = re.compile(r"\r(?!\n)")


def _lone_cr(text: str, path: str) -> None:
    """Refuse a carriage return that is not part of a CR LF pair (netlist-117).

    TOML ends lines with LF or CR LF only, so a spec saved with classic Mac OS line
    ends (a lone CR) would otherwise get the TOML reader's bare "invalid statement".
    """
    found = _LONE_CR.search(text)
    if found is None:
        return
    pos = found.start()
    line = text.count("\n", 0, pos) + 1
    column = pos - (text.rfind("\n", 0, pos) + 1) + 1
    raise SpecError("the spec has lone carriage-return (CR) line ends (classic Mac OS); "
                    "TOML reads LF or CR LF line ends only: save the file with LF or CR LF "
                    "line ends", SourceFile(path, text).span(line, column),
                    code=UNUSABLE_CODE, path=path)


def _decode(text: str, path: str) -> dict:
    """The TOML document of ``text``, its budgets checked.

    Lone-CR line ends are refused (netlist-117), and nesting and string literals over their
    budgets (spec-205), before the TOML reader runs; text values and keys over their length
    budget after it (spec-205, located at the key:
    :func:`netcheck.spec.guard.check_text_lengths`).
    """
    _lone_cr(text, path)
    depth, over = nesting_depth(text)
    if over >= 0:
        line = text.count("\n", 0, over) + 1
        column = over - (text.rfind("\n", 0, over) + 1) + 1
        raise SpecError(f"arrays and inline tables nest {depth} deep, over the nesting "
                        f"budget of {MAX_NESTING}", SourceFile(path, text).span(line, column),
                        code="spec-205", path=path)
    at, length, kind = long_string(text)
    if at >= 0:
        where = key_path_at(text, at)
        budget, what = text_budget(where) if kind == "string" else \
            (MAX_TEXT_CHARS, "one key of a spec")
        line = text.count("\n", 0, at) + 1
        column = at - (text.rfind("\n", 0, at) + 1) + 1
        raise SpecError(f"{where + ': ' if where else ''}a {kind} of {length:,} characters as "
                        f"written, over the budget of {budget:,} characters for {what}; "
                        "shorten it", SourceFile(path, text).span(line, column), code="spec-205",
                        path=path, where=where or None)
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        raise _toml_error(path, text, err) from None
    except RecursionError:
        raise SpecError(f"the TOML nests too deeply to read (nesting budget {MAX_NESTING})",
                        code="spec-205", path=path) from None
    depth = table_depth(doc)
    if depth > MAX_NESTING:
        raise SpecError(f"tables nest more than {MAX_NESTING} deep (dotted keys or table "
                        f"headers), over the nesting budget of {MAX_NESTING}", code="spec-205",
                        path=path)
    try:
        check_text_lengths(doc, path)
    except SpecError as err:
        raise locate(err, text) from None
    return doc


def read_toml(path: str | Path) -> dict:
    """The decoded TOML document of the file at ``path`` (a spec, or a candidate spec).

    Read through :func:`netcheck.netlist.source.read_text` (a regular file within the size
    budget, UTF-8); lone-CR line ends and nesting deeper than :data:`MAX_NESTING` are
    refused before the TOML reader runs, text longer than its budget
    (:data:`MAX_TEXT_CHARS`, :data:`MAX_PATH_CHARS` for paths) after it.

    Raises
    ------
    SpecError
        Naming the file: unreadable or unusable (netlist-117, lone-CR line ends among them),
        not TOML (with line and column), nested too deeply or text too long (spec-205).
    """
    return _decode(read_text(path, SpecError, "spec"), str(path))


#: a key path into the i-th table of an array of tables, and the key below it
_ARRAY_ITEM = re.compile(r"^(.+?)\[(\d+)\](?:\.(.+))?$")


def _key_position(text: str, where: str) -> tuple[int, int, int] | None:
    """(line, column, width) of the key at ``where`` (``limits[3].band``, ``sweep.start``...).

    ``where`` is a key path as :meth:`SpecReader.key_path` builds it; ``name[i]`` is the
    i-th ``[[name]]`` table.

    A key that is not written (a missing one) points at the header of its table, and
    a table-level path (``limits[3]``) at the table header; a missing top-level key at
    the first line. None when the path cannot be found in ``text``.
    """
    nested = _nested_key_position(text, where)
    if nested is not None:
        return nested
    head, _, key = where.partition(".")
    item = _ARRAY_ITEM.match(where)
    if item and "." in item[1]:  # variants.set[1].params: an array of tables in a table
        found = _search(text, (item[1], int(item[2])), (item[3] or "").split(".")[0])
        if found is not None:
            return found
    array, bracket, number = head.partition("[")
    if bracket and number.endswith("]") and number[:-1].isdigit():
        table: tuple[str, int] = (array, int(number[:-1]))   # limits[3], stress[0]
    elif key and head in TOP_KEYS:
        table = (head, 0)
    elif where in ("", "(top level)"):
        return (1, 1, 1)
    else:
        table, key = ("", 0), head
    return _search(text, table, key)


def _search(text: str, table: tuple[str, int], key: str) -> tuple[int, int, int] | None:
    """(line, column, width) of ``key`` in the ``table`` (name, index among its
    ``[[name]]`` headers; ``("", 0)`` the top level), else of the table's header."""
    section: tuple[str, int] = ("", 0)
    arrays: dict[str, int] = {}
    header = None
    for number, line in enumerate(text.splitlines(), 1):
        stripped = line.strip()
        column = len(line) - len(line.lstrip()) + 1
        if stripped.startswith("["):
            double = stripped.startswith("[[")
            name = stripped.strip("[").split("]")[0].strip()
            if double:
                arrays[name] = arrays.get(name, -1) + 1
            section = (name, arrays[name] if double else 0)
            if section == table:
                header = (number, column, len(stripped.split("]")[0]) + (2 if double else 1))
            continue
        name = stripped.split("=")[0].strip().strip("\"'")
        if section == table and "=" in stripped and name == key:
            return (number, column, len(key))
        if section == ("", 0) and table != ("", 0) and name == table[0] and "=" in stripped:
            return (number, column, len(name))   # an inline table or array at the top
    if header is not None:
        return header
    return (1, 1, 1) if table == ("", 0) else None


def _nested_key_position(text: str, where: str) -> tuple[int, int, int] | None:
    """Position of a key two or more levels down (``tolerances.parts.R1``), or None.

    Tries the deepest table header first (``[tolerances.parts]`` holding ``R1 = ``),
    then the line of each enclosing key (``parts = { R1 = ... }`` in ``[tolerances]``,
    or a dotted ``parts.R1 = `` there). Array paths (``limits[2].x``) are left to the
    general search.
    """
    segments = where.split(".")
    if len(segments) < 3 or "[" in where:
        return None
    for cut in range(len(segments) - 1, 0, -1):
        section, key = ".".join(segments[:cut]), segments[cut]
        dotted = ".".join(segments[cut:])
        current = ""
        for number, line in enumerate(text.splitlines(), 1):
            stripped = line.strip()
            if stripped.startswith("["):
                header = stripped.strip("[").split("]")[0]
                current = ".".join(part.strip().strip("\"'") for part in header.split("."))
                continue
            if current != section or "=" not in stripped:
                continue
            name = stripped.split("=")[0].strip()
            if name.strip("\"'") in (key, dotted) or name.replace('"', "").replace(
                    "'", "") == dotted:
                column = len(line) - len(line.lstrip()) + 1
                return (number, column, len(name))
    return None


def locate(err: SpecError, text: str) -> SpecError:
    """``err`` with a span at the key its ``where`` names (unchanged if it has a span).

    The message keeps its key path, so the span replaces the path-style location and
    the error reads ``spec.toml:12:1: error spec-202: limits[3].band: ...``.
    """
    if err.span is not None or not err.where or not err.path:
        return err
    pos = _key_position(text, err.where)
    if pos is None:
        return err
    line, column, width = pos
    span = SourceFile(err.path, text).span(line, column, column + width)
    return SpecError(err.message, span, code=err.code, where=err.where, path=err.path)


def _toml_error(path: str, text: str, err: tomllib.TOMLDecodeError) -> SpecError:
    msg = str(err)
    line = col = None
    head, sep, tail = msg.rpartition("(at line ")
    if sep:
        nums = tail.rstrip(")").split(", column ")
        if len(nums) == 2 and all(n.isdigit() for n in nums):
            line, col = int(nums[0]), int(nums[1])
            msg = head.strip()
    span = SourceFile(path, text).span(line, col) if line else None
    return SpecError(f"not valid TOML: {msg}", span, code="spec-200", path=path)


def limit_lines(text: str) -> list[int]:
    """1-based line of each ``[[limits]]`` header, in order (for locating results)."""
    out = []
    for i, line in enumerate(text.splitlines(), 1):
        stripped = line.strip()
        if stripped.startswith("[[") and stripped[2:].split("]]")[0].strip() == "limits":
            out.append(i)
    return out


def parse_spec(text: str, path: str = "<spec>", design_root: str | None = None) -> Spec:
    """Validate spec ``text`` (the TOML of a spec file at ``path``).

    Every path the spec names (``netlist``, ``root``) must resolve inside the design
    root (see :func:`design_root`; ``design_root`` is the explicit one, ``--root``).

    Raises
    ------
    SpecError
        With the key path (``limits[3].band: ...``) or the TOML position.
    """
    from .limits import build_limit

    doc = _decode(text, path)
    try:
        return _build(doc, text, path, build_limit, design_root)
    except SpecError as err:
        raise locate(err, text) from None


def _build(doc: dict, text: str, path: str, build_limit: Any,
           explicit_root: str | None = None) -> Spec:
    """The Spec of a decoded TOML document (errors carry key paths, not yet spans)."""
    top = SpecReader(doc, "", path, TOP_KEYS)
    base = Path(path).parent
    root_dir, why = resolve_design_root(path, explicit_root)
    netlist = top.text("netlist", required=True)
    confine(netlist, base, "netlist", path, root_dir, why)
    ports = parse_ports(doc["ports"], path) if "ports" in doc else None
    for key in ("source", "output"):
        if ports is not None and key in doc:
            top.fail(key, "not with [ports]: the input port is the stimulus and the output "
                     "port the output")
    source = PORT_SOURCE if ports is not None else top.text("source", required=True)
    outputs = parse_outputs(doc, path)
    if outputs:
        output = outputs[0][1]
    else:
        out_raw = ports.output_node if ports is not None else top.raw("output")
        if out_raw is None:
            top.fail("output", "missing (required)")
        output = output_node(top, "output", out_raw)
    sw_table = top.raw("sweep")
    if sw_table is None:
        top.fail("sweep", "missing (required): give start, stop and points_per_decade")
    sw = SpecReader(sw_table, "sweep", path, SWEEP_KEYS)
    start = sw.number("start", required=True, positive=True)
    stop = sw.number("stop", required=True, positive=True)
    if start >= stop:
        sw.fail("start", f"start {shown_value(sw.raw('start'))} is not below stop {shown_value(sw.raw('stop'))}")
    ppd = sw.integer("points_per_decade", 100, minimum=2)
    try:
        validate_sweep(start, stop, ppd)
    except SpecError as err:
        sw.fail((err.where or "").removeprefix("sweep."), err.message, code=err.code)
    sweep = Sweep(start, stop, ppd)
    raw_limits = top.raw("limits", [])
    if not isinstance(raw_limits, list):
        top.fail("limits", "expected an array of tables ([[limits]])")
    check_count(raw_limits, "limits", path)
    lines = limit_lines(text)
    limits = []
    limit_outputs: list[str] = []
    first: dict[str, int] = {}  # result name → index of the limit that gives it
    for i, table in enumerate(raw_limits):
        line = lines[i] if i < len(lines) else None
        named = limit_output(table, i, path, outputs)
        if named is not None:  # the output key is every kind's: read here
            table = {k: v for k, v in table.items() if k != "output"}
        lim = build_limit(table, i, path, sweep, line)
        _check_pair(lim, named, i, path, outputs)
        limit_outputs.append(named or (outputs[0][0] if outputs else ""))
        taken = [n for n in lim.result_names() if n in first]
        if taken and "name" not in table:
            # a default name that is already taken: the later limit says where it is
            lim = dataclasses.replace(lim, name=f"{lim.name} (limits[{i}])")
            taken = [n for n in lim.result_names() if n in first]
        if taken:
            j = first[taken[0]]
            at = f" (line {lines[j]})" if j < len(lines) else ""
            keys = {"kind": "", "name": "", **type(lim).KEYS}
            SpecReader(table, f"limits[{i}]", path, keys).fail(
                "name", f"this limit's result {taken[0]!r} has the name of a result of "
                f"limits[{j}]{at}; results are told apart by name (tolerance analyses, "
                "JUnit, baselines), so give each limit its own")
        first.update((n, i) for n in lim.result_names())
        limits.append(lim)
    root = top.text("root")
    if root:
        confine(root, base, "root", path, root_dir, why)
    tables = tuple((k, doc[k]) for k in ("tolerances", "analysis", "stress", "variants")
                   if k in doc)
    title = top.text("title", default="") or ""
    allow_negative = top.flag("allow_negative")
    models = _part_models(top, path)
    # the tables the analyses judge by, parsed now (in the order they are judged) so an
    # error in them is a load error; an absent table stays None. A falsy analysis or
    # tolerances value counts as an empty table, as the analyses always read it.
    stress = parse_stress(doc["stress"], path, stress_lines(text)) if "stress" in doc else None
    analysis = parse_analysis(doc["analysis"] or {}, path) if "analysis" in doc else None
    tolerances = parse_tolerances(doc["tolerances"] or {}, path) if "tolerances" in doc else None
    variants = parse_variants(doc["variants"], path) if "variants" in doc else None
    modes = analysis.modes if analysis else ()
    check_port_limits(tuple(limits), ports, modes, path)
    return Spec(
        path=path, title=title,
        netlist=str(base / netlist), source=source, output=output, sweep=sweep,
        limits=tuple(limits), root=str(base / root) if root else None,
        allow_negative=allow_negative, text=text, tables=tables,
        design_root=str(root_dir), part_models=models, stress=stress,
        tolerances=tolerances, analysis=analysis, variants=variants, ports=ports,
        outputs=outputs, limit_outputs=tuple(limit_outputs) if outputs else ())


def _check_pair(lim: Any, named: str | None, i: int, path: str,
                outputs: tuple[tuple[str, tuple[str, str]], ...]) -> None:
    """A limit judged on two outputs (a crossover) names both in its own ``outputs`` key:
    each must be one of ``[outputs]`` (spec-266), and it takes no ``output``."""
    pair = getattr(lim, "outputs", None)
    if not pair:
        return
    rd = SpecReader({}, f"limits[{i}]", path, {})
    if named is not None:
        rd.fail("output", f"a {lim.kind} limit is judged on two outputs: name both in "
                "its outputs key, not output", code="spec-266")
    if not outputs:
        rd.fail("outputs", f"a {lim.kind} limit compares two named outputs: name the "
                "outputs in an [outputs] table (name = node) and give two of them here",
                code="spec-266")
    check_output_names(rd, "outputs", list(pair), [n for n, _ in outputs])


def _part_models(top: SpecReader, path: str) -> tuple[str, ...]:
    """The ``part_models`` key: one subcircuit name or an array of them (globs allowed)."""
    key = "part_models"
    raw = top.raw(key)
    if raw is None:
        return ()
    items = [raw] if isinstance(raw, str) else raw
    if not isinstance(items, list):
        top.fail(key, f"expected a subcircuit name or an array of them, e.g. [\"QX10\"], "
                      f"got {type(raw).__name__}")
    if len(items) > MAX_LIMITS:
        top.fail(key, f"{len(items):,} names, over the budget of {MAX_LIMITS:,} a spec",
                 code="spec-205")
    for i, item in enumerate(items):
        if not isinstance(item, str) or not item.strip():
            top.fail(key, f"entry {i + 1}: expected a subcircuit name, got {item!r}")
        check_text(item, key, path)
    return tuple(item.strip() for item in items)


def part_models(spec: Spec, netlist: Any) -> frozenset[str]:
    """The subcircuits of ``netlist`` that ``spec.part_models`` names, lower case.

    Each entry is a subcircuit name or an fnmatch glob over the names the netlist's
    ``.subckt`` lines define (at any depth), case-insensitive. An entry that names no
    subcircuit of the netlist is an error: a misspelt model name would otherwise leave
    its internals judged as parts without a word.

    Raises
    ------
    SpecError
        spec-203 at ``part_models``, naming the entry, the netlist and what it defines.
    """
    if not spec.part_models:
        return frozenset()
    import fnmatch

    from ..netlist.elaborate import subckt_names

    defined = subckt_names(netlist)
    lower = {name.lower(): name for name in defined}
    out: set[str] = set()
    for entry in spec.part_models:
        hits = fnmatch.filter(lower, entry.lower())
        if not hits:
            shown = ", ".join(printable(n, 60) for n in defined[:10])
            more = f" and {len(defined) - 10:,} more" if len(defined) > 10 else ""
            known = f"it defines {shown}{more}" if defined else "it defines no subcircuit"
            raise SpecError(printable(
                f"part_models: no subcircuit {entry!r} in the netlist "
                f"{Path(spec.netlist).name} ({known}); name the .subckt of each part model",
                TEXT_MAX), code="spec-203", path=spec.path, where="part_models")
        out.update(hits)
    return frozenset(out)


def load_spec(path: str | Path, design_root: str | None = None) -> Spec:
    """Read and validate the spec file at ``path`` (see :func:`parse_spec`).

    The file is read through :func:`netcheck.netlist.source.read_text` and decoded as
    :func:`read_toml` does (nesting over budget refused before the TOML reader runs).
    """
    return parse_spec(read_text(path, SpecError, "spec"), str(path), design_root)
