"""Terminal renderer: failures first and marked, aligned columns, the headline, colour."""

from __future__ import annotations

import io
import re

from netcheck.render import RenderOptions, get_renderer
from netcheck.render.text import render
from netcheck.result import (HAZARD_CAUTION, MODEL_STATEMENT, CheckResult, LimitResult,
                             SpecResult, Status)
from netcheck.netlist.units import format_eng

from .sample import HOSTILE_TITLE, compare_gold, sample_result


def text(result: CheckResult, **options) -> str:
    buf = io.StringIO()
    render(result, buf, RenderOptions(**options))
    return buf.getvalue()


def block(out: str, title_start: str) -> list[str]:
    """The table lines (header first) of the spec whose heading contains ``title_start``."""
    lines = out.splitlines()
    start = next(i for i, ln in enumerate(lines) if title_start in ln)
    end = next(i for i in range(start + 1, len(lines)) if not lines[i].strip())
    return lines[start + 1:end]


def test_gold():
    compare_gold("text.txt", text(sample_result()))


def test_registered_as_text():
    assert get_renderer("text") is render


def limit_rows(lines: list[str]) -> list[str]:
    """Table rows only: no header, no error-message continuation, no caution lines."""
    return [ln for ln in lines[1:] if not ln.startswith("      ")
            and not CAUTION_LINE.match(ln)]


#: a caution line of a spec block: ``  [path:line:col: ]severity code: message``
CAUTION_LINE = re.compile(r"  (\S+: )?(warning|caution|error|note) [a-z]+-\w+: ")


def test_failing_rows_first_and_marked():
    out = text(sample_result())
    rows = limit_rows(block(out, "RX-40k front end"))
    assert [r[2] for r in rows] == ["!", "✗", "✗", " ", " ", " "]
    assert [r[5:].split()[0] for r in rows] == ["ERROR", "FAIL", "FAIL", "PASS", "PASS", "PASS"]
    # the error message follows its row
    assert out.index("ERROR  group delay") < out.index("no sweep points inside the") < \
        out.index("FAIL   ripple")


def test_failures_keep_spec_order_among_themselves():
    def lim(name, status, index):
        return LimitResult(name, "gain", status, -1.0, None, 0.0, 1.0, "dB", 1e3, index=index)
    spec = SpecResult("q.toml", "q.cir", "Quillmere order", Status.FAIL, limits=(
        lim("first pass", Status.PASS, 0), lim("second fail", Status.FAIL, 1),
        lim("third pass", Status.PASS, 2), lim("fourth fail", Status.FAIL, 3)))
    out = text(CheckResult((spec,), "0.1.0"))
    positions = [out.index(n) for n in ("second fail", "fourth fail", "first pass",
                                        "third pass")]
    assert positions == sorted(positions)


def test_columns_are_aligned():
    result = sample_result()
    rx = result.specs[3]
    lines = block(text(result), "RX-40k front end")
    header, rows = lines[0], limit_rows(lines)
    assert len(rows) == len(rx.limits)
    # numbers are right-aligned: each measured/margin cell ends under the end of its heading
    for heading, values in (("measured", [r.measured for r in rx.limits]),
                            ("margin", [r.margin for r in rx.limits])):
        edge = header.index(heading) + len(heading)
        cells = {format_eng(v, r.unit) if v is not None else "—"
                 for v, r in zip(values, rx.limits)}
        for row in rows:
            assert any(row[:edge].endswith(c) for c in cells), (heading, row)
    # names are left-aligned under "limit"
    col = header.index("limit")
    names = {r.name for r in rx.limits}
    for row in rows:
        assert any(row[col:].startswith(n) for n in names), row


def test_headline_ends_the_output():
    # the run's headline is the last line: what was found, the worst limit (an
    # unmeasured one ranks worst), then what was not applicable or not checked
    out = text(sample_result()).splitlines()
    assert out[-1] == ("! 5 specs: 3 of 17 limits missed, 1 could not be measured (worst: "
                       "group delay could not be measured in specs/quillmere_rx40k.toml); "
                       "1 not applicable; 1 spec not checked")
    one = SpecResult("q.toml", "q.cir", "Quillmere one", Status.PASS, limits=(
        LimitResult("g", "gain", Status.PASS, -1.0, None, 0.0, 1.0, "dB", 1e3),))
    assert text(CheckResult((one,), "0.1.0")).splitlines()[-1] == "✓ 1 spec: 1 limit met"


def test_spec_headline_says_what_was_found():
    out = text(sample_result()).splitlines()
    assert ("✗ Quillmere Instruments mains hum notch [60hz] — 1 of 4 limits missed "
            "(notch depth -1.300 dB)  (specs/quillmere_hum_notch.toml)") in out
    assert ("✓ Quillmere Instruments mains hum notch [50hz] — all 4 limits met  "
            "(specs/quillmere_hum_notch.toml)") in out
    assert ("! Quillmere Instruments anti-alias low-pass — not checked  "
            "(specs/quillmere_sk_lowpass.toml)") in out


def test_unchecked_spec_shows_its_error_indented():
    out = text(sample_result())
    assert "    sample_netlists/sk_lowpass.cir:7:1: error analysis-300: singular circuit" in out
    assert "\n        ^\n" in out  # the caret line keeps its place under the source line


def test_cautions():
    out = text(sample_result())
    # a caution with a position reads as the errors do: path:line:col: severity code:
    assert ("  sample_netlists/rx40k.cir:22:1: warning netlist-154: R7 = 4.75k is off the "
            "E24 series") in out
    assert "  warning analysis-302: matrix badly conditioned near 38.0 kHz; result kept" in out
    # run-wide cautions are shown once, before the count line
    assert out.count("unknown directive .temp ignored") == 1
    # the receiver's hazard caution with its spec; the general one once, just before the
    # headline (with a blank line between), because a spec warrants it
    assert out.count("  caution analysis-voltage: L2 sees 14.2× the input voltage at "
                     "40.1 kHz;") == 1
    assert out.rstrip().splitlines()[-3:-1] == [f"Caution: {HAZARD_CAUTION}", ""]
    assert out.count(HAZARD_CAUTION) == 1
    # the model statement only with --verbose, once
    assert MODEL_STATEMENT not in out
    assert text(sample_result(), verbose=True).count(MODEL_STATEMENT) == 1


def test_no_escape_codes_without_colour():
    out = text(sample_result())
    assert "\x1b" not in out and "\x00" not in out
    # control characters from the input are shown, not obeyed
    assert "\\x1b[31mred\\x00" in out
    assert HOSTILE_TITLE not in out


def test_colour_marks_failing_rows_only():
    out = text(sample_result(), color=True)
    lines = block(out, "[60hz]")
    fail = next(ln for ln in lines if "notch depth" in ln)
    ok = next(ln for ln in lines if "pass-band flatness" in ln)
    assert fail.startswith("\x1b[31;1m") and fail.endswith("\x1b[0m")
    assert "\x1b" not in ok
    # the word is still there: status is never shown by colour alone
    assert "FAIL" in fail


def _one(title: str = "Quillmere one", name: str = "g", error: str | None = None,
         variant: str | None = None, message: str = "") -> SpecResult:
    status = Status.ERROR if error or message else Status.PASS
    lims = () if error else (LimitResult(name, "gain", status, -1.0, None, 0.0, 1.0, "dB", 1e3,
                                         message=message),)
    return SpecResult("q.toml", "q.cir", title, status, limits=lims, error=error,
                      variant=variant)


def test_bidirectional_overrides_and_line_separators_are_shown_escaped():
    # U+202E would make a terminal show the rest of the line backwards; U+2028 and
    # U+0085 would break it. Only "\n" ends a line of an error message.
    out = text(CheckResult((_one("Quillmere \u202egnirts", "lim\u2066it"),
                            _one(error="q.toml:1:1: error netlist-100: a\u2028b\x85c\nnext line"),),
                           "0.1.0"))
    for ch in ("\u202e", "\u2066", "\u2028", "\x85"):
        assert ch not in out
    assert "Quillmere \\u202egnirts" in out and "lim\\u2066it" in out
    assert "    q.toml:1:1: error netlist-100: a\\u2028b\\x85c\n    next line" in out


def test_long_text_from_inputs_is_bounded():
    long_title = "Quillmere " + "T" * 100_000
    long_error = "\n".join(f"q.toml:{i}:1: error netlist-100: " + "e" * 5000 for i in range(1, 500))
    out = text(CheckResult((_one(long_title), _one(error=long_error),
                            _one(message="m" * 50_000)), "0.1.0"))
    assert "(99810 more characters)" in out  # the title is cut at 200 characters
    assert max(len(line) for line in out.splitlines()) < 1200
    assert "… (459 more lines)" in out and out.count("error netlist-100") == 40


def test_family_matrix_escapes_variant_and_limit_names():
    members = tuple(_one(name="a\x1b[5mb", variant=v) for v in ("x\x1b[1m", "y"))
    out = text(CheckResult(members, "0.1.0"))
    assert "\x1b" not in out
    matrix = out[out.index("family q.toml"):].splitlines()
    assert "a\\x1b[5mb" in matrix[1] and matrix[2].lstrip().startswith("x\\x1b[1m")
    # columns stay aligned on the escaped text
    assert matrix[1].index("a\\x1b[5mb") == matrix[2].index("PASS +")
