"""Plots draw the true curve: a crystal's peak and anti-resonance notch between grid points.

A 10 MHz crystal (Quillmere Instruments reference, Q ≈ 50 000 unloaded) between 50 Ω
ports, swept at 40 points per decade: its peak and its anti-resonance notch are far
narrower than the grid's spacing. The reference is the crystal model's closed-form
impedance, the usual equivalent circuit of a quartz resonator (the motional arm
Rm, Lm, Cm in series, in parallel with the holder capacitance C0):

    Z = (Rm + jωLm + 1/(jωCm)) ∥ 1/(jωC0),   H = RL / (RS + Z + RL)

evaluated here in numpy, independently of netcheck's solver.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest

from netcheck.analyses.nominal import check_spec
from netcheck.exceptions import SingularCircuitError
from netcheck.report import plot_base
from netcheck.measure import detail as plot_points
from netcheck.report.plot_gain import zoom_is_resonance, zoom_window
from netcheck.report.plot_response import spec_figures
from netcheck.result import Curves, MaskBand, SpecResult, Status

RS = RL = 50.0
RM, LM, CM, C0 = 12.5, 10e-3, 25.330296e-15, 1e-12
FS = 1.0 / (2.0 * math.pi * math.sqrt(LM * CM))   # series resonance, 10.000 MHz
FP = FS * math.sqrt(1.0 + CM / C0)                 # anti-resonance, ≈ 10.126 MHz

NETLIST = f"""Quillmere Instruments QX-10 reference crystal between 50 ohm ports
VIN in 0 AC 1
RS in a {RS!r}
RM a m1 {RM!r}
LM m1 m2 {LM!r}
CM m2 out {CM!r}
C0 a out {C0!r}
RL out 0 {RL!r}
.end
"""

SPEC = """title = "QX-10 reference crystal, 50 ohm ports"
netlist = "xtal.cir"
source = "VIN"
output = "out"

[sweep]
start = "1.2meg"
stop = "120meg"
points_per_decade = 40

[[limits]]
kind = "resonance"
center = "10meg"
center_tolerance = "0.01%"

[[limits]]
kind = "gain"
name = "rejection above resonance"
band = ["10.1meg", "10.2meg"]
max_db = -60
"""


def crystal_h(f: np.ndarray) -> np.ndarray:
    """H of the closed-form crystal model between the ports (module docstring)."""
    s = 2j * math.pi * np.asarray(f, dtype=float)
    arm = RM + s * LM + 1.0 / (s * CM)
    hold = 1.0 / (s * C0)
    z = arm * hold / (arm + hold)
    return RL / (RS + z + RL)


def crystal_db(f: np.ndarray) -> np.ndarray:
    """Gain, dB, of the closed-form crystal model."""
    return 20.0 * np.log10(np.abs(crystal_h(f)))


def true_extreme(f0: float, which) -> float:
    """The closed form's max or min within ±0.1 % of f0, on two nested fine grids."""
    f = np.linspace(f0 * (1 - 1e-3), f0 * (1 + 1e-3), 200_001)
    k = int(which(crystal_db(f)))
    fine = np.linspace(f[max(k - 2, 0)], f[min(k + 2, f.size - 1)], 20_001)
    g = crystal_db(fine)
    return float(g[which(g)])


TRUE_PEAK_DB = true_extreme(FS, np.argmax)     # ≈ −7.04 dB
TRUE_NOTCH_DB = true_extreme(FP, np.argmin)    # ≈ −111.9 dB


@pytest.fixture(scope="module")
def crystal_spec(tmp_path_factory) -> str:
    folder = tmp_path_factory.mktemp("crystal")
    (folder / "xtal.cir").write_text(NETLIST)
    (folder / "xtal.toml").write_text(SPEC)
    return str(folder / "xtal.toml")


@pytest.fixture(scope="module")
def checked(crystal_spec) -> SpecResult:
    result = check_spec(crystal_spec)
    assert result.curves is not None, result.error
    return result


@pytest.fixture(scope="module")
def detailed(checked) -> SpecResult:
    """The check's result: it stores the detail points the PDF plots draw through."""
    assert checked.curves.detail_hz is not None
    return checked


@pytest.fixture(scope="module")
def grid_only(crystal_spec) -> SpecResult:
    """The same check asked for no detail points, as ``check`` does when no PDF is wanted."""
    result = check_spec(crystal_spec, plot_detail=False)
    assert result.curves is not None, result.error
    return result


def gain_line(spec: SpecResult, title_word: str):
    """(axes, x, y) of the nominal gain line of the figure whose title holds ``title_word``."""
    for title, fig in spec_figures(spec):
        if title_word in title:
            ax = fig.axes[0]
            line = next(ln for ln in ax.lines if ln.get_label() == "nominal gain")
            return ax, np.asarray(line.get_xdata(), float), np.asarray(line.get_ydata(), float)
    raise AssertionError(f"no figure titled with {title_word!r}")


class TestCrystalDrawnTrue:
    def test_the_grid_alone_misses_both(self, checked):
        # reference: closed-form crystal model; the defect as reported (issue 11, defect 9):
        # the sweep grid alone holds neither the peak nor the notch
        g = checked.curves.gain_db
        assert g.max() < TRUE_PEAK_DB - 3.0
        assert g.min() > TRUE_NOTCH_DB + 40.0

    def test_plotted_peak_is_the_true_peak(self, detailed):
        # reference: closed-form crystal model, peak found on a 0.1 Hz grid in the test
        for word in ("whole sweep", "detail"):
            _, _, y = gain_line(detailed, word)
            assert np.nanmax(y) == pytest.approx(TRUE_PEAK_DB, abs=0.1)

    def test_plotted_notch_reaches_the_anti_resonance(self, detailed):
        # reference: closed-form crystal model, notch depth found on a fine grid in the test
        ax, _, y = gain_line(detailed, "whole sweep")
        assert np.nanmin(y) == pytest.approx(TRUE_NOTCH_DB, abs=1.0)
        assert ax.get_ylim()[0] < TRUE_NOTCH_DB  # and it is inside the axes, not cut off

    @pytest.mark.parametrize("word", ["whole sweep", "detail"])
    def test_no_segment_strays_from_the_curve(self, detailed, word):
        # reference: closed-form crystal model at the middle of every drawn segment (in
        # the axis' own scale: log frequency on the overview, linear on the zoom)
        ax, x, y = gain_line(detailed, word)
        lo, hi = ax.get_xlim()
        ends = (x[:-1] >= lo) & (x[1:] <= hi) & np.isfinite(y[:-1]) & np.isfinite(y[1:])
        a, b = x[:-1][ends], x[1:][ends]
        mid = np.sqrt(a * b) if ax.get_xscale() == "log" else 0.5 * (a + b)
        drawn = 0.5 * (y[:-1][ends] + y[1:][ends])
        assert ends.sum() > 20
        assert np.max(np.abs(crystal_db(mid) - drawn)) < 0.25

    def test_drawn_points_are_exact(self, detailed):
        # reference: closed-form crystal model at every drawn point off the grid
        c = detailed.curves
        assert c.detail_hz.size > 20
        assert np.allclose(c.detail_gain_db, crystal_db(c.detail_hz), atol=1e-6, rtol=0)

    def test_zoom_is_the_resonance(self, detailed):
        # reference: the half-power edges the check measured, ± 1.2 bandwidths
        lo, hi = zoom_window(detailed)
        f_low, f_high = detailed.measurement("f_low_hz"), detailed.measurement("f_high_hz")
        assert lo < f_low < FS < f_high < hi and zoom_is_resonance(detailed)

    def test_grid_only_result_still_draws_the_refined_peak(self, grid_only):
        # reference: closed-form crystal model; a result without detail points draws the
        # grid and the refined peak and edges the check measured
        assert grid_only.curves.detail_hz is None
        _, x, y = gain_line(grid_only, "whole sweep")
        assert np.nanmax(y) == pytest.approx(TRUE_PEAK_DB, abs=0.1)
        assert np.isin(grid_only.curves.frequency_hz, x).all()

    def test_skipping_the_detail_leaves_the_verdicts_alone(self, checked, grid_only):
        # the detail points serve the plots only: every limit reads the same without them
        assert [(r.status, r.measured) for r in grid_only.limits] == \
            [(r.status, r.measured) for r in checked.limits]

    def test_the_check_itself_stores_the_detail(self, checked):
        # reference: closed-form crystal model; the check's own result, no help from the test
        _, _, y = gain_line(checked, "whole sweep")
        assert np.nanmax(y) == pytest.approx(TRUE_PEAK_DB, abs=0.1)
        assert np.nanmin(y) == pytest.approx(TRUE_NOTCH_DB, abs=1.0)


class TestDetailPoints:
    def test_evaluations_are_bounded(self):
        # reference: closed-form crystal model, evaluated without derivatives; a budget
        # far below what the two features need is kept all the same
        grid = np.logspace(6, 8, 81)
        calls = []

        def at(f):
            calls.append(np.size(f))
            return crystal_h(f), None

        h, _ = at(grid)
        calls.clear()
        plot_points.detail_points(at, grid, h, [FS, FP], max_points=150)
        assert 0 < sum(calls) <= 150

    def test_a_point_that_cannot_be_solved_is_left_out(self):
        # reference: first-order low-pass H = 1 / (1 + j f/fc), fc = 1 kHz, whose solver
        # is made to refuse one frequency (as exactly on an undamped pole): no error, and
        # no point there
        fc, refused = 1e3, 1234.5
        grid = np.logspace(1, 5, 41)

        def at(f):
            f = np.asarray(f, float)
            if np.any(f == refused):
                raise SingularCircuitError(f"singular at {refused} Hz")
            return 1.0 / (1.0 + 1j * f / fc), None

        f, h, _ = plot_points.detail_points(at, grid, at(grid)[0], [refused, 2345.0])
        assert refused not in f and 2345.0 in f
        assert np.allclose(h, at(f)[0])

    def test_a_smooth_response_costs_next_to_nothing(self):
        # reference: first-order low-pass H = 1 / (1 + j f/fc), fc = 1 kHz, with its
        # exact derivative dH/df = −(j/fc) H²
        fc = 1e3
        grid = np.logspace(1, 5, 161)

        def at(f):
            f = np.asarray(f, float)
            h = 1.0 / (1.0 + 1j * f / fc)
            return h, -1j / fc * h * h

        h, dh = at(grid)
        f, hx, _ = plot_points.detail_points(at, grid, h, [fc], None, dh)
        assert f.size <= 5
        assert np.allclose(hx, at(f)[0])

    def test_phase_detail_follows_the_grid_branch(self):
        # reference: a pure delay H = exp(−j2πfT), T = 1 ms: phase −360·f·T degrees,
        # unwrapped on the grid; its detail points come wrapped to (−180°, 180°]
        T = 1e-3
        grid = np.linspace(100.0, 2000.0, 20)
        phase = -360.0 * grid * T
        fx = np.array([550.0, 1234.0])
        wrapped = (-360.0 * fx * T + 180.0) % 360.0 - 180.0
        curves = dataclasses.replace(Curves(grid, np.zeros(20), phase, np.full(20, T)),
                                     detail_hz=fx, detail_gain_db=np.zeros(2),
                                     detail_phase_deg=wrapped,
                                     detail_group_delay_s=np.full(2, T))
        f, p = plot_points.curve_points(curves, "phase_deg")
        assert np.allclose(p, -360.0 * f * T)
        f, g = plot_points.curve_points(curves, "gain_db")
        assert f.size == 22 and np.all(np.diff(f) > 0)


def synthetic(mask=(), measurements=()) -> SpecResult:
    """A flat response, 10 Hz to 100 kHz, with the given mask and measurements."""
    f = np.logspace(1, 5, 161)
    curves = Curves(f, np.zeros_like(f), np.zeros_like(f), np.zeros_like(f))
    return SpecResult("s.toml", "s.cir", "Quillmere flat stage", Status.PASS, (),
                      tuple(measurements), curves=curves, mask=tuple(mask))


class TestZoomShowsTheBandThatMatters:
    PASS = MaskBand("pass-band", 300.0, 3000.0, -1.0, 0.5)

    def test_a_narrow_peak_inside_the_pass_band(self):
        # reference: the pass-band mask band (300 Hz – 3 kHz) widened by 8 % of its
        # decades; the half-power edges of a 0.1 Hz-wide spur do not shrink it to a spot
        spec = synthetic([self.PASS], [("f_peak_hz", 1000.0), ("peak_gain_db", 0.2),
                                       ("f_low_hz", 999.95), ("f_high_hz", 1000.05)])
        pad = 0.08 * math.log10(10.0) + 0.01
        assert zoom_window(spec) == pytest.approx((300.0 / 10 ** pad, 3000.0 * 10 ** pad))
        assert not zoom_is_resonance(spec)

    def test_a_peak_away_from_the_pass_band(self):
        # reference: the pass-band mask band; a resonance at 40 kHz lies outside it
        spec = synthetic([self.PASS], [("f_peak_hz", 4e4), ("peak_gain_db", 3.0),
                                       ("f_low_hz", 3.9e4), ("f_high_hz", 4.1e4)])
        lo, hi = zoom_window(spec)
        assert hi < 3.9e4 and not zoom_is_resonance(spec)

    def test_a_resonance_holding_its_pass_band(self):
        # reference: half-power edges ± 1.2 bandwidths (as before: the pass-band lies inside)
        spec = synthetic([MaskBand("flat", 990.0, 1010.0, -1.0, 0.5)],
                         [("f_low_hz", 900.0), ("f_high_hz", 1100.0)])
        assert zoom_window(spec) == pytest.approx((660.0, 1340.0))
        assert zoom_is_resonance(spec)


class TestNarrowLinearAxis:
    def test_ticks_of_a_narrow_window_stay_distinct(self):
        # reference: a 600 Hz window at 10 MHz; 6 significant digits of MHz cannot tell
        # its 50 Hz ticks apart, offsets from a round centre can
        fig = plot_base.new_figure(2.0)
        ax = fig.add_axes((0.1, 0.2, 0.8, 0.7))
        lo, hi = 10e6 - 300.0, 10e6 + 300.0
        ax.set_xlim(lo, hi)
        label = plot_base.frequency_axis(ax, (lo, hi))
        ticks = [t for t in ax.get_xticks() if lo <= t <= hi]
        texts = [ax.xaxis.get_major_formatter()(t, i) for i, t in enumerate(ticks)]
        assert len(set(texts)) == len(texts) >= 4
        assert "10 MHz" in label or "10.000" in label

    def test_narrow_resonance_labels_tell_the_edges_apart(self):
        # reference: a 230.8 Hz bandwidth at 10 MHz (Q ≈ 43 330); 5 significant digits
        # print both edges as 10.000 MHz, log10(10 MHz / 230.8 Hz) + 2 digits do not
        from netcheck.report.plot_response import _digits, _q_text
        from netcheck.netlist.units import format_si
        digits = _digits(10e6, 230.8)
        assert digits == 7
        assert format_si(9.999884e6, "Hz", digits) != format_si(10.000115e6, "Hz", digits)
        assert _digits(40e3, 3327.8) == 5  # a Q of 12: as before
        assert _q_text(43330.2) == "43330" and _q_text(12.0199) == "12.02"
