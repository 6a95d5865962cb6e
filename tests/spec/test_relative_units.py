"""Percent, ppm and ppb are units of their own wherever a tolerance or a relative
quantity is accepted, and a suffix that cannot apply to a key is an error.

Before, ``center_tolerance = "20ppm"`` was read as 20 pico-hertz (the scale letter p
and unit letters "pm") and a crystal 100 Hz off a 10 MHz centre failed its limit.
"""

from __future__ import annotations

import math

import pytest

from netcheck.analyses.nominal import check_spec
from netcheck.exceptions import SpecError
from netcheck.result import Status
from netcheck.spec import load_spec
from netcheck.netlist.units import UnitError, parse_relative

L_H = 1e-3
F0_HZ = 10e6 + 100.0  # 10 ppm above the 10 MHz centre
# resonance of a series LC: f0 = 1/(2π√(LC)) (common practice, no source)
C_F = 1.0 / ((2 * math.pi * F0_HZ) ** 2 * L_H)

NETLIST = f"""Quillmere Instruments QX-10 reference resonator (motional arm model)
V1 in 0 AC 1
L1 in a {L_H!r}
C1 a out {C_F!r}
R1 out 0 50
.end
"""

SPEC = """title = "Quillmere QX-10 centre"
netlist = "qx10.cir"
source = "V1"
output = "out"
[sweep]
start = "9.99meg"
stop = "10.01meg"
points_per_decade = 20000
[[limits]]
kind = "resonance"
name = "centre"
center = "10meg"
center_tolerance = {tol}
"""


def _check(tmp_path, tol: str, body: str = SPEC):
    (tmp_path / "qx10.cir").write_text(NETLIST)
    (tmp_path / "qx10.toml").write_text(body.format(tol=tol))
    return check_spec(str(tmp_path / "qx10.toml"))


@pytest.mark.parametrize("tol, allowed_hz", [('"20ppm"', 200.0), ('"20 PPM"', 200.0),
                                             ('"0.002%"', 200.0), ('"20000ppb"', 200.0),
                                             ('"200"', 200.0), ('"5ppm"', 50.0)])
def test_centre_tolerance_in_relative_units(tmp_path, tol, allowed_hz):
    res = _check(tmp_path, tol)
    assert res.error is None, res.error
    (row,) = res.limits
    # the measured centre is the exact series resonance (closed form above)
    assert row.measured == pytest.approx(F0_HZ, rel=1e-12)
    assert row.margin == pytest.approx(allowed_hz - 100.0, abs=1e-3)
    assert row.status is (Status.PASS if allowed_hz > 100.0 else Status.FAIL)


def test_a_picohertz_tolerance_is_refused_as_a_typo(tmp_path):
    res = _check(tmp_path, '"20p"')
    assert res.status is Status.ERROR
    assert "center_tolerance" in res.error and "'20ppm'" in res.error


def test_relative_unit_on_an_absolute_key_is_an_error(tmp_path):
    (tmp_path / "qx10.cir").write_text(NETLIST)
    (tmp_path / "qx10.toml").write_text(SPEC.format(tol='"20ppm"').replace(
        'center = "10meg"', 'center = "10ppm"'))
    with pytest.raises(SpecError, match="center: '10ppm' is relative"):
        load_spec(str(tmp_path / "qx10.toml"))


@pytest.mark.parametrize("text, fraction", [("1%", 0.01), ("50ppm", 50e-6), ("10 ppb", 1e-8),
                                            (0.02, 0.02), ("0.5", 0.5)])
def test_parse_relative(text, fraction):
    # 1 ppm = 1e-6, 1 ppb = 1e-9 (SI Brochure, 9th ed., 2019, sec. 5.4.7, from memory)
    assert parse_relative(text) == pytest.approx(fraction, rel=1e-15)


@pytest.mark.parametrize("text", ["5p", "5k", "1m", "abc%", "nan%", "inf"])
def test_parse_relative_refuses_scale_suffixes_and_junk(text):
    with pytest.raises(UnitError):
        parse_relative(text, "tolerance")


def test_part_tolerance_in_ppm_and_a_scale_suffix_refused(tmp_path):
    (tmp_path / "qx10.cir").write_text(NETLIST)
    base = SPEC.format(tol='"20ppm"') + '[analysis]\nmode = ["worst_case"]\n'
    (tmp_path / "qx10.toml").write_text(base + '[tolerances]\ndefault = { L = "30ppm", '
                                        'C = "30ppm" }\n')
    res = check_spec(str(tmp_path / "qx10.toml"))
    assert res.error is None, res.error
    worst = [r for r in res.limits if r.name.startswith("worst case")]
    assert worst
    # f0 ∝ 1/√(LC): at the corners L and C both +30 ppm, f0 falls by ≈ 30 ppm = 300 Hz,
    # beyond the 200 Hz allowed (first-order expansion, common practice, no source)
    assert worst[0].status is Status.FAIL
    (tmp_path / "qx10.toml").write_text(base + '[tolerances]\ndefault = { L = "5p" }\n')
    res = check_spec(str(tmp_path / "qx10.toml"))
    assert res.status is Status.ERROR and "not a relative quantity" in res.error
