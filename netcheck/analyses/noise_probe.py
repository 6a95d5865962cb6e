"""Noise quantities as exact curves the measurements find band extremes on, and the
ranked contributions a report shows (netcheck.mna.noise has the density).

* output density √S_out(f), V/√Hz for a voltage output (per unit of the stimulus gain);
* input-referred density √S_out(f)/|H(f)|, in the stimulus's unit per √Hz;
* noise figure 10·log10(S_net/S_src): the output noise of the circuit (every source
  except a load that belongs to the next stage) over that of the source resistance
  alone (H. T. Friis, "Noise figures of radio receivers", Proc. IRE 32, 1944, from
  memory); the curve's |X| is √(S_net/S_src), so 20·log10|X| is the figure in dB.

Each curve carries its exact derivative in f (from the adjoint's), so band extremes are
found as the gain's are. The integrated output noise is
:func:`netcheck.mna.noise.integrated_noise`.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ..measure.measurements import FunctionCurve, root_seeds
from ..mna.assemble import assemble
from ..mna.noise import (NoiseSource, integrated_noise, noise_sources, output_noise,
                         rational_form)
from ..mna.solve import solve
from .part_values import with_values

__all__ = ["NoiseCurves", "noise_block", "SampleProbe", "each_sample"]


class NoiseCurves:
    """The noise curves of one solved response at one temperature (sources kept)."""

    def __init__(self, response: Any, curve: Any, temp_c: float) -> None:
        self.response, self.curve, self.temp_c = response, curve, temp_c
        self.system = response.system
        self.sources: list[NoiseSource] = noise_sources(self.system, temp_c)
        #: every source's transfer in pole–zero form over the sweep (None: solved directly)
        self.rational = rational_form(self.system, self.sources, curve.grid_hz)
        self._bands: dict[tuple[float, float], list[tuple[str, str, float, float]]] = {}

    def _density(self, f: np.ndarray, keep: np.ndarray | None = None
                 ) -> tuple[np.ndarray, np.ndarray]:
        """(S, dS/df) summed over the sources ``keep`` selects (all by default)."""
        got = output_noise(self.system, f, self.temp_c, self.sources, derivative=True,
                           rational=self.rational)
        if keep is None:
            return got.total, got.d_total  # type: ignore[return-value]
        return got.parts[keep].sum(axis=0), got.d_parts[keep].sum(axis=0)  # type: ignore[index]

    def density_curve(self) -> FunctionCurve:
        """√S_out(f) as a curve (its |H| is the density)."""
        def fn(f: np.ndarray) -> np.ndarray:
            return np.sqrt(self._density(f)[0]).astype(complex)

        def dfn(f: np.ndarray) -> np.ndarray:
            s, ds = self._density(f)
            with np.errstate(all="ignore"):
                return (ds / (2.0 * np.sqrt(s))).astype(complex)
        return self._curve(fn, dfn)

    def input_curve(self) -> FunctionCurve:
        """√S_out(f)/H(f): |X| is the input-referred density."""
        h = self.curve

        def fn(f: np.ndarray) -> np.ndarray:
            with np.errstate(all="ignore"):
                return np.sqrt(self._density(f)[0]) / h.transfer(f)

        def dfn(f: np.ndarray) -> np.ndarray:
            s, ds = self._density(f)
            hf, dh = h.transfer(f), h.dtransfer(f)
            root = np.sqrt(s)
            with np.errstate(all="ignore"):
                return ds / (2.0 * root) / hf - root * dh / (hf * hf)
        return self._curve(fn, dfn)

    def figure_curve(self, source: str, load: str | None) -> FunctionCurve:
        """√(S_net/S_src): 20·log10 of it is the noise figure in dB."""
        names = np.array([s.element for s in self.sources])
        src = names == source
        net = names != load if load is not None else np.ones(names.size, bool)

        def both(f: np.ndarray) -> tuple[np.ndarray, ...]:
            got = output_noise(self.system, f, self.temp_c, self.sources, derivative=True,
                               rational=self.rational)
            return (got.parts[net].sum(axis=0), got.d_parts[net].sum(axis=0),  # type: ignore[index]
                    got.parts[src].sum(axis=0), got.d_parts[src].sum(axis=0))  # type: ignore[index]

        def fn(f: np.ndarray) -> np.ndarray:
            sn, _, ss, _ = both(f)
            with np.errstate(all="ignore"):
                return np.sqrt(sn / ss).astype(complex)

        def dfn(f: np.ndarray) -> np.ndarray:
            sn, dsn, ss, dss = both(f)
            with np.errstate(all="ignore"):
                x = np.sqrt(sn / ss)
                return (x * 0.5 * (dsn / sn - dss / ss)).astype(complex)
        return self._curve(fn, dfn)

    def _curve(self, fn: Any, dfn: Any) -> FunctionCurve:
        c = self.curve
        return FunctionCurve(c.grid_hz, fn, dfn, c.seeds_hz, c.poles_hz, None, False)

    def rms(self, lo_hz: float, hi_hz: float) -> float:
        """The output noise integrated over [lo_hz, hi_hz], RMS (V for a voltage output)."""
        seeds = self.curve.seeds_hz
        return float(np.sqrt(integrated_noise(self.system, lo_hz, hi_hz, self.temp_c,
                                              seeds)))

    def band_contributions(self, lo_hz: float, hi_hz: float
                           ) -> list[tuple[str, str, float, float]]:
        """Each source over [lo_hz, hi_hz], largest first: (element, what, its RMS noise
        at the output over the band in V, share of the total noise power in %), by one
        adaptive vector quadrature of every source's density (``scipy.integrate.quad_vec``)."""
        key = (lo_hz, hi_hz)
        if key in self._bands:  # an rms and an snr limit over one band share it
            return self._bands[key]
        from scipy.integrate import quad_vec

        def parts(u: float) -> np.ndarray:
            f = np.exp(u)
            got = output_noise(self.system, np.array([f]), self.temp_c, self.sources,
                               rational=self.rational)
            return got.parts[:, 0] * f

        power, _ = quad_vec(parts, np.log(lo_hz), np.log(hi_hz), epsrel=1e-8)
        total = float(np.sum(power)) or 1.0
        rows = [(s.element, s.what, float(np.sqrt(p)), 100.0 * float(p) / total)
                for s, p in zip(self.sources, power)]
        self._bands[key] = sorted(rows, key=lambda r: -r[3])
        return self._bands[key]

    def contributions(self, f_hz: float) -> list[tuple[str, str, float, float]]:
        """Each source at ``f_hz``, largest first: (element, what, density V/√Hz at the
        output, share of the total density in %)."""
        got = output_noise(self.system, np.array([f_hz]), self.temp_c, self.sources,
                           rational=self.rational)
        total = float(got.total[0]) or 1.0
        rows = [(s.element, s.what, float(np.sqrt(p[0])), 100.0 * float(p[0]) / total)
                for s, p in zip(got.sources, got.parts)]
        return sorted(rows, key=lambda r: -r[3])


def noise_block(limits: Any, results: Any, probe_of: Any) -> list[dict[str, Any]]:
    """The JSON ``noise`` block: for each noise limit's result, the sources of noise,
    largest first — at its deciding frequency (``at_hz``: each one's density at the
    output), or for rms and snr over its band (``band_hz``: each one's RMS at the
    output) — with each one's share of the total noise power. ``probe_of(k)`` is the
    probe of the output limit k judges."""
    out = []
    by_name = {r.name: r for r in results}
    for k, lim in enumerate(limits):
        if getattr(lim, "kind", "") != "noise" or lim.name not in by_name:
            continue
        r = by_name[lim.name]
        curves = probe_of(k).noise(lim.temperature_c)
        if lim.quantity in ("rms", "snr"):  # each source's RMS over the band
            rows = curves.band_contributions(*lim.band)
            where: dict[str, Any] = {"band_hz": list(lim.band), "at_hz": None}
            key = "rms"
        else:
            f = r.at_hz if r.at_hz else float(np.sqrt(lim.band[0] * lim.band[1]))
            rows = curves.contributions(f)
            where, key = {"band_hz": None, "at_hz": f}, "density"
        grid = curves.curve.grid_hz
        f = np.geomspace(float(grid[0]), float(grid[-1]), CURVE_POINTS)
        density = np.sqrt(output_noise(curves.system, f, curves.temp_c, curves.sources,
                                       rational=curves.rational).total)
        out.append({"limit": lim.name, **where, "temperature_c": curves.temp_c,
                    "sources": [{"part": e, "what": w, key: d, "share_pct": p}
                                for e, w, d, p in rows],
                    "quantity": lim.quantity, "limit_band_hz": list(lim.band),
                    "bounds": [lim.min, lim.max],
                    "curve": {"f_hz": [float(x) for x in f],
                              "density": [float(x) for x in density]}})
    return out


#: points of the output noise density each noise block keeps for its plot
CURVE_POINTS = 200


class SampleProbe:
    """What a noise or step limit measures on, for one sample solved as a circuit of its
    own: its response as a curve, the spec's ports, its noise curves and step figures."""

    def __init__(self, response: Any, ports: Any = None) -> None:
        f = response.frequency_hz
        poles, zeros, _ = response.roots_hz()
        seeds = np.unique(np.concatenate([root_seeds(poles, f[0], f[-1]),
                                          root_seeds(zeros, f[0], f[-1])]))
        self.curve = FunctionCurve(f, lambda x: response.at(x)[0],
                                   lambda x: response.at(x)[1], seeds, poles, zeros, False)
        self.response, self.ports = response, ports
        self._noise: dict[float | None, NoiseCurves] = {}
        self._steps: dict[float | None, Any] = {}

    def step_figures(self, duration: float | None = None) -> Any:
        from .step_probe import StepFigures
        if duration not in self._steps:
            self._steps[duration] = StepFigures(self.response, duration)
        return self._steps[duration]

    def noise(self, temp_c: float | None = None) -> NoiseCurves:
        t = self.response.system.circuit.temp_c if temp_c is None else temp_c
        if t not in self._noise:
            self._noise[t] = NoiseCurves(self.response, self.curve, t)
        return self._noise[t]


def each_sample(bp: Any) -> Any:
    """Each sample of a BatchProbe solved as a circuit of its own, as a
    :class:`SampleProbe` a noise limit measures on: exact, and costly (one nominal solve
    per sample)."""
    system = bp.ss.system
    for s in range(bp.ss.S):
        circuit = with_values(system.circuit, {k: float(v[s]) for k, v in
                                               bp.ss.values.items()})
        response = solve(assemble(circuit, system.source, system.node, system.ref),
                         bp.grid)
        yield SampleProbe(response, bp.ports)
