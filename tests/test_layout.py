"""The package layout keeps the pipeline visible: stages as subpackages, data flowing one
way, no import cycles, small modules (DEVELOPERS.md, "The package map")."""

from __future__ import annotations

import ast
import subprocess
import sys
from pathlib import Path

import pytest

PKG = Path(__file__).resolve().parents[1] / "netcheck"

#: the stages in pipeline order; a module may import from its own stage and the stages
#: before it (and the shared root modules), never from a later one
STAGES = ("netlist", "measure", "mna", "spec", "analyses", "render", "runs", "report", "cli")
ROOT_MODULES = {"exceptions", "result"}
#: "~600 lines": the bound a module stays under
LINES_MAX = 620


def modules() -> dict[str, Path]:
    out = {}
    for path in sorted(PKG.rglob("*.py")):
        rel = path.relative_to(PKG.parent).with_suffix("")
        out[".".join(p for p in rel.parts if p != "__init__")] = path
    return out


def imports(name: str, path: Path, known: dict[str, Path]) -> set[str]:
    """netcheck modules ``name`` imports anywhere (functions included), TYPE_CHECKING aside."""
    tree = ast.parse(path.read_text("utf-8"))
    skip = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.If) and "TYPE_CHECKING" in ast.unparse(node.test):
            skip.update(id(n) for n in ast.walk(node))
    package = name.split(".") if path.name == "__init__.py" else name.split(".")[:-1]
    found = set()
    for node in ast.walk(tree):
        if id(node) in skip:
            continue
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = package[:len(package) - (node.level - 1)]
                target = ".".join(base + ([node.module] if node.module else []))
            else:
                target = node.module or ""
            if not target.startswith("netcheck"):
                continue
            for alias in node.names:
                sub = f"{target}.{alias.name}"
                found.add(sub if sub in known else target)
        elif isinstance(node, ast.Import):
            found.update(a.name for a in node.names if a.name.startswith("netcheck"))
    return {m for m in found if m in known and m != name}


@pytest.fixture(scope="module")
def graph() -> dict[str, set[str]]:
    known = modules()
    return {name: imports(name, path, known) for name, path in known.items()}


def test_no_import_cycles(graph):
    # Tarjan's strongly connected components: every one must be a single module
    index, low, stack, on, cycles = {}, {}, [], set(), []

    def visit(v: str) -> None:
        index[v] = low[v] = len(index)
        stack.append(v)
        on.add(v)
        for w in graph[v]:
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            comp = []
            while True:
                w = stack.pop()
                on.discard(w)
                comp.append(w)
                if w == v:
                    break
            if len(comp) > 1:
                cycles.append(sorted(comp))

    for v in graph:
        if v not in index:
            visit(v)
    assert cycles == []


def stage(module: str) -> str:
    parts = module.split(".")
    return parts[1] if len(parts) > 1 else "netcheck"


@pytest.mark.parametrize("later", STAGES)
def test_no_stage_imports_a_later_one(graph, later):
    rank = {s: i for i, s in enumerate(STAGES)}
    wrong = sorted(f"{a} -> {b}" for a, bs in graph.items() for b in bs
                   if stage(a) == later and stage(b) in rank and rank[stage(b)] > rank[later])
    assert wrong == []


def test_root_modules_import_no_stage_above_the_netlist(graph):
    # exceptions and result are read by every stage; they may lean on the netlist
    # stage's text helpers (spans, printable, units) and nothing later
    for name in ROOT_MODULES:
        assert {stage(b) for b in graph[f"netcheck.{name}"]} <= {"netlist", "netcheck"}


def test_the_root_holds_the_stages_and_a_few_modules():
    entries = sorted(p.name for p in PKG.iterdir()
                     if p.name != "__pycache__" and (p.suffix == ".py" or p.is_dir()))
    assert entries == sorted(["__init__.py", "__main__.py", "api.py", "exceptions.py",
                              "result.py", *STAGES])


def test_no_module_is_oversized():
    big = {str(p.relative_to(PKG.parent)): n for p in PKG.rglob("*.py")
           if (n := len(p.read_text("utf-8").splitlines())) > LINES_MAX}
    assert big == {}


def test_no_private_half_modules():
    # a module is split by responsibility, never into a private half
    halves = [str(p.relative_to(PKG.parent)) for p in PKG.rglob("_*.py")
              if p.name not in ("__init__.py", "__main__.py")]
    assert halves == []


def test_the_cli_and_the_api_load_no_heavy_library():
    code = ("import sys, netcheck, netcheck.cli\n"
            "heavy = [m for m in ('numpy', 'scipy', 'matplotlib', 'weasyprint', 'jinja2', 'lark')"
            " if m in sys.modules]\n"
            "print(','.join(heavy))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         cwd=PKG.parent, check=True)
    assert out.stdout.strip() == ""


def test_every_package_ships_in_the_wheel():
    # pyproject lists the packages explicitly (grammar/ is mapped in as netcheck.grammar)
    import tomllib

    listed = set(tomllib.loads((PKG.parent / "pyproject.toml").read_text("utf-8"))
                 ["tool"]["setuptools"]["packages"])
    found = {".".join(p.parent.relative_to(PKG.parent).parts) for p in PKG.rglob("__init__.py")}
    assert found <= listed
