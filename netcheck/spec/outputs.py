"""The ``[outputs]`` table: several named outputs judged in one spec.

```toml
source = "V1"
[outputs]                  # name → node, or [positive, negative]; the first is the main one
low = "woofer"
high = ["tw_p", "tw_n"]

[[limits]]
kind = "gain"
output = "high"            # judged on V(tw_p) − V(tw_n) / stimulus (default: the main one)
band = [4e3, 20e3]
min_db = -1.0
```

Every output is driven by the same stimulus; each limit is judged on the response of
the output it names. A spec with the single ``output`` key reads exactly as before
(no names). Errors: spec-265 (the table), spec-266 (a limit's ``output``).
"""

from __future__ import annotations

import re
from typing import Any

from .reader import SpecReader

__all__ = ["OUTPUT_NAME", "parse_outputs", "limit_output", "check_output_names",
           "output_node"]

#: what an output name may be: a letter, then letters, digits, '_' or '-' (at most 40)
OUTPUT_NAME = re.compile(r"[A-Za-z][A-Za-z0-9_-]{0,39}")
#: the most named outputs a spec may have (each is one more solve of the sweep)
OUTPUTS_MAX = 16


def output_node(rd: SpecReader, key: str, raw: Any) -> tuple[str, str]:
    """A node name or ``[positive, negative]`` as (node, reference) ('0' for ground),
    refused at ``key`` when it is neither or measures a node against itself."""
    if isinstance(raw, str) and raw.strip():
        pair = (raw, "0")
    elif (isinstance(raw, list) and len(raw) == 2
          and all(isinstance(x, str) and x.strip() for x in raw)):
        pair = (raw[0], raw[1])
    else:
        rd.fail(key, f"expected a node name or [positive, negative], got {raw!r}",
                code=_CODE if rd.where.startswith("outputs") else "spec-202")
    if pair[0].strip().lower() == pair[1].strip().lower():
        what = "ground" if pair[1] == "0" else f"node {pair[0]!r} twice"
        rd.fail(key, f"measures {what} against itself: that voltage is zero at every "
                "frequency, so no limit could be judged",
                code=_CODE if rd.where.startswith("outputs") else "spec-202")
    return pair


_CODE = "spec-265"


def parse_outputs(doc: dict, path: str) -> tuple[tuple[str, tuple[str, str]], ...]:
    """The named outputs of ``doc['outputs']`` in the order written (the first is the
    main one), or () when the spec has no ``[outputs]`` table.

    Refused (spec-265, at the key): together with ``output`` or ``[ports]``, not a table,
    empty or over :data:`OUTPUTS_MAX` entries, a name that is not a plain word, a node
    that is neither a name nor ``[positive, negative]``, or two names for one node pair.
    """
    if "outputs" not in doc:
        return ()
    top = SpecReader({}, "", path, {})
    if "output" in doc:
        top.fail("output", "give either output (one output) or an [outputs] table of named "
                 "outputs, not both; with [outputs] the first entry is the main output",
                 code=_CODE)
    if "ports" in doc:
        top.fail("outputs", "named outputs are not judged through [ports] yet: a port's "
                 "load and reflection belong to its one output port. Write the source "
                 "resistance and the loads into the netlist and give source and [outputs] "
                 "instead", code=_CODE)
    table = doc["outputs"]
    if not isinstance(table, dict) or not table:
        top.fail("outputs", "expected a table of name = node or name = [positive, "
                 "negative], e.g. [outputs] low = \"lp\", high = \"hp\"", code=_CODE)
    if len(table) > OUTPUTS_MAX:
        top.fail("outputs", f"{len(table)} outputs, over the budget of {OUTPUTS_MAX} a "
                 "spec (each is one more solve of the sweep)", code="spec-205")
    rd = SpecReader(table, "outputs", path, {k: "" for k in table})
    out: list[tuple[str, tuple[str, str]]] = []
    seen: dict[tuple[str, str], str] = {}
    for name, raw in table.items():
        if not OUTPUT_NAME.fullmatch(name):
            rd.fail(name, "an output name is a letter followed by letters, digits, '_' or "
                    "'-' (at most 40 characters), e.g. low, band_pass", code=_CODE)
        pair = output_node(rd, name, raw)
        key = (pair[0].strip().lower(), pair[1].strip().lower().replace("gnd", "0"))
        if key in seen:
            rd.fail(name, f"the same node as output {seen[key]!r}: give each output its "
                    "own node", code=_CODE)
        seen[key] = name
        out.append((name, pair))
    return tuple(out)


def limit_output(table: Any, index: int, path: str,
                 outputs: tuple[tuple[str, tuple[str, str]], ...]) -> str | None:
    """The output a ``[[limits]]`` table names with ``output`` (None: the main one).

    Refused (spec-266 at ``limits[i].output``) when it is not a name of ``[outputs]``,
    or when the spec has no ``[outputs]`` table.
    """
    if not isinstance(table, dict) or "output" not in table:
        return None
    rd = SpecReader({}, f"limits[{index}]", path, {})
    raw = table["output"]
    if not outputs:
        rd.fail("output", "this spec has one output; to judge a limit on another, name "
                "the outputs in an [outputs] table (name = node) and give the name here",
                code="spec-266")
    names = [n for n, _ in outputs]
    check_output_names(rd, "output", [raw], names)
    return str(raw)


def check_output_names(rd: SpecReader, key: str, given: list[Any], names: list[str]) -> None:
    """Refuse (spec-266 at ``key``) any of ``given`` that is not one of ``names``."""
    import difflib

    for raw in given:
        if not isinstance(raw, str) or raw not in names:
            close = difflib.get_close_matches(str(raw), names, n=1) if isinstance(raw, str) \
                else []
            hint = f"; did you mean {close[0]!r}?" if close else ""
            rd.fail(key, f"no output named {raw!r} in [outputs]{hint} (outputs: "
                    f"{', '.join(names)})", code="spec-266")
