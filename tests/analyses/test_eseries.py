"""Tests of netcheck.analyses.eseries: the IEC 60063 tables, tolerance steps, neighbours and netlist-154."""

from __future__ import annotations

import math

import pytest
from hypothesis import given
from hypothesis import strategies as st

from netcheck.analyses.eseries import (
    E6,
    E12,
    E24,
    E48,
    E96,
    E192,
    SERIES,
    check_preferred,
    is_preferred,
    nearest_preferred,
    series_for_tolerance,
)
from netcheck.exceptions import Diagnostic
from netcheck.netlist.source import SourceFile

# Source for the reference data below: IEC 60063:2015, "Preferred number series for
# resistors and capacitors". The tables and the list of exceptions are reproduced from
# memory of that standard (not looked up); they are written out here independently of
# the module's tuples, in the standard's own two-digit code form for E6/E12/E24.
IEC_E6 = "10 15 22 33 47 68"
IEC_E12 = "10 12 15 18 22 27 33 39 47 56 68 82"
IEC_E24 = "10 11 12 13 15 16 18 20 22 24 27 30 33 36 39 43 47 51 56 62 68 75 82 91"

# Where the two-figure E24 table departs from round(10**(i/24), 1): index → table value.
E24_EXCEPTIONS = {10: 2.7, 11: 3.0, 12: 3.3, 13: 3.6, 14: 3.9, 15: 4.3, 16: 4.7, 22: 8.2}
# Where the three-figure tables depart from round(10**(i/N), 2): only E192's 9.20 (formula 9.19).
THREE_FIGURE_EXCEPTIONS = {"E48": {}, "E96": {}, "E192": {185: 9.20}}

LENGTHS = {"E6": 6, "E12": 12, "E24": 24, "E48": 48, "E96": 96, "E192": 192}


def _codes(text: str) -> tuple[float, ...]:
    """Two-digit codes ``"10 15 22"`` → mantissas (1.0, 1.5, 2.2)."""
    return tuple(int(code) / 10 for code in text.split())


class TestTables:
    def test_lengths(self) -> None:
        assert {name: len(table) for name, table in SERIES.items()} == LENGTHS
        assert list(SERIES) == ["E6", "E12", "E24", "E48", "E96", "E192"]

    @pytest.mark.parametrize("name", LENGTHS)
    def test_strictly_increasing_in_one_decade(self, name: str) -> None:
        table = SERIES[name]
        assert table[0] == 1.0
        assert all(a < b for a, b in zip(table, table[1:]))
        assert table[-1] < 10.0

    def test_nesting(self) -> None:
        # Each series is every other value of the next finer one.
        assert E6 == E12[::2] and E12 == E24[::2]
        assert E48 == E96[::2] and E96 == E192[::2]
        assert set(E6) < set(E12) < set(E24)
        assert set(E48) < set(E96) < set(E192)

    def test_two_figure_tables_match_the_standard(self) -> None:
        assert E6 == _codes(IEC_E6)
        assert E12 == _codes(IEC_E12)
        assert E24 == _codes(IEC_E24)

    def test_e24_departs_from_the_formula_only_where_documented(self) -> None:
        off = {i: v for i, v in enumerate(E24) if v != round(10 ** (i / 24), 1)}
        assert off == E24_EXCEPTIONS

    @pytest.mark.parametrize("name", ["E48", "E96", "E192"])
    def test_three_figure_tables_follow_the_formula(self, name: str) -> None:
        table = SERIES[name]
        n = len(table)
        off = {i: v for i, v in enumerate(table) if v != round(10 ** (i / n), 2)}
        assert off == THREE_FIGURE_EXCEPTIONS[name]

    def test_e192_exception_is_one_step_from_the_formula(self) -> None:
        assert round(10 ** (185 / 192), 2) == 9.19
        assert E192[185] == 9.20

    @pytest.mark.parametrize("name", LENGTHS)
    def test_close_to_the_geometric_ideal(self, name: str) -> None:
        table = SERIES[name]
        n = len(table)
        # Two-figure values: the worst is E24's 3.0 against 2.873 (4.4 %).
        # Three-figure values: rounding to 0.01 is at most 0.5 % at the bottom of the decade.
        limit = 0.05 if n <= 24 else 0.005
        worst = max(abs(v / 10 ** (i / n) - 1.0) for i, v in enumerate(table))
        assert worst < limit

    @pytest.mark.parametrize("name", LENGTHS)
    def test_values_are_the_decimal_numbers(self, name: str) -> None:
        figures = 1 if len(SERIES[name]) <= 24 else 2
        assert all(v == round(v, figures) for v in SERIES[name])

    def test_series_mapping_is_read_only(self) -> None:
        with pytest.raises(TypeError):
            SERIES["E3"] = (1.0, 2.2, 4.7)  # type: ignore[index]


class TestSeriesForTolerance:
    @pytest.mark.parametrize("tol, series", [
        (0.20, "E6"), (0.10, "E12"), (0.05, "E24"), (0.02, "E48"), (0.01, "E96"),
        (0.005, "E192"), (0.0025, "E192"), (0.001, "E192"),
    ])
    def test_steps(self, tol: float, series: str) -> None:
        assert series_for_tolerance(tol) == series

    @pytest.mark.parametrize("tol, series", [
        (0.15, "E6"), (0.07, "E12"), (0.03, "E24"), (0.015, "E48"), (0.007, "E96"),
    ])
    def test_between_steps_take_the_looser_step(self, tol: float, series: str) -> None:
        assert series_for_tolerance(tol) == series

    def test_computed_tolerances_land_on_their_step(self) -> None:
        assert 1 - 0.95 > 0.05  # 0.050000000000000044: would be E12 without the slack
        assert series_for_tolerance(1 - 0.95) == "E24"
        assert series_for_tolerance(0.1 * 3 - 0.1) == "E6"  # 0.20000000000000004

    @pytest.mark.parametrize("tol", [0.2000001, 0.25, 0.5, 1.0, 5.0])
    def test_above_twenty_percent_is_none(self, tol: float) -> None:
        assert series_for_tolerance(tol) is None

    @pytest.mark.parametrize("tol", [0.0, -0.05, math.nan, math.inf, True, "5%"])
    def test_invalid(self, tol: object) -> None:
        with pytest.raises(ValueError, match="tol"):
            series_for_tolerance(tol)  # type: ignore[arg-type]


class TestNearestPreferred:
    @pytest.mark.parametrize("value, series, expected", [
        (9.9e3, "E24", (9.1e3, 10e3)),       # across the top of the decade
        (9.9, "E6", (6.8, 10.0)),
        (9.95e-6, "E192", (9.88e-6, 10e-6)),
        (1.05e3, "E24", (1.0e3, 1.1e3)),     # just above the bottom of the decade
        (1.05, "E6", (1.0, 1.5)),
        (4.8e-9, "E24", (4.7e-9, 5.1e-9)),
        (4.8e-9, "E12", (4.7e-9, 5.6e-9)),
        (2.9, "E24", (2.7, 3.0)),            # the E24 exceptions are used, not the formula
        (9.19e3, "E192", (9.09e3, 9.20e3)),
        (123.0, "E96", (121.0, 124.0)),
        (0.333, "E12", (0.33, 0.39)),
    ])
    def test_neighbours(self, value: float, series: str, expected: tuple[float, float]) -> None:
        # Exact equality: neighbours are the floats nearest the decimal values.
        assert nearest_preferred(value, series) == expected

    @pytest.mark.parametrize("value, series", [
        (4.7e-9, "E24"), (4.7e-9, "E12"), (1000.0, "E6"), (1e-12, "E6"), (10.0, "E24"),
        (9.2e3, "E192"), (3.0, "E24"), (100e-9, "E6"), (4.99e5, "E96"),
    ])
    def test_exact_hits(self, value: float, series: str) -> None:
        assert nearest_preferred(value, series) == (value, value)

    @pytest.mark.parametrize("value", [
        1.1 * 3,           # 3.3000000000000003
        0.1 * 47e-9,       # 4.7000000000000005e-09
        4.7 * 1e-9,
        47e-10,
        3 * 0.1 * 1e3,     # 300.00000000000006
        0.1 + 0.2,         # 0.30000000000000004
    ])
    def test_float_noise_is_a_hit(self, value: float) -> None:
        assert nearest_preferred(value, "E24") == (value, value)

    @pytest.mark.parametrize("name", LENGTHS)
    def test_every_value_in_every_decade_is_a_hit(self, name: str) -> None:
        for exponent in range(-15, 13):
            for v in SERIES[name]:
                value = v * 10.0 ** exponent  # deliberately computed, so carries float noise
                assert nearest_preferred(value, name) == (value, value), (v, exponent)

    @given(st.floats(min_value=1e-15, max_value=1e12), st.sampled_from(list(LENGTHS)))
    def test_brackets_the_value(self, value: float, name: str) -> None:
        below, above = nearest_preferred(value, name)
        if below == above:
            assert below == value and is_preferred(value, name, rel=1e-9)
            return
        assert below < value < above
        assert is_preferred(below, name, rel=1e-12) and is_preferred(above, name, rel=1e-12)
        table = SERIES[name] + (10.0,)
        widest = max(b / a for a, b in zip(table, table[1:]))
        assert above / below <= widest * (1 + 1e-12)

    @pytest.mark.parametrize("series", ["E7", "e24", "", None])
    def test_unknown_series(self, series: object) -> None:
        with pytest.raises(ValueError, match="series"):
            nearest_preferred(4.7e-9, series)  # type: ignore[arg-type]

    @pytest.mark.parametrize("value", [0.0, -4.7e-9, math.nan, math.inf])
    def test_invalid_value(self, value: float) -> None:
        with pytest.raises(ValueError, match="value"):
            nearest_preferred(value, "E24")


class TestIsPreferred:
    @pytest.mark.parametrize("value, series, expected", [
        (4.7e-9, "E24", True), (4.7e-9, "E12", True), (4.7e-9, "E6", True),
        (4.7e-9, "E96", False),   # E96 has 4.64 and 4.75, not 4.7
        (4.7e-9, "E192", True),
        (4.8e-9, "E24", False),
        (3.0, "E24", True), (2.9, "E24", False), (3.0, "E12", False),
        (9.2e3, "E192", True), (9.19e3, "E192", False),
        (10e3, "E96", True), (1.0, "E6", True),
    ])
    def test_membership(self, value: float, series: str, expected: bool) -> None:
        assert is_preferred(value, series) is expected

    @pytest.mark.parametrize("value", [0.1 * 47e-9, 4.7 * 1e-9, 47e-10, 4.7e-9 * (1 + 5e-4)])
    def test_float_noise(self, value: float) -> None:
        assert is_preferred(value, "E24")

    def test_rel(self) -> None:
        value = 4.7e-9 * (1 + 2e-3)
        assert not is_preferred(value, "E24")
        assert is_preferred(value, "E24", rel=3e-3)
        assert is_preferred(4.8e-9, "E24", rel=0.03)  # 2.1 % above 4.7
        # rel=0 still forgives float noise (1e-9 relative), and nothing more.
        assert is_preferred(4.7e-9 * (1 + 1e-12), "E24", rel=0.0)
        assert not is_preferred(4.7e-9 * (1 + 1e-6), "E24", rel=0.0)

    @pytest.mark.parametrize("rel", [-1e-3, math.nan, math.inf])
    def test_invalid_rel(self, rel: float) -> None:
        with pytest.raises(ValueError, match="rel"):
            is_preferred(4.7e-9, "E24", rel=rel)


class TestCheckPreferred:
    def test_message(self) -> None:
        got = check_preferred([("C3", "C", 4.8e-9, 0.05, None)])
        assert got == [Diagnostic(
            "netlist-154",
            "C3 = 4.8 nF is not an E24 value (5 % parts); nearest E24 values: 4.7 nF, 5.1 nF",
            None)]
        assert got[0].severity == "warning"

    def test_span_is_carried(self) -> None:
        source = SourceFile("lpf.cir", "* low-pass\nR1 in out 9.9k\n")
        span = source.span(2, 1, 3)
        (diag,) = check_preferred([("R1", "R", 9.9e3, 0.05, span)])
        assert diag.span is span
        assert diag.message == ("R1 = 9.9 kΩ is not an E24 value (5 % parts); "
                                "nearest E24 values: 9.1 kΩ, 10 kΩ")
        assert diag.format().startswith("lpf.cir:2:1: warning netlist-154: R1 = 9.9 kΩ")

    @pytest.mark.parametrize("part, message", [
        (("L2", "L", 4.7e-6, 0.01, None),
         "L2 = 4.7 µH is not an E96 value (1 % parts); nearest E96 values: 4.64 µH, 4.75 µH"),
        (("R7", "R", 9.19e3, 0.005, None),
         "R7 = 9.19 kΩ is not an E192 value (0.5 % parts); nearest E192 values: 9.09 kΩ, 9.2 kΩ"),
        (("C1", "c", 2.9e-12, 0.03, None),
         "C1 = 2.9 pF is not an E24 value (3 % parts); nearest E24 values: 2.7 pF, 3 pF"),
        (("R2", "R", 4.8e5, 0.1, None),
         "R2 = 480 kΩ is not an E12 value (10 % parts); nearest E12 values: 470 kΩ, 560 kΩ"),
        (("X1.C4", "C", 1.234567e-7, 0.2, None),
         "X1.C4 = 123.457 nF is not an E6 value (20 % parts); nearest E6 values: 100 nF, 150 nF"),
        (("R3", "R", 0.51, 0.001, None),
         "R3 = 510 mΩ is not an E192 value (0.1 % parts); nearest E192 values: 505 mΩ, 511 mΩ"),
    ])
    def test_messages(self, part: tuple, message: str) -> None:
        assert [d.message for d in check_preferred([part])] == [message]

    def test_only_off_series_parts_in_order(self) -> None:
        parts = [
            ("C1", "C", 4.7e-9, 0.10, None),    # E12 value
            ("R1", "R", 4.8e3, 0.05, None),     # off E24
            ("R2", "R", 10e3, 0.01, None),      # E96 value
            ("R3", "R", 9.2e3, 0.005, None),    # the E192 exception
            ("C9", "C", 4.8e-9, 0.5, None),     # looser than 20 %: not checked
            ("L1", "L", 0.1 * 33e-6, 0.05, None),  # E24 value with float noise
            ("C2", "C", 5.0e-9, 0.20, None),    # off E6
        ]
        got = check_preferred(parts)
        assert [d.message.split(" ", 1)[0] for d in got] == ["R1", "C2"]
        assert all(d.code == "netlist-154" for d in got)

    def test_empty(self) -> None:
        assert check_preferred([]) == []

    def test_bad_letter_names_the_part(self) -> None:
        with pytest.raises(ValueError, match="V1"):
            check_preferred([("V1", "V", 1.0, 0.05, None)])

    @pytest.mark.parametrize("value, tol", [(0.0, 0.05), (-4.7e-9, 0.05), (4.8e-9, 0.0)])
    def test_bad_value_or_tolerance_names_the_part(self, value: float, tol: float) -> None:
        with pytest.raises(ValueError, match="C5"):
            check_preferred([("C5", "C", value, tol, None)])
