"""The README's two commands are the ones CI runs, and the report libraries fail clearly."""

from __future__ import annotations

import re
import sys
from pathlib import Path

import pytest

from netcheck.cli import BAD_INPUT, main

ROOT = Path(__file__).resolve().parents[1]


def _readme_commands() -> list[str]:
    text = (ROOT / "README.md").read_text("utf-8")
    section = text.split("## Try it on a fresh machine", 1)[1].split("\n## ", 1)[0]
    return re.findall(r"```sh\n(.*?)\n```", section, flags=re.S)


def test_ci_runs_the_readme_commands_verbatim():
    install, tests = _readme_commands()
    lines = (ROOT / ".ci" / "run").read_text("utf-8").splitlines()
    assert install in [line.removesuffix(" \\") for line in lines]
    assert tests in lines
    assert "apt-get update" in install.split("&&")[0]  # package lists first
    assert "|| true" not in (ROOT / ".ci" / "run").read_text("utf-8")  # nothing hidden


def test_report_libraries_are_ordinary_dependencies():
    import tomllib

    project = tomllib.loads((ROOT / "pyproject.toml").read_text("utf-8"))["project"]
    names = {re.split(r"[<>=\[ ]", d)[0].lower() for d in project["dependencies"]}
    assert {"jinja2", "weasyprint", "matplotlib"} <= names


@pytest.mark.parametrize("missing", ["matplotlib", "weasyprint", "jinja2"])
def test_missing_report_library_is_one_clear_line(missing, monkeypatch, capsys, tmp_path):
    monkeypatch.setitem(sys.modules, missing, None)  # import of it raises ImportError
    code = main(["check", str(ROOT / "specs" / "rx40k.toml"), "--pdf", str(tmp_path / "p")])
    err = capsys.readouterr().err.strip()
    assert code == BAD_INPUT
    assert err.count("\n") == 0 and "Traceback" not in err
    assert f"needs the Python package {missing}" in err and "run-400" in err
    assert not (tmp_path / "p").exists()  # refused before any work


def test_missing_system_library_names_pango(monkeypatch, capsys, tmp_path):
    import builtins

    real = builtins.__import__

    def fake(name, *args, **kwargs):
        if name == "weasyprint":
            raise OSError("cannot load library 'libpango-1.0-0': no such file")
        return real(name, *args, **kwargs)

    monkeypatch.delitem(sys.modules, "weasyprint", raising=False)
    monkeypatch.setattr(builtins, "__import__", fake)
    code = main(["check", str(ROOT / "specs" / "rx40k.toml"),
                 "--pdf-combined", str(tmp_path / "r.pdf")])
    err = capsys.readouterr().err.strip()
    assert code == BAD_INPUT and err.count("\n") == 0
    assert "libpango-1.0-0" in err and "apt-get install" in err


def test_readme_failure_example_is_the_real_output(capsys, monkeypatch):
    # the README's console example, line for line, against what the command prints now
    text = (ROOT / "README.md").read_text("utf-8")
    block = text.split("```console\n$ netcheck check specs/failing\n", 1)[1].split("```", 1)[0]
    monkeypatch.chdir(ROOT)
    assert main(["check", "specs/failing", "--color", "never"]) == 1
    assert capsys.readouterr().out.splitlines() == block.splitlines()
