"""The verdict on one part for one stress quantity (:func:`netcheck.analyses.stress.judge_stress`)."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from ..netlist.units import format_si
from ..result import LimitResult, Status, finite_or_none
from ..spec.stress import UNITS

__all__ = ["StressResult", "METHOD", "compact"]

METHOD = "grid maxima and pole frequencies refined by Brent's bounded search"


@dataclass(frozen=True, slots=True)
class StressResult:
    """The verdict on one part for one stress quantity.

    ``peak`` is the true maximum over the sweep (V, A or W; None on ERROR), at
    ``at_hz``; ``margin`` = ``rating`` − ``peak`` in the same unit (positive: inside
    the rating). ``amplitude`` is the peak stimulus in ``stimulus_unit``.
    """

    part: str
    quantity: str
    peak: float | None
    rating: float
    margin: float | None
    at_hz: float | None
    status: Status
    message: str = ""
    element: str = ""
    amplitude: float = 1.0
    stimulus_unit: str = "V"
    rms: bool = False
    pattern: str = ""
    index: int = 0
    line: int | None = None
    #: for a part model (``element`` "X"): its subcircuit and the ports judged
    model: str = ""
    ports: tuple[str, ...] = ()
    #: for a circuit with a DC operating point (devices): the part of ``peak`` the DC
    #: bias accounts for — |V DC| or |I DC| added to the AC peak, or the DC power V²/R
    #: added to the average AC power (:mod:`netcheck.analyses.stress_bias`); None when
    #: the circuit has no operating point
    dc: float | None = None

    @property
    def unit(self) -> str:
        """V, A or W."""
        return UNITS[self.quantity]

    @property
    def ratio(self) -> float | None:
        """Peak over the stimulus amplitude when both are the same kind (V/V or A/A)."""
        if self.peak is None or self.quantity == "power" or self.unit != self.stimulus_unit:
            return None
        return (self.peak - (self.dc or 0.0)) / self.amplitude  # the AC part

    @property
    def stimulus_text(self) -> str:
        """``10 V peak`` or ``7.07 V rms (10 V peak)``."""
        pk = compact(self.amplitude, self.stimulus_unit)
        if self.rms:
            return f"{compact(self.amplitude / math.sqrt(2.0), self.stimulus_unit)} rms ({pk} peak)"
        return f"{pk} peak"

    @property
    def definition(self) -> str:
        """What was measured, in words."""
        stim = f"for a {self.stimulus_text} stimulus, true maximum over the sweep"
        if self.dc is not None:
            what = ("the DC power at the operating point" if self.quantity == "power" else
                    f"its |{'V' if self.quantity == 'voltage' else 'I'}| at the DC "
                    "operating point")
            stim += f", plus {what} ({compact(self.dc, self.unit)})"
        if self.model and self.ports:
            who = f"{self.part.split(' ', 1)[0]} (part model {self.model})"
            if self.quantity == "voltage":
                return (f"peak |V| between ports {self.ports[0]} and {self.ports[-1]} of "
                        f"{who} {stim}")
            return f"peak |I| into port {self.ports[0]} of {who} {stim}"
        if self.quantity == "voltage":
            return f"peak |V| across {self.part} {stim}"
        if self.quantity == "current":
            how = {"R": " (V/R)", "C": " (jωC·V)", "F": " (gain × controlling current)"}
            return f"peak |I| through {self.part}{how.get(self.element, '')} {stim}"
        return f"average power in {self.part} (|I|²R/2, peak |I|) {stim}"

    def to_limit_result(self, index: int | None = None, line: int | None = None) -> LimitResult:
        """This result as a :class:`LimitResult` (kind ``stress``) for the renderers."""
        return LimitResult(
            name=f"stress: {self.part} {self.quantity}", kind="stress", status=self.status,
            measured=self.peak, lower=None, upper=self.rating, margin=self.margin,
            unit=self.unit, at_hz=self.at_hz,
            definition="" if self.status is Status.ERROR else self.definition,
            method="" if self.status is Status.ERROR else METHOD, message=self.message,
            index=self.index if index is None else index,
            line=self.line if line is None else line)

    def to_json(self) -> dict[str, Any]:
        """The fixed JSON contract: part, quantity, peak, rating, margin, at_hz, status;
        and ``dc`` for a circuit with an operating point."""
        return {"part": self.part, "quantity": self.quantity,
                "peak": finite_or_none(self.peak), "rating": finite_or_none(self.rating),
                "margin": finite_or_none(self.margin), "at_hz": finite_or_none(self.at_hz),
                "status": self.status.value} | (
                    {} if self.dc is None else {"dc": finite_or_none(self.dc)})


def compact(value: float, unit: str, digits: int = 4) -> str:
    """``format_si`` without trailing zeros: ``10 V``, ``9.998 V``, ``500 mA``."""
    text = format_si(value, unit, digits)
    num, sep, rest = text.partition(" ")
    if "." in num:
        num = num.rstrip("0").rstrip(".")
    return f"{num}{sep}{rest}"
