"""Engineering notation in (units.parse_quantity, parse_value)."""

from __future__ import annotations

import math

import pytest
from hypothesis import given
from hypothesis import strategies as st

from netcheck.netlist.units import UnitError, parse_quantity, parse_value

# Scale letters of SPICE-style netlists (common practice, no source): f p n u m k meg g t,
# case-insensitive, so "m"/"M" is milli and "meg" mega. mil is a thousandth of an inch,
# and the inch is exactly 25.4 mm (international yard and pound agreement, 1959).
SCALES = [("f", -15), ("p", -12), ("n", -9), ("u", -6), ("m", -3), ("k", 3), ("meg", 6),
          ("g", 9), ("t", 12)]


def ref(digits: str, exponent: int) -> float:
    """Reference value: Python's float() of the decimal literal ``digits`` e ``exponent``.

    float() of a decimal string is correctly rounded (IEEE 754-2008 §5.12.2 conversion,
    implemented in CPython with David Gay's algorithm), so it is the exact answer.
    """
    return float(f"{digits}e{exponent}")


class TestScaleLetters:
    @pytest.mark.parametrize("suffix,exponent", SCALES)
    def test_each_suffix_in_both_cases(self, suffix, exponent):
        assert parse_quantity(f"3{suffix}") == ref("3", exponent)
        assert parse_quantity(f"3{suffix.upper()}") == ref("3", exponent)

    def test_m_is_milli_and_meg_is_mega(self):
        # SPICE convention (common practice, no source): M is milli, not mega.
        assert parse_quantity("1m") == parse_quantity("1M") == 1e-3
        assert parse_quantity("1meg") == parse_quantity("1MEG") == parse_quantity("1Meg") == 1e6

    def test_mil(self):
        # 1 mil = 0.001 in = 25.4 µm exactly (inch defined as 25.4 mm, 1959)
        assert parse_quantity("1mil") == pytest.approx(25.4e-6, rel=1e-15)
        assert parse_quantity("10mil") == pytest.approx(254e-6, rel=1e-15)

    def test_micro_sign(self):
        assert parse_quantity("4.7µ") == ref("4.7", -6)

    def test_plain_numbers_and_exponents(self):
        assert parse_quantity("100") == 100.0
        assert parse_quantity("-2.5") == -2.5
        assert parse_quantity("+2") == 2.0
        assert parse_quantity(".5") == 0.5
        assert parse_quantity("5.") == 5.0
        assert parse_quantity("1e3") == 1000.0
        assert parse_quantity("1.5E-3") == 1.5e-3
        # exponent and scale letter together: 1e3 k = 1e6
        assert parse_quantity("1e3k") == 1e6

    @pytest.mark.parametrize("text,value", [
        ("10uF", 1e-05), ("1kOhm", 1000.0), ("1kohm", 1000.0), ("4.7nF", 4.7e-9),
        ("100pF", 1e-10), ("2.2mH", 2.2e-3), ("1megohm", 1e6), ("50ohm", 50.0),
        ("10V", 10.0), ("3Hz", 3.0), ("1mils", 25.4e-6),
    ])
    def test_unit_letters_after_the_scale_are_ignored(self, text, value):
        # expected values are the decimal literals themselves (Python float(), correctly
        # rounded); the unit letters carry no scale (common practice, no source)
        assert parse_quantity(text) == pytest.approx(value, rel=1e-15)
        if "mil" not in text:
            assert parse_quantity(text) == value


class TestExactness:
    # The value must be the correctly rounded decimal, not mantissa * 1e-6 (which is
    # 1.0000000000000002e-05 for 10u in binary floating point).
    @pytest.mark.parametrize("text,value", [
        ("10u", 1e-05), ("4k7", 4700.0), ("2n2", 2.2e-09), ("1.5k", 1500.0),
        ("100p", 1e-10), ("3.3n", 3.3e-09), ("0.1u", 1e-07), ("47n", 4.7e-08),
        ("6.8p", 6.8e-12), ("1.1meg", 1.1e6), ("15f", 1.5e-14),
    ])
    def test_exact_decimal(self, text, value):
        assert parse_quantity(text) == value

    def test_naive_product_would_be_inexact(self):
        # sanity of the premise above: the naive product really differs
        assert 10 * 1e-6 != 1e-05
        assert parse_quantity("10u") == 1e-05

    @given(st.integers(min_value=0, max_value=10**12), st.integers(min_value=0, max_value=6),
           st.sampled_from(SCALES))
    def test_any_decimal_with_any_suffix(self, whole, frac_digits, scale):
        suffix, exponent = scale
        digits = str(whole)
        if frac_digits:
            digits = digits + "." + str(whole % 10**frac_digits).zfill(frac_digits)
        assert parse_quantity(digits + suffix) == ref(digits, exponent)


class TestLetterAndDigitCode:
    # IEC 60062:2016 §4 letter-and-digit code (from memory): the scale letter stands
    # where the decimal point goes; R (and E) mark units.
    @pytest.mark.parametrize("text,value", [
        ("4k7", 4700.0), ("4K7", 4700.0), ("2n2", 2.2e-9), ("4R7", 4.7), ("4r7", 4.7),
        ("1k5", 1500.0), ("6p8", 6.8e-12), ("3u3", 3.3e-6), ("1g2", 1.2e9),
        ("0R22", 0.22), ("4k7Ohm", 4700.0), ("2n2F", 2.2e-9), ("10k25", 10250.0),
    ])
    def test_code(self, text, value):
        assert parse_quantity(text) == value

    @pytest.mark.parametrize("text", ["1M5", "1m5", "4M7", "2m2F"])
    def test_m_code_is_refused_with_the_reason(self, text):
        # IEC 60062 reads M as mega; SPICE reads m/M as milli. The rule decided for
        # netcheck: refuse rather than guess, and say why.
        with pytest.raises(UnitError) as info:
            parse_quantity(text)
        msg = str(info.value)
        assert "ambiguous" in msg and "mega" in msg and "milli" in msg
        assert text[0] + "." + text[2] + "meg" in msg

    def test_negative_code(self):
        assert parse_quantity("-4k7") == -4700.0

    def test_code_with_decimal_point_is_refused(self):
        with pytest.raises(UnitError, match="letter-and-digit"):
            parse_quantity("1.5k2")

    @given(st.integers(min_value=0, max_value=999), st.integers(min_value=0, max_value=999),
           st.sampled_from([("k", 3), ("n", -9), ("p", -12), ("u", -6), ("g", 9), ("r", 0)]))
    def test_code_equals_decimal(self, whole, frac, scale):
        letter, exponent = scale
        assert parse_quantity(f"{whole}{letter}{frac}") == ref(f"{whole}.{frac}", exponent)


class TestRefused:
    @pytest.mark.parametrize("text", ["", "k", "abc", "--1", ".", "e3", "1_000", "1meg5",
                                      "1k-", "1 k", "1k.5", "inf", "nan", "0x10"])
    def test_not_a_quantity(self, text):
        with pytest.raises(UnitError):
            parse_quantity(text)

    @pytest.mark.parametrize("text", ["1e400", "1e999999k", "1e99999999999999999999k",
                                      "9" * 400 + "t"])
    def test_too_large(self, text):
        # beyond the largest double (about 1.8e308, IEEE 754 binary64)
        with pytest.raises(UnitError, match="too large"):
            parse_quantity(text)

    def test_unit_error_is_a_value_error(self):
        assert issubclass(UnitError, ValueError)

    def test_long_token_gives_a_bounded_message(self):
        with pytest.raises(UnitError) as info:
            parse_quantity("1" + "x" * 100_000 + "!")
        assert len(str(info.value)) < 600 and "more characters" in str(info.value)


class TestSecondScaleSuffix:
    # The rule decided for netcheck (units.py docstring): one scale suffix, then unit
    # letters that are ignored, unless they start with a second scale suffix and are
    # not a unit word. Before, "1kk" was silently read as 1k.
    @pytest.mark.parametrize("text,second,first", [
        ("1kk", "k", "k"), ("1uu", "u", "u"), ("1megk", "k", "meg"), ("1kmeg", "meg", "k"),
        ("1KK", "K", "K"), ("2.2nn", "n", "n"), ("1µµ", "µ", "µ"), ("1kmil", "mil", "k"),
        ("1kkHz", "k", "k"), ("1mm", "m", "m"), ("3tg", "g", "t"), ("1e3kp", "p", "k"),
        ("4k7k", "k", "k"), ("2n2p", "p", "n"), ("4R7meg", "meg", "R"),
    ])
    def test_refused_and_named(self, text, second, first):
        with pytest.raises(UnitError) as info:
            parse_quantity(text)
        assert str(info.value) == (f"'{text}': '{second}' after the scale suffix '{first}' is "
                                   "a second scale suffix; write one (1meg, not 1kk)")

    @pytest.mark.parametrize("text,value", [
        # farad written after a scale letter, in either case, and its old abbreviation
        ("1fF", 1e-15), ("10pf", 1e-11), ("10uF", 1e-05), ("10uFd", 1e-05),
        ("47nFarad", 4.7e-08), ("1mmho", 1e-03), ("10kHz", 10000.0), ("1kOhm", 1000.0),
        ("2kΩ", 2000.0), ("1megohm", 1e6), ("5mA", 5e-3), ("3V", 3.0), ("1uH", 1e-6),
        ("10F", 1e-14), ("1mils", 25.4e-6),
    ])
    def test_unit_words_still_follow_a_scale(self, text, value):
        # values are the decimal literals (Python float(), correctly rounded); the units
        # carry no scale (common practice, no source)
        assert parse_quantity(text) == pytest.approx(value, rel=1e-15)

    def test_in_a_netlist_it_is_positioned(self):
        from netcheck import NetcheckError, read_netlist

        with pytest.raises(NetcheckError) as info:
            read_netlist("t\nV1 in 0 AC 1\nR1 in 0 {2*1kk}\n")
        assert (info.value.code, str(info.value.span)) == ("netlist-101", "<text>:3:12")


class TestParseValue:
    def test_numbers_and_strings(self):
        assert parse_value(2.5) == 2.5
        assert parse_value(3) == 3.0
        assert parse_value("38k") == 38000.0

    @pytest.mark.parametrize("bad", [True, None, [1], math.inf, math.nan])
    def test_refused(self, bad):
        with pytest.raises(UnitError):
            parse_value(bad)
