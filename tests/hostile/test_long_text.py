"""Long text, odd line ends and empty names in specs and netlists, and how reports show them.

Source of these cases: a hostile-input review of netcheck. A spec whose ``title`` was
100 KB (or a limit ``name`` of 8 MiB) was accepted whole, made the PDF report take over
300 s and a 15 MiB title about 2 GB, and reached the Markdown, JSON, JUnit and SARIF
outputs whole. The review also found a whole-valued float (``points_per_decade = 1e9``)
getting a type message instead of the budget one, lone-CR specs getting a raw TOML
error, ``.include ""`` blamed on the folder, and "netlist ." in the Markdown summary of a
spec that could not be loaded. Every input is built here, in tmp_path; anything that
could take minutes without the fix runs in a child process with a timeout and an
address-space limit.
"""

from __future__ import annotations

import io
import json
import os
import resource
import subprocess
import sys
import time
from pathlib import Path

import pytest

from netcheck.spec.guard import (MAX_PATH_CHARS, MAX_STRING_WRITTEN, MAX_TEXT_CHARS,
                                  check_text_lengths, validate_sweep)
from netcheck.analyses.nominal import check_spec
from netcheck.exceptions import NetlistSyntaxError, SpecError
from netcheck.netlist.parse import TITLE_MAX, load_netlist
from netcheck.render import NAME_SHOWN_MAX, RenderOptions, get_renderer
from netcheck.result import CheckResult, LimitResult, SpecResult, Status
from netcheck.spec import load_spec, parse_spec

from .test_specs_and_runs import write

REPO = Path(__file__).resolve().parents[2]

#: first-order RC low-pass, corner 1/(2 pi R C) = 1.001 kHz (textbook closed form)
RC = """Quillmere Instruments RC low-pass, rev A
V1 in 0 AC 1
R1 in out 1k
C1 out 0 159n
.end
"""

#: a spec the RC meets: a corner in 900 Hz .. 1.1 kHz; {title} is the title line
SPEC = """{title}netlist = "rc.cir"
source = "V1"
output = "out"
[sweep]
start = "10"
stop = "100k"
points_per_decade = {ppd}
[[limits]]
kind = "corner"
name = "{name}"
range = ["900", "1100"]
"""


def spec_text(title: str | None = "Quillmere RC low-pass", name: str = "corner",
              ppd: object = 20, extra: str = "") -> str:
    head = "" if title is None else f'title = "{title}"\n'
    return SPEC.format(title=head, name=name, ppd=ppd) + extra


def spec_file(folder: Path, text: str, name: str = "s.toml") -> Path:
    write(folder / "rc.cir", RC)
    return write(folder / name, text)


def rendered(kind: str, result: CheckResult) -> str:
    out = io.StringIO()
    get_renderer(kind)(result, out, RenderOptions())
    return out.getvalue()


def run_child(args: list[str], timeout: float, memory: int = 3 * 2**30
              ) -> subprocess.CompletedProcess:
    """``python -m netcheck ARGS`` from this checkout, with a time and memory limit."""
    env = {**os.environ, "PYTHONPATH": str(REPO), "OPENBLAS_NUM_THREADS": "1",
           "OMP_NUM_THREADS": "1", "MKL_NUM_THREADS": "1"}

    def limit() -> None:
        resource.setrlimit(resource.RLIMIT_AS, (memory, memory))

    return subprocess.run([sys.executable, "-m", "netcheck", *args], cwd=REPO, env=env,
                          capture_output=True, text=True, timeout=timeout, preexec_fn=limit)


# ---------------------------------------------------------------------------------------
# 1. free text of a spec has a budget (spec-205), the netlist's title line is cut
# ---------------------------------------------------------------------------------------

class TestSpecTextBudget:
    def test_a_100_kb_title_is_refused_naming_file_and_key(self, tmp_path):
        # the review's first case: title = 100 KB
        path = spec_file(tmp_path, spec_text(title="Q" * 100_000))
        err = pytest.raises(SpecError, load_spec, path).value
        assert err.code == "spec-205"
        assert str(err).startswith(f"{path}:1:")
        # refused before the TOML reader decodes it: counted as written, quotes included
        assert err.message.startswith("title: a string of 100,002 characters as written")
        assert f"{MAX_TEXT_CHARS:,}" in err.message
        assert len(str(err)) < 2_000  # the title is not echoed

    def test_the_budget_itself_is_accepted(self, tmp_path):
        spec = load_spec(spec_file(tmp_path, spec_text(title="Q" * MAX_TEXT_CHARS)))
        assert len(spec.title) == MAX_TEXT_CHARS
        err = pytest.raises(SpecError, load_spec, spec_file(
            tmp_path, spec_text(title="Q" * (MAX_TEXT_CHARS + 1)), "over.toml")).value
        assert err.code == "spec-205" and "1,001 characters" in err.message

    def test_an_8_mib_limit_name_is_refused_fast(self, tmp_path):
        # the review's 8 MiB limit name: refused before the TOML reader decodes it
        path = spec_file(tmp_path, spec_text(name="n" * 8 * 2**20))
        start = time.perf_counter()
        err = pytest.raises(SpecError, load_spec, path).value
        assert time.perf_counter() - start < 5
        assert err.code == "spec-205" and err.span is not None and err.span.line == 11
        assert err.message.startswith("limits[0].name: a string of 8,388,610 characters")
        assert len(str(err)) < 2_000

    def test_an_8_mib_bare_key_is_refused_fast(self, tmp_path):
        # a bare key is no string, but the TOML reader takes seconds over one this long
        path = spec_file(tmp_path, spec_text(extra=f'[tolerances]\n{"R" * 8 * 2**20} = 1\n'))
        start = time.perf_counter()
        err = pytest.raises(SpecError, load_spec, path).value
        assert time.perf_counter() - start < 5
        assert err.code == "spec-205" and err.span is not None and err.span.line == 14
        assert err.message.startswith("tolerances: a key of 8,388,608 characters")

    def test_long_comments_cost_nothing(self, tmp_path):
        # comments reach no report: a long one is read, not refused
        text = spec_text() + "# " + "Quillmere " * 500_000 + "\n"
        assert load_spec(spec_file(tmp_path, text)).title == "Quillmere RC low-pass"

    @pytest.mark.parametrize("extra, key", [
        # every free-text key, not only the title: each reaches some report
        ('[[stress]]\nsource_amplitude = "1"\nparts = "{x}"\nmax_voltage = "50"\n',
         "stress[0].parts"),
        ('[variants]\nset = [{{ name = "{x}", params = {{ rval = "1k" }} }}]\n',
         "variants.set[0].name"),
        ('[tolerances]\nparts = {{ R1 = "{x}" }}\n', "tolerances.parts.R1"),
        ('[analysis]\nmode = ["{x}"]\n', "analysis.mode[0]"),
    ])
    def test_other_free_text_keys(self, tmp_path, extra, key):
        path = spec_file(tmp_path, spec_text(extra=extra.format(x="Z" * 5_000)))
        err = pytest.raises(SpecError, load_spec, path).value
        assert err.code == "spec-205" and err.message.startswith(f"{key}: 5,000 characters")
        assert err.span is not None  # located at the key's line

    def test_a_long_key_is_refused_without_echoing_it(self, tmp_path):
        extra = f'[tolerances]\nparts = {{ {"R" * 5_000} = "1%" }}\n'
        path = spec_file(tmp_path, spec_text(extra=extra))
        err = pytest.raises(SpecError, load_spec, path).value
        assert err.code == "spec-205" and "a key of 5,000 characters" in err.message
        assert "R" * 100 not in err.message

    def test_paths_have_their_own_budget(self, tmp_path):
        ok = "d/" * 1_000 + "rc.cir"  # 2,006 characters: over the text budget, a fine path
        assert len(ok) > MAX_TEXT_CHARS
        check_text_lengths({"netlist": ok}, "q.toml")
        err = pytest.raises(SpecError, check_text_lengths,
                            {"variants": {"netlists": ["x" * (MAX_PATH_CHARS + 1)]}},
                            "q.toml").value
        assert err.code == "spec-205" and err.where == "variants.netlists[0]"
        assert MAX_STRING_WRITTEN >= 10 * MAX_PATH_CHARS

    def test_messages_quoting_values_are_bounded(self, tmp_path):
        # a value of the wrong type is quoted in the message, which travels whole into
        # the JSON, JUnit and SARIF outputs: 10,000 short node names stay under budget
        nodes = ", ".join(f'"n{i}"' for i in range(10_000))
        text = spec_text().replace('output = "out"', f"output = [{nodes}]")
        err = pytest.raises(SpecError, parse_spec, text, str(tmp_path / "q.toml")).value
        assert err.code == "spec-202" and len(err.message) < 1_200
        assert "more characters" in err.message


class TestNetlistTitle:
    def test_a_long_title_line_is_cut_and_marked(self, tmp_path):
        # the netlist's first line is its title and names the design in every report
        line = "Quillmere Instruments " * 5_000  # 110,000 characters
        path = write(tmp_path / "rc.cir", line + "\n" + RC.split("\n", 1)[1])
        title = load_netlist(path).title
        assert title.startswith("Quillmere Instruments Quillmere")
        assert title.endswith(f"… ({len(line.strip()) - TITLE_MAX:,} more characters)")
        assert len(title) < TITLE_MAX + 40

    def test_the_cut_title_reaches_the_result(self, tmp_path):
        spec = spec_file(tmp_path, spec_text(title=None))
        write(tmp_path / "rc.cir", "T" * 100_000 + "\n" + RC.split("\n", 1)[1])
        res = check_spec(str(spec))
        assert res.status is Status.PASS
        assert len(res.title) < TITLE_MAX + 40 and "more characters)" in res.title

    def test_a_short_title_is_kept(self, tmp_path):
        assert load_netlist(write(tmp_path / "rc.cir", RC)).title == \
            "Quillmere Instruments RC low-pass, rev A"


class TestReportsBoundText:
    @staticmethod
    def result(title: str, name: str, text: str = "") -> CheckResult:
        lim = LimitResult(name, "gain", Status.FAIL, -3.0, -1.0, None, -2.0, "dB", 1e3,
                          "gain", "exact", "", 0, 10)
        spec = SpecResult("q.toml", "rc.cir", title, Status.FAIL, limits=(lim,),
                          source_text=(("q.toml", text),) if text else ())
        return CheckResult((spec,), "0.0")

    def test_markdown_names_and_titles(self):
        # a result built by other means (an older run, the Python interface) is not
        # bounded by the spec loader; the summary bounds names itself
        md = rendered("markdown", self.result("T" * 50_000, "N" * 50_000))
        assert "T" * (NAME_SHOWN_MAX + 1) not in md and "N" * (NAME_SHOWN_MAX + 1) not in md
        assert f"… ({50_000 - NAME_SHOWN_MAX:,} more characters)" in md
        assert len(md) < 5_000

    def test_pdf_html_names_titles_and_listings(self):
        # the PDF of the review's refused spec listed the 8 MiB file in its appendix;
        # the HTML the PDF is laid out from is checked here, quickly
        from netcheck.report.pdf import render_html
        big = 'name = "' + "N" * 2**20 + '"\n' + "\n".join(f"# line {i}" for i in range(50_000))
        html, _ = render_html(self.result("T" * 50_000, "L" * 50_000, big))
        assert "T" * (NAME_SHOWN_MAX + 1) not in html and "L" * (NAME_SHOWN_MAX + 1) not in html
        assert "N" * 10_000 not in html
        assert "Listing cut after" in html and "more characters of line 1 not shown" in html
        assert len(html) < 1_000_000

    def test_pdf_of_the_refused_8_mib_spec_in_normal_time(self, tmp_path):
        # before: over 300 s and 1.7 GB (the appendix listed the whole file)
        path = spec_file(tmp_path, spec_text(name="n" * 8 * 2**20))
        start = time.perf_counter()
        proc = run_child(["check", str(path), "--pdf", str(tmp_path / "pdf"), "-q"], 240)
        assert proc.returncode == 2, proc.stderr[-2000:]
        assert (tmp_path / "pdf" / "s.pdf").stat().st_size > 1_000
        assert time.perf_counter() - start < 120
        assert "spec-205" in proc.stderr and "limits[0].name" in proc.stderr


# ---------------------------------------------------------------------------------------
# 2. a whole-valued float meets the budget, not a type message
# ---------------------------------------------------------------------------------------

class TestWholeFloats:
    def test_points_per_decade_1e9(self, tmp_path):
        err = pytest.raises(SpecError, load_spec, spec_file(tmp_path, spec_text(ppd="1e9"))).value
        assert err.code == "spec-205" and "4,000,000,001 grid points" in err.message
        assert "over the budget of 1,000,000" in err.message

    def test_validate_sweep_judges_the_value(self):
        err = pytest.raises(SpecError, validate_sweep, 10.0, 1e5, 1e9).value
        assert err.code == "spec-205" and err.where == "sweep.points_per_decade"
        validate_sweep(10.0, 1e5, 20.0)  # a whole float within budget
        assert pytest.raises(SpecError, validate_sweep, 10.0, 1e5, 7.5).value.code == "spec-202"

    def test_a_whole_float_within_budget_is_its_whole_number(self, tmp_path):
        spec = load_spec(spec_file(tmp_path, spec_text(ppd="2e1")))
        assert spec.sweep.points_per_decade == 20 and type(spec.sweep.points_per_decade) is int

    def test_a_fraction_is_still_not_whole(self, tmp_path):
        err = pytest.raises(SpecError, load_spec, spec_file(tmp_path, spec_text(ppd="7.5"))).value
        assert err.code == "spec-202" and "whole number" in err.message

    def test_monte_carlo_samples_1e9(self, tmp_path):
        extra = ('[tolerances]\ndefault = { R = "1%", C = "5%" }\n'
                 '[analysis]\nmode = ["monte_carlo"]\nsamples = 1e9\n')
        res = check_spec(str(spec_file(tmp_path, spec_text(extra=extra))))
        assert res.status is Status.ERROR
        assert [c.code for c in res.cautions] == ["spec-205"], res.error
        assert "analysis.samples: 1000000000 samples" in res.error
        assert "over the budget" in res.error


# ---------------------------------------------------------------------------------------
# 3. lone-CR and UTF-16 specs get a clear message
# ---------------------------------------------------------------------------------------

class TestSpecLineEndsAndEncoding:
    def test_lone_cr_line_ends(self, tmp_path):
        path = spec_file(tmp_path, spec_text().replace("\n", "\r").encode())
        err = pytest.raises(SpecError, load_spec, path).value
        assert err.code == "netlist-117" and str(err).startswith(f"{path}:1:")
        assert "lone carriage-return" in err.message and "LF or CR LF" in err.message

    def test_a_lone_cr_at_the_end(self, tmp_path):
        path = spec_file(tmp_path, (spec_text() + "\r").encode())
        err = pytest.raises(SpecError, load_spec, path).value
        assert err.code == "netlist-117" and "lone carriage-return" in err.message

    def test_cr_lf_is_fine(self, tmp_path):
        path = spec_file(tmp_path, spec_text().replace("\n", "\r\n").encode())
        assert load_spec(path).title == "Quillmere RC low-pass"

    @pytest.mark.parametrize("encoding", ["utf-16", "utf-16-le", "utf-16-be"])
    def test_utf16(self, tmp_path, encoding):
        # already refused before this change (netcheck.netlist.source.read_text); kept as a guard
        path = spec_file(tmp_path, spec_text().encode(encoding))
        err = pytest.raises(SpecError, load_spec, path).value
        assert err.code == "netlist-117" and "UTF-16" in err.message and str(path) in str(err)


# ---------------------------------------------------------------------------------------
# 4. an empty .include name says so
# ---------------------------------------------------------------------------------------

class TestEmptyInclude:
    @pytest.mark.parametrize("written", ['""', "''", '"   "'])
    def test_empty_name(self, tmp_path, written):
        path = write(tmp_path / "top.cir", f"Quillmere top\n.include {written}\nR1 a 0 1k\n")
        err = pytest.raises(NetlistSyntaxError, load_netlist, path).value
        assert err.code == "netlist-104" and "empty file name in .include" in err.message
        assert str(err).startswith(f"{path}:2:10:")
        assert str(tmp_path) not in err.message  # not the folder


# ---------------------------------------------------------------------------------------
# 5. a spec that could not be loaded names no netlist
# ---------------------------------------------------------------------------------------

class TestUnloadedSpecNetlist:
    @pytest.fixture
    def result(self, tmp_path) -> CheckResult:
        path = write(tmp_path / "broken.toml", 'title = "Quillmere"\nnetlist = \n')
        res = check_spec(str(path))
        assert res.status is Status.ERROR and res.netlist == ""
        return CheckResult((res,), "0.0")

    def test_markdown(self, result):
        md = rendered("markdown", result)
        assert "netlist ." not in md and "netlist unknown (spec not loaded)" in md

    def test_junit_has_no_empty_netlist_property(self, result):
        xml = rendered("junit", result)
        assert 'name="netlist"' not in xml and 'name="spec"' in xml

    @pytest.mark.parametrize("kind", ["text", "sarif", "json"])
    def test_other_renderers(self, result, kind):
        out = rendered(kind, result)
        assert "netlist ." not in out and "netlist: ." not in out
        if kind == "sarif":
            assert '"netlist"' not in out
        if kind == "json":  # the JSON result keeps the field, empty: it is data
            assert json.loads(out)["specs"][0]["netlist"] == ""

    def test_pdf_view(self, result):
        from netcheck.report.context import build_context
        view = build_context(result, with_plots=False)["specs"][0]
        assert view["netlist"] == "" and view["design_files"] == []
