"""Whole pipeline (spec file + netlist → check_spec → SpecResult) against closed forms.

Each test writes a netlist and a spec into tmp_path and checks what check_spec measured
against a formula (or scipy.signal) computed here, independently of netcheck.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
from scipy import signal

from circuits import butterworth_ladder, chebyshev_g, ladder_netlist
from netcheck.analyses.nominal import check_spec
from netcheck.result import SpecResult, Status

TWO_PI = 2 * math.pi
REL = 1e-9


def run(tmp_path: Path, netlist: str, spec: str, name: str = "q") -> SpecResult:
    """Write ``name``.cir and ``name``.toml (the spec names its netlist) and check them."""
    (tmp_path / f"{name}.cir").write_text(netlist)
    path = tmp_path / f"{name}.toml"
    path.write_text(f'netlist = "{name}.cir"\nsource = "V1"\n' + spec)
    result = check_spec(str(path))
    assert result.error is None, result.error
    return result


def only(result: SpecResult):
    assert len(result.limits) == 1
    return result.limits[0]


class TestSeriesRLC:
    """V1 drives L, C and R in series; the output is across R: H = R / (R + j(wL - 1/(wC)))."""

    R, L, C = 25.0, 4.7e-3, 3.3e-9
    NETLIST = (f"Quillmere Instruments series RLC band-pass\nV1 in 0 AC 1\nL1 in a {L!r}\n"
               f"C1 a out {C!r}\nR1 out 0 {R!r}\n.end\n")
    SPEC = ('output = "out"\n[sweep]\nstart = "1k"\nstop = "10meg"\npoints_per_decade = 50\n'
            '[[limits]]\nkind = "resonance"\ncenter = "40.4k"\ncenter_tolerance = "1%"\n'
            "q = [45, 50]\nbandwidth = [800, 900]\n")

    def closed_forms(self) -> dict[str, float]:
        # Textbook series resonance: w0 = 1/sqrt(LC); the half-power edges solve
        # |wL - 1/(wC)| = R, i.e. w = -+R/2L + sqrt((R/2L)^2 + 1/LC); so BW = R/L,
        # w_low * w_high = 1/LC (geometric centre = f0) and Q = w0 L / R.
        r, l, c = self.R, self.L, self.C
        w0 = 1 / math.sqrt(l * c)
        a = r / (2 * l)
        w_low, w_high = -a + math.sqrt(a * a + w0 * w0), a + math.sqrt(a * a + w0 * w0)
        return {"f_peak_hz": w0 / TWO_PI, "f_low_hz": w_low / TWO_PI,
                "f_high_hz": w_high / TWO_PI, "bandwidth_hz": r / l / TWO_PI,
                "q": w0 * l / r, "f_center_hz": w0 / TWO_PI}

    def test_measurements(self, tmp_path):
        result = run(tmp_path, self.NETLIST, self.SPEC)
        got = dict(result.measurements)
        for key, value in self.closed_forms().items():
            assert math.isclose(got[key], value, rel_tol=REL), key
        assert abs(got["peak_gain_db"]) < 1e-9  # |H(j w0)| = 1

    def test_limit_values_and_margins(self, tmp_path):
        result = run(tmp_path, self.NETLIST, self.SPEC)
        want = self.closed_forms()
        by_name = {r.name: r for r in result.limits}
        assert set(by_name) == {"resonance: centre", "resonance: Q", "resonance: bandwidth"}
        centre, q, bw = (by_name[f"resonance: {k}"] for k in ("centre", "Q", "bandwidth"))
        assert math.isclose(centre.measured, want["f_center_hz"], rel_tol=REL)
        assert math.isclose(centre.margin, 404.0 - abs(want["f_center_hz"] - 40.4e3),
                            rel_tol=1e-6)
        assert math.isclose(q.measured, want["q"], rel_tol=REL)
        assert math.isclose(q.margin, min(want["q"] - 45, 50 - want["q"]), rel_tol=1e-6)
        assert math.isclose(bw.measured, want["bandwidth_hz"], rel_tol=REL)
        assert result.status is Status.PASS


class TestButterworth:
    # |H(j w)|^2 = H0^2 / (1 + (w/wc)^(2n)) (Butterworth 1930; any filter handbook), so the
    # gain is half the pass-band power exactly at the design corner wc.
    FC = 12.5e3

    @pytest.mark.parametrize("order", [3, 5, 8])
    def test_corner_is_the_design_corner(self, tmp_path, order):
        text, out = butterworth_ladder(order, self.FC)
        spec = (f'output = "{out}"\n[sweep]\nstart = "100"\nstop = "1meg"\n'
                'points_per_decade = 20\n'
                # reference: the peak of the sweep (at 100 Hz, 1e-2n below H0^2: negligible)
                '[[limits]]\nkind = "corner"\nside = "high"\nrange = ["12k", "13k"]\n'
                # reference: the pass-band level itself, 20 log10(1/2) for equal terminations
                f'[[limits]]\nkind = "corner"\nreference_db = {20 * math.log10(0.5)!r}\n'
                'range = ["12k", "13k"]\n')
        result = run(tmp_path, text, spec)
        assert [r.status for r in result.limits] == [Status.PASS, Status.PASS]
        for lim in result.limits:
            assert math.isclose(lim.measured, self.FC, rel_tol=REL)
            assert math.isclose(lim.margin, 500.0, rel_tol=1e-6)


def chebyshev_ladder(order: int, ripple_db: float, fc: float, r: float = 50.0
                     ) -> tuple[str, str]:
    """Doubly terminated Chebyshev type I LC ladder (odd order: equal terminations);
    prototype values from :func:`circuits.chebyshev_g`, checked against scipy.signal."""
    assert order % 2 == 1
    return ladder_netlist(chebyshev_g(order, ripple_db), fc, r,
                          "Quillmere Instruments Chebyshev ladder")


class TestChebyshev:
    FC, FS = 10e3, 25e3

    @pytest.mark.parametrize("order, ripple_db", [(3, 1.0), (5, 0.5), (7, 0.1)])
    def test_ripple_and_stop_band(self, tmp_path, order, ripple_db):
        text, out = chebyshev_ladder(order, ripple_db, self.FC)
        spec = (f'output = "{out}"\n[sweep]\nstart = "100"\nstop = "1meg"\n'
                'points_per_decade = 20\n'
                f'[[limits]]\nkind = "ripple"\nband = ["100", "10k"]\nmax_db = {ripple_db}\n'
                '[[limits]]\nkind = "gain"\nname = "stop-band"\nband = ["25k", "30k"]\n'
                'max_db = -10\nreference = "peak"\n')
        result = run(tmp_path, text, spec)
        ripple, stop = result.limits
        # The equal-ripple pass-band swings between the matched level 1/2 and
        # 1/(2 sqrt(1 + eps^2)), so the ripple is the design ripple.
        assert math.isclose(ripple.measured, ripple_db, rel_tol=REL)
        # Stop-band attenuation re the pass-band peak: 10 log10(1 + eps^2 Tn^2(w/wc)),
        # Tn(x) = cosh(n acosh x) for x > 1 (Williams & Taylor, Electronic Filter Design
        # Handbook, ch. 2); the gain falls monotonically there, so the band max is at FS.
        eps2 = 10 ** (ripple_db / 10) - 1
        tn = math.cosh(order * math.acosh(self.FS / self.FC))
        attenuation = 10 * math.log10(1 + eps2 * tn * tn)
        assert math.isclose(-stop.measured, attenuation, rel_tol=REL)
        assert stop.at_hz == self.FS
        # Independent reference: scipy.signal.cheby1(analog=True) + freqs, normalised
        # to its pass-band peak (odd order: 1 at DC).
        b, a = signal.cheby1(order, ripple_db, TWO_PI * self.FC, analog=True)
        _, h = signal.freqs(b, a, worN=[TWO_PI * self.FS])
        assert math.isclose(20 * math.log10(abs(h[0])), -attenuation, rel_tol=1e-9)
        # matched pass-band peak of the doubly terminated ladder: exactly 1/2
        assert math.isclose(result.measurement("peak_gain_db"), 20 * math.log10(0.5),
                            rel_tol=1e-9)


class TestNarrowPeak:
    """A high-Q section whose -3 dB width is far below the grid spacing."""

    # V1 feeds R1 (output across it) through RP in parallel with a series L-C:
    # H = R1 / (R1 + Zs), Zs = RP || (jwL + 1/(jwC)). Re(Zs) >= 0, and Zs = 0 at
    # w0 = 1/sqrt(LC), so the true maximum is |H| = 1 (0 dB) exactly at f0; far from f0
    # Zs -> RP and the floor is 20 log10(R1/(R1 + RP)) = -6.02 dB. (Algebra by hand.)
    R1 = RP = 1.0
    L, C = 10e-3, 2.5e-9
    F0 = 1 / (TWO_PI * math.sqrt(L * C))  # 31.83 kHz, between the grid points 25.1k, 39.8k
    NETLIST = (f"Quillmere Instruments peaking section\nV1 in 0 AC 1\nRP in out {RP!r}\n"
               f"L1 in a {L!r}\nC1 a out {C!r}\nR1 out 0 {R1!r}\n.end\n")
    SPEC = ('output = "out"\n[sweep]\nstart = "1k"\nstop = "1meg"\npoints_per_decade = 5\n'
            '[[limits]]\nkind = "gain"\nband = ["1k", "1meg"]\nmax_db = -3\n')

    def closed_form_db(self, f: np.ndarray) -> np.ndarray:
        w = TWO_PI * f
        zb = 1j * w * self.L + 1 / (1j * w * self.C)
        zs = self.RP * zb / (self.RP + zb)
        return 20 * np.log10(np.abs(self.R1 / (self.R1 + zs)))

    def test_peak_between_grid_points_is_caught(self, tmp_path):
        result = run(tmp_path, self.NETLIST, self.SPEC)
        grid = result.curves.frequency_hz
        assert grid.size == 16
        # the spike is invisible on the grid: every sample sits near the -6 dB floor
        assert self.closed_form_db(grid).max() < -6.0
        # -3 dB width (about 11 Hz here) against the grid step near f0 (about 15 kHz)
        fine = np.linspace(self.F0 * 0.999, self.F0 * 1.001, 20001)
        above = fine[self.closed_form_db(fine) > -3]
        assert above[-1] - above[0] < 1e-3 * np.diff(grid).max()
        lim = only(result)
        assert lim.status is Status.FAIL
        assert abs(lim.measured) < 1e-9  # the true peak, 0 dB
        assert math.isclose(lim.at_hz, self.F0, rel_tol=1e-7)
        assert math.isclose(lim.margin, -3.0, rel_tol=1e-9)

    def test_peak_on_a_slope_with_a_coarse_grid(self, tmp_path):
        # RP replaced by an inductor LP: a low-pass floor falling from 1.6 kHz, with the
        # same spike to 0 dB at f0 (Zs = jwLP || 0 = 0 there) and a notch just below it.
        # The derivative is negative at both neighbouring grid points, so only the seeds
        # from the circuit's poles find the spike (16 points: a direct-solve sweep).
        netlist = self.NETLIST.replace(f"RP in out {self.RP!r}", "LP in out 100u")
        result = run(tmp_path, netlist, self.SPEC.replace('["1k", "1meg"]', '["10k", "1meg"]')
                     .replace("-3", "-10"))
        assert dict(result.sweep)["points"] == 16
        lim = only(result)
        assert abs(lim.measured) < 1e-9
        assert math.isclose(lim.at_hz, self.F0, rel_tol=1e-7)
        assert lim.status is Status.FAIL


class TestErrorResults:
    def test_check_spec_never_raises_on_bad_input(self, tmp_path):
        path = tmp_path / "q.toml"
        path.write_text('netlist = "absent.cir"\nsource = "V1"\noutput = "out"\n'
                        '[sweep]\nstart = 1\nstop = 10\n')
        result = check_spec(str(path))
        assert result.status is Status.ERROR and result.limits == ()
        assert "netlist-104" in result.error and result.cautions[0].code == "netlist-104"

    def test_measurement_that_cannot_be_made_is_an_error_limit(self, tmp_path):
        # a resonance limit on a monotone RC low-pass: no peak inside the sweep
        netlist = "Quillmere Instruments RC\nV1 in 0 AC 1\nR1 in out 1k\nC1 out 0 159n\n.end\n"
        spec = ('output = "out"\n[sweep]\nstart = 10\nstop = "100k"\n'
                '[[limits]]\nkind = "resonance"\nq = [1, 2]\n')
        result = run(tmp_path, netlist, spec)
        lim = only(result)
        assert lim.status is Status.ERROR and lim.measured is None
        assert "no resonance peak" in lim.message
        assert result.status is Status.ERROR and result.error is None
