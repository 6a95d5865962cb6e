"""Fuzzing the spec loader and the variants reader: whatever the input, a clean NetcheckError.

``parse_spec`` gets TOML-like text spliced from a vocabulary of spec keys, values and
punctuation, and random structured documents (a valid spec with keys replaced by random
TOML values) written out as TOML; the tables other stages read (tolerances, analysis,
stress, variants) get the same random values. The variants reader gets random bytes and
CSV-like text. Nothing may escape but a NetcheckError, and its message must be bounded.

The default hypothesis profile keeps this to a few hundred examples; the "fuzz" profile
(NETCHECK_HYPOTHESIS_PROFILE=fuzz) runs its own, much larger, count.
"""

from __future__ import annotations

import datetime as dt
import json
import math
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from netcheck.runs.jobs import _variant_jobs, read_variant_table
from netcheck.exceptions import CODES, NetcheckError
from netcheck.spec import TOP_KEYS, parse_spec
from netcheck.spec.stress import parse_stress
from netcheck.spec.tolerances import parse_analysis, parse_tolerances

RC = "Quillmere Instruments RC\nV1 in 0 AC 1\nR1 in out 1k\nC1 out 0 159n\n.end\n"

#: a spec that parses: every fuzzed document starts from it
BASE = {
    "title": "Quillmere fuzz base",
    "netlist": "rc.cir",
    "source": "V1",
    "output": "out",
    "sweep": {"start": "10", "stop": "100k", "points_per_decade": 20},
    "limits": [{"kind": "corner", "range": ["900", "1100"]},
               {"kind": "gain", "band": ["10", "100"], "min_db": -1}],
}

VOCABULARY = [
    "[sweep]", "[[limits]]", "[[stress]]", "[variants]", "[tolerances]", "[analysis]",
    "[[variants.set]]", "[tolerances.parts]", "kind", "band", "min_db", "max_db", "range",
    "center", "center_tolerance", "q", "bandwidth", "level_db", "side", "reference",
    "start", "stop", "points_per_decade", "samples", "memory_mib", "mode", "table",
    "netlists", "set", "params", "parts", "default", "max_voltage", "source_amplitude",
    *TOP_KEYS, "=", " = ", "\n", "\r\n", "[", "]", "{", "}", ",", ".", '"', "'", '"""',
    "'''", "#", "\\", "\t", "\x00", "\x7f", "\u202e", "1e308", "-1e308", "1e-320", "nan",
    "inf", "-inf", "0", "-0", "1e9", "1000000000", "2", "true", "false", '"38k"', '"1%"',
    '"1meg"', '"4k7"', '"1M"', "1979-05-27", "07:32:00", "0x1F", "1_000",
    '"../x.cir"', '"/etc/passwd"', '"*.cir"', '"**/*"', '"rc.cir"', '"fam.csv"',
    '"gain"', '"resonance"', '"corner"', '"monte_carlo"', '"worst_case"', '"V1"', '"out"',
]

FRAGMENTS = st.lists(st.one_of(st.sampled_from(VOCABULARY), st.text(max_size=6)),
                     max_size=60).map("".join)


def budget(n: int) -> int:
    """``n`` examples in the default profile, the profile's count in a larger one."""
    configured = settings.default.max_examples
    return n if configured <= 100 else max(n, configured)


def toml_value(v) -> str:
    """``v`` written as a TOML value (inline tables and arrays for nesting)."""
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, str):  # a basic string; TOML wants DEL escaped too
        return json.dumps(v, ensure_ascii=False).replace("\x7f", "\\u007f")
    if isinstance(v, (dt.date, dt.time)):
        return v.isoformat()
    if isinstance(v, list):
        return "[" + ", ".join(toml_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{" + ", ".join(f"{json.dumps(k)} = {toml_value(x)}"
                               for k, x in v.items()) + "}"
    raise TypeError(type(v))


def toml_document(doc: dict) -> str:
    return "".join(f"{json.dumps(k)} = {toml_value(v)}\n" for k, v in doc.items())


SCALARS = st.one_of(
    st.booleans(), st.integers(), st.integers(min_value=-10, max_value=10**7),
    st.floats(allow_nan=True, allow_infinity=True), st.text(max_size=12),
    st.sampled_from(["38k", "1%", "50 %", "1meg", "-3", "0", "1e999", "rms:7.07", "peak:1",
                     "R*", "X1.*", "../x.cir", "*.cir", "monte_carlo", "worst_case", "nominal",
                     "gain", "resonance", "corner", "ripple", "group_delay", "phase",
                     "impedance", "high", "low", "auto", "peak", "absolute", "uniform",
                     "normal", "truncnormal", "V1", "out", "name"]),
    st.dates(), st.times())
KEYS = st.one_of(st.sampled_from(sorted({*TOP_KEYS, "start", "stop", "points_per_decade",
                                         "kind", "band", "min_db", "max_db", "range", "q",
                                         "center", "center_tolerance", "bandwidth", "name",
                                         "samples", "mode", "memory_mib", "seed", "parts",
                                         "default", "table", "netlists", "set", "params",
                                         "max_voltage", "max_current", "max_power",
                                         "source_amplitude", "distribution", "yield_min",
                                         "R", "C", "L", "R1", "level_db", "side"})),
                 st.text(min_size=1, max_size=8))
VALUES = st.recursive(SCALARS, lambda inner: st.one_of(
    st.lists(inner, max_size=4), st.dictionaries(KEYS, inner, max_size=4)), max_leaves=12)


@st.composite
def documents(draw) -> dict:
    """BASE with some keys (at any depth of its tables) replaced or added."""
    doc = json.loads(json.dumps(BASE))
    for _ in range(draw(st.integers(1, 6))):
        path = draw(st.lists(KEYS, min_size=1, max_size=3))
        table = doc
        for key in path[:-1]:
            if not isinstance(table.get(key), dict):
                if draw(st.booleans()):
                    break
                table[key] = {}
            table = table[key]
        else:
            table[path[-1]] = draw(VALUES)
            continue
        if draw(st.booleans()) and isinstance(doc.get("limits"), list) and doc["limits"]:
            doc["limits"][draw(st.integers(0, len(doc["limits"]) - 1))] = draw(VALUES)
    return doc


@pytest.fixture(scope="module")
def folder(tmp_path_factory) -> Path:
    """A design folder with the base netlist, a variants table and a netlist family."""
    base = tmp_path_factory.mktemp("fuzzdesign")
    (base / "rc.cir").write_text(RC)
    (base / "fam.csv").write_text("name,rval\na,1k\n")
    (base / "nets").mkdir()
    (base / "nets" / "v1.cir").write_text(RC)
    return base


def clean(err: NetcheckError) -> None:
    """A NetcheckError as it must be: a known code, a bounded first line."""
    assert err.code in CODES, err.code
    shown = err.format()
    assert len(shown.split("\n")[0]) < 4000
    assert "Traceback" not in shown


def parse_or_clean_error(text: str, path: str):
    try:
        return parse_spec(text, path)
    except NetcheckError as err:
        clean(err)
        return None


SETTINGS = dict(deadline=None, suppress_health_check=[HealthCheck.too_slow,
                                                      HealthCheck.function_scoped_fixture])


@settings(max_examples=budget(300), **SETTINGS)
@given(text=FRAGMENTS)
def test_toml_like_text(folder, text):
    parse_or_clean_error(text, str(folder / "s.toml"))


@settings(max_examples=budget(150), **SETTINGS)
@given(head=FRAGMENTS, tail=FRAGMENTS)
def test_valid_spec_with_text_spliced_in(folder, head, tail):
    base = toml_document(BASE)
    cut = len(head) % (len(base) + 1)
    parse_or_clean_error(base[:cut] + head + base[cut:] + tail, str(folder / "s.toml"))


@settings(max_examples=budget(300), **SETTINGS)
@given(doc=documents())
def test_random_structured_documents(folder, doc):
    text = toml_document(doc)
    spec = parse_or_clean_error(text, str(folder / "s.toml"))
    if spec is not None:
        assert spec.sweep.grid().size <= 1_000_000
        assert Path(spec.netlist).resolve().is_relative_to(folder.resolve())


@settings(max_examples=budget(300), **SETTINGS)
@given(table=VALUES, which=st.sampled_from(["tolerances", "analysis", "stress", "variants"]))
def test_tables_other_stages_read(folder, table, which):
    spec = str(folder / "s.toml")
    read = {"tolerances": lambda t: parse_tolerances(t, spec),
            "analysis": lambda t: parse_analysis(t, spec),
            "stress": lambda t: parse_stress(t, spec, []),
            "variants": lambda t: _variant_jobs(spec, t)}[which]
    try:
        read(table)
    except NetcheckError as err:
        clean(err)


@settings(max_examples=budget(200), **SETTINGS)
@given(entries=st.dictionaries(st.sampled_from(["table", "set", "netlists"]), VALUES,
                               max_size=3))
def test_random_variants_tables(folder, entries):
    try:
        _variant_jobs(str(folder / "s.toml"), entries)
    except NetcheckError as err:
        clean(err)


CELLS = st.one_of(st.sampled_from(["name", "rval", "fc", "1k", "4k7", "1meg", "-1", "nan",
                                   "1e999", '"', '""', '"a,b"', "\x00", "\ufeff", "é", ""]),
                  st.text(max_size=5))
ROWS = st.lists(st.lists(CELLS, max_size=4).map(",".join), max_size=8)
SEPARATORS = st.sampled_from(["\n", "\r\n", "\r", "\n\n"])


@st.composite
def csv_bytes(draw) -> bytes:
    """Random bytes, or CSV-like text in a random encoding, sometimes after a good header."""
    if draw(st.booleans()):
        return draw(st.binary(max_size=300))
    sep = draw(SEPARATORS)
    rows = draw(ROWS)
    if draw(st.booleans()):
        rows = ["name,rval", *rows]
    text = sep.join(rows) + draw(st.sampled_from(["", sep]))
    encoding = draw(st.sampled_from(["utf-8", "utf-8-sig", "latin-1", "utf-16"]))
    return text.encode(encoding, errors="replace")


@settings(max_examples=budget(400), **SETTINGS)
@given(data=csv_bytes())
def test_variants_reader_on_random_bytes(folder, data):
    path = folder / "fuzz.csv"
    path.write_bytes(data)
    try:
        jobs = read_variant_table(str(folder / "s.toml"), path)
    except NetcheckError as err:
        clean(err)
        return
    for job in jobs:  # (a header alone gives none: the spec is then checked as it is)
        assert job.variant and all(math.isfinite(v) for _, v in job.overrides)
        assert job.row_text.count("\n") >= 1 and len(job.table_sha256) == 64
