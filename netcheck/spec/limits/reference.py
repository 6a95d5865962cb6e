"""What a relative limit is measured against: a gain reference and a measured frequency.

:class:`GainReference` is the pass-band level a gain (or a corner level) is stated
relative to: the stimulus (``absolute``), the peak of the sweep, the gain at one
frequency, or the mean, highest or lowest gain over a reference band. :class:`Anchor`
is a measured frequency a limit's own frequency is a multiple of: a corner or a centre,
found where the gain falls a level below that reference. Each gives its nominal value,
its value per Monte Carlo sample and its sensitivities, so that every limit stated
relative to them is judged alike in the nominal check, Monte Carlo and the worst case.

The mean gain over a band is the average of the gain in dB over log-frequency,
(1/ln(f₂/f₁)) ∫ G dln f, by composite Gauss–Legendre quadrature
(Abramowitz & Stegun, Handbook of Mathematical Functions, 1964, 25.4.29).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from .base import Probe, band_text
from ..reader import SpecReader, Sweep, shown_value
from ...measure.measurements import HALF_POWER_DB, Extremum, MeasurementFailure, gain_db
from ...netlist.units import format_eng, format_si

if TYPE_CHECKING:  # pragma: no cover
    from ...analyses.sample_probe import BatchProbe
    from ...mna.sensitivity import AdjointSensitivity

__all__ = ["GainReference", "Anchor", "REFERENCE_KEYS", "ANCHOR_KEYS", "MEASURED",
           "MEASURED_REFERENCE_KEYS", "spot_frequency", "mean_nodes", "edges",
           "edges_batch", "edges_derivative", "level_words"]

#: dB per neper of |H|: 20/ln 10
_DB = 20.0 / math.log(10.0)
#: Gauss–Legendre panels per decade of the reference band and nodes per panel
_PANELS_PER_DECADE, _NODES = 16, 8

REFERENCE_KEYS: dict[str, str] = {
    "reference_band": "[start, stop], Hz: the band of reference = 'mean', 'max' or 'min'",
    "reference_at": "frequency, Hz, of the reference gain (reference = 'at', implied)",
}

#: the references a level measured from the pass-band may take (not 'absolute')
MEASURED = ("peak", "mean", "max", "min", "at")

#: the reference keys of the kinds that measure a level below it (corner, bandwidth,
#: shape factor): the peak by default
MEASURED_REFERENCE_KEYS: dict[str, str] = {
    "reference": "the measured reference: 'peak' (default), 'at' (the gain at "
                 "reference_at), 'mean', 'max' or 'min' (over reference_band)",
    **REFERENCE_KEYS,
}

ANCHOR_KEYS: dict[str, str] = {
    "at_multiple": "a spot frequency as a multiple of the measured anchor (e.g. 2)",
    "band_multiple": "[from, to] multiples of the measured anchor: a band that moves with "
                     "it (e.g. [2, 10])",
    "anchor": "'corner' (default) or 'centre': the measured frequency the multiples take",
    "anchor_level_db": "the anchor's level below the reference, dB (default: half-power)",
    "anchor_side": "corner anchor: 'auto', 'high' (low-pass edge) or 'low' (high-pass edge)",
}

_WORDS = {"peak": "the peak gain", "mean": "the mean gain", "max": "the highest gain",
          "min": "the lowest gain"}


def mean_nodes(band: tuple[float, float]) -> tuple[np.ndarray, np.ndarray]:
    """Frequencies (Hz) and weights (summing to 1) of the mean over ``band`` in log f."""
    lo, hi = math.log(band[0]), math.log(band[1])
    panels = max(4, math.ceil(_PANELS_PER_DECADE * (hi - lo) / math.log(10.0)))
    x, w = np.polynomial.legendre.leggauss(_NODES)
    edges = np.linspace(lo, hi, panels + 1)
    half = 0.5 * np.diff(edges)
    mid = 0.5 * (edges[:-1] + edges[1:])
    nodes = (mid[:, None] + half[:, None] * x[None, :]).ravel()
    weights = (half[:, None] * w[None, :]).ravel() / (hi - lo)
    return np.exp(nodes), weights


def spot_frequency(rd: SpecReader, key: str, sweep: Sweep, code: str) -> float | None:
    """A frequency (Hz) at ``key`` that must lie inside the sweep; None if not given."""
    at = rd.number(key, positive=True)
    if at is None:
        return None
    tol = 1e-9
    if not sweep.start_hz * (1 - tol) <= at <= sweep.stop_hz * (1 + tol):
        rd.fail(key, f"{shown_value(at)} Hz is outside the sweep {shown_value(sweep.start_hz)}"
                f"–{shown_value(sweep.stop_hz)} Hz", code=code)
    return min(max(at, sweep.start_hz), sweep.stop_hz)


@dataclass(frozen=True, slots=True)
class GainReference:
    """The level a relative gain is stated against.

    ``kind``: 'absolute' (dB re the stimulus), 'peak' (the sweep's peak), 'at' (the gain
    at ``at_hz``), 'mean', 'max' or 'min' (over ``band``), or 'fixed' (``fixed_db``, a
    stated number: the corner kind's ``reference_db``).
    """

    kind: str = "absolute"
    band: tuple[float, float] | None = None
    at_hz: float | None = None
    fixed_db: float | None = None

    @classmethod
    def read(cls, rd: SpecReader, sweep: Sweep, default: str,
             allowed: tuple[str, ...] = ("absolute", "peak", "mean", "max", "min", "at")
             ) -> "GainReference":
        """From the keys ``reference``, ``reference_band`` and ``reference_at``."""
        at = spot_frequency(rd, "reference_at", sweep, "spec-260")
        implied = "at" if at is not None else default
        kind = rd.choice("reference", allowed, implied)
        band = rd.band("reference_band", sweep, required=False)
        if kind == "at" and at is None:
            rd.fail("reference_at", "reference = 'at' needs reference_at, the frequency "
                    "of the reference gain", code="spec-260")
        if kind != "at" and at is not None:
            rd.fail("reference_at", f"given with reference = {kind!r}; reference_at "
                    "goes with reference = 'at' (or leave reference out)", code="spec-260")
        if kind in ("mean", "max", "min") and band is None:
            rd.fail("reference_band", f"reference = {kind!r} needs reference_band, the "
                    "band its gain is taken over (e.g. the pass-band)", code="spec-260")
        if kind not in ("mean", "max", "min") and band is not None:
            rd.fail("reference_band", "reference_band goes with reference = 'mean', 'max' "
                    f"or 'min', not {kind!r}", code="spec-260")
        return cls(kind, band, at)

    @property
    def relative(self) -> bool:
        """Whether gains are stated relative to a measured level (not re the stimulus)."""
        return self.kind != "absolute"

    def words(self) -> str:
        """``the mean gain over 10 Hz–20.00 kHz``; '' for absolute."""
        if self.kind == "absolute":
            return ""
        if self.kind == "fixed":
            return f"{self.fixed_db:g} dB"
        if self.kind == "at":
            return f"the gain at {format_si(self.at_hz, 'Hz', 5)}"
        if self.band is not None:
            return f"{_WORDS[self.kind]} over {band_text(self.band)}"
        return _WORDS[self.kind]

    def note(self, measured: Extremum) -> str:
        """The line the reports show under a result stated against a measured level
        other than the peak: ``re the lowest gain over 10 Hz–15 kHz, 0.000 dB at 10 Hz``."""
        if self.kind in ("absolute", "peak", "fixed"):
            return ""
        where = "" if self.kind in ("at", "mean") else \
            f" at {format_si(measured.frequency_hz, 'Hz', 5)}"
        return f"relative to {self.words()}: {format_eng(measured.value, 'dB')}{where}"

    # nominal --------------------------------------------------------------------
    def measure(self, probe: Probe) -> Extremum:
        """The reference gain (dB) and where it was taken (the band's geometric centre
        for a mean); 0 dB for absolute. Raises MeasurementFailure."""
        if self.kind == "absolute":
            return Extremum(math.nan, 0.0)
        if self.kind == "fixed":
            return Extremum(math.nan, float(self.fixed_db))
        if self.kind == "peak":
            return probe.peak()
        if self.kind == "at":
            return Extremum(self.at_hz, float(gain_db(probe.curve, self.at_hz)))
        if self.kind == "mean":
            f, w = mean_nodes(self.band)
            value = float(w @ gain_db(probe.curve, f))
            if not math.isfinite(value):
                raise MeasurementFailure(
                    f"the mean gain over {band_text(self.band)} is not finite (a transmission "
                    "zero in the reference band): choose a reference band without one")
            return Extremum(math.sqrt(self.band[0] * self.band[1]), value)
        vmin, vmax = probe.extremes("gain_db", *self.band)
        return vmax if self.kind == "max" else vmin

    def corner_reference(self, probe: Probe) -> float | None:
        """The ``reference_db`` to hand a corner search: None for the peak (the search's
        own default, so the measurement is shared), else the measured level."""
        if self.kind in ("peak", "absolute"):
            return None
        return self.measure(probe).value

    # Monte Carlo ----------------------------------------------------------------
    def batch(self, bp: "BatchProbe") -> np.ndarray | float:
        """The reference gain per sample, dB (a scalar when it does not vary)."""
        if self.kind == "absolute":
            return 0.0
        if self.kind == "fixed":
            return float(self.fixed_db)
        if self.kind == "peak":
            return bp.peak().value
        S = bp.ss.S
        if self.kind == "at":
            return bp.ss.gain_db(np.full((S, 1), self.at_hz))[:, 0]
        if self.kind == "mean":
            f, w = mean_nodes(self.band)
            return bp.ss.gain_db(np.ascontiguousarray(np.broadcast_to(f, (S, f.size)))) @ w
        vmin, vmax = bp.band_extremes("gain_db", *self.band)
        return (vmax if self.kind == "max" else vmin).value

    def corner_batch(self, bp: "BatchProbe") -> np.ndarray | float | None:
        """Per-sample ``reference_db`` for the corner search (None: the peak)."""
        if self.kind in ("peak", "absolute"):
            return None
        if self.kind == "fixed":
            return float(self.fixed_db)
        return np.broadcast_to(np.asarray(self.batch(bp), float), (bp.ss.S,)).copy()

    # worst case -----------------------------------------------------------------
    def derivative(self, probe: Probe, adj: "AdjointSensitivity") -> np.ndarray | float:
        """∂(reference dB)/∂ln p per part (0 for a fixed level)."""
        if self.kind in ("absolute", "fixed"):
            return 0.0
        if self.kind == "mean":
            f, w = mean_nodes(self.band)
            return w @ (_DB * adj.log_derivatives(f).w_p.real)
        return adj.extreme("gain_db", self.measure(probe).frequency_hz)


@dataclass(frozen=True, slots=True)
class Anchor:
    """A measured frequency other frequencies are stated as multiples of.

    ``kind`` 'corner': the edge where the gain falls ``level_db`` below the reference
    (on ``side``, as the corner kind finds it); 'centre': the geometric mean of the two
    edges at that level either side of the peak.
    """

    kind: str = "corner"
    level_db: float | None = None
    side: str = "auto"

    @classmethod
    def read(cls, rd: SpecReader) -> "Anchor":
        kind = rd.choice("anchor", ("corner", "centre", "center"), "corner")
        level = rd.number("anchor_level_db", positive=True)
        side = rd.choice("anchor_side", ("auto", "high", "low"), "auto")
        if kind != "corner" and rd.has("anchor_side"):
            rd.fail("anchor_side", "anchor_side goes with anchor = 'corner'; a centre is "
                    "taken between the edges on both sides", code="spec-261")
        return cls("centre" if kind == "center" else kind, level, side)

    def words(self, ref: GainReference) -> str:
        level = "half-power" if self.level_db is None else f"{self.level_db:g} dB"
        below = ref.words() if ref.relative else "the peak gain"
        what = "corner" if self.kind == "corner" else "centre (√(f_low·f_high))"
        return f"the measured {what}, {level} below {below}"

    def _drop(self) -> float:
        return HALF_POWER_DB if self.level_db is None else self.level_db

    def measure(self, probe: Probe, ref: GainReference) -> float:
        """The anchor frequency, Hz. Raises MeasurementFailure."""
        r = ref.corner_reference(probe)
        if self.kind == "corner":
            return probe.corner(self.level_db, r, self.side)
        low = probe.corner(self.level_db, r, "low")
        high = probe.corner(self.level_db, r, "high")
        return math.sqrt(low * high)

    def batch(self, bp: "BatchProbe", ref: GainReference) -> np.ndarray:
        r = ref.corner_batch(bp)
        if self.kind == "corner":
            return bp.corner(self.level_db, r, self.side)
        return np.sqrt(bp.corner(self.level_db, r, "low") * bp.corner(self.level_db, r, "high"))

    def derivative(self, probe: Probe, adj: "AdjointSensitivity", ref: GainReference
                   ) -> np.ndarray:
        """∂f_anchor/∂ln p per part, Hz (implicit differentiation of the edges)."""
        d_ref = ref.derivative(probe, adj) if ref.relative else \
            adj.extreme("gain_db", probe.peak().frequency_hz)
        r = ref.corner_reference(probe)
        if self.kind == "corner":
            return adj.crossing_shift(probe.corner(self.level_db, r, self.side), d_ref)
        low = probe.corner(self.level_db, r, "low")
        high = probe.corner(self.level_db, r, "high")
        centre = math.sqrt(low * high)
        return 0.5 * centre * (adj.crossing_shift(low, d_ref) / low
                               + adj.crossing_shift(high, d_ref) / high)


def level_words(level_db: float | None, ref: GainReference) -> str:
    level = "half-power" if level_db is None else format_eng(level_db, "dB")
    return f"{level} below {ref.words()}"


def edges(probe: Probe, ref: GainReference, level_db: float | None) -> tuple[float, float]:
    """(f_low, f_high): the edges ``level_db`` below the reference either side of the peak."""
    r = ref.corner_reference(probe)
    try:
        return probe.corner(level_db, r, "low"), probe.corner(level_db, r, "high")
    except MeasurementFailure as err:
        drop = HALF_POWER_DB if level_db is None else level_db
        raise MeasurementFailure(
            f"{err}; a bandwidth needs the gain {drop:.4g} dB below the reference on both "
            "sides of the peak within the sweep (for one edge use the corner kind)") from err


def edges_batch(bp: "BatchProbe", ref: GainReference, level_db: float | None
                ) -> tuple[np.ndarray, np.ndarray]:
    r = ref.corner_batch(bp)
    return bp.corner(level_db, r, "low"), bp.corner(level_db, r, "high")


def edges_derivative(probe: Probe, adj: "AdjointSensitivity", ref: GainReference,
                     level_db: float | None) -> tuple[np.ndarray, np.ndarray]:
    """∂f_low/∂ln p and ∂f_high/∂ln p (implicit differentiation; the level moves with
    the reference)."""
    lo, hi = edges(probe, ref, level_db)
    d_ref = ref.derivative(probe, adj)
    return adj.crossing_shift(lo, d_ref), adj.crossing_shift(hi, d_ref)
