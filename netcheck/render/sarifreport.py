"""SARIF 2.1.0 renderer (OASIS Static Analysis Results Interchange Format) for code-scanning views.

One run, tool ``netcheck``. Results, in the order of the CheckResult:

* a limit with ``Status.FAIL`` → level ``error``, rule ``limit-<kind>`` (``limit-gain``,
  ``limit-group-delay``...), located at the limit's table in the spec file;
* a limit with ``Status.ERROR`` → level ``error``, rule ``analysis-301`` (measurement could not
  be made), located the same way;
* a spec that could not be checked at all (``SpecResult.error``) → level ``error``, rule
  ``run-unchecked``, located at the spec file;
* a caution with a source position → rule = its code (``netlist-151``...), level from its
  severity (``error``, ``warning``, anything else ``note``), located at its own
  path/line/column (the netlist, for lint warnings);
* a spec's caution without a position and of severity ``error`` or ``warning`` (such as
  numerical trouble) → the same, located at the spec file.

Other cautions without a position (hazard cautions, notes, run-wide remarks) are
not findings about a place: they go once each, in order, into the run's property bag
as ``properties.cautions``, so code-scanning views are not flooded with them. Identical
caution results (the same netlist warning seen by several variants) are written once.
When some spec carries a hazard caution (:func:`netcheck.result.hazard_warranted`), the
hazardous-voltage caution closes ``properties.cautions``, once (code ``analysis-hazard``).

Every rule id has the form of the diagnostic codes, ``<stage>-<name>``: lower case, words
joined by hyphens.

Passing and skipped limits produce no result. ``tool.driver.rules`` lists exactly the
rule ids used, sorted, and each result refers to its rule by ``ruleIndex``. Relative
paths become relative URIs (normalised: ``specs/../x.cir`` → ``x.cir``) with ``uriBaseId``
``%SRCROOT%``; absolute ones ``file:`` URIs.
Message texts show control characters as visible ``\\xNN`` escapes (the same
:func:`~netcheck.render.junitreport.xml_text` the JUnit renderer uses), so a title
carrying terminal colour codes cannot restyle a viewer. JSON keys are sorted so the
output is byte-for-byte reproducible.
"""

from __future__ import annotations

import json
import posixpath
from typing import IO, Any
from urllib.parse import quote

from ..exceptions import CODES
from ..result import (GENERAL_CAUTION_CODE, HAZARD_CAUTION, HAZARD_SEVERITY, Caution, CheckResult, LimitResult,
                      SpecResult, Status, finite_or_none, hazard_warranted)
from . import RenderOptions
from .junitreport import limit_summary, xml_text

__all__ = ["render", "build_log", "SARIF_SCHEMA", "SRCROOT"]

#: ``$schema`` of the log: the OASIS-published SARIF 2.1.0 (errata 01) schema.
SARIF_SCHEMA = ("https://docs.oasis-open.org/sarif/sarif/v2.1.0/errata01/os/schemas/"
                "sarif-schema-2.1.0.json")
#: The base id relative URIs are resolved against (the checkout root).
SRCROOT = "%SRCROOT%"
#: Rule ids of failed limits: this prefix and the kind.
LIMIT_RULE_PREFIX = "limit-"
#: Rule for a spec that could not be checked at all.
UNCHECKED_RULE = "run-unchecked"
#: Rule for a limit whose measurement could not be made.
MEASUREMENT_RULE = "analysis-301"


def _artifact(path: str) -> dict[str, str]:
    """``artifactLocation`` for a display path."""
    posix = path.replace("\\", "/")
    if posix.startswith("/"):
        return {"uri": "file://" + quote(posix, safe="/")}
    if len(posix) > 2 and posix[1] == ":" and posix[2] == "/" and posix[0].isalpha():
        return {"uri": "file:///" + posix[:2] + quote(posix[2:], safe="/")}
    return {"uri": quote(posixpath.normpath(posix), safe="/"), "uriBaseId": SRCROOT}


def _location(path: str, line: int | None = None, column: int | None = None) -> dict[str, Any]:
    physical: dict[str, Any] = {"artifactLocation": _artifact(path)}
    if line is not None and line >= 1:
        region: dict[str, int] = {"startLine": line}
        if column is not None and column >= 1:
            region["startColumn"] = column
        physical["region"] = region
    return {"physicalLocation": physical}


def limit_rule(kind: str) -> str:
    """The rule id of a failed limit of ``kind`` (``group_delay`` → ``limit-group-delay``)."""
    return LIMIT_RULE_PREFIX + kind.replace("_", "-")


def _level(severity: str) -> str:
    return severity if severity in ("error", "warning") else "note"


def _limit_result(spec: SpecResult, lim: LimitResult) -> dict[str, Any]:
    if lim.status is Status.FAIL:
        rule = limit_rule(lim.kind)
        text = f"{spec.label}: limit '{lim.name}' is not met: {limit_summary(lim)}."
        if lim.message:
            text += f" {lim.message}"
    else:
        rule = MEASUREMENT_RULE
        reason = lim.message or "the measurement could not be made"
        text = f"{spec.label}: limit '{lim.name}' could not be checked: {reason}"
    props = {
        "spec": spec.spec, "variant": spec.variant, "limit": lim.name, "kind": lim.kind,
        "status": lim.status.value, "unit": lim.unit,
        "measured": finite_or_none(lim.measured), "lower": finite_or_none(lim.lower),
        "upper": finite_or_none(lim.upper), "margin": finite_or_none(lim.margin),
        "atHz": finite_or_none(lim.at_hz),
    }
    if lim.below_floor:  # the measured value is rounding noise below this floor
        props.update(belowFloor=True, floor=finite_or_none(lim.floor))
    if lim.output is not None:  # a spec with named outputs: the output judged
        props["output"] = lim.output
    if lim.reference_db is not None:  # the measured level a relative gain is stated against
        props["referenceDb"] = finite_or_none(lim.reference_db)
    return {
        "ruleId": rule, "level": "error", "message": {"text": xml_text(text)},
        "locations": [_location(spec.spec, lim.line)],
        "partialFingerprints": {
            "netcheckLimit/v1": f"{spec.spec}|{spec.variant or ''}|{lim.kind}|{lim.name}"},
        "properties": {k: v for k, v in props.items() if v is not None},
    }


def _unchecked_result(spec: SpecResult) -> dict[str, Any]:
    text = f"{spec.label}: the spec could not be checked: {(spec.error or '').rstrip()}"
    props = {"spec": spec.spec, "variant": spec.variant, "status": Status.ERROR.value}
    return {
        "ruleId": UNCHECKED_RULE, "level": "error", "message": {"text": xml_text(text)},
        "locations": [_location(spec.spec)],
        "properties": {k: v for k, v in props.items() if v is not None},
    }


def _caution_result(caution: Caution, fallback_path: str | None) -> dict[str, Any] | None:
    """A result for a located caution, or None when it belongs in the run's properties."""
    level = _level(caution.severity)
    if caution.path:
        location = _location(caution.path, caution.line, caution.column)
    elif fallback_path and level != "note":
        location = _location(fallback_path)
    else:
        return None
    return {"ruleId": caution.code, "level": level,
            "message": {"text": xml_text(caution.message)}, "locations": [location]}


def _rule(rule_id: str, level: str) -> dict[str, Any]:
    if rule_id.startswith(LIMIT_RULE_PREFIX):
        kind = rule_id[len(LIMIT_RULE_PREFIX):].replace("-", " ")
        text = f"A {kind} limit of the spec is not met."
    elif rule_id == UNCHECKED_RULE:
        text = "The spec could not be checked (netlist, spec or solve error)."
    elif rule_id in CODES:
        text = CODES[rule_id][0].upper() + CODES[rule_id][1:] + "."
    else:
        text = f"netcheck finding {rule_id}."
    return {"id": rule_id, "shortDescription": {"text": text},
            "defaultConfiguration": {"level": level}}


def build_log(result: CheckResult) -> dict[str, Any]:
    """The SARIF log for ``result`` as plain JSON-ready data."""
    results: list[dict[str, Any]] = []
    seen: set[str] = set()
    remarks: list[dict[str, str]] = []

    def add_caution(caution: Caution, fallback_path: str | None) -> None:
        entry = _caution_result(caution, fallback_path)
        if entry is None:
            remark = {"code": caution.code, "severity": caution.severity,
                      "message": xml_text(caution.message)}
            if remark not in remarks:
                remarks.append(remark)
            return
        key = json.dumps(entry, sort_keys=True)
        if key not in seen:
            seen.add(key)
            results.append(entry)

    for spec in result.specs:
        if spec.error is not None:
            results.append(_unchecked_result(spec))
        for lim in spec.limits:
            if lim.status in (Status.FAIL, Status.ERROR):
                results.append(_limit_result(spec, lim))
        for caution in spec.cautions:
            add_caution(caution, spec.spec)
    for caution in result.cautions:
        add_caution(caution, None)
    if hazard_warranted(result.specs):
        add_caution(Caution(GENERAL_CAUTION_CODE, HAZARD_CAUTION, HAZARD_SEVERITY), None)

    levels: dict[str, str] = {}
    for entry in results:
        levels.setdefault(entry["ruleId"], entry["level"])
    rule_ids = sorted(levels)
    index = {rule_id: i for i, rule_id in enumerate(rule_ids)}
    for entry in results:
        entry["ruleIndex"] = index[entry["ruleId"]]

    driver = {"name": "netcheck", "version": result.tool_version,
              "rules": [_rule(r, levels[r]) for r in rule_ids]}
    run: dict[str, Any] = {"tool": {"driver": driver}, "columnKind": "unicodeCodePoints",
                           "results": results}
    properties: dict[str, Any] = {}
    if result.created_utc:
        properties["createdUtc"] = result.created_utc
    if remarks:
        properties["cautions"] = remarks
    if properties:
        run["properties"] = properties
    return {"$schema": SARIF_SCHEMA, "version": "2.1.0", "runs": [run]}


def render(result: CheckResult, stream: IO[str], options: RenderOptions) -> None:
    """Write ``result`` to ``stream`` as a SARIF 2.1.0 log (UTF-8 JSON, sorted keys).

    Parameters
    ----------
    result : CheckResult
        The judged run; nothing is recomputed.
    stream : IO[str]
        Text stream to write to.
    options : RenderOptions
        Unused; accepted for the common renderer signature.
    """
    json.dump(build_log(result), stream, indent=2, sort_keys=True, ensure_ascii=False,
              allow_nan=False)
    stream.write("\n")
