"""The CI options of ``netcheck check``: --baseline/--fail-on-drift and --changed-since."""

from __future__ import annotations

import json
import shutil
import subprocess
from pathlib import Path

import pytest

from netcheck.cli import BAD_INPUT, MARGIN_SHRANK, OK, main

ROOT = Path(__file__).resolve().parents[2]


def test_baseline_drift_exit_code(tmp_path, capsys):
    base = tmp_path / "base.json"
    assert main(["check", str(ROOT / "specs/rx40k.toml"), "--json", str(base), "-q"]) == OK
    doc = json.loads(base.read_text())
    # pretend the earlier run had a 1 dB larger margin on every dB limit
    for spec in doc["specs"]:
        for lim in spec["limits"]:
            if lim["unit"] == "dB":
                lim["margin"] += 1.0
    base.write_text(json.dumps(doc))
    capsys.readouterr()
    assert main(["check", str(ROOT / "specs/rx40k.toml"), "--baseline", str(base)]) == OK
    out = capsys.readouterr().out
    assert "drift:" in out and "2 drifted" in out
    assert main(["check", str(ROOT / "specs/rx40k.toml"), "--baseline", str(base),
                 "--fail-on-drift"]) == MARGIN_SHRANK
    # a larger allowance: nothing drifts
    assert main(["check", str(ROOT / "specs/rx40k.toml"), "--baseline", str(base),
                 "--fail-on-drift", "--drift-db", "2"]) == OK


def test_bad_baseline_is_bad_input(tmp_path, capsys):
    bad = tmp_path / "bad.json"
    bad.write_text('{"schema": "something/else"}')
    assert main(["check", str(ROOT / "specs/rx40k.toml"), "--baseline", str(bad)]) == BAD_INPUT
    assert "run-411" in capsys.readouterr().err


@pytest.mark.skipif(shutil.which("git") is None, reason="git is not installed")
def test_changed_since(tmp_path, capsys, monkeypatch):
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
    assert main(["check", ".", "--changed-since", "HEAD"]) == OK
    assert "nothing to check" in capsys.readouterr().out
    netlist = tmp_path / "tank_tia.cir"
    netlist.write_text(netlist.read_text().replace("RT out 0 10k", "RT out 0 10.2k"))
    assert main(["check", ".", "--changed-since", "HEAD"]) == OK
    captured = capsys.readouterr()
    assert "tank_tia.toml" in captured.out and "rx40k.toml" not in captured.out
    assert main(["check", ".", "--changed-since", "no-such-rev"]) == BAD_INPUT
    assert "run-410" in capsys.readouterr().err
