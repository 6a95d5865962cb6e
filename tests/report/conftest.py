"""Fixtures of the report tests: the analysis cases, and their replay in a second interpreter.

The replay starts with the session, so that its renders run beside the other report tests;
test_pdf_analyses.py compares its files with the renders made in this process.
"""

from __future__ import annotations

import importlib.util
import os
import subprocess
import sys
from pathlib import Path

import pytest

_CASES = Path(__file__).with_name("analysis_cases.py")


def _load_cases():
    spec = importlib.util.spec_from_file_location("netcheck_report_analysis_cases", _CASES)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


@pytest.fixture(scope="session")
def analysis_cases():
    """The analysis_cases module (loaded by path: the tests import in importlib mode)."""
    return _load_cases()


@pytest.fixture(scope="session")
def analysis_folder(tmp_path_factory, analysis_cases) -> Path:
    """A folder holding the tolerance case's spec (written once, read by both processes)."""
    folder = tmp_path_factory.mktemp("analyses")
    analysis_cases.write_tolerance_spec(folder)
    return folder


@pytest.fixture(scope="session", autouse=True)
def analysis_replay(request, analysis_folder, analysis_cases):
    """(process, output folder) of the replay, or None when no analysis test is selected."""
    if not any(Path(str(item.fspath)).name == "test_pdf_analyses.py"
               for item in request.session.items):
        yield None
        return
    out = analysis_folder / "replay"
    env = {**os.environ, "PYTHONHASHSEED": "4242", "SOURCE_DATE_EPOCH": "1767225600",
           "PYTHONPATH": os.pathsep.join([str(analysis_cases.ROOT),
                                          os.environ.get("PYTHONPATH", "")])}
    proc = subprocess.Popen([sys.executable, str(_CASES), str(analysis_folder), str(out)],
                            cwd=analysis_cases.ROOT, env=env, stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE)
    yield proc, out
    if proc.poll() is None:
        proc.kill()
    proc.communicate()
