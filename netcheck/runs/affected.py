"""Which specs a change since a git revision affects (``check --affected-since``), behind
netcheck.runs.ci."""

from __future__ import annotations

import fnmatch
import glob
import os
import subprocess
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

from ..exceptions import NetcheckError
from ..netlist.source import printable

__all__ = ["GitError", "AffectedSpec", "AffectedSpecs", "affected_specs", "GIT_TIMEOUT_S"]

#: seconds one git command may take before :class:`GitError` is raised
GIT_TIMEOUT_S = 30.0


class GitError(NetcheckError):
    """git could not say what changed: not a work tree, unknown revision, git missing or hung."""

    code = "run-410"


@dataclass(frozen=True, slots=True)
class AffectedSpec:
    """One spec that must be re-checked, and why.

    Attributes
    ----------
    spec : str
        The spec path exactly as it was passed in.
    changed : tuple of str
        The changed files (relative to the work-tree root, ``/``-separated, sorted) that
        are among the spec's inputs. Empty when the spec is affected only because it
        could not be loaded.
    error : str or None
        One-line reason the spec's inputs could not be read (its own file fails to
        load); such a spec always counts as affected so the error surfaces in the check.
    """

    spec: str
    changed: tuple[str, ...] = ()
    error: str | None = None


@dataclass(frozen=True, slots=True)
class AffectedSpecs:
    """What :func:`affected_specs` found.

    Attributes
    ----------
    rev : str
        The revision compared against, as given.
    root : str
        Absolute path of the git work tree.
    specs : tuple of AffectedSpec
        The specs to re-check, in the order they were passed in.
    changed_files : tuple of str
        Every changed or untracked file, relative to ``root``, ``/``-separated, sorted.
    unaffected : tuple of str
        The specs that may be skipped, in the order they were passed in.
    """

    rev: str
    root: str
    specs: tuple[AffectedSpec, ...]
    changed_files: tuple[str, ...]
    unaffected: tuple[str, ...] = ()

    @property
    def paths(self) -> tuple[str, ...]:
        """The affected spec paths, in input order."""
        return tuple(a.spec for a in self.specs)

    def reasons(self) -> dict[str, tuple[str, ...]]:
        """Affected spec path → the changed files that made it affected."""
        return {a.spec: a.changed for a in self.specs}


@dataclass(frozen=True, slots=True)
class _Inputs:
    files: tuple[str, ...]          # absolute paths the spec reads (existing or not)
    patterns: tuple[str, ...] = ()  # absolute glob patterns (variant netlist families)
    incomplete: bool = False        # a netlist failed to load: its includes are unknown
    error: str | None = None        # the spec itself failed to load


def _run(args: Sequence[str], cwd: str, timeout: float,
         overrides: Sequence[tuple[str, str]] = ()) -> subprocess.CompletedProcess:
    """Run ``git ARGS`` in ``cwd``; only failures to start or finish raise :class:`GitError`.

    git runs through :func:`netcheck.runs.provenance.run_git`: nothing the repository's
    configuration names (monitor hook, filter drivers, external diff...) is started.
    """
    from .provenance import run_git

    shown = "git " + " ".join(args)
    try:
        return run_git(args, cwd, timeout, overrides)
    except FileNotFoundError:
        raise GitError("git is not installed or not on PATH; --affected-since needs it",
                       path=cwd) from None
    except subprocess.TimeoutExpired:
        raise GitError(f"'{shown}' did not finish within {timeout:g} s", path=cwd) from None
    except OSError as err:
        raise GitError(f"cannot run '{shown}': {err.strerror or err}", path=cwd) from None


def _git(args: Sequence[str], cwd: str, timeout: float,
         overrides: Sequence[tuple[str, str]] = ()) -> bytes:
    """Run ``git ARGS`` in ``cwd`` and return its stdout, or raise :class:`GitError`."""
    proc = _run(args, cwd, timeout, overrides)
    if proc.returncode != 0:
        lines = [ln for ln in proc.stderr.decode("utf-8", "replace").splitlines() if ln.strip()]
        detail = printable(lines[-1].strip()) if lines else f"exit status {proc.returncode}"
        if "not a git repository" in detail:
            raise GitError(f"{printable(cwd)} is not inside a git work tree", path=cwd)
        raise GitError(f"'git {printable(' '.join(args))}' failed: {detail}", path=cwd)
    return proc.stdout


def _split_z(out: bytes) -> list[str]:
    return [os.fsdecode(p) for p in out.split(b"\0") if p]


def _keys(path: str) -> set[str]:
    """Ways to name one file: normalised absolute path, and with symlinks resolved."""
    absolute = os.path.normpath(os.path.abspath(path))
    return {absolute, os.path.realpath(absolute)}


def _one_line(err: NetcheckError) -> str:
    return f"{err.location()}: error {err.code}: {err.message}"


def _netlist_files(netlist: str, root: str | None) -> tuple[list[str], bool]:
    """Files a netlist reads (itself first); on a load failure, itself and the error's file."""
    from ..netlist.parse import load_netlist

    try:
        parsed = load_netlist(netlist, root)
    except NetcheckError as err:
        files = [netlist]
        if err.span is not None and err.span.path not in ("<text>", netlist):
            files.append(err.span.path)
        return files, True
    return [netlist, *(src.path for src in parsed.sources[1:])], False


def _spec_inputs(spec_path: str, root: str | None = None) -> _Inputs:
    """Every file the check of ``spec_path`` reads, as far as it can be known."""
    from ..spec.load import inside_root, load_spec

    try:
        spec = load_spec(spec_path, root)
    except NetcheckError as err:
        return _Inputs((spec_path,), error=_one_line(err))
    files, incomplete = [spec_path], False
    netlists = [spec.netlist]
    patterns: list[str] = []
    base = Path(spec_path).parent
    if spec.variants is not None:
        if spec.variants.table is not None:
            files.append(str(base / spec.variants.table))
        for pattern in spec.variants.netlists:
            patterns.extend(_keys(str(base / pattern)))
            # only what the check itself may read: matches inside the design root
            netlists.extend(m for m in sorted(glob.glob(str(base / pattern)))
                            if spec.design_root is None or inside_root(m, spec.design_root))
    for netlist in dict.fromkeys(netlists):
        got, failed = _netlist_files(netlist, spec.root or root)
        files.extend(got)
        incomplete = incomplete or failed
    return _Inputs(tuple(dict.fromkeys(files)), tuple(patterns), incomplete)


def affected_specs(spec_paths: Sequence[str], rev: str, repo_dir: str = ".", *,
                   root: str | None = None, timeout: float = GIT_TIMEOUT_S) -> AffectedSpecs:
    """The specs that must be re-checked because one of their inputs changed since ``rev``.

    A spec's inputs are its spec file, its netlist and every file the netlist
    ``.include``-s (followed through any depth, as :func:`netcheck.netlist.parse.load_netlist`
    records them), plus for a ``[variants]`` family the CSV ``table`` and every netlist
    the ``netlists`` globs match, with their includes. "Changed" means listed by
    ``git diff --name-only --no-renames REV --`` (the work tree, staged or not, against
    ``REV``; a rename counts as its old and new path) or untracked and not ignored
    (``git ls-files --others --exclude-standard``).

    Parameters
    ----------
    spec_paths : sequence of str
        Spec files, as the check would be given them. Relative paths are relative to
        the current directory, as for :func:`netcheck.spec.load_spec`.
    rev : str
        Any git revision naming a commit (``origin/main``, a tag, a SHA, ``HEAD~1``).
    repo_dir : str, optional
        A directory inside the git work tree (default: the current directory).
    root : str, optional
        Design root that ``.include`` may not leave, for specs that set no ``root``
        (pass what the check itself will use, e.g. ``--root``).
    timeout : float, optional
        Seconds each git command may take (default :data:`GIT_TIMEOUT_S`).

    Returns
    -------
    AffectedSpecs
        The affected specs in input order (duplicates dropped), the changed files
        behind each, every changed file, and the specs that may be skipped.

    Raises
    ------
    GitError
        ``repo_dir`` is not in a git work tree, ``rev`` is not a known commit, or git is
        missing, fails or takes longer than ``timeout``.

    Notes
    -----
    * A spec whose own file cannot be loaded counts as affected, with the load error,
      so that the check reports it.
    * When a netlist cannot be loaded its includes are unknown; the spec then depends
      on the netlist file, the file the load error points at, and every *deleted*
      file (a removed include is the usual cause of such a failure).
    * Files outside the work tree never count as changed.
    """
    if not isinstance(rev, str) or not rev.strip() or rev.startswith("-") \
            or any(c in rev for c in "\0\n"):
        raise GitError(f"{printable(repr(rev), 120)} is not a git revision", path=str(repo_dir))
    if not Path(repo_dir).is_dir():
        raise GitError(f"repository directory {printable(str(repo_dir))} does not exist",
                       path=str(repo_dir))
    from .provenance import filter_overrides

    top = os.fsdecode(_git(["rev-parse", "--show-toplevel"], str(repo_dir), timeout)).strip()
    try:
        safe = filter_overrides(top, timeout)
    except subprocess.TimeoutExpired:
        raise GitError(f"'git config' did not finish within {timeout:g} s", path=top) from None
    except OSError as err:
        raise GitError(f"cannot run 'git config': {err.strerror or err}", path=top) from None
    if _run(["rev-parse", "--verify", "--quiet", f"{rev}^{{commit}}"], top, timeout,
            safe).returncode:
        raise GitError(f"unknown git revision {printable(repr(rev), 120)} (in a shallow CI "
                       "checkout, fetch it first, e.g. 'git fetch origin main')", path=top)
    changed = set(_split_z(_git(["diff", "--name-only", "--no-renames", "--no-ext-diff",
                                 "--no-textconv", "--ignore-submodules=dirty", "-z", rev, "--"],
                                top, timeout, safe)))
    changed |= set(_split_z(_git(["ls-files", "--others", "--exclude-standard", "-z"],
                                 top, timeout, safe)))
    changed_files = tuple(sorted(p.replace(os.sep, "/") for p in changed))
    by_key: dict[str, str] = {}
    for rel in changed_files:
        for key in _keys(os.path.join(top, rel)):
            by_key.setdefault(key, rel)
    deleted = [rel for rel in changed_files if not os.path.lexists(os.path.join(top, rel))]

    hits, skipped = [], []
    for spec in dict.fromkeys(spec_paths):
        inputs = _spec_inputs(spec, root)
        found = {by_key[k] for f in inputs.files for k in _keys(f) if k in by_key}
        for rel in deleted:
            names = _keys(os.path.join(top, rel))
            if inputs.incomplete or any(fnmatch.fnmatchcase(n, p) for n in names
                                        for p in inputs.patterns):
                found.add(rel)
        if found or inputs.error is not None:
            hits.append(AffectedSpec(spec, tuple(sorted(found)), inputs.error))
        else:
            skipped.append(spec)
    return AffectedSpecs(rev, top, tuple(hits), changed_files, tuple(skipped))
