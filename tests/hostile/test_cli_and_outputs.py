"""Hostile command lines, environments, folders, output paths, git configurations and
baselines: netcheck must answer each with a clear error (never a traceback), never block,
never write over what it reads, and still write every output it can.

Every hostile input is built here in tmp_path. Anything that could block or eat memory if
netcheck regressed runs in a subprocess with a timeout (and, where memory is the risk, an
address-space limit).
"""

from __future__ import annotations

import json
import os
import shutil
import signal
import stat
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from netcheck.cli import BAD_INPUT, FAIL, INTERNAL, OK, main as netcheck_main

ROOT = Path(__file__).resolve().parents[2]
TIMEOUT = 120  # seconds for any subprocess here (each normally takes a few)
HAS_MKFIFO = hasattr(os, "mkfifo")

NETLIST = """Quillmere Instruments QI-RC1 anti-alias low-pass
.include "parts.inc"
VIN in 0 AC 1
R1 in out {rval}
C1 out 0 100n
.end
"""
SPEC = """title = "Quillmere QI-RC1 low-pass"
netlist = "lp.cir"
source = "VIN"
output = "out"

[sweep]
start = "10"
stop = "100k"
points_per_decade = 20

[[limits]]
kind = "gain"
name = "pass-band"
band = ["10", "100"]
min_db = -0.5
max_db = 0.1
"""


def design(folder: Path, spec: str = SPEC, name: str = "lp") -> Path:
    """A spec, its netlist and an include in ``folder``; returns the spec path."""
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "lp.cir").write_text(NETLIST)
    (folder / "parts.inc").write_text(".param rval=1.59k\n")
    path = folder / f"{name}.toml"
    path.write_text(spec)
    return path


def main(argv: list[str]) -> int:
    """``netcheck`` in this process, serially."""
    if argv and argv[0] == "check" and "--jobs" not in argv:
        argv = [*argv, "--jobs", "1"]
    return netcheck_main(argv)


def run_cli(args: list[str], cwd: Path | None = None, env: dict | None = None,
            memory_mb: int | None = None, timeout: float = TIMEOUT) -> subprocess.CompletedProcess:
    """``python -m netcheck ARGS`` in a fresh interpreter running this checkout."""
    full_env = {k: v for k, v in os.environ.items() if k not in ("NO_COLOR",)}
    full_env["PYTHONPATH"] = str(ROOT) + os.pathsep + full_env.get("PYTHONPATH", "")
    full_env.update(env or {})
    for key, value in list(full_env.items()):
        if value is None:
            del full_env[key]

    def limit() -> None:  # pragma: no cover - runs in the child
        if memory_mb is not None:
            import resource
            resource.setrlimit(resource.RLIMIT_AS, (memory_mb * 2**20, memory_mb * 2**20))

    return subprocess.run([sys.executable, "-m", "netcheck", *args], cwd=cwd or ROOT,
                          env=full_env, capture_output=True, text=True, timeout=timeout,
                          stdin=subprocess.DEVNULL, preexec_fn=limit)


def no_traceback(text: str) -> None:
    assert "Traceback" not in text and "internal error" not in text, text


# --------------------------------------------------------------------------- arguments
class TestArguments:
    @pytest.mark.parametrize("value", ["0", "-2", "three"])
    def test_jobs_below_one_is_refused(self, tmp_path, capsys, value):
        spec = design(tmp_path)
        with pytest.raises(SystemExit) as info:
            netcheck_main(["check", str(spec), "--jobs", value])
        assert info.value.code == BAD_INPUT
        err = capsys.readouterr().err
        assert "error run-402: argument --jobs" in err
        no_traceback(err)

    def test_too_many_jobs_are_capped_with_a_note(self, tmp_path, capsys, monkeypatch):
        import netcheck.runs.batch

        spec = design(tmp_path)
        seen = []
        real = netcheck.runs.batch.LocalExecutor.__init__

        def spy(self, workers=None):
            seen.append(workers)
            real(self, workers)
        monkeypatch.setattr(netcheck.runs.batch.LocalExecutor, "__init__", spy)
        monkeypatch.setattr(os, "cpu_count", lambda: 2)
        assert netcheck_main(["check", str(spec), "--jobs", "500"]) == OK
        assert seen == [8]  # 4 per CPU
        assert "--jobs 500 is more than 4 per CPU (2 CPUs); using at most 8" in capsys.readouterr().err

    @pytest.mark.parametrize("flag, value", [("--shrink-db", "nan"), ("--shrink-db", "-0.5"),
                                             ("--shrink-db", "lots"), ("--shrink-rel", "-1"),
                                             ("--shrink-rel", "inf"), ("--shrink-rel", "nan")])
    def test_shrink_thresholds_must_be_finite_and_not_negative(self, tmp_path, capsys, flag,
                                                              value):
        spec = design(tmp_path)
        with pytest.raises(SystemExit) as info:
            netcheck_main(["check", str(spec), flag, value])
        assert info.value.code == BAD_INPUT
        err = capsys.readouterr().err
        assert f"error run-402: argument {flag}:" in err and "finite number, zero or more" in err
        no_traceback(err)

    @pytest.mark.parametrize("address", ["http://scheduler.quillmere.invalid:8786",
                                         "scheduler.quillmere.invalid:8786", "tcp://:8786",
                                         "tcp://scheduler", "tcp://scheduler:0",
                                         "tcp://scheduler:70000", "tcp://scheduler:8786/x",
                                         "tcp://user@scheduler:8786", "tls://sch eduler:1"])
    def test_cluster_address_other_than_tcp_or_tls_is_refused(self, tmp_path, capsys, address):
        spec = design(tmp_path)
        with pytest.raises(SystemExit) as info:
            netcheck_main(["check", str(spec), "--cluster", address])
        assert info.value.code == BAD_INPUT
        err = capsys.readouterr().err
        assert "error run-402: argument --cluster" in err
        assert "tcp://HOST:PORT or tls://HOST:PORT" in err
        no_traceback(err)

    @pytest.mark.parametrize("address", ["tcp://127.0.0.1:8786", "tls://[::1]:8786",
                                         "tcp://scheduler.quillmere.invalid:1"])
    def test_cluster_addresses_accepted(self, address):
        from netcheck.cli import cluster_address
        assert cluster_address(address) == address

    def test_argument_error_text_is_escaped(self, tmp_path, capsys):
        spec = design(tmp_path)
        with pytest.raises(SystemExit):
            netcheck_main(["check", str(spec), "--jobs", "\x1b]0;owned\x07"])
        err = capsys.readouterr().err
        assert "\x1b" not in err and "\\x1b]0;owned\\x07" in err


class TestSourceDateEpoch:
    def test_empty_is_ignored_with_one_warning_and_every_library_works(self, tmp_path):
        # numpy, matplotlib and the font subsetter each read SOURCE_DATE_EPOCH on their
        # own; an empty value (a failed $(git log ...)) used to crash every command
        spec = design(tmp_path)
        proc = run_cli(["check", str(spec), "--jobs", "1", "--json", str(tmp_path / "r.json"),
                        "--pdf-combined", str(tmp_path / "r.pdf")],
                       env={"SOURCE_DATE_EPOCH": ""})
        assert proc.returncode == OK, proc.stderr
        assert proc.stderr.count("SOURCE_DATE_EPOCH is set but empty") == 1
        doc = json.loads((tmp_path / "r.json").read_text("utf-8"))
        assert doc["created_utc"].endswith("Z")
        assert (tmp_path / "r.pdf").read_bytes().startswith(b"%PDF")
        no_traceback(proc.stderr)

    def test_empty_is_removed_for_the_whole_run(self, tmp_path, monkeypatch, capsys):
        spec = design(tmp_path)
        monkeypatch.setenv("SOURCE_DATE_EPOCH", "")
        assert main(["check", str(spec), "-q"]) == OK
        assert "SOURCE_DATE_EPOCH" not in os.environ
        assert "SOURCE_DATE_EPOCH" not in capsys.readouterr().err  # -q: no warning

    @pytest.mark.parametrize("value, why", [("abc", "is not a whole number"),
                                            ("1.5e9", "is not a whole number"),
                                            ("-5", "is negative"),
                                            ("99999999999999999999", "after the year 9999")])
    def test_unusable_value_is_an_argument_error(self, tmp_path, monkeypatch, capsys, value,
                                                 why):
        spec = design(tmp_path)
        monkeypatch.setenv("SOURCE_DATE_EPOCH", value)
        assert main(["check", str(spec), "--json", str(tmp_path / "r.json")]) == BAD_INPUT
        err = capsys.readouterr().err
        assert "error run-402: SOURCE_DATE_EPOCH=" in err and why in err
        no_traceback(err)
        assert not (tmp_path / "r.json").exists()  # nothing was run

    def test_sweep_checks_it_too(self, monkeypatch, capsys):
        monkeypatch.setenv("SOURCE_DATE_EPOCH", "yesterday")
        assert main(["sweep", str(ROOT / "sample_netlists" / "rx40k.cir"), "--source", "VIN",
                     "--node", "out", "--start", "1k", "--stop", "10k", "--ppd", "5"]) == BAD_INPUT
        assert "run-402" in capsys.readouterr().err


class TestNothingChecked:
    def test_missing_path_says_so_and_no_pass_headline(self, tmp_path, capsys):
        out = tmp_path / "r.json"
        assert main(["check", str(tmp_path / "nope.toml"), "--json", str(out)]) == BAD_INPUT
        captured = capsys.readouterr()
        assert f"{tmp_path / 'nope.toml'}: error spec-200: no such file or folder" in captured.err
        assert "PASS" not in captured.out
        # the requested output is still written, and says what happened
        doc = json.loads(out.read_text("utf-8"))
        assert doc["status"] == "error"
        assert [s["spec"] for s in doc["specs"]] == [str(tmp_path / "nope.toml")]

    def test_empty_folder_is_an_error_result(self, tmp_path, capsys):
        (tmp_path / "designs").mkdir()
        out = tmp_path / "junit.xml"
        assert main(["check", str(tmp_path / "designs"), "--junit", str(out)]) == BAD_INPUT
        assert "no spec files found" in capsys.readouterr().err
        assert "error" in out.read_text("utf-8")


class TestSweepBudget:
    def test_huge_stop_is_refused(self, capsys):
        code = main(["sweep", str(ROOT / "sample_netlists" / "rx40k.cir"), "--source", "VIN",
                     "--node", "out", "--start", "1k", "--stop", "1e308", "--ppd", "5"])
        assert code == BAD_INPUT
        err = capsys.readouterr().err
        assert err.startswith("netcheck sweep: error spec-2")
        assert "--stop" in err or "stop" in err
        no_traceback(err)

    def test_huge_points_per_decade_is_refused_without_allocating(self, tmp_path):
        proc = run_cli(["sweep", str(ROOT / "sample_netlists" / "rx40k.cir"), "--source",
                        "VIN", "--node", "out", "--start", "1k", "--stop", "1meg", "--ppd",
                        "1000000000", "--csv", str(tmp_path / "r.csv")], memory_mb=2048)
        assert proc.returncode == BAD_INPUT, proc.stderr
        assert "netcheck sweep: error spec-2" in proc.stderr and "points" in proc.stderr
        no_traceback(proc.stderr)
        assert not (tmp_path / "r.csv").exists()


# ---------------------------------------------------------------------- folder scanning
@pytest.mark.skipif(not HAS_MKFIFO, reason="needs FIFOs")
def test_fifo_in_a_scanned_folder_is_reported_not_opened(tmp_path):
    design(tmp_path / "designs")
    os.mkfifo(tmp_path / "designs" / "stuck.toml")
    proc = run_cli(["check", str(tmp_path / "designs"), "--jobs", "1", "--json",
                    str(tmp_path / "r.json")], timeout=60)
    assert proc.returncode == BAD_INPUT, proc.stderr
    assert "stuck.toml: error netlist-117" in proc.stderr and "FIFO" in proc.stderr
    no_traceback(proc.stderr)
    doc = json.loads((tmp_path / "r.json").read_text("utf-8"))
    assert sorted((Path(s["spec"]).name, s["status"]) for s in doc["specs"]) == [
        ("lp.toml", "pass"), ("stuck.toml", "error")]


@pytest.mark.skipif(not HAS_MKFIFO, reason="needs FIFOs")
def test_fifo_named_on_the_command_line_is_not_opened(tmp_path):
    os.mkfifo(tmp_path / "stuck.toml")
    proc = run_cli(["check", str(tmp_path / "stuck.toml"), "--jobs", "1"], timeout=60)
    assert proc.returncode == BAD_INPUT
    assert "netlist-117" in proc.stderr
    no_traceback(proc.stderr)


def test_toml_bomb_in_a_scanned_folder_is_listed_not_fatal(tmp_path, capsys):
    from netcheck.cli.check import find_specs

    design(tmp_path / "designs")
    bomb = tmp_path / "designs" / "bomb.toml"
    bomb.write_text("netlist = " + "[" * 100_000)
    specs, missing = find_specs([str(tmp_path / "designs")])
    assert str(bomb) in specs and missing == []
    assert main(["check", str(tmp_path / "designs")]) == BAD_INPUT
    captured = capsys.readouterr()
    assert "bomb.toml" in captured.err and "✓ Quillmere QI-RC1 low-pass" in captured.out
    no_traceback(captured.err)


def test_oversize_toml_is_not_read_while_scanning(tmp_path, monkeypatch, capsys):
    import netcheck.cli.spec_files as checkcli

    design(tmp_path / "designs")
    big = tmp_path / "designs" / "data.toml"
    big.write_text("values = [" + "1, " * 5000 + "]\n")
    monkeypatch.setattr(checkcli, "SCAN_MAX_BYTES", 1000)
    notes: list[str] = []
    specs, _ = checkcli.find_specs([str(tmp_path / "designs")], notes)
    assert specs == [str(tmp_path / "designs" / "lp.toml")]
    assert len(notes) == 1 and "data.toml: warning: larger than 1000 bytes" in notes[0]


def test_link_loop_in_a_scanned_folder_ends(tmp_path):
    from netcheck.cli.check import find_specs

    spec = design(tmp_path / "designs")
    (tmp_path / "designs" / "again").symlink_to(tmp_path / "designs", target_is_directory=True)
    assert find_specs([str(tmp_path / "designs")]) == ([str(spec)], [])


# ------------------------------------------------------------------------------ outputs
def _digest(path: Path) -> tuple[bytes, int]:
    return path.read_bytes(), path.stat().st_mtime_ns


class TestOutputsNeverReplaceInputs:
    @pytest.mark.parametrize("option, victim", [("--json", "lp.toml"), ("--junit", "lp.cir"),
                                                ("--sarif", "parts.inc"),
                                                ("--summary-md", "values.csv"),
                                                ("--pdf-combined", "lp.cir")])
    def test_output_naming_an_input_is_refused_and_the_others_written(
            self, tmp_path, capsys, option, victim):
        spec = design(tmp_path, SPEC + '\n[variants]\ntable = "values.csv"\n')
        (tmp_path / "values.csv").write_text("name,rval\nnominal,1.59k\nlow,1.5k\n")
        before = _digest(tmp_path / victim)
        other = "--junit" if option != "--junit" else "--json"
        code = main(["check", str(spec), option, str(tmp_path / victim),
                     other, str(tmp_path / "out" / "other.xml")])
        assert code == BAD_INPUT
        err = capsys.readouterr().err
        assert f"{tmp_path / victim}: error run-401: output refused: this file is an input" in err
        assert _digest(tmp_path / victim) == before
        assert (tmp_path / "out" / "other.xml").stat().st_size > 0
        assert not list(tmp_path.glob(".*.part"))

    def test_refused_before_the_run(self, tmp_path, capsys, monkeypatch):
        import netcheck.runs.batch

        spec = design(tmp_path)
        order = []
        real = netcheck.runs.batch.run_all
        monkeypatch.setattr(netcheck.runs.batch, "run_all",
                            lambda *a, **k: (order.append("run"), real(*a, **k))[1])
        monkeypatch.setattr(sys.stderr, "write",
                            lambda text, w=sys.stderr.write: (order.append(text), w(text))[1])
        main(["check", str(spec), "--json", str(tmp_path / "parts.inc")])
        refused = next(i for i, t in enumerate(order) if "run-401" in str(t))
        assert refused < order.index("run")

    def test_hard_and_symbolic_links_to_an_input_are_refused(self, tmp_path, capsys):
        spec = design(tmp_path)
        os.link(tmp_path / "lp.cir", tmp_path / "hard.json")
        (tmp_path / "soft.xml").symlink_to(tmp_path / "parts.inc")
        before = _digest(tmp_path / "lp.cir"), _digest(tmp_path / "parts.inc")
        assert main(["check", str(spec), "--json", str(tmp_path / "hard.json"),
                     "--junit", str(tmp_path / "soft.xml")]) == BAD_INPUT
        err = capsys.readouterr().err
        assert err.count("error run-401") == 2
        assert (_digest(tmp_path / "lp.cir"), _digest(tmp_path / "parts.inc")) == before
        assert (tmp_path / "soft.xml").is_symlink()

    def test_output_naming_the_baseline_is_refused(self, tmp_path, capsys):
        spec = design(tmp_path)
        base = tmp_path / "base.json"
        assert main(["check", str(spec), "--json", str(base), "-q"]) == OK
        before = _digest(base)
        capsys.readouterr()
        assert main(["check", str(spec), "--json", str(base), "--compare-margins", str(base)]) \
            == BAD_INPUT
        assert "error run-401" in capsys.readouterr().err
        assert _digest(base) == before

    @pytest.mark.parametrize("option", ["--csv", "--json"])
    @pytest.mark.parametrize("victim", ["lp.cir", "parts.inc"])
    def test_sweep_output_naming_its_netlist_or_include_is_refused(self, tmp_path, capsys,
                                                                   option, victim):
        design(tmp_path)
        before = _digest(tmp_path / victim)
        code = main(["sweep", str(tmp_path / "lp.cir"), "--source", "VIN", "--node", "out",
                     "--start", "10", "--stop", "10k", "--ppd", "5", option,
                     str(tmp_path / victim)])
        assert code == BAD_INPUT
        assert "error run-401" in capsys.readouterr().err
        assert _digest(tmp_path / victim) == before


class TestOutputKinds:
    @pytest.mark.skipif(not os.path.exists(os.devnull) or os.name != "posix",
                        reason="needs a POSIX null device")
    def test_device_is_refused_and_left_a_device(self, tmp_path, capsys):
        spec = design(tmp_path)
        assert main(["check", str(spec), "--json", os.devnull,
                     "--junit", str(tmp_path / "j.xml")]) == BAD_INPUT
        assert "error run-401: output refused: this path is a device" in capsys.readouterr().err
        assert stat.S_ISCHR(os.stat(os.devnull).st_mode)
        assert (tmp_path / "j.xml").exists()

    @pytest.mark.skipif(not HAS_MKFIFO, reason="needs FIFOs")
    def test_fifo_is_refused_without_blocking(self, tmp_path):
        spec = design(tmp_path)
        os.mkfifo(tmp_path / "pipe.json")
        proc = run_cli(["check", str(spec), "--jobs", "1", "--json", str(tmp_path / "pipe.json")],
                       timeout=60)
        assert proc.returncode == BAD_INPUT
        assert "run-401" in proc.stderr and "FIFO" in proc.stderr
        assert stat.S_ISFIFO(os.stat(tmp_path / "pipe.json").st_mode)

    def test_folder_is_refused(self, tmp_path, capsys):
        spec = design(tmp_path)
        (tmp_path / "r.json").mkdir()
        assert main(["check", str(spec), "--json", str(tmp_path / "r.json")]) == BAD_INPUT
        assert "this path is a folder" in capsys.readouterr().err

    def test_pdf_folder_that_is_a_file_is_refused(self, tmp_path, capsys):
        spec = design(tmp_path)
        (tmp_path / "reports").write_text("keep me")
        assert main(["check", str(spec), "--pdf", str(tmp_path / "reports"),
                     "--json", str(tmp_path / "r.json")]) == BAD_INPUT
        assert "a folder is needed here" in capsys.readouterr().err
        assert (tmp_path / "reports").read_text() == "keep me"
        assert (tmp_path / "r.json").exists()

    def test_two_outputs_to_stdout_are_refused(self, tmp_path, capsys):
        spec = design(tmp_path)
        assert main(["check", str(spec), "--json", "-", "--summary-md", "-",
                     "--sarif", str(tmp_path / "r.sarif")]) == BAD_INPUT
        captured = capsys.readouterr()
        assert captured.err.count("error run-401") == 2
        assert "both ask for standard output" in captured.err
        assert not captured.out.lstrip().startswith("{")  # neither document went to stdout
        assert json.loads((tmp_path / "r.sarif").read_text("utf-8"))["version"] == "2.1.0"

    def test_two_outputs_to_one_file_are_refused(self, tmp_path, capsys):
        spec = design(tmp_path)
        assert main(["check", str(spec), "--json", str(tmp_path / "r.out"),
                     "--junit", str(tmp_path / "r.out")]) == BAD_INPUT
        assert "--json already writes this file" in capsys.readouterr().err
        json.loads((tmp_path / "r.out").read_text("utf-8"))  # the first one kept it

    def test_unwritable_output_does_not_stop_the_others(self, tmp_path, capsys):
        spec = design(tmp_path)
        (tmp_path / "blocker").write_text("a file where a folder should be")
        assert main(["check", str(spec), "--json", str(tmp_path / "blocker" / "r.json"),
                     "--junit", str(tmp_path / "j.xml"),
                     "--summary-md", str(tmp_path / "s.md")]) == BAD_INPUT
        assert "error run-400" in capsys.readouterr().err
        assert (tmp_path / "j.xml").exists() and (tmp_path / "s.md").exists()


class TestReplacing:
    def test_replacing_keeps_permission_bits(self, tmp_path):
        spec = design(tmp_path)
        out = tmp_path / "r.json"
        out.write_text("{}")
        out.chmod(0o600)
        assert main(["check", str(spec), "--json", str(out), "-q"]) == OK
        assert stat.S_IMODE(out.stat().st_mode) == 0o600
        assert json.loads(out.read_text("utf-8"))["status"] == "pass"

    def test_new_file_follows_the_umask(self, tmp_path):
        spec = design(tmp_path)
        old = os.umask(0o027)
        try:
            assert main(["check", str(spec), "--json", str(tmp_path / "r.json"), "-q"]) == OK
        finally:
            os.umask(old)
        assert stat.S_IMODE((tmp_path / "r.json").stat().st_mode) == 0o640

    def test_interrupted_write_leaves_no_part_file(self, tmp_path, monkeypatch, capsys):
        import netcheck.render.jsonreport as jsonreport

        spec = design(tmp_path)
        out = tmp_path / "r.json"
        out.write_text("earlier result")

        def interrupted(result, stream, options=None):
            stream.write('{"half": ')
            raise KeyboardInterrupt
        monkeypatch.setattr(jsonreport, "render", interrupted)
        assert main(["check", str(spec), "--json", str(out)]) == 130
        assert out.read_text() == "earlier result"
        assert sorted(p.name for p in tmp_path.iterdir()) == sorted(
            ["lp.toml", "lp.cir", "parts.inc", "r.json"])

    @pytest.mark.skipif(os.name != "posix", reason="needs POSIX signals")
    def test_sigterm_mid_write_exits_cleanly_without_part_file(self, tmp_path):
        spec = design(tmp_path)
        out = tmp_path / "r.json"
        out.write_text("earlier result")
        script = textwrap.dedent(f"""
            import os, signal, sys, time
            import netcheck.render.jsonreport as jsonreport
            from netcheck.cli import main

            def terminated(result, stream, options=None):
                stream.write('{{"half": ')
                stream.flush()
                os.kill(os.getpid(), signal.SIGTERM)
                time.sleep(30)  # the signal arrives long before this ends
            jsonreport.render = terminated
            sys.exit(main(["check", {str(spec)!r}, "--jobs", "1", "--json", {str(out)!r}]))
        """)
        env = {**os.environ, "PYTHONPATH": str(ROOT)}
        proc = subprocess.run([sys.executable, "-c", script], cwd=ROOT, env=env,
                              capture_output=True, text=True, timeout=TIMEOUT)
        assert proc.returncode == 128 + signal.SIGTERM, proc.stderr
        assert "stopped by SIGTERM" in proc.stderr
        no_traceback(proc.stderr)
        assert out.read_text() == "earlier result"
        assert not [p for p in tmp_path.iterdir() if p.name.endswith(".part")]


# ------------------------------------------------------------------- exit-code contract
class TestExitCodes:
    def test_bug_in_one_renderer_still_writes_the_others(self, tmp_path, monkeypatch, capsys):
        import netcheck.render.junitreport as junitreport

        spec = design(tmp_path)

        def broken(*args, **kwargs):
            raise RuntimeError("simulated renderer bug")
        monkeypatch.setattr(junitreport, "render", broken)
        code = main(["check", str(spec), "--json", str(tmp_path / "r.json"),
                     "--junit", str(tmp_path / "j.xml"), "--sarif", str(tmp_path / "r.sarif")])
        assert code == INTERNAL
        err = capsys.readouterr().err
        assert "RuntimeError: simulated renderer bug" in err
        assert (tmp_path / "r.json").exists() and (tmp_path / "r.sarif").exists()
        assert not (tmp_path / "j.xml").exists()
        assert not list(tmp_path.glob(".*.part"))

    def test_internal_error_result_beats_bad_input_and_outputs_are_written(
            self, tmp_path, monkeypatch, capsys):
        import netcheck.analyses.nominal

        good = design(tmp_path / "good")
        buggy = design(tmp_path / "buggy")
        real = netcheck.analyses.nominal.check_spec

        def check_spec(path, *args, **kwargs):
            if "buggy" in str(path):
                raise RuntimeError("simulated bug")
            return real(path, *args, **kwargs)
        monkeypatch.setattr(netcheck.analyses.nominal, "check_spec", check_spec)
        code = main(["check", str(good), str(buggy), str(tmp_path / "missing.toml"),
                     "--json", str(tmp_path / "r.json")])
        assert code == INTERNAL
        assert "simulated bug" in capsys.readouterr().err
        doc = json.loads((tmp_path / "r.json").read_text("utf-8"))
        by_spec = {s["spec"]: s for s in doc["specs"]}
        assert by_spec[str(buggy)]["status"] == "error"
        assert "internal-500" in {c["code"] for c in by_spec[str(buggy)]["cautions"]}
        assert by_spec[str(tmp_path / "missing.toml")]["status"] == "error"

    def test_result_with_internal_code_gives_status_3(self, tmp_path, monkeypatch):
        import dataclasses

        import netcheck.runs.batch
        from netcheck.result import Caution, Status

        spec = design(tmp_path)
        real = netcheck.runs.batch.run_all

        def run_all(*args, **kwargs):
            return tuple(dataclasses.replace(r, status=Status.ERROR, error="bug",
                                             cautions=(Caution("internal-500", "bug", "error"),))
                         for r in real(*args, **kwargs))
        monkeypatch.setattr(netcheck.runs.batch, "run_all", run_all)
        assert main(["check", str(spec), "--json", str(tmp_path / "r.json")]) == INTERNAL
        assert (tmp_path / "r.json").exists()

    def test_failing_limit_still_gives_1(self, tmp_path):
        spec = design(tmp_path, SPEC.replace("min_db = -0.5", "min_db = 0.05"))
        assert main(["check", str(spec)]) == FAIL


# -------------------------------------------------------------------------------- git
EVIL = """#!/bin/sh
echo "$0 $*" >> "{marker}"
cat
"""


@pytest.mark.skipif(shutil.which("git") is None or os.name != "posix",
                    reason="needs git and a POSIX shell")
def test_git_never_runs_programs_named_by_the_repository(tmp_path, monkeypatch, capsys):
    repo = tmp_path / "repo"
    spec = design(repo)
    design(repo / "other", name="other")
    marker = tmp_path / "marker.txt"
    evil = tmp_path / "evil.sh"
    evil.write_text(EVIL.format(marker=marker))
    evil.chmod(0o755)
    global_config = tmp_path / "global.gitconfig"
    global_config.write_text(f'[filter "fromhome"]\n\tclean = "{evil}" home-clean\n')
    env = {"GIT_CONFIG_GLOBAL": str(global_config), "GIT_CONFIG_NOSYSTEM": "1"}
    for k, v in env.items():
        monkeypatch.setenv(k, v)

    def git(*args: str) -> str:
        return subprocess.run(["git", *args], cwd=repo, check=True, capture_output=True,
                              text=True, timeout=60).stdout

    git("init", "-q")
    git("config", "user.email", "ci@quillmere.invalid")
    git("config", "user.name", "Quillmere CI")
    git("add", ".")
    git("commit", "-qm", "QI-RC1 designs")
    hooks = tmp_path / "hooks"
    hooks.mkdir()
    for hook in ("post-index-change", "reference-transaction", "post-checkout"):
        shutil.copy(evil, hooks / hook)
    # a driver whose name holds "=" cannot be overridden with "git -c name=value"
    (repo / ".git" / "info" / "attributes").write_text(
        "*.cir filter=trap diff=trap\n*.inc filter=proc\n*.toml filter=fromhome\n"
        "other/*.cir filter=q=r\n")
    for key, value in [("core.fsmonitor", f"{evil} fsmonitor"),
                       ("filter.trap.clean", f"{evil} clean"),
                       ("filter.trap.smudge", f"{evil} smudge"),
                       ("filter.trap.required", "true"),
                       ("filter.proc.process", f"{evil} process"),
                       ("filter.q=r.clean", f"{evil} equals-clean"),
                       ("diff.external", f"{evil} external"),
                       ("diff.trap.textconv", f"{evil} textconv"),
                       ("diff.trap.command", f"{evil} command"),
                       ("core.pager", f"{evil} pager"), ("pager.status", f"{evil} pager"),
                       ("core.hooksPath", str(hooks))]:
        git("config", key, value)
    # a real change in one design; the other's files get a new time stamp only, which
    # makes git re-read them through the clean filter unless it is disabled
    (repo / "lp.cir").write_text(NETLIST.replace("100n", "120n"))
    future = (repo / "lp.cir").stat().st_mtime + 100
    for p in [repo / "other" / "lp.cir", repo / "other" / "parts.inc",
              repo / "other" / "other.toml", repo / "parts.inc", spec]:
        os.utime(p, (future, future))
    monkeypatch.chdir(repo)
    code = main(["check", ".", "--affected-since", "HEAD", "--json", str(tmp_path / "r.json")])
    assert not marker.exists(), marker.read_text()
    assert code == OK, capsys.readouterr().err
    doc = json.loads((tmp_path / "r.json").read_text("utf-8"))
    assert [s["spec"] for s in doc["specs"]] == ["lp.toml"]  # only the changed design
    record = doc["specs"][0]["git"]
    assert len(record["commit"]) == 40 and record["dirty"] is True
    assert "lp.cir (uncommitted changes)" in record["changed_inputs"]
    # the traps are live: git itself, asked the same questions plainly, springs them
    git("status", "--porcelain")
    sprung = marker.read_text()
    assert all(f"evil.sh {what}" in sprung for what in ("fsmonitor", "clean", "equals-clean",
                                                        "home-clean", "process"))


# ---------------------------------------------------------------------------- baseline
class TestBaseline:
    def test_deeply_nested_json(self, tmp_path):
        from netcheck.runs.ci import BaselineError, load_baseline

        path = tmp_path / "base.json"
        path.write_text("[" * 100_000 + "]" * 100_000)
        with pytest.raises(BaselineError, match="nested too deeply") as info:
            load_baseline(path)
        assert info.value.code == "run-411" and info.value.path == str(path)

    @pytest.mark.parametrize("margin, message", [("NaN", "NaN is not a JSON number"),
                                                 ("Infinity", "Infinity is not a JSON number"),
                                                 ('"wide"', 'expected a number, "inf"'),
                                                 ("1" * 5000, "not valid JSON")])
    def test_unusable_margins(self, tmp_path, margin, message):
        from netcheck.runs.ci import BaselineError, load_baseline

        path = tmp_path / "base.json"
        path.write_text('{"schema": "netcheck.result/1", "specs": [{"spec": "lp.toml", '
                        f'"limits": [{{"name": "pass-band", "margin": {margin}}}]}}]}}')
        with pytest.raises(BaselineError, match=message) as info:
            load_baseline(path)
        assert info.value.code == "run-411" and str(path) in info.value.format()

    def test_nan_margin_given_as_data(self):
        from netcheck.runs.ci import BaselineError, validate_result

        doc = {"schema": "netcheck.result/1",
               "specs": [{"spec": "lp.toml", "limits": [{"name": "g", "margin": float("nan")}]}]}
        with pytest.raises(BaselineError, match="NaN is not a margin") as info:
            validate_result(doc, "prev.json")
        assert info.value.location() == "prev.json: specs[0].limits[0].margin"

    @pytest.mark.skipif(not os.path.exists("/dev/zero"), reason="needs /dev/zero")
    def test_dev_zero(self, tmp_path):
        spec = design(tmp_path)
        proc = run_cli(["check", str(spec), "--jobs", "1", "--compare-margins", "/dev/zero",
                        "--json", str(tmp_path / "r.json")], memory_mb=2048, timeout=60)
        assert proc.returncode == BAD_INPUT
        assert "/dev/zero" in proc.stderr and "run-411" in proc.stderr
        no_traceback(proc.stderr)
        assert (tmp_path / "r.json").exists()  # the run went on and wrote its output

    @pytest.mark.skipif(not HAS_MKFIFO, reason="needs FIFOs")
    def test_fifo(self, tmp_path):
        spec = design(tmp_path)
        os.mkfifo(tmp_path / "base.json")
        proc = run_cli(["check", str(spec), "--jobs", "1", "--compare-margins",
                        str(tmp_path / "base.json")], timeout=60)
        assert proc.returncode == BAD_INPUT
        assert "base.json" in proc.stderr and "run-411" in proc.stderr
        no_traceback(proc.stderr)

    def test_bad_baseline_is_reported_before_the_run(self, tmp_path, capsys):
        spec = design(tmp_path)
        (tmp_path / "base.json").write_text("[" * 10_000)
        assert main(["check", str(spec), "--compare-margins", str(tmp_path / "base.json")]) \
            == BAD_INPUT
        err = capsys.readouterr().err
        assert err.index("run-411") < err.index("checked 1 spec result")
        no_traceback(err)


# ---------------------------------------------------------------------------- terminal
ESC_TITLE = "Quillmere \x1b]0;owned\x07QI-RC1 \x1b[2J\u202eevil"


def test_text_from_inputs_never_reaches_the_terminal_raw(tmp_path, capsys):
    spec = design(tmp_path, SPEC.replace('"Quillmere QI-RC1 low-pass"',
                                         json.dumps(ESC_TITLE))
                  .replace('name = "pass-band"', 'name = "pass\\u001b[31m-band"')
                  + '\n[[variants.set]]\nname = "a\\u001b[1mb"\nparams = { rval = 1500 }\n'
                  + '\n[[variants.set]]\nname = "c"\nparams = { rval = 1600 }\n')
    assert main(["check", str(spec), "--color", "never"]) == OK
    captured = capsys.readouterr()
    for stream in (captured.out, captured.err):
        assert "\x1b" not in stream and "\u202e" not in stream and "\x07" not in stream
    assert "\\x1b]0;owned\\x07" in captured.out and "\\u202e" in captured.out
    assert "pass\\x1b[31m-band" in captured.out and "a\\x1b[1mb" in captured.out


def test_path_in_an_error_message_is_escaped_and_bounded(tmp_path, capsys):
    name = "nope\x1b[2J" + "x" * 5000 + ".toml"
    assert main(["check", str(tmp_path / name)]) == BAD_INPUT
    captured = capsys.readouterr()
    assert "\x1b" not in captured.err + captured.out
    assert "\\x1b[2J" in captured.err
    assert max(len(line) for line in captured.err.splitlines()) < 1100


def test_shrunk_margin_lines_are_escaped(tmp_path, capsys):
    spec = design(tmp_path, SPEC.replace('name = "pass-band"', 'name = "pass\\u001b[5m"'))
    base = tmp_path / "base.json"
    assert main(["check", str(spec), "--json", str(base), "-q"]) == OK
    doc = json.loads(base.read_text("utf-8"))
    doc["specs"][0]["limits"][0]["margin"] += 5
    base.write_text(json.dumps(doc))
    capsys.readouterr()
    assert main(["check", str(spec), "--compare-margins", str(base)]) == OK
    out = capsys.readouterr().out
    assert "margin shrank: " in out and "\x1b" not in out and "pass\\x1b[5m" in out
