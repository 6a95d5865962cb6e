"""Where a result came from: the git commit and working-tree state of a spec's folder."""

from __future__ import annotations

import os
import shutil
import subprocess
from dataclasses import asdict, dataclass
from pathlib import Path
from typing import Any

from .source import display_path

__all__ = ["GitState", "git_state", "GIT_TIMEOUT_S", "git_record"]

#: seconds allowed for each git command
GIT_TIMEOUT_S = 5.0


@dataclass(frozen=True, slots=True)
class GitState:
    """Repository state of a spec's folder, for the report header."""

    commit: str | None
    dirty: bool | None
    text: str
    changed_inputs: tuple[str, ...] = ()


def git_state(directory: str | os.PathLike, inputs: tuple[str, ...] = ()) -> GitState:
    """Commit and dirty state of the git work tree holding ``directory``.

    Runs ``git rev-parse`` and ``git status --porcelain`` (read-only: optional locks are
    disabled, so the index is never rewritten), each with a timeout. ``inputs`` are
    paths whose own uncommitted changes are listed.
    """
    env = {**os.environ, "GIT_OPTIONAL_LOCKS": "0", "LC_ALL": "C", "GIT_TERMINAL_PROMPT": "0"}
    cwd = Path(directory or ".")
    if not cwd.is_dir():
        return GitState(None, None, f"repository state unknown (no folder {cwd})")
    if shutil.which("git") is None:
        return GitState(None, None, "repository state unknown (git is not installed)")

    def git(*args: str) -> subprocess.CompletedProcess:
        return subprocess.run(["git", *args], cwd=cwd, env=env, capture_output=True,
                              text=True, timeout=GIT_TIMEOUT_S, stdin=subprocess.DEVNULL)

    try:
        top = git("rev-parse", "--show-toplevel")
        if top.returncode != 0:
            if "not a git repository" in top.stderr:
                return GitState(None, None, "not in a git repository")
            first = (top.stderr.strip().splitlines() or ["unknown error"])[0]
            return GitState(None, None, f"repository state unknown (git: {first})")
        head = git("rev-parse", "--verify", "--quiet", "HEAD")
        status = git("status", "--porcelain=v1", "-z", "--untracked-files=normal")
    except FileNotFoundError:
        return GitState(None, None, "repository state unknown (git is not installed)")
    except subprocess.TimeoutExpired:
        return GitState(None, None, f"repository state unknown (git took over "
                                    f"{GIT_TIMEOUT_S:g} s)")
    except OSError as err:
        return GitState(None, None, f"repository state unknown ({err.strerror or err})")
    commit = head.stdout.strip() if head.returncode == 0 else None
    if status.returncode != 0:
        return GitState(commit, None, "working tree state unknown (git status failed)")
    changed: dict[str, str] = {}
    fields = iter(status.stdout.split("\0"))
    for entry in fields:
        if len(entry) > 3:
            changed[entry[3:]] = entry[:2]
            if entry[0] in "RC":
                next(fields, None)  # the rename/copy source follows as its own field
    root = Path(top.stdout.strip()).resolve()
    flagged = []
    for p in inputs:
        try:
            rel = Path(p).resolve().relative_to(root)
        except (ValueError, OSError):
            flagged.append(f"{display_path(p)} (outside the repository)")
            continue
        code = changed.get(rel.as_posix())
        if code is not None:
            what = "untracked" if code == "??" else "uncommitted changes"
            flagged.append(f"{display_path(p)} ({what})")
    dirty = bool(changed)
    text = (f"commit {commit}" if commit else "no commit yet") + (
        "; working tree has uncommitted changes" if dirty else "; working tree clean")
    return GitState(commit, dirty, text, tuple(flagged))


def git_record(directory: str | os.PathLike, inputs: tuple[str, ...] = ()) -> dict[str, Any]:
    """:func:`git_state` as plain data, for ``SpecResult.extra["git"]`` and JSON."""
    state = git_state(directory, inputs)
    out = asdict(state)
    out["changed_inputs"] = list(state.changed_inputs)
    return out
