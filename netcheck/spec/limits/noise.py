"""The ``noise`` limit kind: thermal noise at the output — its density, the density
referred to the input, the RMS noise over a band, the signal-to-noise ratio for a stated
signal, and the noise figure for a stated source resistance (netcheck.mna.noise and
netcheck.analyses.noise_probe have the definitions)."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, ClassVar

import numpy as np

from .base import (BOUND_KEYS, Limit, Probe, Rows, band_text, judge_range,
                   quantity_and_bounds, range_margin)
from ..reader import SpecReader, Sweep
from ...measure.measurements import Extremum, MeasurementFailure, band_extremes
from ...result import LimitResult

if TYPE_CHECKING:  # pragma: no cover
    from ...analyses.sample_probe import BatchProbe

__all__ = ["NoiseLimit"]

#: quantity → (unit, words)
_QUANTITIES = {"output_density": ("V/√Hz", "output noise density"),
               "input_density": ("V/√Hz", "input-referred noise density"),
               "rms": ("V", "RMS output noise"),
               "snr": ("dB", "signal-to-noise ratio"),
               "noise_figure": ("dB", "noise figure"),
               "noise_temperature": ("K", "noise temperature")}
#: the standard reference temperature of a noise figure, K (IEEE; T_e = T0·(F − 1))
T0_K = 290.0


@dataclass(frozen=True, slots=True)
class NoiseLimit(Limit):
    """A thermal-noise quantity over a band, between ``min`` and/or ``max``."""

    band: tuple[float, float] = (0.0, 0.0)
    quantity: str = "output_density"
    min: float | None = None
    max: float | None = None
    temperature_c: float | None = None
    signal_rms: float | None = None
    signal_hz: float | None = None
    source_resistor: str | None = None
    load_resistor: str | None = None

    kind: ClassVar[str] = "noise"
    SUMMARY: ClassVar[str] = ("thermal noise: output or input-referred density, RMS noise "
                              "over a band, signal-to-noise ratio, noise figure")
    METHOD: ClassVar[str] = "every resistance's 4kTR by one adjoint solve per frequency"
    KEYS: ClassVar[dict[str, str]] = {
        "quantity": "output_density (V/√Hz), input_density (per √Hz, in the stimulus's "
                    "unit), rms (V over the band), snr (dB), noise_figure (dB) or "
                    "noise_temperature (K)",
        "band": "[start, stop], Hz",
        **BOUND_KEYS,
        "temperature_c": "temperature of the resistances, °C (default: the netlist's "
                         ".temp, else 27)",
        "signal_rms": "snr: the signal at the input, RMS in the stimulus's unit",
        "signal_hz": "snr: the signal's frequency, Hz",
        "source_resistor": "noise_figure, noise_temperature: the resistor that is the "
                           "source resistance (default with [ports]: the input port's)",
        "load_resistor": "noise_figure, noise_temperature: a load resistor not counted "
                         "(the next stage's; default with [ports]: the output port's)",
    }

    @classmethod
    def from_table(cls, rd: SpecReader, sweep: Sweep, name: str | None, index: int,
                   line: int | None) -> NoiseLimit:
        quantity, lo, hi = quantity_and_bounds(rd, tuple(_QUANTITIES), "noise")
        band = rd.band("band", sweep)
        temp = rd.number("temperature_c")
        if temp is not None and temp <= -273.15:
            rd.fail("temperature_c", f"{temp:g} °C is at or below absolute zero")
        sig = rd.number("signal_rms", positive=True)
        sig_hz = rd.number("signal_hz", positive=True)
        if quantity == "snr" and (sig is None or sig_hz is None):
            rd.fail("signal_rms" if sig is None else "signal_hz",
                    "missing (required for snr): the signal's RMS level at the input and "
                    "its frequency")
        if quantity != "snr" and (sig is not None or sig_hz is not None):
            rd.fail("signal_rms" if sig is not None else "signal_hz",
                    "only an snr limit takes a signal")
        src, load = rd.text("source_resistor"), rd.text("load_resistor")
        if quantity not in ("noise_figure", "noise_temperature") and (src or load):
            rd.fail("source_resistor" if src else "load_resistor",
                    "only a noise_figure or noise_temperature limit names a source or "
                    "load resistor")
        if src and load and src.upper() == load.upper():
            rd.fail("load_resistor", "the load left out cannot be the source resistance "
                    "the figure is measured against")
        words = _QUANTITIES[quantity][1]
        return cls(name or f"{words} {band_text(band)}", index, line, band, quantity, lo, hi,
                   temp, sig, sig_hz, src.upper() if src else None,
                   load.upper() if load else None)

    @property
    def unit(self) -> str:
        return _QUANTITIES[self.quantity][0]

    def _figure_resistors(self, probe: Any) -> tuple[str, str | None]:
        ports = getattr(probe, "ports", None)
        src = self.source_resistor or (ports and "RNC_PORT_IN")
        load = self.load_resistor or (ports and ports.load_ohms and "RNC_PORT_OUT") or None
        if not src:
            raise MeasurementFailure("a noise figure needs the source resistance: name it "
                                     "with source_resistor (or declare [ports])")
        names = {s.element for s in probe.noise(self.temperature_c).sources}
        for key, r in (("source_resistor", src), ("load_resistor", load)):
            if r is not None and r not in names:
                raise MeasurementFailure(f"{key} {r} is not a resistor of the circuit "
                                         "with thermal noise")
        return src, load

    def _measure(self, probe: Any) -> tuple[Extremum, Extremum, str]:
        curves = probe.noise(self.temperature_c)
        lo, hi = self.band
        if self.quantity in ("rms", "snr"):
            rms = curves.rms(lo, hi)
            if self.quantity == "rms":
                v = Extremum(math.sqrt(lo * hi), rms)
                return v, v, f"RMS of the output noise integrated over {band_text(self.band)}"
            gain = abs(complex(probe.curve.transfer([self.signal_hz])[0]))
            snr = 20.0 * math.log10(self.signal_rms * gain / rms) if rms > 0 else math.inf
            v = Extremum(self.signal_hz, snr)
            return v, v, (f"{self.signal_rms:g} RMS at {self.signal_hz:g} Hz over the RMS "
                          f"output noise over {band_text(self.band)}")
        if self.quantity in ("noise_figure", "noise_temperature"):
            curve = curves.figure_curve(*self._figure_resistors(probe))
            what = "noise figure"
        elif self.quantity == "input_density":
            curve, what = curves.input_curve(), "input-referred noise density"
        else:
            curve, what = curves.density_curve(), "output noise density"
        a, b = band_extremes(curve, "gain_db", lo, hi)
        if self.quantity == "noise_figure":  # 20·log10 √(S_net/S_src) is already dB
            return a, b, f"true minimum and maximum of the {what} over {band_text(self.band)}"
        if self.quantity == "noise_temperature":  # T_e = T0·(F − 1), F from its dB
            te = lambda e: Extremum(e.frequency_hz, T0_K * (10.0 ** (e.value / 10.0) - 1.0))  # noqa: E731
            return te(a), te(b), (f"true minimum and maximum over {band_text(self.band)} of "
                                  "T0·(F − 1), T0 = 290 K, F the noise figure")
        to = lambda e: Extremum(e.frequency_hz, 10.0 ** (e.value / 20.0))  # noqa: E731
        return to(a), to(b), f"true minimum and maximum of the {what} over {band_text(self.band)}"

    def _unit(self, probe: Any) -> str:
        """The unit of the result: an input-referred density is in the stimulus's unit."""
        if self.quantity != "input_density":
            return self.unit
        system = probe.curve.response.system
        return f"{system.circuit.element(system.source).letter}/√Hz"

    def judge(self, probe: Probe) -> tuple[LimitResult, ...]:
        try:
            vmin, vmax, definition = self._measure(probe)
        except MeasurementFailure as err:
            return (self.error(str(err), self._unit(probe)),)
        return (judge_range(self.name, self.kind, self.min, self.max, vmin, vmax,
                            self._unit(probe), definition, self.METHOD, self.index,
                            self.line),)

    def judge_batch(self, bp: BatchProbe) -> Rows:
        """Each sample solved as a circuit of its own (Monte Carlo, and the worst case's
        central differences): one solve and one noise form per sample."""
        lo, hi = [], []
        for probe in bp.each_sample():
            try:
                a, b, _ = self._measure(probe)
                lo.append(a.value)
                hi.append(b.value)
            except MeasurementFailure:
                lo.append(math.nan)
                hi.append(math.nan)
        measured, margin = range_margin(self.min, self.max, np.array(lo), np.array(hi))
        return [(self.name, measured, margin)]

    def contributions(self, probe: Any, f_hz: float) -> list[tuple[str, str, float, float]]:
        """The sources of noise at ``f_hz``, largest first (for the report)."""
        return probe.noise(self.temperature_c).contributions(f_hz)

