"""The spec is complete when loaded: [tolerances], [analysis] and [[stress]] are parsed
and validated by parse_spec, with no circuit and no evaluation."""

from __future__ import annotations

import math

import pytest

from netcheck.analyses.nominal import check_spec
from netcheck.exceptions import SpecError
from netcheck.spec.load import Spec, parse_spec
from netcheck.spec.stress import StressLimit
from netcheck.spec.tolerances import Analysis, Tolerances

# the netlist is never read: parse_spec needs no circuit
HEAD = """\
title = "complete"
netlist = "no_such.cir"
source = "V1"
output = "out"

[sweep]
start = "1k"
stop = "100k"
points_per_decade = 20
"""

GOOD = HEAD + """
[tolerances]
default = { R = "1%", C = "5%" }
parts = { L1 = "2%", "X1.*" = "500ppm" }
distribution = "truncnormal"

[analysis]
mode = ["nominal", "monte_carlo"]
samples = 300
seed = 7
yield_min = "95%"

[[stress]]
source_amplitude = "rms:2"
parts = "C*"
max_voltage = "50"

[[stress]]
parts = "L1"
max_current = "200m"
"""


class TestBrokenTablesFailAtLoad:
    @pytest.mark.parametrize("extra, where, code, line", [
        ('[tolerances]\nparts = { C1 = "150%" }\n', "tolerances.parts.C1", "spec-202", 11),
        ('[tolerances]\ndefualt = { R = "1%" }\n', "tolerances.defualt", "spec-201", 11),
        ('[tolerances]\ndistribution = "lognormal"\n', "tolerances.distribution", "spec-202", 11),
        ('[analysis]\nmode = ["everything"]\n', "analysis.mode", "spec-202", 11),
        ('[analysis]\nsamples = 1\n', "analysis.samples", "spec-202", 11),
        ('[[stress]]\nsource_amplitude = 1\nparts = "C*"\nmax_voltage = 5\n\n'
         '[[stress]]\nparts = "L*"\nmax_current = -1\n', "stress[1].max_current", "spec-202", 17),
        ('[[stress]]\nparts = "C*"\nmax_voltage = 5\n', "stress[0].source_amplitude", "spec-202",
         10),
        ('[stress]\nparts = "C*"\n', "stress", "spec-202", None),
        ('[variants]\nnetlist = ["a.cir"]\n', "variants.netlist", "spec-201", 11),
        ('[variants]\nnetlists = [""]\n', "variants.netlists", "spec-202", 11),
        ('[[variants.set]]\nname = 5\n', "variants.set[0].name", "spec-202", 11),
        ('[[variants.set]]\nname = "a"\nparams = { rval = "lots" }\n',
         "variants.set[0].params", "spec-202", 12),
    ])
    def test_parse_spec_raises_with_key_path_and_location(self, extra, where, code, line):
        err = pytest.raises(SpecError, parse_spec, HEAD + extra, "demo.toml").value
        assert err.where == where
        assert err.code == code
        assert err.message.startswith(f"{where}: ")
        assert err.span is not None and err.span.path == "demo.toml"
        if line is not None:
            assert err.span.line == line

    def test_the_error_result_is_the_load_error(self, tmp_path):
        # the netlist does not exist: the broken [[stress]] is reported first, by loading
        spec = tmp_path / "s.toml"
        spec.write_text(HEAD + '[[stress]]\nparts = "C*"\nmax_voltage = 5\n', "utf-8")
        result = check_spec(str(spec))
        assert result.status.value == "error"
        (caution,) = result.cautions
        assert (caution.code, caution.line) == ("spec-202", 10)
        assert caution.message.startswith("stress[0].source_amplitude: missing")


class TestGoodTablesAreParsed:
    def test_fields_hold_the_parsed_tables(self):
        spec = parse_spec(GOOD, "demo.toml")
        assert isinstance(spec, Spec)
        assert isinstance(spec.tolerances, Tolerances)
        assert dict(spec.tolerances.default) == {"R": pytest.approx(0.01), "C": pytest.approx(0.05)}
        assert dict(spec.tolerances.parts) == {"L1": pytest.approx(0.02),
                                               "X1.*": pytest.approx(5e-4)}
        assert spec.tolerances.distribution == "truncnormal"
        assert isinstance(spec.analysis, Analysis)
        assert spec.analysis.modes == ("nominal", "monte_carlo")
        assert (spec.analysis.samples, spec.analysis.seed) == (300, 7)
        assert spec.analysis.yield_min == pytest.approx(0.95)
        assert spec.stress is not None and len(spec.stress) == 2
        first, second = spec.stress
        assert isinstance(first, StressLimit)
        assert (first.parts, first.quantity, first.rating, first.rms) == ("C*", "voltage", 50, True)
        assert first.amplitude == pytest.approx(2 * math.sqrt(2))
        assert (second.quantity, second.rating, second.inherited) == ("current", 0.2, True)
        assert (first.line, second.line) == (22, 27)

    def test_absent_tables_are_none(self):
        spec = parse_spec(HEAD, "demo.toml")
        assert (spec.tolerances, spec.analysis, spec.stress) == (None, None, None)

    def test_an_empty_stress_array_is_not_absent(self):
        spec = parse_spec("stress = []\n" + HEAD, "demo.toml")
        assert spec.stress == ()

    def test_the_spec_is_frozen(self):
        spec = parse_spec(GOOD, "demo.toml")
        with pytest.raises(AttributeError):
            spec.stress = ()  # type: ignore[misc]


def test_variants_are_parsed_at_load():
    # the files a family names are read when its jobs are expanded; their names, sets
    # and values are checked and kept when the spec is loaded
    spec = parse_spec(HEAD + '[variants]\ntable = "fam.csv"\nnetlists = "rev*.cir"\n\n'
                      '[[variants.set]]\nname = "low"\nparams = { RVAL = "4k7" }\n',
                      "demo.toml")
    assert spec.variants.table == "fam.csv"
    assert spec.variants.netlists == ("rev*.cir",)
    (low,) = spec.variants.sets
    assert low.name == "low" and low.params == (("rval", 4700.0),)
    assert parse_spec(HEAD, "demo.toml").variants is None
