"""Earlier result files: validation, loading and the margins that shrank since
(``check --compare-margins``), behind netcheck.runs.ci."""

from __future__ import annotations

import json
import math
import os
import posixpath
import stat
from collections.abc import Iterable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from ..exceptions import NetcheckError
from ..netlist.source import SourceFile, printable, read_text

__all__ = [
    "BaselineError", "SpecRef", "LimitRef", "LimitDrift", "DriftReport", "compare_baseline",
    "load_baseline", "validate_result", "BASELINE_MAX_BYTES",
]

#: the largest baseline file read (a result of thousands of specs is a few MB)
BASELINE_MAX_BYTES = 256 * 1024 * 1024


class BaselineError(NetcheckError, ValueError):
    """An earlier result (``--compare-margins``) cannot be used: unreadable, not JSON, or
    not ``netcheck.result/1``."""

    code = "run-411"


@dataclass(frozen=True, slots=True)
class SpecRef:
    """A spec result in a result document: its spec path and variant (None if none)."""

    spec: str
    variant: str | None = None

    def __str__(self) -> str:
        return f"{self.spec} [{self.variant}]" if self.variant is not None else self.spec


@dataclass(frozen=True, slots=True)
class LimitRef:
    """One limit of one spec result, by name.

    When a spec has several limits of the same name, the second and later carry an
    occurrence suffix (``"resonance: Q #2"``) and are paired in order.
    """

    spec: SpecRef
    name: str

    def __str__(self) -> str:
        return f"{self.spec}: {self.name}"


@dataclass(frozen=True, slots=True)
class LimitDrift:
    """A limit whose margin fell by more than the allowed drop.

    Margins are signed, in ``unit``: positive means inside the limit.
    ``current_margin`` is None when the limit could no longer be measured (its spec
    errored, or the measurement failed).
    """

    limit: LimitRef
    unit: str
    baseline_margin: float
    current_margin: float | None
    allowed_drop: float
    baseline_status: str
    current_status: str

    @property
    def drop(self) -> float | None:
        """How far the margin fell, in ``unit`` (None when no longer measured)."""
        if self.current_margin is None:
            return None
        return self.baseline_margin - self.current_margin

    @property
    def still_passes(self) -> bool:
        """True when the limit still passes despite the drift."""
        return self.current_status == "pass"

    def describe(self) -> str:
        """One line for a terminal or a log."""
        from ..netlist.units import format_eng

        before = format_eng(self.baseline_margin, self.unit)
        if self.current_margin is None:
            return f"{self.limit}: margin {before} → not measured ({self.current_status})"
        verdict = "still passes" if self.still_passes else self.current_status
        return (f"{self.limit}: margin {before} → {format_eng(self.current_margin, self.unit)}"
                f" (fell {format_eng(self.drop, self.unit)}, allowed "
                f"{format_eng(self.allowed_drop, self.unit)}; {verdict})")


@dataclass(frozen=True, slots=True)
class DriftReport:
    """How a result differs from its baseline.

    Attributes
    ----------
    drifted : tuple of LimitDrift
        Limits whose margin fell by more than allowed, in the current result's order.
    new_limits, removed_limits : tuple of LimitRef
        Limits present on one side only, within specs present on both sides (a limit
        whose unit changed is both removed and new: its margins are not comparable).
    new_specs, removed_specs : tuple of SpecRef
        Spec results (spec path and variant) present on one side only.
    compared : int
        Number of limits whose margins were compared.
    drift_db, drift_rel : float
        The thresholds used.
    """

    drifted: tuple[LimitDrift, ...]
    new_limits: tuple[LimitRef, ...]
    removed_limits: tuple[LimitRef, ...]
    new_specs: tuple[SpecRef, ...]
    removed_specs: tuple[SpecRef, ...]
    compared: int
    drift_db: float
    drift_rel: float

    @property
    def has_drift(self) -> bool:
        """True when at least one margin drifted (what ``--fail-on-shrink`` acts on)."""
        return bool(self.drifted)

    @property
    def changed(self) -> bool:
        """True when anything differs: drift, or limits or specs added or removed."""
        return bool(self.drifted or self.new_limits or self.removed_limits
                    or self.new_specs or self.removed_specs)


def _fail(path: str, where: str, message: str) -> BaselineError:
    return BaselineError(message, path=path, where=where)


def validate_result(doc: Any, path: str = "<result>") -> None:
    """Check that ``doc`` is a ``netcheck.result/1`` document as far as drift needs it.

    Raises
    ------
    BaselineError
        Naming ``path`` and the offending key (``specs[2].limits[0].margin``).
    """
    from ..render.jsonreport import SCHEMA

    if not isinstance(doc, dict):
        raise _fail(path, "(top level)", f"not a netcheck result: expected a JSON object "
                                         f"with \"schema\": \"{SCHEMA}\", got {type(doc).__name__}")
    schema = doc.get("schema")
    if schema is None:
        raise _fail(path, "schema", f"not a netcheck result: no \"schema\" key "
                                    f"(expected \"{SCHEMA}\")")
    if schema != SCHEMA:
        family = isinstance(schema, str) and schema.startswith("netcheck.result/")
        shown = printable(repr(schema), 80)
        raise _fail(path, "schema", (f"result format {shown} is not the {SCHEMA!r} this "
                                     "netcheck reads; write the earlier result again with this version"
                                     if family else
                                     f"not a netcheck result: schema is {shown}, "
                                     f"expected {SCHEMA!r}"))
    specs = doc.get("specs")
    if not isinstance(specs, list):
        raise _fail(path, "specs", "expected an array of spec results")
    for i, s in enumerate(specs):
        where = f"specs[{i}]"
        if not isinstance(s, dict) or not isinstance(s.get("spec"), str):
            raise _fail(path, where, "expected an object with a \"spec\" path")
        if s.get("variant") is not None and not isinstance(s["variant"], str):
            raise _fail(path, f"{where}.variant", "expected a string")
        limits = s.get("limits", [])
        if not isinstance(limits, list):
            raise _fail(path, f"{where}.limits", "expected an array of limit results")
        for j, lim in enumerate(limits):
            lw = f"{where}.limits[{j}]"
            if not isinstance(lim, dict) or not isinstance(lim.get("name"), str):
                raise _fail(path, lw, "expected an object with a \"name\"")
            for key in ("unit", "status"):
                if not isinstance(lim.get(key, ""), str):
                    raise _fail(path, f"{lw}.{key}", "expected a string")
            _margin(lim.get("margin"), path, f"{lw}.margin")


def _margin(value: Any, path: str, where: str) -> float | None:
    """A margin from JSON: number, ``"inf"``/``"-inf"``, or null (not measured)."""
    if value is None:
        return None
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        try:
            out = float(value)
        except OverflowError:  # an integer too large for a float
            out = math.inf if value > 0 else -math.inf
        if math.isnan(out):
            raise _fail(path, where, "NaN is not a margin: a limit that was not measured has "
                                     "null")
        return out
    if isinstance(value, str) and value in ("inf", "-inf"):
        return float(value)
    shown = printable(repr(value), 60)
    raise _fail(path, where, f"expected a number, \"inf\", \"-inf\" or null, got {shown}")


def _norm(spec_path: str) -> str:
    return posixpath.normpath(spec_path.replace("\\", "/"))


def _index(doc: dict[str, Any], only: set[str] | None) -> dict[tuple[str, str | None], dict]:
    """(normalised spec path, variant) → spec result, in document order."""
    out: dict[tuple[str, str | None], dict] = {}
    for s in doc["specs"]:
        key = (_norm(s["spec"]), s.get("variant"))
        if (only is None or key[0] in only) and key not in out:
            out[key] = s
    return out


def _limits(spec: dict[str, Any]) -> dict[str, dict]:
    """Limit name (with ``#n`` for repeats) → limit result, in order."""
    out: dict[str, dict] = {}
    seen: dict[str, int] = {}
    for lim in spec.get("limits", []):
        n = seen[lim["name"]] = seen.get(lim["name"], 0) + 1
        out[lim["name"] if n == 1 else f"{lim['name']} #{n}"] = lim
    return out


def _check_threshold(name: str, value: float) -> float:
    try:
        out = float(value)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a number, got {value!r}") from None
    if not math.isfinite(out) or out < 0:
        raise ValueError(f"{name} must be a finite number >= 0, got {value!r}")
    return out


def compare_baseline(current: dict[str, Any], baseline: dict[str, Any],
                     drift_db: float = 0.5, drift_rel: float = 0.1, *,
                     only_specs: Iterable[str] | None = None) -> DriftReport:
    """Compare a result with an earlier one and report margins that shrank.

    Spec results are matched by (spec path, variant), spec paths compared after
    normalisation (``./specs/a.toml`` matches ``specs/a.toml``, ``\\`` is read as ``/``);
    limits are matched by name within a spec. A limit has drifted when its margin fell
    by more than the allowed drop::

        baseline_margin - current_margin > allowed
        allowed = drift_db                        for unit "dB"
                = drift_rel * |baseline_margin|   for every other unit

    whether or not it still passes. A limit measured in the baseline but not now (its
    spec errored, or the measurement failed) has drifted too; one not measured in the
    baseline is not compared.

    Parameters
    ----------
    current, baseline : dict
        ``netcheck.result/1`` documents (:func:`netcheck.render.jsonreport.to_dict`, or
        :func:`load_baseline`).
    drift_db : float, optional
        Allowed absolute fall of a margin in dB, dB (default 0.5).
    drift_rel : float, optional
        Allowed fall of a margin in any other unit, as a fraction of the baseline
        margin's magnitude (default 0.1, i.e. 10 %).
    only_specs : iterable of str, optional
        Compare only these spec paths; the others are ignored on both sides, so a
        partial run (``--affected-since``) does not report the unchecked specs removed.

    Returns
    -------
    DriftReport

    Raises
    ------
    BaselineError
        Either document is not a ``netcheck.result/1`` document.
    ValueError
        A threshold is negative or not finite.

    Notes
    -----
    With a zero baseline margin (a limit exactly on its bound) the relative threshold
    is zero, so any fall at all counts: the limit then fails. A dB margin of 0 is
    judged by ``drift_db`` like any other. An infinite baseline margin (``"inf"`` in
    JSON) makes the relative threshold meaningless, so any fall from it counts.

    Examples
    --------
    >>> def doc(margin):
    ...     lim = {"name": "stop-band", "unit": "dB", "status": "pass", "margin": margin}
    ...     return {"schema": "netcheck.result/1",
    ...             "specs": [{"spec": "specs/lp.toml", "limits": [lim]}]}
    >>> report = compare_baseline(doc(2.2), doc(3.0))
    >>> [d.describe() for d in report.drifted]
    ['specs/lp.toml: stop-band: margin 3.000 dB → 2.200 dB (fell 0.800 dB, allowed 0.500 dB; still passes)']
    >>> compare_baseline(doc(2.7), doc(3.0)).has_drift
    False
    """
    drift_db = _check_threshold("drift_db", drift_db)
    drift_rel = _check_threshold("drift_rel", drift_rel)
    validate_result(current, "current result")
    validate_result(baseline, "earlier result")
    only = None if only_specs is None else {_norm(p) for p in only_specs}
    now, before = _index(current, only), _index(baseline, only)

    drifted: list[LimitDrift] = []
    new_limits: list[LimitRef] = []
    removed_limits: list[LimitRef] = []
    compared = 0
    for key, spec_now in now.items():
        spec_before = before.get(key)
        if spec_before is None:
            continue
        ref = SpecRef(spec_now["spec"], key[1])
        lims_now, lims_before = _limits(spec_now), _limits(spec_before)
        errored = spec_now.get("status") == "error" and not lims_now
        for name, lim in lims_now.items():
            old = lims_before.get(name)
            if old is None or old.get("unit", "") != lim.get("unit", ""):
                new_limits.append(LimitRef(ref, name))
        for name, old in lims_before.items():
            lim = lims_now.get(name)
            unit = old.get("unit", "")
            if (lim is None and not errored) or (lim is not None and lim.get("unit", "") != unit):
                removed_limits.append(LimitRef(ref, name))
                continue
            m_before = _margin(old.get("margin"), "earlier result", name)
            if m_before is None:
                continue
            compared += 1
            m_now = None if lim is None else _margin(lim.get("margin"), "current result", name)
            allowed = drift_db if unit == "dB" else drift_rel * abs(m_before)
            status_now = "error" if lim is None else str(lim.get("status", ""))
            if m_now is None or m_now < m_before and (m_before - m_now > allowed
                                                      or math.isinf(m_before)):
                drifted.append(LimitDrift(LimitRef(ref, name), unit, m_before, m_now, allowed,
                                          str(old.get("status", "")), status_now))
    return DriftReport(
        drifted=tuple(drifted), new_limits=tuple(new_limits),
        removed_limits=tuple(removed_limits),
        new_specs=tuple(SpecRef(s["spec"], k[1]) for k, s in now.items() if k not in before),
        removed_specs=tuple(SpecRef(s["spec"], k[1]) for k, s in before.items()
                            if k not in now),
        compared=compared, drift_db=drift_db, drift_rel=drift_rel)


def load_baseline(path: str | Path) -> dict[str, Any]:
    """Read a ``netcheck.result/1`` JSON file written by an earlier ``check --json``.

    Parameters
    ----------
    path : str or Path
        The JSON file.

    Returns
    -------
    dict
        The document, validated with :func:`validate_result`.

    Raises
    ------
    BaselineError
        The file cannot be read or is not UTF-8; it is not valid JSON (located as
        ``file:line:col`` with the line and a caret); or it is not a netcheck result.
    """
    shown = printable(str(path))
    _check_regular(path, shown)
    text = read_text(path, BaselineError, "earlier result", encoding="utf-8-sig")
    try:
        doc = json.loads(text, parse_constant=_no_constant)
    except json.JSONDecodeError as err:
        span = SourceFile(shown, text).span(err.lineno, err.colno)
        raise BaselineError(f"not valid JSON: {err.msg}", span, path=shown) from None
    except RecursionError:
        raise BaselineError("not a netcheck result: arrays or objects nested too deeply "
                            "to read", path=shown) from None
    except MemoryError:
        raise BaselineError("not usable: too large to read into memory", path=shown) from None
    except ValueError as err:  # a number too long to convert, a NaN or Infinity
        raise BaselineError(f"not valid JSON: {printable(str(err), 120)}", path=shown) from None
    validate_result(doc, shown)
    return doc


def _no_constant(name: str) -> Any:
    raise ValueError(f"{name} is not a JSON number (netcheck writes null for a margin that "
                     "was not measured and \"inf\" for an infinite one)")


def _check_regular(path: str | Path, shown: str) -> None:
    """Refuse a baseline that is not a regular file (a FIFO would block, a device never
    ends) or is larger than :data:`BASELINE_MAX_BYTES`, before anything is read."""
    try:
        st = os.stat(path)
    except OSError:
        return  # read_text reports a missing or unreadable file in its own words
    if not stat.S_ISREG(st.st_mode):
        kind = "a folder" if stat.S_ISDIR(st.st_mode) else "a FIFO" if \
            stat.S_ISFIFO(st.st_mode) else "a device or other special file"
        raise BaselineError(f"cannot read earlier result: it is {kind}, not a regular file",
                            path=shown)
    if st.st_size > BASELINE_MAX_BYTES:
        raise BaselineError(f"cannot read earlier result: {st.st_size} bytes is more than the "
                            f"{BASELINE_MAX_BYTES} a result file may have", path=shown)
