"""Each netlist in tests/bad_netlists/ fails with its expected file:line:col, code and caret."""

from __future__ import annotations

import tomllib
from pathlib import Path

import pytest

from netcheck import NetcheckError, read_netlist
from netcheck.exceptions import CODES

BAD = Path(__file__).resolve().parents[1] / "bad_netlists"
EXPECTED: dict[str, dict[str, str]] = tomllib.loads((BAD / "expected.toml").read_text("utf-8"))


def test_every_file_has_an_expectation_and_back():
    assert sorted(p.name for p in BAD.glob("*.cir")) == sorted(EXPECTED)


def test_every_netlist_error_code_is_covered():
    # every netlist-1xx error code (not the warnings and notes) has at least one bad
    # netlist, except netlist-115 (unknown output node), which only a sweep request can produce
    errors = {c for c, what in CODES.items() if c.startswith("netlist-1")
              and not what.endswith(("(warning)", "(note)"))}
    covered = {e["expect"].split()[-1] for e in EXPECTED.values()}
    assert errors - covered == {"netlist-115"}


@pytest.mark.parametrize("name", sorted(EXPECTED))
def test_bad_netlist(name):
    path = BAD / name
    expected = EXPECTED[name]
    with pytest.raises(NetcheckError) as info:
        read_netlist(str(path))
    err = info.value
    lines = err.format().split("\n")
    loc, _, rest = expected["expect"].partition(": ")
    line, col = (int(x) for x in loc.split(":"))
    # line 1: path:line:col: error NCxxx: message
    assert lines[0].startswith(f"{path}:{loc}: {rest}: "), lines[0]
    assert expected["message"] in lines[0]
    assert err.code == rest.split()[-1]
    # line 2: the source line, indented; line 3: a caret under the column
    source_line = path.read_text("utf-8").split("\n")[line - 1]
    assert len(lines) == 3
    assert lines[1] == "    " + source_line.expandtabs(1)
    assert lines[2].startswith(" " * (4 + col - 1) + "^")
    assert set(lines[2].strip()) == {"^"}
    # and nothing leaks the implementation (tracebacks, parser exception names)
    for leak in ("Traceback", "VisitError", "UnexpectedToken", "UnexpectedCharacters"):
        assert leak not in err.format()
