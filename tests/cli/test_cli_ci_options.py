"""The CI options of ``netcheck check``: --compare-margins/--fail-on-shrink and
--affected-since, and the earlier spellings of each, still accepted with a note."""

from __future__ import annotations

import json
import shutil
import subprocess
from pathlib import Path

import pytest

from netcheck.cli import BAD_INPUT, MARGIN_SHRANK, OK, main

ROOT = Path(__file__).resolve().parents[2]


def _earlier_result(tmp_path) -> Path:
    """An earlier result of specs/rx40k.toml whose dB margins were each 1 dB larger."""
    base = tmp_path / "base.json"
    assert main(["check", str(ROOT / "specs/rx40k.toml"), "--json", str(base), "-q"]) == OK
    doc = json.loads(base.read_text())
    for spec in doc["specs"]:
        for lim in spec["limits"]:
            if lim["unit"] == "dB":
                lim["margin"] += 1.0
    base.write_text(json.dumps(doc))
    return base


def test_shrunk_margins_exit_code(tmp_path, capsys):
    base = _earlier_result(tmp_path)
    capsys.readouterr()
    spec = str(ROOT / "specs/rx40k.toml")
    assert main(["check", spec, "--compare-margins", str(base)]) == OK
    out = capsys.readouterr().out
    # two dB limits in rx40k.toml: each fell 1 dB, more than the 0.5 dB allowed
    assert out.count("margin shrank: ") == 2
    assert f"margins compared with {base}: 11 margins, 2 shrank by more than allowed" in out
    assert main(["check", spec, "--compare-margins", str(base), "--fail-on-shrink"]) == \
        MARGIN_SHRANK
    # a larger allowance: nothing shrank by more than allowed
    assert main(["check", spec, "--compare-margins", str(base), "--fail-on-shrink",
                 "--shrink-db", "2"]) == OK


def test_earlier_spellings_still_work_with_one_note_each(tmp_path, capsys):
    base = _earlier_result(tmp_path)
    capsys.readouterr()
    spec = str(ROOT / "specs/rx40k.toml")
    assert main(["check", spec, "--baseline", str(base), "--fail-on-drift", "-q"]) == \
        MARGIN_SHRANK
    err = capsys.readouterr().err
    # said even with --quiet, once per old spelling, naming the new one
    assert err.count("note: --baseline is now called --compare-margins") == 1
    assert err.count("note: --fail-on-drift is now called --fail-on-shrink") == 1
    assert main(["check", spec, "--baseline", str(base), "--drift-db", "2",
                 "--drift-db", "2", "--fail-on-drift", "-q"]) == OK
    assert capsys.readouterr().err.count("note: --drift-db is now called --shrink-db") == 1
    # the old spelling checks its value as the new one does
    with pytest.raises(SystemExit) as exc:
        main(["check", spec, "--drift-rel", "-1"])
    assert exc.value.code == BAD_INPUT
    # the old names are not offered in --help
    with pytest.raises(SystemExit):
        main(["check", "--help"])
    shown = capsys.readouterr().out
    assert "--compare-margins" in shown and "--affected-since" in shown
    for old in ("--baseline", "--fail-on-drift", "--drift-db", "--drift-rel", "--changed-since"):
        assert old not in shown


def test_no_note_with_the_new_names(tmp_path, capsys):
    base = _earlier_result(tmp_path)
    capsys.readouterr()
    main(["check", str(ROOT / "specs/rx40k.toml"), "--compare-margins", str(base), "-q"])
    assert "is now called" not in capsys.readouterr().err


def test_bad_earlier_result_is_bad_input(tmp_path, capsys):
    bad = tmp_path / "bad.json"
    bad.write_text('{"schema": "something/else"}')
    assert main(["check", str(ROOT / "specs/rx40k.toml"), "--compare-margins", str(bad)]) == \
        BAD_INPUT
    assert "run-411" in capsys.readouterr().err


@pytest.mark.skipif(shutil.which("git") is None, reason="git is not installed")
def test_affected_since(tmp_path, capsys, monkeypatch):
    for name in ("rx40k.cir", "tank_tia.cir"):
        shutil.copy(ROOT / "sample_netlists" / name, tmp_path / name)
    for name in ("rx40k.toml", "tank_tia.toml"):
        text = (ROOT / "specs" / name).read_text().replace("../sample_netlists/", "")
        (tmp_path / name).write_text(text)

    def git(*args):
        subprocess.run(["git", *args], cwd=tmp_path, check=True, capture_output=True)

    git("init", "-q")
    git("config", "user.email", "ci@quillmere.invalid")
    git("config", "user.name", "Quillmere CI")
    git("add", ".")
    git("commit", "-qm", "designs")
    monkeypatch.chdir(tmp_path)
    assert main(["check", ".", "--affected-since", "HEAD"]) == OK
    assert "nothing to check" in capsys.readouterr().out
    netlist = tmp_path / "tank_tia.cir"
    netlist.write_text(netlist.read_text().replace("RT out 0 10k", "RT out 0 10.2k"))
    assert main(["check", ".", "--affected-since", "HEAD"]) == OK
    captured = capsys.readouterr()
    assert "tank_tia.toml" in captured.out and "rx40k.toml" not in captured.out
    assert main(["check", ".", "--affected-since", "no-such-rev"]) == BAD_INPUT
    assert "run-410" in capsys.readouterr().err
    # the earlier spelling selects the same specs, with a note
    assert main(["check", ".", "--changed-since", "HEAD"]) == OK
    captured = capsys.readouterr()
    assert "tank_tia.toml" in captured.out and "rx40k.toml" not in captured.out
    assert "--changed-since is now called --affected-since" in captured.err
