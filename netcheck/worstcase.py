"""Worst case: extreme-value analysis (EVA) and RSS from adjoint sensitivities, and corners.

Every judged quantity is linearised by its limit kind's ``sensitivities`` from the
adjoint derivatives of :mod:`netcheck.sensitivity` at the frequencies that decide it
(Director & Rohrer [1]_). EVA sets each part at the tolerance end that moves the
quantity towards each bound and adds the first-order effects; RSS adds them in
quadrature, for comparison. With up to :data:`MAX_CORNER_PARTS` toleranced parts
(:data:`MAX_CORNER_PARTS_SPARSE` on the sparse path, where each corner costs a sweep) every
corner (each part at either end) is also judged, through the Monte Carlo machinery,
and the worse of EVA and the corners decides.

References
----------
.. [1] S. W. Director and R. A. Rohrer, "The generalized adjoint network and network
   sensitivities", IEEE Trans. Circuit Theory 16(3), 318-323, 1969.
"""

from __future__ import annotations

import itertools
import math
from typing import TYPE_CHECKING, Any

import numpy as np

from .assemble import System
from .limits import LIMITS, Linearised
from .measure import MeasurementFailure
from .result import LimitResult, Status
from .sensitivity import AdjointSensitivity
from .spec import Spec
from .tolerance import MEASUREMENT_KEYS, Analysis, _f, run_samples

if TYPE_CHECKING:  # pragma: no cover
    from .evaluate import SpecProbe

__all__ = ["worst_case", "MAX_CORNER_PARTS", "MAX_CORNER_PARTS_SPARSE"]

#: corners are enumerated (2^P of them) up to this many toleranced parts
MAX_CORNER_PARTS = 12
#: the same for systems on the sparse path, where every corner is a sweep of its own
MAX_CORNER_PARTS_SPARSE = 6


def _measurement_sensitivities(probe: "SpecProbe", adj: AdjointSensitivity,
                               keys: list[str]) -> dict[str, np.ndarray]:
    """∂/∂ln p of the nominal measurements (peak, half-power edges, bandwidth, centre, Q)."""
    out: dict[str, np.ndarray] = {}
    try:
        pk = probe.peak()
    except MeasurementFailure:
        return out
    grid = probe.curve.grid_hz
    out["peak_gain_db"] = adj.extreme("gain_db", pk.frequency_hz)
    out["f_peak_hz"] = adj.peak_shift(pk.frequency_hz,
                                      interior=grid[0] < pk.frequency_hz < grid[-1])
    if any(k not in out for k in keys):
        try:
            out.update(adj.resonance(probe.resonance(None, None)))
        except MeasurementFailure:
            pass
    return {k: v for k, v in out.items() if k in keys}


def _central_differences(system: System, spec: Spec, parts: list[tuple[str, float, float]],
                         memory: int) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    """∂M/∂ln p of every judged quantity and measurement by central differences.

    Sample k has part k at (1 + h), sample P + k at (1 − h), all solved together; the
    fallback for quantities the adjoint linearisation does not cover.
    """
    P, rel = len(parts), 1e-6
    values = {}
    for j, (name, v, _) in enumerate(parts):
        col = np.full(2 * P, v)
        col[j] = v * (1 + rel)
        col[P + j] = v * (1 - rel)
        values[name] = col
    rows, meas = _rows_for(system, spec, values, 2 * P, memory)
    diff = lambda m: (m[:P] - m[P:]) / (2 * rel)  # noqa: E731
    return {k: diff(m) for k, (m, _) in rows.items()}, {k: diff(v) for k, v in meas.items()}


def _rows_for(system: System, spec: Spec, values: dict[str, np.ndarray], n: int,
              memory: int, label: str | None = None
              ) -> tuple[dict[str, tuple[np.ndarray, np.ndarray]], dict[str, np.ndarray]]:
    margins, measured, meas, _, _ = run_samples(system, spec, values, n, memory, label)
    return {k: (measured[k], margins[k]) for k in margins}, meas


def _finite(row: Linearised) -> bool:
    return bool(np.all(np.isfinite(row.d_low)) and np.all(np.isfinite(row.d_high)))


def worst_case(system: System, spec: Spec, parts: list[tuple[str, float, float]],
               nominal: tuple[LimitResult, ...], nominal_measurements: dict[str, float],
               analysis: Analysis, probe: "SpecProbe") -> tuple[dict[str, Any], list[LimitResult]]:
    """Extreme-value analysis from adjoint sensitivities, RSS, and (≤ 12 parts) all corners.

    Every judged quantity is linearised by its limit kind's ``sensitivities`` from the
    adjoint derivatives at the frequencies that decide it (:mod:`netcheck.sensitivity`);
    a quantity that cannot be linearised there (a kind without the method, an edge
    where the gain is flat) falls back to central differences of the re-measured value,
    and the row says which method it used. ``probe`` is the nominal SpecProbe.
    """
    memory = analysis.memory_mib * 2**20
    P = len(parts)
    tol = np.array([t for _, _, t in parts])
    adj = AdjointSensitivity(system, parts)
    by_name = {r.name: r for r in nominal}
    lin: dict[str, tuple[Linearised, str]] = {}
    for lim in spec.limits:
        try:
            rows = lim.sensitivities(probe, adj)
        except (NotImplementedError, MeasurementFailure):
            continue
        lin.update((row.name, (row, "adjoint")) for row in rows if _finite(row))
    keys = [k for k in nominal_measurements if k in MEASUREMENT_KEYS]
    d_meas = _measurement_sensitivities(probe, adj, keys)
    judged = [r.name for r in nominal if r.index < len(spec.limits) and r.kind in LIMITS
              and r.measured is not None and math.isfinite(r.measured)]
    meas_method = {k: "adjoint" for k, d in d_meas.items() if np.all(np.isfinite(d))}
    if any(n not in lin for n in judged) or any(k not in meas_method for k in keys):
        fd_rows, fd_meas = _central_differences(system, spec, parts, memory)
        for name in judged:
            if name not in lin and name in fd_rows:
                m0 = by_name[name].measured
                lin[name] = (Linearised(name, m0, fd_rows[name], m0, fd_rows[name]),
                             "central difference")
        for k in keys:
            if k not in meas_method and k in fd_meas:
                d_meas[k], meas_method[k] = fd_meas[k], "central difference"
    out_rows, lim_json, sens_json = [], [], []
    from .solve import DENSE_MAX

    cap = MAX_CORNER_PARTS if system.size <= DENSE_MAX else MAX_CORNER_PARTS_SPARSE
    corners = _corner_rows(system, spec, parts, memory) if 0 < P <= cap else None
    for name in judged:
        if name not in lin:
            continue
        r = by_name[name]
        row, method = lin[name]
        if not _finite(row):  # not even the differences gave a finite slope
            lim_json.append({"name": name, "measured_nominal": r.measured, "min": None,
                             "max": None, "margin": None, "status": Status.ERROR.value,
                             "sensitivity_method": method})
            out_rows.append(LimitResult(
                f"worst case: {name}", "worst_case", Status.ERROR, None, r.lower, r.upper,
                None, r.unit, r.at_hz, "", "", "the sensitivities of this quantity could not "
                "be computed (the circuit is singular or the measurement jumps where the "
                "parts move)", r.index, r.line))
            continue
        c_lo, c_hi = row.d_low * tol, row.d_high * tol
        lo_v = row.low - float(np.sum(np.abs(c_lo)))
        hi_v = row.high + float(np.sum(np.abs(c_hi)))
        margin = _margin(r, lo_v, hi_v)
        entry = {"name": name, "measured_nominal": r.measured, "min": lo_v, "max": hi_v,
                 "rss_min": row.low - float(np.sqrt(np.sum(c_lo ** 2))),
                 "rss_max": row.high + float(np.sqrt(np.sum(c_hi ** 2))), "margin": margin,
                 "sensitivity_method": method}
        lost = 0
        if corners is not None and name in corners:
            cmin, cmax, cmargin, lost = corners[name]
            entry.update(corners_min=_f(cmin), corners_max=_f(cmax),
                         corners_margin=_f(cmargin), corners_unmeasurable=lost,
                         eva_differs=bool(math.isfinite(cmargin) and abs(cmargin - margin)
                                          > 1e-6 * max(1.0, abs(margin))))
            if math.isfinite(cmargin):
                margin = min(margin, cmargin)
                lo_v, hi_v = min(lo_v, cmin), max(hi_v, cmax)
        status = Status.PASS if margin >= 0 else Status.FAIL
        if lost:  # the worst case is not established where the quantity is not there
            status = Status.ERROR
            entry["margin"] = None
        entry["status"] = status.value
        lim_json.append(entry)
        lower_decides = r.lower is not None and (r.upper is None or
                                                 lo_v - r.lower < r.upper - hi_v)
        m0, dln = (row.low, row.d_low) if lower_decides else (row.high, row.d_high)
        contrib = dln * tol
        order = np.argsort(-np.abs(contrib))[:5]
        relative = m0 and r.unit not in ("dB", "deg")  # a ratio of logarithms means nothing
        sens_json.append({"name": name, "unit": r.unit, "method": method, "top": [
            {"part": parts[k][0], "sensitivity": _f(dln[k] / m0) if relative else None,
             "per_unit_log": _f(dln[k]), "contribution": _f(contrib[k])} for k in order]})
        definition = (f"extreme-value analysis over {P} toleranced parts: "
                      f"{_fmt(lo_v, r.unit)} … {_fmt(hi_v, r.unit)}" +
                      (f"; all {2 ** P} corners evaluated" if corners is not None else ""))
        method_text = f"sensitivities by {method}; EVA (each part at the end that hurts)"
        if lost:
            out_rows.append(LimitResult(
                f"worst case: {name}", "worst_case", status, None, r.lower, r.upper, None,
                r.unit, r.at_hz, definition, method_text,
                f"cannot be measured at {lost} of the {2 ** P} tolerance corners (the "
                "feature leaves the sweep or the band there), so no worst case is "
                "established; widen the sweep or tighten the tolerances", r.index, r.line))
            continue
        out_rows.append(LimitResult(
            f"worst case: {name}", "worst_case", status, lo_v if lower_decides else hi_v,
            r.lower, r.upper, margin, r.unit, r.at_hz, definition, method_text,
            "", r.index, r.line))
    meas_json = {}
    for key in keys:
        if key in d_meas:
            span = float(np.sum(np.abs(d_meas[key] * tol)))
            base = nominal_measurements[key]
            meas_json[key] = {"min": _f(base - span), "max": _f(base + span),
                              "method": meas_method[key]}
    block = {"method": "eva", "parts": P, "limits": lim_json, "measurements": meas_json,
             "sensitivities": sens_json, "rss": True,
             "corners": None if corners is None else 2 ** P, "corner_cap": cap}
    return block, out_rows


def _fmt(v: float, unit: str) -> str:
    from .units import format_eng
    return format_eng(v, unit)


def _margin(r: LimitResult, lo_v: float, hi_v: float) -> float:
    sides = []
    if r.lower is not None:
        sides.append(lo_v - r.lower)
    if r.upper is not None:
        sides.append(r.upper - hi_v)
    return float(min(sides)) if sides else math.inf


def _corner_rows(system: System, spec: Spec, parts: list[tuple[str, float, float]],
                 memory: int) -> dict[str, tuple[float, float, float, int]]:
    """Per judged quantity over all 2^P corners: (min, max, worst margin, unmeasurable).

    Corners where the quantity cannot be measured are left out of min, max and margin
    (NaN when none is left) and counted.
    """
    P = len(parts)
    signs = np.array(list(itertools.product((-1.0, 1.0), repeat=P)))
    values = {name: v * (1 + t * signs[:, j]) for j, (name, v, t) in enumerate(parts)}
    rows, _ = _rows_for(system, spec, values, signs.shape[0], memory, "worst-case corners")
    out = {}
    for k, (m, g) in rows.items():
        ok = np.isfinite(m) & np.isfinite(g)
        if ok.any():
            out[k] = (float(m[ok].min()), float(m[ok].max()), float(g[ok].min()),
                      int((~ok).sum()))
        else:
            out[k] = (math.nan, math.nan, math.nan, int(m.size))
    return out
