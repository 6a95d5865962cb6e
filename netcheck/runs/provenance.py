"""Where a result came from: the git commit and working-tree state of a spec's folder.

Also the one way netcheck runs git (:func:`run_git`, used by ``--affected-since`` too): a
design repository's configuration is data, never a program to run. Every git command
gets command-line settings that win over the repository's, the user's and the system's
configuration and turn off everything that would start a program named there: the
file-system monitor hook (``core.fsmonitor``), hooks (``core.hooksPath``), every
configured ``filter.<driver>`` (``clean``, ``smudge`` and ``process``, which ``status``
and ``diff`` run on files whose index entry is not known to be clean), external diff and
text conversion (``--no-ext-diff``, ``--no-textconv``), pagers, credential helpers and
every transport (so a partial clone cannot fetch). Submodule work trees are not
examined (``--ignore-submodules=dirty``): their configuration is not netcheck's to
vet. Optional locks are off, so the index is never rewritten.
"""

from __future__ import annotations

import os
import shutil
import subprocess
from collections.abc import Sequence
from dataclasses import asdict, dataclass
from pathlib import Path
from typing import Any

from ..netlist.source import display_path, printable

__all__ = ["GitState", "git_state", "GIT_TIMEOUT_S", "git_record", "run_git", "git_env",
           "SAFE_GIT_CONFIG", "filter_overrides"]

#: seconds allowed for each git command
GIT_TIMEOUT_S = 5.0

#: settings given on every git command line (they win over every configuration file)
SAFE_GIT_CONFIG: tuple[str, ...] = (
    "core.fsmonitor=false",          # no file-system monitor hook or daemon
    f"core.hooksPath={os.devnull}",  # no hook (post-index-change, reference-transaction)
    "credential.helper=",            # no credential helper
    "protocol.allow=never",          # no transport at all: a partial clone does not fetch
    "submodule.recurse=false",
)

# environment variables that name a program for git to run, dropped from its environment
_PROGRAM_VARIABLES = ("GIT_EXTERNAL_DIFF", "GIT_ASKPASS", "SSH_ASKPASS", "GIT_SSH",
                      "GIT_SSH_COMMAND", "GIT_PROXY_COMMAND", "GIT_EDITOR", "GIT_SEQUENCE_EDITOR")


def git_env(overrides: Sequence[tuple[str, str]] = ()) -> dict[str, str]:
    """The environment netcheck runs git in: the caller's, less what would start programs.

    ``overrides`` (name, value) are added as command-scope settings through
    ``GIT_CONFIG_COUNT``/``GIT_CONFIG_KEY_n``/``GIT_CONFIG_VALUE_n``, after any the
    caller set: unlike ``-c name=value`` this takes a name that contains ``=`` (a
    filter driver may be called ``a=b``) literally.
    """
    env = {k: v for k, v in os.environ.items() if k not in _PROGRAM_VARIABLES}
    env.update({"GIT_OPTIONAL_LOCKS": "0", "LC_ALL": "C", "GIT_TERMINAL_PROMPT": "0",
                "GIT_PAGER": "cat", "PAGER": "cat", "GIT_NO_LAZY_FETCH": "1"})
    if overrides:
        try:
            n = int(env.get("GIT_CONFIG_COUNT", "0") or "0")
        except ValueError:
            n = 0
        for k in range(n):  # git refuses a count whose keys are missing
            if f"GIT_CONFIG_KEY_{k}" not in env:
                n = 0
                break
        for name, value in overrides:
            env[f"GIT_CONFIG_KEY_{n}"], env[f"GIT_CONFIG_VALUE_{n}"] = name, value
            n += 1
        env["GIT_CONFIG_COUNT"] = str(n)
    return env


def _command(args: Sequence[str], overrides: Sequence[tuple[str, str]]) -> list[str]:
    # settings whose name has no "=" are also given as -c (git before 2.31 reads no
    # GIT_CONFIG_COUNT); -c splits at the first "=", so other names go by the environment
    given = (*SAFE_GIT_CONFIG, *(f"{k}={v}" for k, v in overrides if "=" not in k))
    return ["git", "--no-pager", *(x for item in given for x in ("-c", item)), *args]


def filter_overrides(cwd: str | os.PathLike,
                     timeout: float = GIT_TIMEOUT_S) -> tuple[tuple[str, str], ...]:
    """Settings that disable every ``filter.<driver>`` configured for ``cwd``'s repository.

    The drivers are listed with ``git config --get-regexp`` (which reads configuration
    and runs nothing); each gets empty ``clean``, ``smudge`` and ``process`` commands
    and ``required = false``, so git passes file contents through unchanged.
    Raises what :func:`subprocess.run` raises when git cannot be run.
    """
    proc = subprocess.run(_command(["config", "-z", "--get-regexp", r"^filter\."], ()),
                          cwd=cwd, env=git_env(), capture_output=True, timeout=timeout,
                          stdin=subprocess.DEVNULL, check=False)
    drivers: dict[str, None] = {}
    for entry in proc.stdout.split(b"\0"):
        key = os.fsdecode(entry.split(b"\n", 1)[0])
        if key.startswith("filter.") and key.count(".") >= 2:
            drivers[key[len("filter."):key.rindex(".")]] = None
    return tuple((f"filter.{name}.{var}", value) for name in drivers
                 for var, value in (("clean", ""), ("smudge", ""), ("process", ""),
                                    ("required", "false")))


def run_git(args: Sequence[str], cwd: str | os.PathLike, timeout: float = GIT_TIMEOUT_S,
            overrides: Sequence[tuple[str, str]] = ()) -> subprocess.CompletedProcess:
    """Run ``git ARGS`` in ``cwd`` with the safe settings; stdout and stderr as bytes.

    ``overrides`` are more (name, value) settings (:func:`filter_overrides`). Raises
    what :func:`subprocess.run` raises (FileNotFoundError, TimeoutExpired, OSError).
    """
    return subprocess.run(_command(args, overrides), cwd=cwd, env=git_env(overrides),
                          capture_output=True, timeout=timeout, stdin=subprocess.DEVNULL,
                          check=False)


@dataclass(frozen=True, slots=True)
class GitState:
    """Repository state of a spec's folder, for the report header."""

    commit: str | None
    dirty: bool | None
    text: str
    changed_inputs: tuple[str, ...] = ()


def git_state(directory: str | os.PathLike, inputs: tuple[str, ...] = ()) -> GitState:
    """Commit and dirty state of the git work tree holding ``directory``.

    Runs ``git rev-parse`` and ``git status --porcelain`` through :func:`run_git`
    (read-only, and no program named by any configuration is started), each with a
    timeout. ``inputs`` are paths whose own uncommitted changes are listed.
    """
    cwd = Path(directory or ".")
    if not cwd.is_dir():
        return GitState(None, None, f"repository state unknown (no folder {cwd})")
    if shutil.which("git") is None:
        return GitState(None, None, "repository state unknown (git is not installed)")

    overrides: tuple[tuple[str, str], ...] = ()

    def git(*args: str) -> subprocess.CompletedProcess:
        proc = run_git(args, cwd, GIT_TIMEOUT_S, overrides)
        return subprocess.CompletedProcess(proc.args, proc.returncode,
                                           os.fsdecode(proc.stdout) if proc.stdout else "",
                                           proc.stderr.decode("utf-8", "replace"))

    try:
        top = git("rev-parse", "--show-toplevel")
        if top.returncode != 0:
            if "not a git repository" in top.stderr:
                return GitState(None, None, "not in a git repository")
            first = (top.stderr.strip().splitlines() or ["unknown error"])[0]
            return GitState(None, None, f"repository state unknown (git: {printable(first)})")
        overrides = filter_overrides(cwd, GIT_TIMEOUT_S)
        head = git("rev-parse", "--verify", "--quiet", "HEAD")
        status = git("status", "--porcelain=v1", "-z", "--untracked-files=normal",
                     "--ignore-submodules=dirty")
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
