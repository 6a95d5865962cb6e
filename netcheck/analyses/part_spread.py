"""How the toleranced parts vary: matching ``[tolerances]`` to the netlist, drawing samples,
and the worst-case variables (a fully tracking group is one).

Every toleranced part is a :class:`Part`: it unpacks as ``(name, nominal, tolerance)``
(tolerance = the wider end, a positive fraction) and carries its band ``low`` … ``high``
(signed fractions about the nominal), its distribution and its tracking group.

Drawing. Each part's value is nominal × (1 + c + h·u) with c, h the centre and half-width
of its band and u on [−1, 1]: uniform U(−1, 1); normal N(0, 1/3²) (the band's half-width
at 3σ, so "10 % normal" means σ = 3.33 %); truncnormal that normal cut at ±1. Parts in a
tracking group are drawn from correlated standard normals z (equicorrelated,
z_i = √r·g + √(1−r)·e_i) mapped onto each distribution through the normal CDF Φ (a
Gaussian copula). For the parts' values to have the requested Pearson correlation ρ,
r = ρ for normal parts and r = 2·sin(πρ/6) for uniform ones (the inverse of
ρ = (6/π)·arcsin(r/2), the rank correlation of a bivariate normal [4]_). The linear map
onto an asymmetric band keeps the correlation.

References
----------
.. [4] K. Pearson, "Mathematical contributions to the theory of evolution XVI: On further
   methods of determining correlation", Drapers' Company Research Memoirs, Biometric
   Series IV, 1907 (ρ_S = (6/π)·arcsin(r/2) for a bivariate normal).
"""

from __future__ import annotations

import dataclasses
import fnmatch
import math
from typing import Any

import numpy as np

from ..exceptions import SpecError
from ..netlist.elaborate import Circuit
from ..netlist.ports import PORT_ELEMENTS
from ..spec.tolerances import Spread, Tolerances

__all__ = ["Part", "toleranced_parts", "draw", "drift", "variables", "variable_name", "ends",
           "part_json",
           "copula_r",
           "tracking_json"]


class Part(tuple):
    """A toleranced part: unpacks as ``(name, nominal, tolerance)``; its band, distribution
    and tracking group are attributes."""

    low: float
    high: float
    distribution: str | None
    group: int | str | None
    correlation: float
    #: temperature: the coefficient band (low, high) per kelvin about ``reference`` (the
    #: spec's ``tc``), or the netlist's (TC1, TC2, TNOM, temperature of the nominal value)
    tc: tuple[float, float] | None
    tc12: tuple[float, float, float, float] | None
    #: (lowest, highest, reference) °C the temperature terms act over, or None
    temperature: tuple[float, float, float] | None
    ageing: tuple[float, float] | None

    def __new__(cls, name: str, nominal: float, low: float, high: float,
                distribution: str | None = None, group: int | str | None = None,
                correlation: float = 0.0, tc: tuple[float, float] | None = None,
                tc12: tuple[float, float, float, float] | None = None,
                temperature: tuple[float, float, float] | None = None,
                ageing: tuple[float, float] | None = None) -> "Part":
        obj = super().__new__(cls, (name, nominal, max(abs(low), abs(high))))
        obj.low, obj.high, obj.distribution = low, high, distribution
        obj.group, obj.correlation = group, correlation
        obj.tc, obj.tc12, obj.ageing = tc, tc12, ageing
        obj.temperature = temperature if tc is not None or tc12 is not None else None
        return obj

    def __reduce__(self) -> tuple:  # pickles (the batch runner sends parts to workers)
        return (Part, (self[0], self[1], self.low, self.high, self.distribution, self.group,
                       self.correlation, self.tc, self.tc12, self.temperature, self.ageing))

    def thermal(self, t_c: np.ndarray, coefficient: np.ndarray | float | None = None
                ) -> np.ndarray:
        """The factor the value is multiplied by at ``t_c`` °C: 1 + tc·(T − T_ref) with
        ``coefficient`` (spec), or the netlist's (1 + TC1·ΔT + TC2·ΔT²) relative to the
        temperature its nominal value holds at (ΔT = T − TNOM)."""
        t_c = np.asarray(t_c, float)
        if self.tc is not None:
            return 1.0 + coefficient * (t_c - self.temperature[2])
        if self.tc12 is not None:
            tc1, tc2, tnom, t0 = self.tc12
            g = lambda t: 1.0 + tc1 * (t - tnom) + tc2 * (t - tnom) ** 2  # noqa: E731
            return g(t_c) / g(t0)
        return np.ones_like(t_c)

    def drift(self) -> tuple[float, float]:
        """The least and greatest thermal factor − 1 over the temperature range (the
        spec's coefficient band at either end; the netlist's quadratic at the ends and at
        its vertex): the temperature band worst case adds."""
        if self.temperature is None:
            return 0.0, 0.0
        lo_t, hi_t, _ = self.temperature
        ts = [lo_t, hi_t]
        if self.tc is not None:
            f = [float(self.thermal(t, c)) for t in ts for c in self.tc]
        else:
            tc1, tc2, tnom, _ = self.tc12
            if tc2 != 0 and lo_t < tnom - tc1 / (2 * tc2) < hi_t:
                ts.append(tnom - tc1 / (2 * tc2))
            f = [float(self.thermal(t)) for t in ts]
        return min(f) - 1.0, max(f) - 1.0

    def worst_ends(self) -> tuple[float, float]:
        """The ends worst case sets the part at: the initial band, the temperature band
        and the ageing band together, (1 + a)(1 + b)(1 + c) − 1 at each side."""
        d_lo, d_hi = self.drift()
        a_lo, a_hi = self.ageing or (0.0, 0.0)
        return ((1 + self.low) * (1 + d_lo) * (1 + a_lo) - 1.0,
                (1 + self.high) * (1 + d_hi) * (1 + a_hi) - 1.0)


def _band(part: Any) -> tuple[float, float]:
    """(low, high) of a :class:`Part`, or ±t of a plain (name, nominal, t) tuple."""
    return (part.low, part.high) if isinstance(part, Part) else (-part[2], part[2])


def _is_glob(pattern: str) -> bool:
    return any(ch in pattern for ch in "*?[")


def _as_spread(value: "float | Spread") -> Spread:
    return value if isinstance(value, Spread) else Spread(-value, value)


def toleranced_parts(tol: Tolerances, circuit: Circuit, path: str = "<spec>") -> list[Part]:
    """A :class:`Part` for every part with a non-zero tolerance, sorted by name.

    Letter defaults apply first, then globs of ``parts`` in the order written, then
    exact part names, so an exact name always wins. Independent sources are never
    toleranced (the response is per unit stimulus: the drive level belongs in
    ``[[stress]] source_amplitude``); naming one is an error, and globs pass over
    them. A coupling factor may not be toleranced beyond |k| = 1. ``tracking`` groups
    are matched last (spec-271, spec-272).
    """
    default = {k: _as_spread(v) for k, v in tol.default}
    out: dict[str, tuple[float, Spread]] = {}
    # the spec's port terminations are its terms, not parts: never toleranced
    parts = [e for e in circuit.elements if e.name not in PORT_ELEMENTS]
    circuit = dataclasses.replace(circuit, elements=tuple(parts), _index=None)
    for e in circuit.elements:
        # a 0 Ω resistor is a wire, not a part: letter defaults and globs pass over it
        if e.letter in default and _moves(default[e.letter]) and e.value != 0:
            out[e.name] = (e.value, default[e.letter])
    ordered = sorted(tol.parts, key=lambda item: not _is_glob(item[0]))  # stable: globs first
    for pattern, t in ordered:
        s = _as_spread(t)
        where = f"tolerances.parts.{pattern}"
        hits = [e for e in circuit.elements if fnmatch.fnmatchcase(e.name, pattern)]
        if not hits:
            raise SpecError(f"{where}: no part called {pattern} in the netlist",
                            code="spec-203", path=path, where=where)
        sources = [e for e in hits if e.letter in ("V", "I")]
        if sources and not _is_glob(pattern):
            raise SpecError(f"{where}: {pattern} is an independent source; responses are "
                            "per unit stimulus, so its tolerance would change nothing (give "
                            "the drive level as [[stress]] source_amplitude)", code="spec-202",
                            path=path, where=where)
        for e in hits:
            if e in sources or (e.value == 0 and _is_glob(pattern)):
                continue
            reach = abs(e.value) * (1 + s.high)
            if e.letter == "K" and s.half > 0 and reach > 1:
                raise SpecError(
                    f"{where}: a {s.high:.4g} tolerance lets the coupling factor of {e.name} "
                    f"({e.value:g}) reach {reach:.4g}, above 1, which no "
                    f"pair of coils can have; at most {(1 / abs(e.value) - 1) * 100:.3g} % "
                    "fits", code="spec-202", path=path, where=where)
            if _moves(s):
                out[e.name] = (e.value, s)
            else:
                out.pop(e.name, None)
    for name, (v, _) in out.items():
        if v == 0:
            pattern = next((p for p, _ in reversed(ordered)
                            if fnmatch.fnmatchcase(name, p)), None)
            where = f"tolerances.parts.{pattern}" if pattern else "tolerances.default"
            raise SpecError(f"{where}: {name} has the value 0, which a relative tolerance "
                            "cannot move; drop its tolerance", code="spec-202", path=path,
                            where=where)
    if tol.temperature is not None:  # parts with TC1/TC2 in the netlist drift too
        for e in circuit.elements:
            if (getattr(e, "tc1", 0.0) or getattr(e, "tc2", 0.0)) and e.name not in out \
                    and e.value != 0:
                out[e.name] = (e.value, Spread(0.0, 0.0))
    groups = _groups(tol, sorted(out), path)
    made = []
    for name, (v, s) in sorted(out.items()):
        e = circuit.element(name)
        tc12 = None
        if s.tc is None and (getattr(e, "tc1", 0.0) or getattr(e, "tc2", 0.0)):
            tc12 = (e.tc1, e.tc2, e.tnom, circuit.temp_c)
        made.append(Part(name, v, s.low, s.high, s.distribution or tol.distribution,
                         *groups.get(name, (None, 0.0)), s.tc, tc12, tol.temperature,
                         s.ageing))
    return made


def _moves(s: Spread) -> bool:
    """A part tolerance that moves the part: a band, a temperature coefficient or ageing."""
    return s.half > 0 or any(x != 0 for x in (*(s.tc or ()), *(s.ageing or ())))


def _groups(tol: Tolerances, names: list[str], path: str) -> dict[str, tuple[int, float]]:
    """part name → (group index, correlation) for the ``tracking`` groups."""
    out: dict[str, tuple[int, float]] = {}
    for g, track in enumerate(tol.tracking):
        members = []
        for pattern in track.patterns:
            hits = [n for n in names if fnmatch.fnmatchcase(n, pattern)]
            if not hits:
                raise SpecError(f"{track.where}.parts: {pattern} matches no toleranced part "
                                "(a part tracks only when it has a tolerance)",
                                code="spec-271", path=path, where=f"{track.where}.parts")
            members += [n for n in hits if n not in members]
        if len(members) < 2:
            raise SpecError(f"{track.where}.parts: a tracking group needs two or more "
                            f"toleranced parts; it matches only {members[0]}",
                            code="spec-271", path=path, where=f"{track.where}.parts")
        for n in members:
            if n in out:
                raise SpecError(f"{track.where}.parts: {n} is already in tracking group "
                                f"{out[n][0]}; a part tracks in one group only",
                                code="spec-271", path=path, where=f"{track.where}.parts")
            out[n] = (g, track.correlation)
    return out


def _check_groups(parts: list, path: str) -> dict[int, list[int]]:
    """group → member columns; mixed distributions are refused below full tracking."""
    groups: dict[int, list[int]] = {}
    for j, p in enumerate(parts):
        if isinstance(p, Part) and p.group is not None:
            groups.setdefault(p.group, []).append(j)
    for g, cols in groups.items():
        kinds = {parts[j].distribution for j in cols}
        rho = parts[cols[0]].correlation
        if len(kinds) > 1 and rho < 1:
            where = f"tolerances.tracking[{g}]"
            raise SpecError(
                f"{where}: its parts have different distributions ({', '.join(sorted(kinds))})"
                f"; a correlation below 1 is defined here for parts of one distribution "
                "(with correlation = 1 they share one draw, mapped onto each)",
                code="spec-272", path=path, where=where)
    return groups


def copula_r(rho: float, distribution: str) -> float:
    """The correlation of the underlying normals that gives values correlated by ``rho``.

    Examples
    --------
    >>> round(copula_r(0.5, "uniform"), 6), copula_r(0.5, "normal"), copula_r(1.0, "uniform")
    (0.517638, 0.5, 1.0)
    """
    if distribution == "uniform" and rho < 1:
        return 2.0 * math.sin(math.pi * rho / 6.0)
    return rho


def _from_normal(z: np.ndarray, distribution: str) -> np.ndarray:
    """Standard normals z mapped onto u in [−1, 1] of ``distribution`` (through Φ)."""
    from scipy.special import ndtr, ndtri

    if distribution == "uniform":
        return 2.0 * ndtr(z) - 1.0
    if distribution == "normal":
        return z / 3.0
    lo = ndtr(-3.0)  # truncnormal: the normal of σ = 1/3 cut at ±1 (±3σ)
    return ndtri(lo + (1.0 - 2.0 * lo) * ndtr(z)) / 3.0


def _independent(rng: np.random.Generator, samples: int, k: int, distribution: str
                 ) -> np.ndarray:
    if distribution == "uniform":
        return rng.uniform(-1.0, 1.0, size=(samples, k))
    u = rng.standard_normal(size=(samples, k)) / 3.0
    if distribution == "truncnormal":
        bad = np.abs(u) > 1.0
        while bad.any():
            u[bad] = rng.standard_normal(int(bad.sum())) / 3.0
            bad = np.abs(u) > 1.0
    return u


def draw(parts: list, samples: int, distribution: str, rng: np.random.Generator,
         path: str = "<spec>") -> dict[str, np.ndarray]:
    """Sampled values (S,) per part: nominal × (1 + c + h·u) (module docstring).

    ``distribution`` is that of plain (name, nominal, t) tuples; a :class:`Part` carries its
    own. With one distribution and no tracking the draw is that of earlier versions (the
    same seed gives the same samples); else every column comes from standard normals,
    correlated within each tracking group, through Φ.
    """
    k = len(parts)
    kinds = [p.distribution if isinstance(p, Part) and p.distribution else distribution
             for p in parts]
    groups = _check_groups(parts, path)
    if not groups and len(set(kinds)) <= 1:
        u = _independent(rng, samples, k, kinds[0] if kinds else distribution)
    else:
        z = rng.standard_normal(size=(samples, k))
        for g, cols in groups.items():
            rho = parts[cols[0]].correlation
            r = copula_r(rho, kinds[cols[0]])
            shared = rng.standard_normal(samples)
            z[:, cols] = math.sqrt(r) * shared[:, None] + math.sqrt(1.0 - r) * z[:, cols]
        u = np.column_stack([_from_normal(z[:, j], kinds[j]) for j in range(k)]) \
            if k else z
    values = {}
    for j, p in enumerate(parts):
        low, high = _band(p)
        values[p[0]] = p[1] * (1.0 + 0.5 * (high + low) + 0.5 * (high - low) * u[:, j])
    for j, p in enumerate(parts):
        name, nominal = p[0], p[1]
        bad = int(np.count_nonzero(values[name] * nominal <= 0))
        if bad:  # only the untruncated normal reaches past ±100 %
            raise SpecError(
                f"tolerances.distribution: 'normal' with {p[2] * 100:g} % (3σ) on {name} drew "
                f"{'a value' if bad == 1 else f'{bad} values'} of {name} at or beyond zero "
                f"in {samples} samples; use 'truncnormal' (cut at ± the tolerance) or a "
                "smaller tolerance", code="spec-202", path=path, where="tolerances.distribution")
    return values


def variables(parts: list) -> list[list[int]]:
    """The worst-case variables: the columns of ``parts`` that move as one. A fully
    tracking group (correlation 1) is one variable, its parts at the same end together;
    every other part is a variable of its own (partly correlated parts are taken as
    independent, which can only widen the worst case)."""
    out: list[list[int]] = []
    seen: dict[int, list[int]] = {}
    for j, p in enumerate(parts):
        if isinstance(p, Part) and p.group is not None and p.correlation >= 1:
            if p.group in seen:
                seen[p.group].append(j)
                continue
            seen[p.group] = [j]
            out.append(seen[p.group])
        else:
            out.append([j])
    return out


def drift(parts: list, values: dict[str, np.ndarray], samples: int,
          rng: np.random.Generator) -> np.ndarray | None:
    """Temperature and ageing over the Monte Carlo samples, applied to ``values`` in place.

    One temperature per sample, uniform over the spec's range and shared by every part
    (the board is at one temperature); each part's coefficient uniform over its ``tc``
    band, its own per sample (the netlist's TC1/TC2 as given); each ageing uniform over
    its band. The parts of a fully tracking group (correlation 1) share one coefficient
    draw and one ageing draw, each mapped onto its own band. Returns the temperatures
    (S,), or None when no part has a thermal term.
    """
    thermal = [p for p in parts if isinstance(p, Part) and p.temperature is not None]
    aged = [p for p in parts if isinstance(p, Part) and p.ageing is not None]
    shared: dict[tuple[str, Any], np.ndarray] = {}

    def unit(kind: str, p: Part) -> np.ndarray:
        """U(0, 1) draws for ``p``: one set per fully tracking group."""
        if p.group is None or p.correlation < 1:
            return rng.uniform(0.0, 1.0, samples)
        key = (kind, p.group)
        if key not in shared:
            shared[key] = rng.uniform(0.0, 1.0, samples)
        return shared[key]

    t_c = None
    if thermal:
        lo_t, hi_t, _ = thermal[0].temperature
        t_c = rng.uniform(lo_t, hi_t, samples)
        for p in thermal:
            c = p.tc[0] + (p.tc[1] - p.tc[0]) * unit("tc", p) if p.tc is not None else None
            values[p[0]] = values[p[0]] * p.thermal(t_c, c)
    for p in aged:
        a = p.ageing[0] + (p.ageing[1] - p.ageing[0]) * unit("ageing", p)
        values[p[0]] = values[p[0]] * (1.0 + a)
    return t_c


def variable_name(parts: list, cols: list[int]) -> str:
    """A worst-case variable in words: the part, ``.param gbw``, or ``R1+R2``."""
    group = getattr(parts[cols[0]], "group", None)
    if isinstance(group, str) and group.startswith("param "):
        return "." + group
    return "+".join(parts[j][0] for j in cols)


def ends(parts: list) -> tuple[np.ndarray, np.ndarray]:
    """(low, high) (P,) signed fractional ends of every part's band, with its temperature
    and ageing bands (:meth:`Part.worst_ends`)."""
    b = np.array([p.worst_ends() if isinstance(p, Part) else _band(p) for p in parts],
                 float).reshape(len(parts), 2)
    return b[:, 0], b[:, 1]


def part_json(p: Any, distribution: str) -> dict[str, Any]:
    """A part's entry in the JSON ``parts`` list of the Monte Carlo block."""
    low, high = _band(p)
    entry = {"part": p[0], "nominal": p[1], "tolerance": p[2], "low": low, "high": high,
             "distribution": p.distribution if isinstance(p, Part) and p.distribution
             else distribution}
    if isinstance(p, Part) and p.group is not None:
        entry.update(group=p.group, correlation=p.correlation)
    if isinstance(p, Part) and (p.temperature is not None or p.ageing is not None):
        if p.tc is not None:
            entry["tc"] = list(p.tc)
        elif p.tc12 is not None:
            entry["tc12"] = list(p.tc12[:2])
        if p.ageing is not None:
            entry["ageing"] = list(p.ageing)
        entry["worst_low"], entry["worst_high"] = p.worst_ends()
    return entry


def tracking_json(parts: list, values: dict[str, np.ndarray]) -> list[dict[str, Any]]:
    """Each tracking group with its requested correlation and the one the samples show
    (the mean Pearson coefficient over its pairs of parts)."""
    out = []
    for g, cols in sorted(_check_groups(parts, "<spec>").items()):
        names = [parts[j][0] for j in cols]
        x = np.array([values[n] for n in names])
        with np.errstate(all="ignore"):
            c = np.corrcoef(x) if x.shape[1] > 1 else np.full((len(names),) * 2, np.nan)
        pairs = c[np.triu_indices(len(names), 1)]
        out.append({"group": g, "parts": names, "correlation": parts[cols[0]].correlation,
                    "sample_correlation": float(np.mean(pairs)) if np.all(np.isfinite(pairs))
                    else None})
    return out
