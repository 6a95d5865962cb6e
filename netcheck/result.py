"""The one result model every renderer reads: CheckResult → SpecResult → LimitResult."""

from __future__ import annotations

import enum
import math
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

if TYPE_CHECKING:  # pragma: no cover
    from .netlist.units import RowText

__all__ = ["Status", "LimitResult", "Caution", "Curves", "MaskBand", "SpecResult",
           "CheckResult", "worst_status", "MODEL_STATEMENT", "HAZARD_CAUTION",
           "HAZARD_SEVERITY", "hazard_warranted"]


class Status(str, enum.Enum):
    """Verdict of a limit, a spec or a whole run (ordered by severity)."""

    PASS = "pass"
    SKIPPED = "skipped"
    FAIL = "fail"
    ERROR = "error"

    @property
    def rank(self) -> int:
        """Severity order: pass < skipped < fail < error."""
        return ["pass", "skipped", "fail", "error"].index(self.value)

    @property
    def word(self) -> str:
        """Upper-case word for tables (status is never shown by colour alone)."""
        return {"pass": "PASS", "skipped": "SKIP", "fail": "FAIL", "error": "ERROR"}[self.value]


def worst_status(statuses: Any) -> Status:
    """The most severe of ``statuses`` (PASS when empty); SKIPPED alone counts as PASS."""
    worst = Status.PASS
    for s in statuses:
        if s.rank > worst.rank:
            worst = s
    return Status.PASS if worst is Status.SKIPPED else worst


@dataclass(frozen=True, slots=True)
class LimitResult:
    """The verdict on one bound of one spec limit.

    ``margin`` is signed, in ``unit``: positive means inside the limit by that much.
    ``lower``/``upper`` are the bounds (None where open); ``at_hz`` is where the
    deciding (worst) value occurred.

    ``floor`` is set (in ``unit``) only when ``measured`` lies at or below the numerical
    floor of the solve at ``at_hz``: a gain there cannot be told from no transmission at
    all (an exact transmission zero), so ``measured`` and ``margin`` are rounding noise;
    the reports print the value as below the floor and the margin as the bound it
    certainly meets (see :func:`netcheck.netlist.units.row_text`).
    """

    name: str
    kind: str
    status: Status
    measured: float | None
    lower: float | None
    upper: float | None
    margin: float | None
    unit: str
    at_hz: float | None = None
    definition: str = ""
    method: str = ""
    message: str = ""
    index: int = 0
    line: int | None = None
    floor: float | None = None
    #: the measured level (dB re the stimulus) a relative gain is stated against (the
    #: mean pass-band gain, say); None for an absolute value
    reference_db: float | None = None
    #: the named output the row judged (``[outputs]``; ``low/high`` for a crossover);
    #: None in a spec with the single ``output``
    output: str | None = None

    @property
    def below_floor(self) -> bool:
        """Whether the measured value cannot be told from none (see ``floor``)."""
        return self.floor is not None

    @property
    def figures(self) -> "RowText":
        """Measured value, bounds, margin and frequency as every report prints them, with
        as many figures as tell the row's values apart (:func:`netcheck.netlist.units.row_text`)."""
        from .netlist.units import row_text
        return row_text(self.measured, self.lower, self.upper, self.margin, self.unit,
                        self.at_hz, self.floor)

    @property
    def bound_text(self) -> str:
        """The limit as text, e.g. ``-1.000 dB … 0.500 dB`` or ``≤ 200.0 µs``."""
        return self.figures.bound


@dataclass(frozen=True, slots=True)
class Caution:
    """A finding shown with the result: a hazard caution, a warning or a note."""

    code: str
    message: str
    severity: str = "warning"
    path: str | None = None
    line: int | None = None
    column: int | None = None


#: The general statement, once in the PDF's front matter: the result is an analysis of a model.
MODEL_STATEMENT = (
    "This is an analysis of a circuit model, not a measurement. Parasitics that are not "
    "in the netlist, non-linearity, temperature and ageing are not included: verify "
    "prototypes by measurement.")

#: Severity of a caution that calls out a hazardous or magnified voltage (the stress
#: analysis's cautions and the resonance magnification caution).
HAZARD_SEVERITY = "caution"
#: codes of the cautions (in the JSON result and as SARIF rule ids, styled like the
#: diagnostic codes): a part over a stress threshold, a reactive part far above the input
#: voltage, and the general hazardous-voltage statement
STRESS_CAUTION_CODE = "analysis-stress"
VOLTAGE_CAUTION_CODE = "analysis-voltage"
GENERAL_CAUTION_CODE = "analysis-hazard"

#: Printed once per output, and only when some result warrants it (:func:`hazard_warranted`).
HAZARD_CAUTION = (
    "analysis of a model, not a measurement; resonant parts can see far more than the "
    "input voltage. Verify by measurement and follow local codes and licensed practice at "
    "hazardous voltages.")


def hazard_warranted(specs: Any) -> bool:
    """Whether any of ``specs`` (SpecResults) carries a hazard caution
    (severity :data:`HAZARD_SEVERITY`), so :data:`HAZARD_CAUTION` is to be shown."""
    return any(c.severity == HAZARD_SEVERITY for s in specs for c in s.cautions)


@dataclass(frozen=True, slots=True)
class MaskBand:
    """One region of a spec mask for plots: ``lo``/``hi`` None where open.

    ``quantity`` 'gain_re_peak_db' or 'gain_re_reference_db': the bounds are relative to
    the peak gain or to the ``reference_db`` of the limit named ``label``."""

    label: str
    f_lo_hz: float
    f_hi_hz: float
    lo: float | None
    hi: float | None
    quantity: str = "gain_db"
    failed: bool = False
    #: a sloped bound's value at ``f_hi_hz`` (``lo``/``hi`` being its value at
    #: ``f_lo_hz``): straight in log f between them; None where the bound is flat
    lo_end: float | None = None
    hi_end: float | None = None
    #: the named output whose curve the region bounds (``[outputs]``); None: the main one
    output: str | None = None


@dataclass(frozen=True, slots=True, eq=False)
class Curves:
    """Response curves for plots (read-only arrays on the sweep grid)."""

    frequency_hz: np.ndarray
    gain_db: np.ndarray
    phase_deg: np.ndarray
    group_delay_s: np.ndarray
    envelope_lo_db: np.ndarray | None = None
    envelope_hi_db: np.ndarray | None = None
    #: exactly evaluated points between grid points, for drawing the true curve through
    #: narrow peaks and notches (:func:`netcheck.measure.detail.detail_curves`)
    detail_hz: np.ndarray | None = None
    detail_gain_db: np.ndarray | None = None
    detail_phase_deg: np.ndarray | None = None
    detail_group_delay_s: np.ndarray | None = None
    #: every named output but the main one (``[outputs]``) on the grid: (name, (node,
    #: reference), gain dB, phase deg, group delay s); the main one's are the fields above
    outputs: tuple[tuple[str, tuple[str, str], np.ndarray, np.ndarray, np.ndarray], ...] = ()

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, Curves):
            return NotImplemented
        if [o[:2] for o in self.outputs] != [o[:2] for o in other.outputs] \
                or not all(np.array_equal(x, y, equal_nan=True)
                           for a, b in zip(self.outputs, other.outputs)
                           for x, y in zip(a[2:], b[2:])):
            return False
        return all(np.array_equal(getattr(self, k), getattr(other, k), equal_nan=True)
                   if getattr(self, k) is not None else getattr(other, k) is None
                   for k in ("frequency_hz", "gain_db", "phase_deg", "group_delay_s",
                             "envelope_lo_db", "envelope_hi_db", "detail_hz",
                             "detail_gain_db", "detail_phase_deg", "detail_group_delay_s"))


@dataclass(frozen=True, slots=True)
class SpecResult:
    """Everything known about one spec (or one variant of it) after checking."""

    spec: str
    netlist: str
    title: str
    status: Status
    limits: tuple[LimitResult, ...] = ()
    measurements: tuple[tuple[str, float], ...] = ()
    cautions: tuple[Caution, ...] = ()
    error: str | None = None
    variant: str | None = None
    inputs: tuple[tuple[str, str], ...] = ()
    sweep: tuple[tuple[str, Any], ...] = ()
    curves: Curves | None = None
    mask: tuple[MaskBand, ...] = ()
    source_text: tuple[tuple[str, str], ...] = ()
    extra: tuple[tuple[str, Any], ...] = ()

    @property
    def counts(self) -> dict[str, int]:
        """Number of limit results per status value."""
        out = {s.value: 0 for s in Status}
        for lim in self.limits:
            out[lim.status.value] += 1
        return out

    @property
    def label(self) -> str:
        """Title, with the variant name when there is one."""
        return f"{self.title} [{self.variant}]" if self.variant else self.title

    def measurement(self, key: str) -> float | None:
        """A named measurement (``f_peak_hz``, ``q``...) or None."""
        return dict(self.measurements).get(key)

    def extra_value(self, key: str, default: Any = None) -> Any:
        """A value added by an analysis (tolerance, stress...)."""
        return dict(self.extra).get(key, default)


@dataclass(frozen=True, slots=True)
class CheckResult:
    """The whole run: every spec's result, in a stable order."""

    specs: tuple[SpecResult, ...]
    tool_version: str
    created_utc: str = ""
    cautions: tuple[Caution, ...] = field(default=())

    @property
    def status(self) -> Status:
        """Worst status over all specs."""
        return worst_status(s.status for s in self.specs)

    @property
    def counts(self) -> dict[str, int]:
        """Limit results per status, over all specs."""
        out = {s.value: 0 for s in Status}
        for spec in self.specs:
            for k, v in spec.counts.items():
                out[k] += v
        return out


def finite_or_none(value: float | None) -> float | None:
    """``value`` if it is a finite number, else None (for JSON)."""
    if value is None:
        return None
    value = float(value)
    return value if math.isfinite(value) else None
