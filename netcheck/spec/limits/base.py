"""The limit contract: the Limit base class, the probe it measures on, the judging helpers.

Each kind lives in its own module next to this one, listed in the kind table of
:mod:`netcheck.spec.limits.registry`; :mod:`netcheck.spec.limits` is the public face of all.
"""

from __future__ import annotations

import dataclasses
import math
import warnings
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, ClassVar, NamedTuple, Protocol

import numpy as np

from ...measure.measurements import Curve, Extremum, MeasurementFailure, Resonance
from ...result import LimitResult, MaskBand, Status
from ..reader import SpecReader, Sweep
from ...netlist.units import format_eng, format_si, format_span

if TYPE_CHECKING:  # pragma: no cover
    from ...analyses.sample_probe import BatchProbe
    from ...mna.sensitivity import AdjointSensitivity

__all__ = ["Limit", "Probe", "judge_range", "range_margin", "Linearised", "linearised_range",
           "Rows", "band_text", "gain_floor_db", "rounding_floor_db", "at_floor",
           "RELATIVE_FLOOR_DB", "quantity_and_bounds", "BOUND_KEYS"]


class Probe(Protocol):
    """What a limit may measure on (built by :mod:`netcheck.analyses.nominal`)."""

    curve: Curve
    sweep: Sweep

    def impedance(self) -> Curve:
        """The input impedance seen by the stimulus, as a curve (|Z| read as 'gain')."""

    def extremes(self, quantity: str, lo_hz: float, hi_hz: float) -> tuple[Extremum, Extremum]:
        """True minimum and maximum over [lo_hz, hi_hz] of 'gain_db', 'phase_deg',
        'group_delay_s' (of the response) or 'impedance_db' (20 log10 |Z_in|)."""

    def corner(self, level_db: float | None, reference_db: float | None, side: str) -> float:
        """Low- or high-pass edge, Hz (see :func:`netcheck.measure.corner`)."""

    def peak(self) -> Extremum:
        """True peak gain over the sweep."""

    def resonance(self, level_db: float | None, band: tuple[float, float] | None) -> Resonance:
        """Main resonance measured at ``level_db`` below the peak."""


def band_text(band: tuple[float, float]) -> str:
    """``38.00–42.00 kHz`` (or ``500.0 Hz–2.000 kHz`` when the prefixes differ); a
    narrow band with as many figures as tell its ends apart (``9.99998–10.00002 MHz``)."""
    return format_span(band[0], band[1], "Hz")


#: The floor of a gain relative to the largest gain of the sweep, dB: 10⁻¹⁵ of the
#: largest |H|, a few units in the last place of a double (2.2·10⁻¹⁶ is one).
RELATIVE_FLOOR_DB = -300.0
#: A gain this far below the peak (dB) has its rounding floor computed; above it, no
#: solve of a circuit that can be solved at all (condition below 10¹⁰) is near its floor.
_FLOOR_SCREEN_DB = 100.0
_UNIT_ROUNDOFF = 2.0 ** -53


def _rounding_bound(system: Any, f_hz: float) -> float | None:
    """The largest |H| the rounding of a direct solve at ``f_hz`` can make of nothing.

    LU with partial pivoting solves a slightly different system, (A + ΔA)x̂ = b with
    |ΔA| ≤ γ₃ₙ|L̂||Û| ≈ γ₃ₙ|A| elementwise (Higham, Accuracy and Stability of Numerical
    Algorithms, 2nd ed. 2002, ch. 9; γₖ = ku/(1 − ku), u the unit roundoff), so the
    output H = lᵀx moves by δH = −wᵀΔA x̂ with the adjoint w = A⁻ᵀl (first order): at
    most γ₃ₙ·|w|ᵀ|A||x̂|. A computed |H| within this bound cannot be told from 0.
    """
    import scipy.sparse.linalg as sla

    a = system.matrix(f_hz)
    n = a.shape[0]
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            lu = sla.splu(a)
            x = lu.solve(np.asarray(system.b, dtype=complex))
            w = lu.solve(np.asarray(system.l, dtype=complex), trans="T")
    except (RuntimeError, ValueError):  # singular exactly here: no bound to be had
        return None
    gamma = 3 * n * _UNIT_ROUNDOFF / (1.0 - 3 * n * _UNIT_ROUNDOFF)
    bound = gamma * float(np.abs(w) @ (abs(a) @ np.abs(x)))
    return bound if math.isfinite(bound) and bound > 0 else None


def rounding_floor_db(system: Any, f_hz: float) -> float | None:
    """:func:`_rounding_bound` at ``f_hz`` in dB; None when no bound can be had."""
    bound = _rounding_bound(system, f_hz)
    return None if bound is None else 20.0 * math.log10(bound)


def gain_floor_db(probe: Probe, f_hz: float | None, gain_db: float) -> float | None:
    """The numerical floor of the gain at ``f_hz``, dB, when ``gain_db`` (the computed
    gain there) lies at or below it; None when it does not (or no floor can be had).

    The floor is the larger of the rounding bound of a direct solve at ``f_hz``
    (:func:`_rounding_bound`) and :data:`RELATIVE_FLOOR_DB` below the peak gain of the
    sweep. Below it the computed gain is rounding noise: the true gain may be anything
    from 0 (no transmission, −∞ dB) up to the floor. The bound is computed only for a
    gain :data:`_FLOOR_SCREEN_DB` or more below the peak (or −∞).
    """
    if f_hz is None or not math.isfinite(f_hz) or math.isnan(gain_db):
        return None
    try:
        peak_db = probe.peak().value
    except MeasurementFailure:
        peak_db = None
    if peak_db is not None and not math.isfinite(peak_db):
        peak_db = None
    if peak_db is not None and gain_db > peak_db - _FLOOR_SCREEN_DB:
        return None
    floors = [] if peak_db is None else [peak_db + RELATIVE_FLOOR_DB]
    system = getattr(getattr(getattr(probe, "curve", None), "response", None), "system", None)
    if system is not None:
        bound = _rounding_bound(system, f_hz)
        if bound is not None:
            floors.append(20.0 * math.log10(bound))
    if not floors or gain_db > max(floors):
        return None
    return max(floors)


def at_floor(r: LimitResult, floor: float, what: str = "gain") -> LimitResult:
    """``r`` (a judged gain at or below the numerical floor ``floor``, in ``r.unit``)
    with the floor recorded and the verdict the floor allows.

    The true value lies anywhere at or below the floor. On an upper bound at or above
    the floor it certainly passes (margin at least ``upper − floor``); on a lower bound
    above the floor it certainly fails (margin at most ``floor − lower``). A bound below
    the floor cannot be judged: the result is an error, its margin unknown.
    """
    floor = math.ceil(floor * 10.0) / 10.0  # to 0.1 dB, upwards: still a floor
    on_upper = r.upper is not None and (r.lower is None or r.margin == r.upper - r.measured)
    bound = r.upper if on_upper else r.lower
    decided = (bound >= floor) if on_upper else (bound > floor)
    at = format_si(r.at_hz, "Hz", 5)
    message = (f"no transmission to within the numerical floor: at {at} the {what} is below "
               f"{format_eng(floor, r.unit)}, the floor of the solve there, so it cannot be "
               "told from an exact transmission zero")
    if decided:
        return dataclasses.replace(r, floor=floor, message=message)
    word = "upper" if on_upper else "lower"
    return dataclasses.replace(
        r, status=Status.ERROR, margin=None, floor=floor,
        message=f"{message}; the {word} bound {format_eng(bound, r.unit)} lies below that "
                "floor, so whether it is met cannot be told")


def judge_range(name: str, kind: str, lo: float | None, hi: float | None, vmin: Extremum,
                vmax: Extremum, unit: str, definition: str, method: str, index: int,
                line: int | None) -> LimitResult:
    """Judge min/max values against [lo, hi]; the side closest to failing decides."""
    sides = []
    if lo is not None:
        sides.append((vmin.value - lo, vmin))
    if hi is not None:
        sides.append((hi - vmax.value, vmax))
    margin, deciding = min(sides, key=lambda s: s[0])
    if math.isnan(margin):
        margin = -math.inf
    status = Status.PASS if margin >= 0 else Status.FAIL
    return LimitResult(name, kind, status, deciding.value, lo, hi, margin, unit,
                       deciding.frequency_hz, definition, method, "", index, line)


def range_margin(lo: float | None, hi: float | None, vmin: np.ndarray, vmax: np.ndarray
                 ) -> tuple[np.ndarray, np.ndarray]:
    """Vectorised :func:`judge_range`: per-sample deciding value and margin (NaN → −inf)."""
    margins, values = [], []
    if lo is not None:
        margins.append(vmin - lo)
        values.append(vmin)
    if hi is not None:
        margins.append(hi - vmax)
        values.append(vmax)
    m = np.stack(margins)
    m = np.where(np.isnan(m), -np.inf, m)
    k = np.argmin(m, axis=0)
    cols = np.arange(m.shape[1])
    return np.stack(values)[k, cols], m[k, cols]


Rows = list[tuple[str, np.ndarray, np.ndarray]]


def linearised_range(name: str, lo: float | None, hi: float | None, vmin: float,
                     d_min: np.ndarray, vmax: float, d_max: np.ndarray) -> "Linearised":
    """A band's judged minimum and maximum; a one-sided limit judges one of them only."""
    if lo is None:
        return Linearised(name, vmax, d_max, vmax, d_max)
    if hi is None:
        return Linearised(name, vmin, d_min, vmin, d_min)
    return Linearised(name, vmin, d_min, vmax, d_max)


#: the bound keys of a kind that judges one of several quantities (its KEYS hold them)
BOUND_KEYS = {"min": "lowest allowed value, in the quantity's unit",
              "max": "highest allowed value, in the quantity's unit"}


def quantity_and_bounds(rd: SpecReader, quantities: tuple[str, ...], what: str
                        ) -> tuple[str, float | None, float | None]:
    """The ``quantity`` key (required, one of ``quantities``) and the ``min``/``max`` pair
    (at least one, min ≤ max) of a kind that judges one of several quantities."""
    if not rd.has("quantity"):
        rd.fail("quantity", f"missing (required): one of {', '.join(quantities)}")
    quantity = rd.choice("quantity", quantities, "")
    lo, hi = rd.number("min"), rd.number("max")
    if lo is None and hi is None:
        rd.fail("", f"a {what} limit needs min, max or both")
    if lo is not None and hi is not None and lo > hi:
        rd.fail("min", f"min {lo:g} is above max {hi:g}")
    return quantity, lo, hi


class Linearised(NamedTuple):
    """A judged quantity at nominal and its sensitivities, side by side for both bounds.

    ``low``/``d_low`` is what the lower bound judges (a band minimum, say) and
    ``high``/``d_high`` what the upper bound judges; a single value has both equal.
    ``d_*`` are (P,) arrays of ∂M/∂ln pₖ in the unit of M. ``refused`` is set (to the
    reason) when the quantity has no linearisation at all (the depth of an exact
    transmission zero): the worst case reports it as an error, without differences.
    """

    name: str
    low: float
    d_low: np.ndarray
    high: float
    d_high: np.ndarray
    refused: str = ""


@dataclass(frozen=True, slots=True)
class Limit:
    """Base of all limit kinds: ``name``, position in the spec, and the judging contract."""

    name: str
    index: int
    line: int | None

    kind: ClassVar[str] = ""
    #: keys this kind accepts (besides ``kind`` and ``name``) → description with unit
    KEYS: ClassVar[dict[str, str]] = {}
    #: one-line summary for docs
    SUMMARY: ClassVar[str] = ""
    #: one-line statement of how the kind is measured (each result's ``method``); the
    #: full method is the kind's section of docs/methods.md (:meth:`methods_anchor`)
    METHOD: ClassVar[str] = ""

    @classmethod
    def methods_anchor(cls) -> str:
        """The anchor of this kind's section in docs/methods.md (``group-delay``)."""
        return cls.kind.replace("_", "-")

    @classmethod
    def from_table(cls, rd: SpecReader, sweep: Sweep, name: str | None, index: int,
                   line: int | None) -> "Limit":
        """Build from a TOML table (``rd``), validating every key."""
        raise NotImplementedError

    def judge(self, probe: Probe) -> tuple[LimitResult, ...]:
        """Measure and judge; one LimitResult per bound-quantity."""
        raise NotImplementedError

    def result_names(self) -> tuple[str, ...]:
        """Names of the results :meth:`judge` gives (they must be unique in a spec)."""
        return (self.name,)

    def mask(self) -> tuple[MaskBand, ...]:
        """Regions this limit draws on the gain plot (empty if none)."""
        return ()

    def judge_batch(self, bp: "BatchProbe") -> Rows:
        """Per-sample (name, measured, margin) rows, named as :meth:`judge` names them."""
        raise NotImplementedError

    def sensitivities(self, probe: Probe, adj: "AdjointSensitivity") -> list[Linearised]:
        """Nominal value and ∂M/∂ln p of every judged quantity, named as :meth:`judge` names them.

        Built from the adjoint derivatives in ``adj`` (see :mod:`netcheck.mna.sensitivity`).
        A kind without it is linearised by central differences in the worst case.
        Raises :class:`MeasurementFailure` when the nominal measurement fails.
        """
        raise NotImplementedError

    def error(self, message: str, unit: str = "", sub: str = "") -> LimitResult:
        """A LimitResult for a measurement that could not be made."""
        name = f"{self.name}: {sub}" if sub else self.name
        return LimitResult(name, self.kind, Status.ERROR, None, None, None, None, unit, None,
                           "", "", message, self.index, self.line)
