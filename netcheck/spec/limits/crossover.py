"""The ``crossover`` limit kind: where two named outputs have equal gain, and the level there.

A two-way crossover, a diplexer, or the low- and high-pass outputs of a state-variable
filter split the band between two outputs; the crossover frequency is where their gains
are equal (a Linkwitz–Riley pair crosses 6.02 dB down, a Butterworth pair 3.01 dB down,
common practice, no source). The kind needs the spec's ``[outputs]`` table
(:mod:`netcheck.spec.outputs`) and names two of them.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, ClassVar

import math

import numpy as np

from .base import Limit, Linearised, Probe, Rows, band_text, judge_range, range_margin
from ..reader import SpecReader, Sweep
from ...measure.measurements import Extremum, MeasurementFailure, crossover
from ...result import LimitResult

if TYPE_CHECKING:  # pragma: no cover
    from ...analyses.sample_probe import BatchProbe
    from ...mna.sensitivity import AdjointSensitivity

__all__ = ["CrossoverLimit"]

_DB = 20.0 / math.log(10.0)  # dB per neper
#: bisection steps per sample in Monte Carlo (the bracket shrinks 2⁻⁶⁰ in log f)
_BISECTIONS = 60


@dataclass(frozen=True, slots=True)
class CrossoverLimit(Limit):
    """Frequency where two outputs' gains are equal, searched in a band, and the level there."""

    outputs: tuple[str, str] = ("", "")
    band: tuple[float, float] = (0.0, 0.0)
    range: tuple[float | None, float | None] | None = None
    level: tuple[float | None, float | None] | None = None

    kind: ClassVar[str] = "crossover"
    SUMMARY: ClassVar[str] = ("frequency where two named outputs have equal gain, and the "
                              "gain there")
    METHOD: ClassVar[str] = "first 0 dB crossing of the gain ratio; Brent's root on exact gains"
    KEYS: ClassVar[dict[str, str]] = {
        "outputs": "the two outputs compared, [name, name] from [outputs]",
        "band": "[start, stop] band searched for the crossover, Hz",
        "range": "[min, max] allowed crossover frequency, Hz",
        "level_db": "[min, max] allowed gain at the crossover, dB re the stimulus",
    }

    @classmethod
    def from_table(cls, rd: SpecReader, sweep: Sweep, name: str | None, index: int,
                   line: int | None) -> "CrossoverLimit":
        raw = rd.raw("outputs")
        if raw is None:
            rd.fail("outputs", "missing (required): the two outputs compared, e.g. "
                    "[\"low\", \"high\"]", code="spec-267")
        if (not isinstance(raw, list) or len(raw) != 2
                or not all(isinstance(x, str) and x for x in raw)):
            rd.fail("outputs", f"expected two output names, [name, name], got {raw!r}",
                    code="spec-267")
        if raw[0] == raw[1]:
            rd.fail("outputs", f"names output {raw[0]!r} twice: a crossover compares two "
                    "outputs", code="spec-267")
        band = rd.band("band", sweep)
        rng = rd.bounds("range", positive=True)
        level = rd.bounds("level_db")
        if rng is None and level is None:
            rd.fail("range", "give range (the allowed crossover frequency, Hz), level_db "
                    "(the allowed gain there, dB) or both", code="spec-267")
        assert band is not None
        return cls(name or f"crossover {raw[0]}/{raw[1]}", index, line, (raw[0], raw[1]),
                   band, rng, level)

    def _parts(self) -> list[tuple[str, str]]:
        out = []
        if self.range is not None:
            out.append(("frequency", "Hz"))
        if self.level is not None:
            out.append(("level", "dB"))
        return out

    def result_names(self) -> tuple[str, ...]:
        return tuple(f"{self.name}: {sub}" for sub, _ in self._parts())

    def _words(self) -> str:
        a, b = self.outputs
        return f"outputs {a} and {b}, searched over {band_text(self.band)}"

    def judge(self, probe: Probe) -> tuple[LimitResult, ...]:
        try:
            a, b = (probe.sibling(n).curve for n in self.outputs)  # type: ignore[attr-defined]
            f, level = crossover(a, b, *self.band)
        except MeasurementFailure as err:
            return tuple(self.error(f"{self._words()}: {err}", u, s) for s, u in self._parts())
        e, g = Extremum(f, f), Extremum(f, level)
        out = []
        if self.range is not None:
            out.append(judge_range(f"{self.name}: frequency", self.kind, *self.range, e, e,
                                   "Hz", f"frequency where the gains of {self._words()}, "
                                   "are equal", self.METHOD, self.index, self.line))
        if self.level is not None:
            out.append(judge_range(f"{self.name}: level", self.kind, *self.level, g, g, "dB",
                                   f"gain where the gains of {self._words()}, are equal",
                                   self.METHOD, self.index, self.line))
        return tuple(out)

    def judge_batch(self, bp: "BatchProbe") -> Rows:
        f, level = batch_crossover(bp.siblings[self.outputs[0]], bp.siblings[self.outputs[1]],
                                   *self.band)
        out: Rows = []
        if self.range is not None:
            out.append((f"{self.name}: frequency", *range_margin(*self.range, f, f)))
        if self.level is not None:
            out.append((f"{self.name}: level", *range_margin(*self.level, level, level)))
        return out

    def sensitivities(self, probe: Probe, adj: "AdjointSensitivity") -> list[Linearised]:
        """The crossover f (where D = g_a − g_b = 0) moves by −(∂D/∂ln p)/(∂D/∂f) (implicit
        differentiation); the level g_a(f) by ∂g_a/∂ln p + g_a′·∂f/∂ln p. Each output's
        derivatives come from the adjoint of its own System."""
        from ...mna.sensitivity import AdjointSensitivity

        probes = [probe.sibling(n) for n in self.outputs]  # type: ignore[attr-defined]
        f, level = crossover(probes[0].curve, probes[1].curve, *self.band)
        d = []
        for p in probes:
            system = p.curve.response.system
            own = adj if adj.system is system else AdjointSensitivity(system, adj.parts)
            d.append(own.log_derivatives(f))
        d_p = _DB * (d[0].w_p[0].real - d[1].w_p[0].real)
        d_f = _DB * (d[0].w_f[0].real - d[1].w_f[0].real)
        with np.errstate(all="ignore"):
            df = -d_p / d_f
        dl = _DB * d[0].w_p[0].real + _DB * d[0].w_f[0].real * df
        out = []
        if self.range is not None:
            out.append(Linearised(f"{self.name}: frequency", f, df, f, df))
        if self.level is not None:
            out.append(Linearised(f"{self.name}: level", level, dl, level, dl))
        return out


def batch_crossover(a: Any, b: Any, lo: float, hi: float) -> tuple[np.ndarray, np.ndarray]:
    """Per sample, the lowest frequency in [lo, hi] where the gains of the batch probes
    ``a`` and ``b`` are equal, and the gain there; NaN where they are not equal in the band.

    Bracketed at the first sign change of the gain difference over the band's ends and
    the grid points inside it, then bisected in log f (:data:`_BISECTIONS` steps).
    """
    grid = a.grid
    inside = grid[(grid > lo) & (grid < hi)]
    pts = np.concatenate([[lo], inside, [hi]])
    d = a.values("gain_db", pts) - b.values("gain_db", pts)
    s = np.sign(d)
    change = (s[:, :-1] * s[:, 1:] <= 0) & np.isfinite(d[:, :-1]) & np.isfinite(d[:, 1:])
    found = change.any(axis=1)
    k = np.argmax(change, axis=1)
    left, right = np.log(pts[k]), np.log(pts[k + 1])
    d_left = d[np.arange(d.shape[0]), k]
    exact = d_left == 0
    for _ in range(_BISECTIONS):
        mid = 0.5 * (left + right)
        dm = (a.values("gain_db", np.exp(mid)[:, None])
              - b.values("gain_db", np.exp(mid)[:, None]))[:, 0]
        same = np.sign(dm) == np.sign(d_left)
        left = np.where(same, mid, left)
        d_left = np.where(same, dm, d_left)
        right = np.where(same, right, mid)
    f = np.where(exact, np.exp(left), np.exp(0.5 * (left + right)))
    f = np.where(found, f, np.nan)
    level = a.values("gain_db", np.where(found, f, lo)[:, None])[:, 0]
    return f, np.where(found, level, np.nan)
