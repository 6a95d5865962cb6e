"""``netcheck check``: exit codes, directory search, machine outputs and colour."""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest

from netcheck.cli import BAD_INPUT, FAIL, INTERNAL, OK
from netcheck.cli import main as netcheck_main

ROOT = Path(__file__).resolve().parents[2]
SPECS = ROOT / "specs"
GOOD = sorted(str(p) for p in SPECS.glob("*.toml"))
FAILING = str(SPECS / "failing")
ONE = str(SPECS / "sk_lowpass.toml")
ANSI = "\x1b["


def main(argv: list[str]) -> int:
    """``netcheck check`` in this process, serially (worker pools belong to test_batch)."""
    return netcheck_main([*argv, "--jobs", "1"])


@pytest.fixture
def broken(tmp_path) -> Path:
    """A spec with a misspelt top-level key (spec-201)."""
    path = tmp_path / "broken.toml"
    path.write_text('netlst = "x.cir"\nsource = "VIN"\noutput = "out"\n'
                    '[sweep]\nstart = 10\nstop = 100\n')
    return path


def test_exit_codes_are_named():
    assert (OK, FAIL, BAD_INPUT, INTERNAL) == (0, 1, 2, 3)


def test_shipped_specs_pass(capsys, tmp_path):
    path = tmp_path / "all.json"
    assert main(["check", *GOOD, "--json", str(path)]) == OK
    out = capsys.readouterr().out
    last = out.splitlines()[-1]
    assert last.startswith(f"✓ {len(json.loads(path.read_text('utf-8'))['specs'])} specs: all ")
    assert last.endswith(" limits met")
    doc = json.loads(path.read_text("utf-8"))
    assert {s["spec"] for s in doc["specs"]} == set(GOOD)  # a family gives several results
    assert {s["status"] for s in doc["specs"]} == {"pass"}


def test_failing_design_fails(capsys):
    assert main(["check", FAILING]) == FAIL
    out = capsys.readouterr().out
    spec = str(SPECS / "failing" / "rx40k_revA.toml")  # shown as given
    assert ("✗ Transducer receive filter, 40 kHz, rev A (superseded by rev B) — 3 of 4 limits "
            f"missed; worst: resonance: bandwidth -6.924 kHz  ({spec})") in out.splitlines()
    # the worst is the bandwidth: -6.924 kHz on a 1 kHz span is -6.9 spans; Q's -6.339 on
    # a span of 3 is -2.1, the stop-band's -5.011 dB on a -20 dB bound is -0.25
    assert out.splitlines()[-1] == ("✗ 1 spec: 3 of 4 limits missed (worst: resonance: "
                                    f"bandwidth -6.924 kHz in {spec})")


def test_broken_spec_is_bad_input_and_the_others_are_still_checked(capsys, broken):
    assert main(["check", str(broken), ONE, FAILING]) == BAD_INPUT
    captured = capsys.readouterr()
    assert "✓ Sallen-Key low-pass" in captured.out
    assert "✗ Transducer receive filter, 40 kHz, rev A" in captured.out
    assert f"! {broken.name} — not checked" in captured.out
    assert "1 spec not checked" in captured.out
    # the error also goes to stderr, compiler-style
    assert f"{broken}:1:1: error spec-201: netlst: unknown key 'netlst'; did you mean " \
           "'netlist'?" in captured.err


def test_missing_path_is_bad_input(capsys, tmp_path):
    assert main(["check", ONE, str(tmp_path / "absent.toml")]) == BAD_INPUT
    captured = capsys.readouterr()
    assert "absent.toml: error spec-200" in captured.err
    assert "✓ Sallen-Key low-pass" in captured.out


def test_empty_directory_is_bad_input(capsys, tmp_path):
    assert main(["check", str(tmp_path)]) == BAD_INPUT
    assert "no spec files found" in capsys.readouterr().err


def test_directories_are_searched_recursively(capsys, tmp_path):
    deep = tmp_path / "quillmere" / "rx" / "rev_a"
    deep.mkdir(parents=True)
    for name in ("rx40k_revA.toml", "rx40k_revA.cir"):
        shutil.copy(SPECS / "failing" / name, deep / name)
    # a TOML file without a netlist key is not a spec and is left alone
    (tmp_path / "quillmere" / "pyproject.toml").write_text('[tool.other]\nx = 1\n')
    assert main(["check", str(tmp_path), "--json", str(tmp_path / "r.json")]) == FAIL
    doc = json.loads((tmp_path / "r.json").read_text("utf-8"))
    assert [s["spec"] for s in doc["specs"]] == [str(deep / "rx40k_revA.toml")]


def test_json_file(capsys, tmp_path):
    path = tmp_path / "out" / "result.json"
    assert main(["check", ONE, FAILING, "--json", str(path)]) == FAIL
    doc = json.loads(path.read_text("utf-8"))
    assert doc["schema"] == "netcheck.result/1"
    assert [s["status"] for s in doc["specs"]] == ["pass", "fail"]
    assert doc["status"] == "fail"


def test_json_to_stdout_is_only_json(capsys):
    assert main(["check", ONE, "--json", "-"]) == OK
    captured = capsys.readouterr()
    doc = json.loads(captured.out)
    assert doc["schema"] == "netcheck.result/1" and doc["specs"][0]["status"] == "pass"
    # the table still reaches the user, on stderr
    assert "✓ Sallen-Key low-pass" in captured.err


def test_junit(capsys, tmp_path):
    path = tmp_path / "junit.xml"
    assert main(["check", ONE, FAILING, "--junit", str(path)]) == FAIL
    root = ET.parse(path).getroot()
    suites = root.findall("testsuite")
    assert [s.get("name") for s in suites] == ["Sallen-Key low-pass, 1 kHz, Q 0.707, rev C",
                                               "Transducer receive filter, 40 kHz, rev A "
                                               "(superseded by rev B)"]
    cases = suites[1].findall("testcase")
    assert len(cases) == int(suites[1].get("tests")) == 4
    failed = [c.get("name") for c in cases if c.find("failure") is not None]
    assert failed == ["resonance: bandwidth", "resonance: Q", "low stop-band"]
    assert suites[0].findall("testcase/failure") == []


class TestColour:
    def test_no_ansi_when_not_a_tty(self, capsys, monkeypatch):
        monkeypatch.delenv("NO_COLOR", raising=False)
        assert main(["check", FAILING]) == FAIL
        out = capsys.readouterr().out
        assert ANSI not in out and "✗  FAIL" in out

    def test_colour_on_a_tty(self, capsys, monkeypatch):
        monkeypatch.delenv("NO_COLOR", raising=False)
        monkeypatch.setattr(sys.stdout, "isatty", lambda: True)
        assert main(["check", FAILING]) == FAIL
        assert ANSI in capsys.readouterr().out

    def test_no_color_is_respected_on_a_tty(self, capsys, monkeypatch):
        # NO_COLOR: any non-empty value turns colour off (no-color.org convention)
        monkeypatch.setenv("NO_COLOR", "1")
        monkeypatch.setattr(sys.stdout, "isatty", lambda: True)
        assert main(["check", FAILING]) == FAIL
        assert ANSI not in capsys.readouterr().out

    @pytest.mark.parametrize("choice, coloured", [("always", True), ("never", False)])
    def test_explicit_choice(self, capsys, monkeypatch, choice, coloured):
        monkeypatch.delenv("NO_COLOR", raising=False)
        assert main(["check", FAILING, "--color", choice]) == FAIL
        assert (ANSI in capsys.readouterr().out) is coloured


def test_internal_error_exit_code(monkeypatch, capsys, tmp_path):
    # a bug (any exception that is not a NetcheckError) is reported with its traceback,
    # every output is still written, and the exit status is 3
    import netcheck.analyses.nominal

    def boom(*args, **kwargs):
        raise RuntimeError("simulated bug")
    monkeypatch.setattr(netcheck.analyses.nominal, "check_spec", boom)
    assert main(["check", ONE, "--json", str(tmp_path / "r.json")]) == INTERNAL
    err = capsys.readouterr().err
    assert "RuntimeError: simulated bug" in err
    doc = json.loads((tmp_path / "r.json").read_text("utf-8"))
    assert doc["specs"][0]["status"] == "error"
    assert "internal-500" in {c["code"] for c in doc["specs"][0]["cautions"]}


@pytest.mark.parametrize("args, code", [(["specs/sk_lowpass.toml", "specs/rx40k.toml"], OK),
                                        (["specs/failing"], FAIL),
                                        (["BROKEN", "specs/sk_lowpass.toml"], BAD_INPUT)])
def test_exit_status_of_the_process(broken, args, code):
    args = [str(broken) if a == "BROKEN" else a for a in args]
    env = {k: v for k, v in os.environ.items() if k != "NO_COLOR"}
    # cwd = the checkout, so `-m netcheck` runs this source tree
    proc = subprocess.run([sys.executable, "-m", "netcheck", "check", *args, "--jobs", "1"],
                          cwd=ROOT,
                          env=env, capture_output=True, text=True, timeout=60)
    assert proc.returncode == code, proc.stderr
    assert ANSI not in proc.stdout  # a pipe is not a TTY
    assert "Traceback" not in proc.stderr


#: the codes that had an NCnnn name before codes named their stage
_CODES_WITH_NC_NAMES = frozenset(
    [f"netlist-{n}" for n in (*range(100, 119), 150, 151, 152, 153, 154)]
    + [f"spec-{n}" for n in (200, 201, 202, 203, 204, 205, 250)]
    + [f"analysis-{n}" for n in (300, 301, 302, 303, 304)]
    + [f"run-{n}" for n in (400, 401, 402, 410, 411, 420, 421)] + ["internal-500"])


def test_every_diagnostic_code_has_an_entry_in_errors_md():
    import re

    from netcheck.exceptions import CODES

    doc = (ROOT / "docs" / "errors.md").read_text("utf-8")
    for code in CODES:
        stage, number = code.split("-")
        # the stage names the hundreds
        assert {"1": "netlist", "2": "spec", "3": "analysis", "4": "run",
                "5": "internal"}[number[0]] == stage, code
        if code in _CODES_WITH_NC_NAMES:  # the old NC code stays findable as an anchor
            anchor = (f'<a id="{code}"></a><a id="NC{number}"></a>\n'
                      f'### {code} (formerly NC{number})\n\n')
        else:  # a code new since the renaming has no old name
            anchor = f'<a id="{code}"></a>\n### {code}\n\n'
        assert anchor in doc, code
        entry = doc.split(anchor)[1].split("\n<a id=")[0]
        assert len(entry.split()) >= 12, code  # a sentence on the meaning and the fix
    documented = set(re.findall(r'<a id="([a-z]+-\d{3})"></a>', doc))
    assert documented == set(CODES)  # and no entry for a code that does not exist


class TestProgress:
    TOL = str(SPECS / "rx40k_tolerance.toml")

    def test_monte_carlo_progress_on_a_tty(self, capsys, monkeypatch, tmp_path):
        # one spec on a terminal: the Monte Carlo run inside it draws a bar as chunks
        # finish, the line is cleared at the end, and the results equal a run without it
        monkeypatch.setattr(sys.stderr, "isatty", lambda: True)
        shown = tmp_path / "shown.json"
        assert main(["check", self.TOL, "--json", str(shown)]) == OK
        err = capsys.readouterr().err
        frames = [f for f in err.split("\r") if "Monte Carlo samples [" in f]
        counts = [int(f.split("] ")[1].split("/")[0]) for f in frames]
        assert len(frames) >= 10 and counts == sorted(counts) and counts[-1] < 2000
        assert err.split("\r")[-2].strip() == ""  # the bar's line is blanked before the summary
        monkeypatch.setattr(sys.stderr, "isatty", lambda: False)
        quiet = tmp_path / "quiet.json"
        assert main(["check", self.TOL, "--json", str(quiet)]) == OK
        assert "\r" not in capsys.readouterr().err  # CI logs get no bar, only the final line
        tolerance = [json.loads(p.read_text("utf-8"))["specs"][0]["tolerance"]
                     for p in (shown, quiet)]
        assert tolerance[0] == tolerance[1]  # smaller chunks change no result


def test_pdf_and_pdf_combined_together_write_both(capsys, tmp_path):
    # README, "netcheck check": given together, both are written from the same run
    from pypdf import PdfReader

    folder, combined = tmp_path / "each", tmp_path / "all.pdf"
    assert main(["check", ONE, FAILING, "--pdf", str(folder), "--pdf-combined",
                 str(combined)]) == FAIL
    each = sorted(p.name for p in folder.iterdir())
    assert each == ["rx40k_revA.pdf", "sk_lowpass.pdf"]
    pages_each = sum(len(PdfReader(folder / name).pages) for name in each)
    # the combined report holds every spec's pages (and may add a front page)
    assert len(PdfReader(combined).pages) >= pages_each
