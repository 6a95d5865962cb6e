"""The limit-kind table: every entry imports, one kind a module, built from TOML, imported lazily."""

from __future__ import annotations

import dataclasses
import importlib
import subprocess
import sys
import tomllib
from pathlib import Path

import pytest

import netcheck
import netcheck.spec.limits as limits
from netcheck.spec import Sweep
from netcheck.spec.limits import KINDS, LIMITS, Limit, build_limit
from netcheck.spec.limits.registry import limit_class

PACKAGE = "netcheck.spec.limits"
SWEEP = Sweep(10.0, 1e6, 50)

#: the smallest valid table of every kind, as a spec file would hold it
MINIMAL_TOML = {
    "gain": 'kind = "gain"\nband = ["100", "1k"]\nmax_db = 1',
    "ripple": 'kind = "ripple"\nband = ["100", "1k"]\nmax_db = 0.5',
    "resonance": 'kind = "resonance"\nq = [5, 20]',
    "corner": 'kind = "corner"\nrange = ["990", "1010"]',
    "bandwidth": 'kind = "bandwidth"\nrange = ["1k", "2k"]',
    "shape_factor": 'kind = "shape_factor"\nrange = [1, 3]\nlevels_db = [6, 60]',
    "bandwidth": 'kind = "bandwidth"\nrange = ["1k", "2k"]',
    "shape_factor": 'kind = "shape_factor"\nrange = [1, 3]\nlevels_db = [6, 60]',
    "group_delay": 'kind = "group_delay"\nband = ["100", "1k"]\nmax = "200u"',
    "phase": 'kind = "phase"\nband = ["100", "1k"]\nrange_deg = [-90, 0]',
    "impedance": 'kind = "impedance"\nband = ["100", "1k"]\nrange = ["1k", "2k"]',
    "notch": 'kind = "notch"\ndepth_db = { min = 40 }',
    "port": 'kind = "port"\nquantity = "transducer_gain"\nband = ["100", "1k"]\nmin = -1',
    "noise": 'kind = "noise"\nquantity = "rms"\nband = ["100", "1k"]\nmax = "1u"',
    "step": 'kind = "step"\nquantity = "delay"\nmax = "1m"',
    "crossover": 'kind = "crossover"\noutputs = ["low", "high"]\nband = ["100", "10k"]\n'
                 'range = ["900", "1.1k"]',
}


def entry(kind: str) -> tuple[str, str]:
    """(module name within the package, class name) of a table entry."""
    module, cls = KINDS[kind].split(":")
    return module, cls


def test_table_lists_the_kinds_in_their_order():
    # the order is the order of the worst case and of every listing of kinds
    assert list(KINDS) == ["gain", "ripple", "resonance", "corner", "bandwidth",
                           "shape_factor", "group_delay", "phase", "impedance", "notch",
                           "port", "noise", "step", "crossover"]
    assert list(LIMITS) == list(KINDS) and len(LIMITS) == len(KINDS)
    assert set(MINIMAL_TOML) == set(KINDS)


@pytest.mark.parametrize("kind", list(KINDS))
def test_every_entry_imports_as_its_kind(kind):
    module, name = entry(kind)
    cls = getattr(importlib.import_module(f"{PACKAGE}.{module}"), name)
    assert isinstance(cls, type) and issubclass(cls, Limit) and cls is not Limit
    assert dataclasses.is_dataclass(cls)
    assert cls.kind == kind
    assert LIMITS[kind] is cls and limit_class(kind) is cls
    assert getattr(limits, name) is cls  # the package gives it by name too
    assert cls.__module__ == f"{PACKAGE}.{module}"


def test_each_kind_lives_in_its_own_module():
    modules = [entry(kind)[0] for kind in KINDS]
    assert len(set(modules)) == len(modules)
    for kind in KINDS:
        module, name = entry(kind)
        mod = importlib.import_module(f"{PACKAGE}.{module}")
        assert mod.__all__ == [name]
        kinds_here = [v for v in vars(mod).values() if isinstance(v, type)
                      and issubclass(v, Limit) and v is not Limit]
        assert kinds_here == [LIMITS[kind]]


@pytest.mark.parametrize("kind", list(KINDS))
def test_build_limit_builds_each_kind_from_a_minimal_table(kind):
    table = tomllib.loads(MINIMAL_TOML[kind])
    lim = build_limit(table, 3, "q.toml", SWEEP, 12)
    assert type(lim) is LIMITS[kind]
    assert lim.kind == kind and lim.name and (lim.index, lim.line) == (3, 12)
    assert lim.result_names()


def test_unknown_names_are_still_errors():
    assert "nothing" not in LIMITS
    with pytest.raises(KeyError):
        LIMITS["nothing"]
    with pytest.raises(AttributeError):
        limits.NothingLimit  # noqa: B018


def run(code: str) -> str:
    """Run ``code`` in a fresh interpreter (importing this netcheck); its stdout."""
    root = Path(netcheck.__file__).resolve().parents[1]
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          check=True, cwd=root)
    return done.stdout.strip()


def test_importing_the_package_imports_no_kind_module():
    modules = [f"{PACKAGE}.{entry(kind)[0]}" for kind in KINDS]
    code = (f"import sys\nimport {PACKAGE} as L\n"
            "n = len(L.LIMITS); ks = list(L.LIMITS); 'gain' in L.LIMITS\n"
            f"print(sorted(m for m in {modules!r} if m in sys.modules))\n")
    assert run(code) == "[]"


def test_building_a_limit_imports_its_kind_only():
    modules = [f"{PACKAGE}.{entry(kind)[0]}" for kind in KINDS]
    code = (f"import sys\nfrom {PACKAGE} import build_limit\n"
            "from netcheck.spec import Sweep\n"
            "build_limit({'kind': 'ripple', 'band': [100, 1000], 'max_db': 1}, 0, 'q.toml',"
            " Sweep(10.0, 1e6, 50), None)\n"
            f"print(sorted(m for m in {modules!r} if m in sys.modules))\n")
    assert run(code) == f"['{PACKAGE}.ripple']"
