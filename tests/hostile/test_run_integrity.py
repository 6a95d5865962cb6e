"""What a run promises whatever happens around it: a stop is never swallowed, nothing
outside the design root is read from a folder scan, no design file is overwritten, and
an error of the run itself (a baseline that cannot be used, git unable to say what
changed) reaches every report instead of leaving them reading as a pass.

Each case failed before its fix. The designs are built here in tmp_path.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest

from netcheck.cli import BAD_INPUT, OK

from .test_cli_and_outputs import NETLIST, SPEC, design, main, no_traceback

SECRET = "QUILLMERE_SIGNING_KEY=do-not-leak-4f1c"


# ------------------------------------------------------------------- a stop is a stop
@pytest.mark.skipif(os.name != "posix", reason="needs POSIX signals")
@pytest.mark.parametrize("signum, status", [(signal.SIGTERM, 143), (signal.SIGINT, 130)])
def test_signal_swallowed_while_drawing_still_stops_the_run(tmp_path, monkeypatch, capsys,
                                                            signum, status):
    """Drawing code that catches every exception (as a PDF image renderer does) must not
    turn a SIGTERM or Ctrl-C into a normal exit with a report missing its plot."""
    import netcheck.render.jsonreport as jsonreport

    spec = design(tmp_path)
    out = tmp_path / "r.json"
    out.write_text("earlier result")
    real = jsonreport.render

    def swallowing(result, stream, options=None):
        try:
            os.kill(os.getpid(), signum)
            for _ in range(1000):  # the handler runs at the next bytecode boundary
                pass
        except BaseException:  # noqa: BLE001 - what the drawing library does
            pass
        real(result, stream, options)

    monkeypatch.setattr(jsonreport, "render", swallowing)
    code = main(["check", str(spec), "--json", str(out), "--junit", str(tmp_path / "j.xml")])
    err = capsys.readouterr().err
    assert code == status, err
    assert "no output was completed after it" in err
    no_traceback(err)
    assert out.read_text() == "earlier result"  # not replaced by a report made after it
    assert not (tmp_path / "j.xml").exists()
    assert not [p for p in tmp_path.iterdir() if p.name.endswith(".part")]


@pytest.mark.skipif(os.name != "posix", reason="needs POSIX signals")
def test_sigterm_swallowed_inside_the_pdf_drawing_leaves_no_pdf(tmp_path):
    """The real PDF path: a SIGTERM delivered while weasyprint draws is caught by its
    image code; the run must still end 143 with no PDF."""
    spec = design(tmp_path)
    pdf = tmp_path / "r.pdf"
    script = f"""
import os, signal, sys
import weasyprint
from netcheck.cli import main
real = weasyprint.HTML.write_pdf
def write_pdf(self, *a, **k):
    try:
        os.kill(os.getpid(), signal.SIGTERM)
        sum(range(1000))
    except BaseException:
        pass
    return real(self, *a, **k)
weasyprint.HTML.write_pdf = write_pdf
sys.exit(main(["check", {str(spec)!r}, "--jobs", "1", "--pdf-combined", {str(pdf)!r}]))
"""
    root = Path(__file__).resolve().parents[2]
    proc = subprocess.run([sys.executable, "-c", script], cwd=root, capture_output=True,
                          text=True, timeout=300,
                          env={**os.environ, "PYTHONPATH": str(root)})
    assert proc.returncode == 143, proc.stderr
    assert "stopped by SIGTERM" in proc.stderr
    no_traceback(proc.stderr)
    assert not pdf.exists()
    assert not [p for p in tmp_path.iterdir() if p.name.endswith(".part")]


# ---------------------------------------------- a folder scan stays inside the design root
@pytest.mark.skipif(not hasattr(os, "symlink"), reason="needs symbolic links")
def test_spec_link_leading_out_of_the_root_is_never_read(tmp_path, capsys, monkeypatch):
    outside = tmp_path / "elsewhere"
    outside.mkdir()
    secret = outside / "credentials.toml"
    secret.write_text(f'netlist = "x.cir"\n{SECRET}\n')  # not TOML past line 1: it would be quoted
    repo = tmp_path / "repo"
    design(repo / "designs")
    (repo / ".git").mkdir()  # the design root is the work tree's top
    (repo / "designs" / "env.toml").symlink_to(secret)
    monkeypatch.chdir(repo)
    out = tmp_path / "reports"
    code = main(["check", "designs", "--json", str(out / "r.json"),
                 "--junit", str(out / "j.xml"), "--summary-md", str(out / "s.md")])
    err = capsys.readouterr().err
    assert code == OK, err
    assert "designs/env.toml: warning: a link to a file outside the design root" in err
    every = err + "".join(p.read_text("utf-8") for p in out.iterdir())
    assert SECRET not in every and "credentials" not in every
    doc = json.loads((out / "r.json").read_text("utf-8"))
    assert [s["spec"] for s in doc["specs"]] == ["designs/lp.toml"]


@pytest.mark.skipif(not os.path.exists("/proc/self/environ"), reason="needs /proc")
def test_link_to_proc_environ_is_not_read(tmp_path, capsys, monkeypatch):
    monkeypatch.setenv("QUILLMERE_TOKEN", SECRET)
    design(tmp_path / "designs")
    (tmp_path / "designs" / "env.toml").symlink_to("/proc/self/environ")
    monkeypatch.chdir(tmp_path)
    code = main(["check", "designs", "--json", str(tmp_path / "r.json")])
    err = capsys.readouterr().err
    assert code == OK, err
    assert SECRET not in err + (tmp_path / "r.json").read_text("utf-8")


def test_link_inside_the_root_is_still_checked(tmp_path, capsys, monkeypatch):
    spec = design(tmp_path / "designs")
    (tmp_path / "designs" / "alias").mkdir()
    (tmp_path / "designs" / "alias" / "lp_again.toml").symlink_to(spec)
    (tmp_path / "designs" / "alias" / "lp.cir").symlink_to(tmp_path / "designs" / "lp.cir")
    (tmp_path / "designs" / "alias" / "parts.inc").write_text(".param rval=1.59k\n")
    monkeypatch.chdir(tmp_path)
    assert main(["check", "designs", "--json", str(tmp_path / "r.json")]) == OK
    assert "outside the design root" not in capsys.readouterr().err
    doc = json.loads((tmp_path / "r.json").read_text("utf-8"))
    assert [s["spec"] for s in doc["specs"]] == ["designs/alias/lp_again.toml",
                                                 "designs/lp.toml"]


# ------------------------------------------------------- no design file is ever replaced
class TestDesignFilesAreNeverOutputs:
    @pytest.mark.parametrize("victim", ["other.toml", "nets/other.cir", "models/op.lib",
                                        "parts/extra.inc", "nets/amp.sp"])
    def test_check_output_with_a_design_name_is_refused(self, tmp_path, capsys, victim):
        """A design file this run does not read (another spec's netlist, a library) is
        the user's work as much as one it reads."""
        spec = design(tmp_path)
        target = tmp_path / victim
        target.parent.mkdir(parents=True, exist_ok=True)
        target.write_text("* Quillmere QI-RC2 netlist kept by its designer\n")
        before = target.read_bytes()
        code = main(["check", str(spec), "--json", str(target),
                     "--junit", str(tmp_path / "j.xml")])
        err = capsys.readouterr().err
        assert code == BAD_INPUT
        assert f"{target}: error run-401: output refused: a {target.suffix} name is a design " \
               "file's" in err
        assert target.read_bytes() == before
        assert (tmp_path / "j.xml").exists()  # the other output is still written

    def test_output_of_a_spec_skipped_by_changed_since_is_refused(self, tmp_path, capsys,
                                                                  monkeypatch):
        """Files of a spec the filter skipped are not inputs of this run; their names
        still protect them."""
        repo = tmp_path / "repo"
        design(repo)
        design(repo / "other", name="other")

        def git(*args: str) -> None:
            subprocess.run(["git", *args], cwd=repo, check=True, capture_output=True,
                           timeout=60)
        git("init", "-q")
        git("-c", "user.email=ci@quillmere.invalid", "-c", "user.name=Quillmere CI",
            "add", ".")
        git("-c", "user.email=ci@quillmere.invalid", "-c", "user.name=Quillmere CI",
            "commit", "-qm", "QI-RC1 designs")
        (repo / "lp.cir").write_text(NETLIST.replace("100n", "120n"))
        monkeypatch.chdir(repo)
        kept = (repo / "other" / "other.toml").read_bytes()
        code = main(["check", ".", "--affected-since", "HEAD", "--json", "other/other.toml"])
        assert code == BAD_INPUT
        assert "run-401" in capsys.readouterr().err
        assert (repo / "other" / "other.toml").read_bytes() == kept

    def test_pdf_combined_over_a_netlist_is_refused_before_the_run(self, tmp_path, capsys):
        spec = design(tmp_path)
        victim = tmp_path / "nets" / "x.cir"
        victim.parent.mkdir()
        victim.write_text(NETLIST)
        assert main(["check", str(spec), "--pdf-combined", str(victim)]) == BAD_INPUT
        assert victim.read_text() == NETLIST

    @pytest.mark.parametrize("option", ["--csv", "--json"])
    def test_sweep_output_over_another_netlist_is_refused(self, tmp_path, capsys, option):
        design(tmp_path)
        victim = tmp_path / "other.cir"
        victim.write_text(NETLIST)
        code = main(["sweep", str(tmp_path / "lp.cir"), "--source", "VIN", "--node", "out",
                     "--start", "10", "--stop", "100k", "--ppd", "5", option, str(victim)])
        assert code == BAD_INPUT
        assert "run-401" in capsys.readouterr().err
        assert victim.read_text() == NETLIST

    def test_sweep_csv_never_replaces_a_table_it_did_not_write(self, tmp_path, capsys):
        design(tmp_path)
        table = tmp_path / "values.csv"
        table.write_text("name,rval\nnominal,1.59k\n")
        args = ["sweep", str(tmp_path / "lp.cir"), "--source", "VIN", "--node", "out",
                "--start", "10", "--stop", "100k", "--ppd", "5", "--csv"]
        assert main([*args, str(table)]) == BAD_INPUT
        assert "was not written by netcheck" in capsys.readouterr().err
        assert table.read_text() == "name,rval\nnominal,1.59k\n"
        fresh = tmp_path / "response.csv"
        assert main([*args, str(fresh)]) == OK
        assert main([*args, str(fresh)]) == OK  # its own earlier output is replaced
        # 10 Hz to 100 kHz at 5 per decade: 4 decades, 21 points, plus the header line
        assert len(fresh.read_text().splitlines()) == 22


# ------------------------------------------------- errors of the run reach every report
def _reports(out: Path) -> dict[str, str]:
    return {p.name: p.read_text("utf-8") for p in out.iterdir()}


def _outputs(out: Path) -> list[str]:
    return ["--json", str(out / "r.json"), "--junit", str(out / "j.xml"),
            "--sarif", str(out / "r.sarif"), "--summary-md", str(out / "s.md")]


def _assert_error_everywhere(out: Path, code: str) -> None:
    docs = _reports(out)
    result = json.loads(docs["r.json"])
    assert result["status"] == "error"
    assert any(code in (s.get("error") or "") for s in result["specs"])
    suites = ET.fromstring(docs["j.xml"])
    assert int(suites.get("errors", "0")) + int(suites.get("failures", "0")) >= 1
    assert code in docs["j.xml"]
    sarif = json.loads(docs["r.sarif"])
    assert any(r.get("ruleId") == code for r in sarif["runs"][0]["results"])
    assert code in docs["s.md"] and "ERROR" in docs["s.md"]


def test_unusable_baseline_is_in_every_report(tmp_path, capsys):
    spec = design(tmp_path / "d")
    (tmp_path / "base.json").write_text('{"schema": "netcheck.result/1", "specs": 5}')
    out = tmp_path / "out"
    code = main(["check", str(spec), "--compare-margins", str(tmp_path / "base.json"),
                 *_outputs(out)])
    err = capsys.readouterr().err
    assert code == BAD_INPUT
    no_traceback(err)
    _assert_error_everywhere(out, "run-411")
    doc = json.loads((out / "r.json").read_text("utf-8"))
    assert [s["status"] for s in doc["specs"]] == ["error", "pass"]  # the spec still judged


def test_git_failure_is_in_every_report_and_every_spec_is_checked(tmp_path, capsys,
                                                                  monkeypatch):
    spec = design(tmp_path / "d")  # not a git work tree
    monkeypatch.chdir(tmp_path)
    out = tmp_path / "out"
    code = main(["check", str(spec), "--affected-since", "HEAD~1", *_outputs(out)])
    err = capsys.readouterr().err
    assert code == BAD_INPUT
    assert "run-410" in err and "every spec is checked" in err
    no_traceback(err)
    _assert_error_everywhere(out, "run-410")
    doc = json.loads((out / "r.json").read_text("utf-8"))
    assert [s["status"] for s in doc["specs"]] == ["error", "pass"]


def test_empty_changed_since_is_not_silently_everything(tmp_path, capsys, monkeypatch):
    """``--affected-since "$(git merge-base ...)"`` after a failed command is empty."""
    spec = design(tmp_path / "d")
    monkeypatch.chdir(tmp_path)
    code = main(["check", str(spec), "--affected-since", "", "--json", str(tmp_path / "r.json")])
    assert code == BAD_INPUT
    assert "is not a git revision" in capsys.readouterr().err
    assert json.loads((tmp_path / "r.json").read_text("utf-8"))["status"] == "error"


# ----------------------------------------------------------------------- --allow-negative
NEGATIVE = """Quillmere Instruments QI-NIC1 negative-resistance compensated divider
VIN in 0 AC 1
R1 in out 1k
R2 out 0 2k
R3 out 0 -4k
.end
"""


def test_allow_negative_on_the_command_line_reaches_the_check(tmp_path, capsys):
    """R2 || R3 = 2k·(−4k)/(2k − 4k) = 4 kΩ, so out/in = 4k/(1k + 4k) = 0.8, −1.938 dB
    (voltage divider with parallel resistors, common practice, no source)."""
    (tmp_path / "nic.cir").write_text(NEGATIVE)
    spec = tmp_path / "nic.toml"
    spec.write_text(SPEC.replace('"lp.cir"', '"nic.cir"').replace(
        "min_db = -0.5\nmax_db = 0.1", "min_db = -1.95\nmax_db = -1.93"))
    assert main(["check", str(spec), "--json", str(tmp_path / "r.json")]) == BAD_INPUT
    assert "negative" in capsys.readouterr().err
    assert main(["check", str(spec), "--allow-negative", "--json",
                 str(tmp_path / "r.json")]) == OK
    doc = json.loads((tmp_path / "r.json").read_text("utf-8"))
    measured = doc["specs"][0]["limits"][0]["measured"]
    assert measured == pytest.approx(20 * __import__("math").log10(0.8), abs=1e-9)


# ------------------------------------------------------------------------------- --root
@pytest.mark.parametrize("make, why", [(None, "does not exist"),
                                       ("file", "is not a folder"),
                                       ("empty", "is empty")])
@pytest.mark.parametrize("command", ["check", "sweep"])
def test_unusable_root_is_an_argument_error(tmp_path, capsys, make, why, command):
    spec = design(tmp_path)
    root = "" if make == "empty" else str(tmp_path / "nowhere")
    if make == "file":
        Path(root).write_text("not a folder")
    argv = (["check", str(spec)] if command == "check" else
            ["sweep", str(tmp_path / "lp.cir"), "--source", "VIN", "--node", "out",
             "--start", "10", "--stop", "1k", "--ppd", "5"])
    assert main([*argv, "--root", root]) == BAD_INPUT
    err = capsys.readouterr().err
    assert "error run-402: --root" in err and why in err
    no_traceback(err)


# ------------------------------------------------------------------------------ --quiet
def test_quiet_shows_only_what_did_not_pass_and_the_summary(tmp_path, capsys):
    good = design(tmp_path / "good")
    bad = design(tmp_path / "bad", SPEC.replace("min_db = -0.5", "min_db = 0.05"))
    assert main(["check", str(good), str(bad), "-q"]) == 1
    out = capsys.readouterr().out
    assert f"({bad})" in out
    assert f"({good})" not in out
    last = out.splitlines()[-1]  # the headline names the one missed limit and its spec
    assert last.startswith("✗ 2 specs: 1 of 2 limits missed (pass-band -")
    assert last.endswith(f" dB in {bad})")
