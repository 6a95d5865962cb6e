"""The ``port`` limit kind: what a spec with ``[ports]`` states at the terminations —
return loss, reflection coefficient, VSWR and impedance looking into a port, and the
two-port's transducer gain and insertion loss (netcheck.analyses.port_probe has the
definitions)."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, ClassVar

import numpy as np

from .base import (BOUND_KEYS, Limit, Linearised, Probe, Rows, band_text, judge_range,
                   linearised_range, quantity_and_bounds, range_margin)
from ..reader import SpecReader, Sweep
from ...measure.measurements import Extremum, MeasurementFailure
from ...result import LimitResult

if TYPE_CHECKING:  # pragma: no cover
    from ...analyses.sample_probe import BatchProbe
    from ...mna.sensitivity import AdjointSensitivity

__all__ = ["PortLimit"]

_DB = 20.0 / math.log(10.0)
#: quantity → (unit, words for messages)
QUANTITIES = {"return_loss": ("dB", "return loss"),
              "reflection": ("", "|reflection coefficient|"),
              "vswr": ("", "VSWR"),
              "impedance": ("Ω", "|Z|"),
              "transducer_gain": ("dB", "transducer gain"),
              "insertion_loss": ("dB", "insertion loss")}
#: the quantities taken at one port (the others belong to the two-port)
AT_A_PORT = ("return_loss", "reflection", "vswr", "impedance")


def _from_gamma_db(quantity: str, x: np.ndarray | float) -> Any:
    """The quantity from 20 log10 |Γ| (dB)."""
    if quantity == "return_loss":
        return -np.asarray(x)
    g = 10.0 ** (np.asarray(x) / 20.0)
    if quantity == "reflection":
        return g
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(g < 1.0, (1.0 + g) / (1.0 - g), np.inf)


def _gamma_slope(quantity: str, x: float) -> float:
    """d(quantity)/d(20 log10 |Γ|) at 20 log10 |Γ| = x (dB)."""
    if quantity == "return_loss":
        return -1.0
    g = 10.0 ** (x / 20.0)
    dg = g / _DB
    if quantity == "reflection":
        return dg
    return 2.0 / (1.0 - g) ** 2 * dg if g < 1.0 else math.inf


@dataclass(frozen=True, slots=True)
class PortLimit(Limit):
    """A port or two-port quantity over a band, between ``min`` and/or ``max``."""

    band: tuple[float, float] = (0.0, 0.0)
    quantity: str = "return_loss"
    port: str | None = None
    min: float | None = None
    max: float | None = None

    kind: ClassVar[str] = "port"
    SUMMARY: ClassVar[str] = ("return loss, reflection coefficient, VSWR or impedance at a "
                              "port, transducer gain or insertion loss, between the "
                              "terminations of [ports]")
    METHOD: ClassVar[str] = "exact port impedance by direct solves; true band extremes"
    KEYS: ClassVar[dict[str, str]] = {
        "quantity": "return_loss (dB), reflection (|Γ|), vswr, impedance (Ω), "
                    "transducer_gain (dB) or insertion_loss (dB)",
        "port": "'input' or 'output' (return_loss, reflection, vswr, impedance)",
        "band": "[start, stop], Hz",
        **BOUND_KEYS,
    }

    @classmethod
    def from_table(cls, rd: SpecReader, sweep: Sweep, name: str | None, index: int,
                   line: int | None) -> PortLimit:
        quantity, lo, hi = quantity_and_bounds(rd, tuple(QUANTITIES), "port")
        port = rd.choice("port", ("input", "output"), "input") if rd.has("port") else None
        if quantity in AT_A_PORT and port is None:
            rd.fail("port", f"missing (required for {quantity}): 'input' or 'output'")
        if quantity not in AT_A_PORT and port is not None:
            rd.fail("port", f"{quantity} belongs to the two-port, not to one port: drop port")
        band = rd.band("band", sweep)
        words = QUANTITIES[quantity][1]
        at = f" at the {port} port" if port else ""
        return cls(name or f"{words}{at} {band_text(band)}", index, line, band, quantity,
                   port, lo, hi)

    @property
    def unit(self) -> str:
        return QUANTITIES[self.quantity][0]

    # -- nominal -----------------------------------------------------------------------
    def _measure(self, probe: Any) -> tuple[Extremum, Extremum]:
        """(minimum, maximum) of the quantity over the band, with their frequencies."""
        if self.quantity in ("transducer_gain", "insertion_loss"):
            gmin, gmax = probe.extremes("gain_db", *self.band)
            if self.quantity == "transducer_gain":
                off = probe.ports.transducer_offset_db()
                return (Extremum(gmin.frequency_hz, gmin.value + off),
                        Extremum(gmax.frequency_hz, gmax.value + off))
            off = probe.ports.insertion_offset_db()
            return (Extremum(gmax.frequency_hz, off - gmax.value),
                    Extremum(gmin.frequency_hz, off - gmin.value))
        which = "impedance" if self.quantity == "impedance" else "reflection"
        xmin, xmax = probe.port_extremes(self.port, which, *self.band)
        if self.quantity == "impedance":
            return (Extremum(xmin.frequency_hz, 10.0 ** (xmin.value / 20.0)),
                    Extremum(xmax.frequency_hz, 10.0 ** (xmax.value / 20.0)))
        a = Extremum(xmin.frequency_hz, float(_from_gamma_db(self.quantity, xmin.value)))
        b = Extremum(xmax.frequency_hz, float(_from_gamma_db(self.quantity, xmax.value)))
        return (b, a) if self.quantity == "return_loss" else (a, b)

    def judge(self, probe: Probe) -> tuple[LimitResult, ...]:
        try:
            vmin, vmax = self._measure(probe)
        except MeasurementFailure as err:
            return (self.error(str(err), self.unit),)
        words = QUANTITIES[self.quantity][1]
        at = f" at the {self.port} port" if self.port else ""
        return (judge_range(self.name, self.kind, self.min, self.max, vmin, vmax, self.unit,
                            f"true minimum and maximum of {words}{at} over "
                            f"{band_text(self.band)}", self.METHOD, self.index, self.line),)

    # -- Monte Carlo -------------------------------------------------------------------
    def judge_batch(self, bp: BatchProbe) -> Rows:
        if self.quantity in ("transducer_gain", "insertion_loss"):
            gmin, gmax = bp.band_extremes("gain_db", *self.band)
            if self.quantity == "transducer_gain":
                off = bp.ports.transducer_offset_db()
                lo_v, hi_v = gmin.value + off, gmax.value + off
            else:
                off = bp.ports.insertion_offset_db()
                lo_v, hi_v = off - gmax.value, off - gmin.value
        else:  # the input port (the output port is refused in Monte Carlo when loaded)
            which = "input_z_db" if self.quantity == "impedance" else "input_gamma_db"
            xmin, xmax = bp.band_extremes(which, *self.band)
            if self.quantity == "impedance":
                lo_v, hi_v = 10.0 ** (xmin.value / 20.0), 10.0 ** (xmax.value / 20.0)
            else:
                a = _from_gamma_db(self.quantity, xmin.value)
                b = _from_gamma_db(self.quantity, xmax.value)
                lo_v, hi_v = (b, a) if self.quantity == "return_loss" else (a, b)
        measured, margin = range_margin(self.min, self.max, lo_v, hi_v)
        return [(self.name, measured, margin)]

    # -- worst case --------------------------------------------------------------------
    def sensitivities(self, probe: Probe, adj: AdjointSensitivity) -> list[Linearised]:
        if self.port == "output":
            raise NotImplementedError("output-port sensitivities")
        vmin, vmax = self._measure(probe)
        if self.quantity in ("transducer_gain", "insertion_loss"):
            sign = 1.0 if self.quantity == "transducer_gain" else -1.0
            return [linearised_range(self.name, self.min, self.max, vmin.value,
                                     sign * adj.extreme("gain_db", vmin.frequency_hz),
                                     vmax.value,
                                     sign * adj.extreme("gain_db", vmax.frequency_hz))]
        rs = probe.ports.source_ohms  # type: ignore[attr-defined]
        return [linearised_range(self.name, self.min, self.max, vmin.value,
                                 self._input_slope(adj, vmin.frequency_hz, rs), vmax.value,
                                 self._input_slope(adj, vmax.frequency_hz, rs))]

    def _input_slope(self, adj: AdjointSensitivity, f_hz: float, rs: float) -> np.ndarray:
        """∂(quantity)/∂ln p at ``f_hz`` from p ∂ln Z_E/∂p (Z_E = Rs + Z_in)."""
        d = adj.log_derivatives(f_hz, "impedance")
        ze, w = complex(d.q[0]), d.w_p[0]
        if self.quantity == "impedance":
            zin = ze - rs
            return (np.conj(zin) / abs(zin) * ze * w).real
        gamma = 1.0 - 2.0 * rs / ze
        d_db = _DB * (2.0 * rs / ze * w / gamma).real  # ∂(20 log10 |Γ|)/∂ln p
        return _gamma_slope(self.quantity, 20.0 * math.log10(abs(gamma))) * d_db
