"""JUnit XML renderer: one ``<testsuite>`` per spec, one ``<testcase>`` per limit.

The output follows the JUnit XML dialect that CI servers read (the de-facto schema of
the Ant JUnit task, as also used by Jenkins and GitLab): a ``<testsuites>`` root holding
``<testsuite name tests failures errors skipped [timestamp]>`` elements, each with
``<properties>``, ``<testcase classname name>`` children carrying at most one
``<failure>``, ``<error>`` or ``<skipped>``, and a ``<system-out>``. The repository's
tests validate it with ``xmlschema`` against ``tests/data/junit.xsd``.

Mapping
-------
* ``SpecResult`` → ``<testsuite name="<label>">`` (the label includes the variant).
* ``LimitResult`` → ``<testcase classname="<spec path>.<kind>" name="<limit name>">``;
  JUnit consumers split the classname at its last dot, so the spec file becomes the
  package and the limit kind the class.
* ``Status.FAIL`` → ``<failure>``, ``Status.ERROR`` → ``<error>`` (the measurement could
  not be made), ``Status.SKIPPED`` → ``<skipped>``. A met limit whose message says how
  it was met (a yield with its interval, a worst case with what decided it, a gain at
  the numerical floor of the solve: no transmission) has it in the testcase's
  ``<system-out>``.
* ``SpecResult.error`` (the spec could not be checked) → an extra testcase named
  ``spec`` (classname ``<spec path>.spec``) holding an ``<error>``.
* Cautions (the spec's, then the run's) → the suite's ``<system-out>``, one a line; the
  hazardous-voltage caution once per document, after those of the first spec that
  warrants it (:func:`netcheck.result.hazard_warranted`).
* Suite properties: ``spec``, ``netlist`` (left out when the spec could not be loaded,
  so no netlist is known), ``title``, ``variant`` (for a variant), ``netcheck.version``.

Every text and attribute value passes through :func:`xml_text`, which replaces the
characters XML 1.0 does not allow (C0 controls other than tab, newline and carriage
return, lone surrogates, U+FFFE and U+FFFF) by a visible ``\\xNN``/``\\uNNNN`` escape;
ElementTree escapes ``<``, ``>``, ``&`` and quotes itself.
"""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET
from typing import IO

from ..result import (HAZARD_CAUTION, Caution, CheckResult, LimitResult, SpecResult, Status,
                      hazard_warranted)
from ..netlist.units import signed_eng
from . import RenderOptions
from .findings import caution_line

__all__ = ["render", "xml_text", "limit_summary", "caution_line", "signed"]

# Characters outside the XML 1.0 ``Char`` production (W3C XML 1.0, 5th ed., §2.2).
_ILLEGAL_XML = re.compile("[^\t\n\r\x20-\ud7ff\ue000-\ufffd\U00010000-\U0010ffff]")

_CHILD = {Status.FAIL: "failure", Status.ERROR: "error", Status.SKIPPED: "skipped"}
#: row kinds whose message says how a met verdict was reached (shown even when met)
_SAYS_HOW = ("yield", "worst_case")


def _visible(match: re.Match[str]) -> str:
    code = ord(match.group())
    return f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}"


def xml_text(value: object) -> str:
    """``str(value)`` with every character illegal in XML 1.0 made a visible escape.

    Examples
    --------
    >>> xml_text("\\x1b[31mred\\x00")
    '\\\\x1b[31mred\\\\x00'
    >>> xml_text("a<b & \\"c\\"")
    'a<b & "c"'
    """
    return _ILLEGAL_XML.sub(_visible, str(value))


def signed(value: float, unit: str) -> str:
    """``format_eng`` with a ``+`` on values ≥ 0 (margins read as inside/outside)."""
    return signed_eng(value, unit)


def limit_summary(lim: LimitResult) -> str:
    """``measured X, limit Y, margin Z at F`` for one limit result, with as many figures
    as tell the bounds and the value apart (:attr:`LimitResult.figures`)."""
    fig = lim.figures
    text = f"measured {fig.measured}, limit {fig.bound}, margin {fig.margin}"
    if fig.at:
        text += f" at {fig.at}"
    return text


def _message(lim: LimitResult) -> str:
    if lim.status is Status.FAIL:
        return limit_summary(lim)
    if lim.status is Status.ERROR:
        return lim.message or "the measurement could not be made"
    return lim.message or "not applicable to this circuit"


def _body(lim: LimitResult, message: str) -> str:
    lines = [message]
    if lim.status is Status.FAIL and lim.message:
        lines.append(lim.message)
    if lim.status is Status.ERROR:
        lines.append(limit_summary(lim))
    if lim.definition:
        lines.append(f"definition: {lim.definition}")
    if lim.method:
        lines.append(f"method: {lim.method}")
    return "\n".join(lines)


def _sub(parent: ET.Element, tag: str, **attrs: object) -> ET.Element:
    return ET.SubElement(parent, tag, {k: xml_text(v) for k, v in attrs.items()})


def _testcase(suite: ET.Element, classname: str, lim: LimitResult) -> None:
    case = _sub(suite, "testcase", classname=classname, name=lim.name)
    child = _CHILD.get(lim.status)
    if child is None:
        # a met limit says how when that is part of the verdict: a yield its interval, a
        # worst case what decided it, a gain at the numerical floor that it is no number,
        # a value stated against a measured level what that level is
        if lim.message and (lim.kind in _SAYS_HOW or lim.below_floor
                            or lim.reference_db is not None):
            out = _sub(case, "system-out")
            out.text = xml_text(f"{limit_summary(lim)}\n{lim.message}\n")
        return
    message = _message(lim)
    outcome = _sub(case, child, message=message)
    if lim.status is not Status.SKIPPED:
        outcome.text = xml_text(_body(lim, message))


def _suite(root: ET.Element, spec: SpecResult, result: CheckResult,
           hazard_first: bool = False) -> dict[str, int]:
    counts = spec.counts
    tally = {"tests": len(spec.limits), "failures": counts[Status.FAIL.value],
             "errors": counts[Status.ERROR.value], "skipped": counts[Status.SKIPPED.value]}
    if spec.error is not None:
        tally["tests"] += 1
        tally["errors"] += 1
    attrs: dict[str, object] = {"name": spec.label, **tally}
    if result.created_utc:
        attrs["timestamp"] = result.created_utc
    suite = _sub(root, "testsuite", **attrs)

    props = _sub(suite, "properties")
    # a spec that could not be loaded names no netlist: no empty property for it
    entries = [("spec", spec.spec)] + ([("netlist", spec.netlist)] if spec.netlist else [])
    entries.append(("title", spec.title))
    if spec.variant is not None:
        entries.append(("variant", spec.variant))
    entries.append(("netcheck.version", result.tool_version))
    for name, value in entries:
        _sub(props, "property", name=name, value=value)

    if spec.error is not None:
        case = _sub(suite, "testcase", classname=f"{spec.spec}.spec", name="spec")
        lines = spec.error.strip().splitlines()
        err = _sub(case, "error", message=lines[0] if lines else "the spec could not be checked")
        err.text = xml_text(spec.error)
    for lim in spec.limits:
        _testcase(suite, f"{spec.spec}.{lim.kind}", lim)

    lines = [caution_line(c) for c in spec.cautions + result.cautions]
    if hazard_first:  # once per document: in the first suite whose spec warrants it
        lines.append(f"Caution: {HAZARD_CAUTION}")
    if lines:
        out = _sub(suite, "system-out")
        out.text = xml_text("\n".join(lines) + "\n")
    return tally


def render(result: CheckResult, stream: IO[str], options: RenderOptions) -> None:
    """Write ``result`` to ``stream`` as JUnit XML.

    Parameters
    ----------
    result : CheckResult
        The judged run; nothing is recomputed.
    stream : IO[str]
        Text stream to write to (UTF-8 is declared).
    options : RenderOptions
        Unused; accepted for the common renderer signature.
    """
    root = ET.Element("testsuites", {"name": "netcheck"})
    totals = {"tests": 0, "failures": 0, "errors": 0, "skipped": 0}
    # the hazardous-voltage caution once per document, with the first spec that warrants it
    first = next((s for s in result.specs if hazard_warranted((s,))), None)
    for spec in result.specs:
        for key, value in _suite(root, spec, result, spec is first).items():
            totals[key] += value
    for key, value in totals.items():
        root.set(key, str(value))
    ET.indent(root, space="  ")
    stream.write('<?xml version="1.0" encoding="UTF-8"?>\n')
    stream.write(ET.tostring(root, encoding="unicode"))
    stream.write("\n")
