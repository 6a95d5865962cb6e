"""Worst case: extreme-value analysis (EVA) and RSS from adjoint sensitivities, and corners.

Every judged quantity is linearised by its limit kind's ``sensitivities`` from the
adjoint derivatives of :mod:`netcheck.mna.sensitivity` at the frequencies that decide it
(Director & Rohrer [1]_). EVA sets each part at the tolerance end that moves the
quantity towards each bound and adds the first-order effects; RSS adds them in
quadrature, for comparison. With up to :data:`MAX_CORNER_PARTS` toleranced parts
(:data:`MAX_CORNER_PARTS_SPARSE` on the sparse path, where each corner costs a sweep) every
corner (each part at either end) is also judged, through the Monte Carlo machinery.

Each part sets its own ends: −20 % and +80 % for an asymmetric band, widened by its
temperature and ageing bands (:meth:`netcheck.analyses.part_spread.Part.worst_ends`). A
fully tracking group, or the elements that follow a toleranced ``.param``, is one
variable: its parts are at their low ends together or at their high ends together, so
EVA adds the group's summed effect and the corners count it once.

Which decides. A quantity monotone in each part over the tolerance box takes its extremes
at corners, so there the corners are exact and EVA (first order) is only an estimate,
too wide where the quantity is convex (Q ∝ 1/R: 1/(1 + t) > 1 − t) and too narrow where
it is concave. So, with every corner evaluated, the quantity (or, failing that, its
margin) is checked for monotonicity in each part (:func:`_not_monotone`): exact values
at the corners, at the 2P face centres (each part alone at either end) and at the
nominal must change one way along every box edge and along both halves of each axis
through the nominal. When that holds, the corners decide alone. When it does not, or
the corners were not evaluated, neither is known to bound the quantity and the worse of
EVA and the corners decides, as before. Every row says which decided (``decided_by``
in the JSON block, the row's message in words).

The check samples the derivative's sign at 2^(P−1) + 2 secants per part spanning the
whole box; a quantity that turned back and forth between all of them would escape it.
That takes a feature moving through the band inside the box and back out, which the
face centres (where the feature must still be measurable: the row is an error where it
is not) make unlikely for tolerances of a few per cent.

References
----------
.. [1] S. W. Director and R. A. Rohrer, "The generalized adjoint network and network
   sensitivities", IEEE Trans. Circuit Theory 16(3), 318-323, 1969.
"""

from __future__ import annotations

import itertools
import math
from typing import TYPE_CHECKING, Any, NamedTuple

import numpy as np

from ..mna.assemble import System
from ..spec.limits import LIMITS, Linearised
from ..measure.measurements import MeasurementFailure
from ..result import LimitResult, Status
from ..mna.sensitivity import AdjointSensitivity
from ..spec.load import Spec
from ..spec.tolerances import Analysis
from .part_spread import ends, variable_name, variables
from .tolerance import MEASUREMENT_KEYS, _f, run_samples

if TYPE_CHECKING:  # pragma: no cover
    from .nominal import SpecProbe

__all__ = ["worst_case", "decided_text", "MAX_CORNER_PARTS", "MAX_CORNER_PARTS_SPARSE", "FLAT"]

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


def _extremes(d: np.ndarray, low: np.ndarray, high: np.ndarray, var: list[list[int]]
              ) -> tuple[np.ndarray, np.ndarray]:
    """First-order change of a quantity with slopes ``d`` (∂/∂ln p, per part) at the
    least and greatest end of every variable (its parts all at their low, or all at their
    high end): (V,) each. For a lone part with ±t these are −|d|·t and +|d|·t."""
    at_low = np.array([float(np.sum(d[j] * low[j])) for j in var])
    at_high = np.array([float(np.sum(d[j] * high[j])) for j in var])
    return np.minimum(at_low, at_high), np.maximum(at_low, at_high)


def _finite(row: Linearised) -> bool:
    return bool(np.all(np.isfinite(row.d_low)) and np.all(np.isfinite(row.d_high)))


def worst_case(system: System, spec: Spec, parts: list[tuple[str, float, float]],
               nominal: tuple[LimitResult, ...], nominal_measurements: dict[str, float],
               analysis: Analysis, probe: "SpecProbe") -> tuple[dict[str, Any], list[LimitResult]]:
    """Extreme-value analysis from adjoint sensitivities, RSS, and (≤ 12 parts) all corners.

    Every judged quantity is linearised by its limit kind's ``sensitivities`` from the
    adjoint derivatives at the frequencies that decide it (:mod:`netcheck.mna.sensitivity`);
    a quantity that cannot be linearised there (a kind without the method, an edge
    where the gain is flat) falls back to central differences of the re-measured value,
    and the row says which method it used. ``probe`` is the nominal SpecProbe.
    """
    memory = analysis.memory_mib * 2**20
    P = len(parts)
    low, high = ends(parts)
    var = variables(parts)
    V = len(var)
    adj = AdjointSensitivity(system, parts)
    by_name = {r.name: r for r in nominal}
    lin: dict[str, tuple[Linearised, str]] = {}
    refused: dict[str, str] = {}  # quantities with no linearisation at all, and why
    for lim in spec.limits:
        try:
            rows = lim.sensitivities(probe, adj)
        except (NotImplementedError, MeasurementFailure):
            continue
        lin.update((row.name, (row, "adjoint")) for row in rows if _finite(row))
        refused.update((row.name, row.refused) for row in rows if row.refused)
    keys = [k for k in nominal_measurements if k in MEASUREMENT_KEYS]
    d_meas = _measurement_sensitivities(probe, adj, keys)
    own = {lim.index for lim in spec.limits}  # (a spec of one output's limits: theirs)
    judged = [r.name for r in nominal if r.index in own and r.kind in LIMITS
              and r.measured is not None and math.isfinite(r.measured)
              and r.name not in refused]
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
    from ..mna.solve import DENSE_MAX

    cap = MAX_CORNER_PARTS if system.size <= DENSE_MAX else MAX_CORNER_PARTS_SPARSE
    corners = _corner_rows(system, spec, parts, var, memory) if 0 < V <= cap else None
    names = [variable_name(parts, cols) for cols in var]
    for name in judged:
        if name not in lin:
            continue
        r = by_name[name]
        row, method = lin[name]
        if not _finite(row):  # not even the differences gave a finite slope
            lim_json.append({"name": name, "measured_nominal": r.measured, "min": None,
                             "max": None, "margin": None, "status": Status.ERROR.value,
                             "sensitivity_method": method, "decided_by": None})
            out_rows.append(LimitResult(
                f"worst case: {name}", "worst_case", Status.ERROR, None, r.lower, r.upper,
                None, r.unit, r.at_hz, "", "", "the sensitivities of this quantity could not "
                "be computed (the circuit is singular or the measurement jumps where the "
                "parts move)", r.index, r.line))
            continue
        down = _extremes(row.d_low, low, high, var)[0]
        up = _extremes(row.d_high, low, high, var)[1]
        lo_v = row.low + float(np.sum(down))
        hi_v = row.high + float(np.sum(up))
        margin = _margin(r, lo_v, hi_v)
        entry = {"name": name, "measured_nominal": r.measured, "min": lo_v, "max": hi_v,
                 "rss_min": row.low - float(np.sqrt(np.sum(np.minimum(down, 0.0) ** 2))),
                 "rss_max": row.high + float(np.sqrt(np.sum(np.maximum(up, 0.0) ** 2))),
                 "margin": margin,
                 "sensitivity_method": method, "monotone": None, "not_monotone_in": []}
        lost, inside, decided, monotone, why = 0, 0, "linear estimate", None, []
        if corners is not None and name in corners:
            cor = corners[name]
            lost, inside = cor.lost, cor.lost_faces
            # the value alone decides the margin only for one judged value with both
            # bounds on it (a centre, a Q); else the margin itself must be monotone
            single = (method == "adjoint" and row.low == row.high
                      and np.array_equal(row.d_low, row.d_high))
            bad = cor.bad_margin if not single else \
                min(cor.bad_margin, cor.bad_value, key=len)
            monotone = not bad and not lost and not inside
            why = [names[j] for j in bad]
            entry.update(corners_min=_f(cor.min), corners_max=_f(cor.max),
                         corners_margin=_f(cor.margin), corners_unmeasurable=lost,
                         faces_unmeasurable=inside,
                         eva_differs=bool(math.isfinite(cor.margin) and abs(cor.margin - margin)
                                          > 1e-6 * max(1.0, abs(margin))),
                         monotone=monotone, not_monotone_in=why)
            if math.isfinite(cor.margin):
                if monotone:
                    # every corner evaluated and the quantity moves one way with each part
                    # over the whole box: its extremes lie at corners, which decide alone
                    margin, lo_v, hi_v, decided = cor.margin, cor.min, cor.max, "corners"
                else:  # not shown monotone: the worse of the two, as neither is a bound
                    if cor.margin < margin:
                        decided = "corners"
                    margin = min(margin, cor.margin)
                    lo_v, hi_v = min(lo_v, cor.min), max(hi_v, cor.max)
        status = Status.PASS if margin >= 0 else Status.FAIL
        gone = bool(lost or inside)
        if gone:  # the worst case is not established where the quantity is not there
            status = Status.ERROR
            entry["margin"] = None
            decided = None
        entry.update(status=status.value, decided_by=decided,
                     worst_min=None if gone else _f(lo_v), worst_max=None if gone else _f(hi_v),
                     worst_margin=None if gone else _f(margin))
        lim_json.append(entry)
        lower_decides = r.lower is not None and (r.upper is None or
                                                 lo_v - r.lower < r.upper - hi_v)
        m0, dln = (row.low, row.d_low) if lower_decides else (row.high, row.d_high)
        # each part at its wider end (± t for a symmetric tolerance: raised by t)
        contrib = dln * np.where(high >= -low, high, low)
        order = np.argsort(-np.abs(contrib))[:5]
        relative = m0 and r.unit not in ("dB", "deg")  # a ratio of logarithms means nothing
        sens_json.append({"name": name, "unit": r.unit, "method": method, "top": [
            {"part": parts[k][0], "sensitivity": _f(dln[k] / m0) if relative else None,
             "per_unit_log": _f(dln[k]), "contribution": _f(contrib[k])} for k in order]})
        definition = (f"extreme-value analysis over {P} toleranced parts"
                      + (f" ({V} variables: a fully tracking group, or a .param's elements, is one)"
                         if V < P else "")
                      + f": {_fmt(entry['min'], r.unit)} … {_fmt(entry['max'], r.unit)}"
                      + (f"; all {2 ** V} corners evaluated" if corners is not None else ""))
        method_text = f"sensitivities by {method}; EVA (each part at the end that hurts)"
        if gone:
            where = (f"{lost} of the {2 ** V} tolerance corners" if lost else
                     f"{inside} of the {2 * V} face centres of the tolerance box (each part "
                     "alone at a tolerance end)")
            out_rows.append(LimitResult(
                f"worst case: {name}", "worst_case", status, None, r.lower, r.upper, None,
                r.unit, r.at_hz, definition, method_text,
                f"cannot be measured at {where} (the feature leaves the sweep or the band "
                "there), so no worst case is established; widen the sweep or tighten the "
                "tolerances", r.index, r.line))
            continue
        out_rows.append(LimitResult(
            f"worst case: {name}", "worst_case", status, lo_v if lower_decides else hi_v,
            r.lower, r.upper, margin, r.unit, r.at_hz, definition, method_text,
            decided_text(decided, V, cap, monotone, why, corners is not None),
            r.index, r.line))
    for name, why in refused.items():  # no linearisation exists: say so, estimate nothing
        r = by_name.get(name)
        if r is None:
            continue
        lim_json.append({"name": name, "measured_nominal": r.measured, "min": None,
                         "max": None, "margin": None, "status": Status.ERROR.value,
                         "sensitivity_method": None, "decided_by": None})
        out_rows.append(LimitResult(
            f"worst case: {name}", "worst_case", Status.ERROR, None, r.lower, r.upper, None,
            r.unit, r.at_hz, "", "", f"no worst case by sensitivities: {why}", r.index,
            r.line))
    meas_json = {}
    for key in keys:
        if key in d_meas:
            down, up = _extremes(d_meas[key], low, high, var)
            base = nominal_measurements[key]
            meas_json[key] = {"min": _f(base + float(np.sum(down))),
                              "max": _f(base + float(np.sum(up))), "method": meas_method[key]}
    block = {"method": "eva", "parts": P, "variables": V, "limits": lim_json,
             "measurements": meas_json, "sensitivities": sens_json, "rss": True,
             "corners": None if corners is None else 2 ** V, "corner_cap": cap}
    return block, out_rows


def _fmt(v: float, unit: str) -> str:
    from ..netlist.units import format_eng
    return format_eng(v, unit)


def _margin(r: LimitResult, lo_v: float, hi_v: float) -> float:
    sides = []
    if r.lower is not None:
        sides.append(lo_v - r.lower)
    if r.upper is not None:
        sides.append(r.upper - hi_v)
    return float(min(sides)) if sides else math.inf


class _Corners(NamedTuple):
    """One judged quantity over the tolerance box (see :func:`_corner_rows`)."""

    min: float
    max: float
    margin: float
    lost: int
    lost_faces: int
    bad_value: list[int]
    bad_margin: list[int]


#: differences within this fraction of the largest value measured count as no change
#: (the refined measurements agree to about 1e-12 relative; a reversal this small moves
#: an extreme by no more than this)
FLAT = 1e-9


def _not_monotone(v: np.ndarray, P: int, eps: float) -> list[int]:
    """The parts in which ``v`` is not shown monotone over the tolerance box.

    ``v`` holds a quantity at the 2^P corners (in :func:`itertools.product` order, each
    part at −t then +t), then each part alone at −t, then each alone at +t (the face
    centres), then the nominal. Part j is shown monotone when every difference along it
    has one sign: the 2^(P−1) box edges between corners that differ in j alone, and the
    two halves of the axis through the nominal (face centre − nominal, nominal − other
    face centre). Differences within ``eps`` count as no change.
    """
    n = 2 ** P
    c = v[:n].reshape((2,) * P)
    minus, plus, centre = v[n:n + P], v[n + P:n + 2 * P], v[-1]
    bad = []
    for j in range(P):
        d = np.concatenate([(np.take(c, 1, axis=j) - np.take(c, 0, axis=j)).ravel(),
                            [plus[j] - centre, centre - minus[j]]])
        if not np.all(np.isfinite(d)) or (np.any(d > eps) and np.any(d < -eps)):
            bad.append(j)
    return bad


def _corner_rows(system: System, spec: Spec, parts: list[tuple[str, float, float]],
                 var: list[list[int]], memory: int) -> dict[str, _Corners]:
    """Every judged quantity over all 2^P corners, with a check that the corners decide.

    Per quantity: the least and greatest value and the worst margin over the corners
    (corners where it cannot be measured are left out, NaN when none is left, and
    counted), and the parts in which the value, and the margin, are not shown monotone
    (:func:`_not_monotone`, from exact solutions at the corners, the 2P face centres and
    the nominal, solved together with the corners).
    """
    P = len(var)  # the variables: a fully tracking group moves as one
    signs = np.array(list(itertools.product((-1.0, 1.0), repeat=P)))
    faces = np.vstack([-np.eye(P), np.eye(P), np.zeros((1, P))])
    points = np.vstack([signs, faces])
    low, high = ends(parts)
    values = {}
    for k, cols in enumerate(var):
        at = points[:, k]
        for j in cols:  # each part at its own end: −20 % / +80 % for an electrolytic
            rel = np.where(at < 0, low[j], np.where(at > 0, high[j], 0.0))
            values[parts[j][0]] = parts[j][1] * (1 + rel)
    rows, _ = _rows_for(system, spec, values, points.shape[0], memory, "worst-case corners")
    n = signs.shape[0]
    out = {}
    for k, (m, g) in rows.items():
        ok = np.isfinite(m) & np.isfinite(g)
        lost, lost_faces = int((~ok[:n]).sum()), int((~ok[n:]).sum())
        scale = float(np.max(np.abs(m[ok]))) if ok.any() else 0.0
        eps = FLAT * scale
        bad_v = _not_monotone(np.where(ok, m, np.nan), P, eps)
        bad_g = _not_monotone(np.where(ok, g, np.nan), P, eps)
        c = ok[:n]
        if c.any():
            out[k] = _Corners(float(m[:n][c].min()), float(m[:n][c].max()),
                              float(g[:n][c].min()), lost, lost_faces, bad_v, bad_g)
        else:
            out[k] = _Corners(math.nan, math.nan, math.nan, lost, lost_faces, bad_v, bad_g)
    return out


def decided_text(decided: str | None, parts: int, cap: int, monotone: bool | None,
                 why: list[str], corners: bool) -> str:
    """What decided a worst-case verdict, in a few words (the row's message).

    Examples
    --------
    >>> decided_text("corners", 3, 12, True, [], True)
    'decided by the corners (all 8; monotone in every part over the tolerance box)'
    >>> decided_text("linear estimate", 2, 12, False, ["L1"], True)
    'decided by the linear estimate (EVA), the more cautious of EVA and the 4 corners:
    not shown monotone in L1'
    """
    if decided is None:
        return ""
    n = 2 ** parts
    if monotone:
        return f"decided by the corners (all {n}; monotone in every part over the tolerance box)"
    if not corners:
        return (f"decided by the linear estimate (EVA): corners not evaluated ({parts} "
                f"toleranced parts, more than {cap})")
    where = (f" in {', '.join(why[:4])}" + (f" and {len(why) - 4} more" if len(why) > 4
                                            else "")) if why else ""
    which = "the corners" if decided == "corners" else "the linear estimate (EVA)"
    return f"decided by {which}, the more cautious of EVA and the {n} corners: not shown " \
           f"monotone{where}"
