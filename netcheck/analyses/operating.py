"""The DC operating point as a result shows it: its JSON block and the region cautions.

A circuit with devices is checked around its operating point (netcheck.mna.bias), so the
operating point is part of what the check rests on: the JSON result carries it whole
(``operating_point``: node voltages, source currents, every device's region and
small-signal figures) and the PDF shows it. A transistor outside the region an amplifying
stage works in, or a diode that conducts, changes what the small-signal response means:
each gets a caution (analysis-307) naming it, its region and the voltage that put it there.
"""

from __future__ import annotations

import math
from typing import Any

from ..netlist.circuit import Circuit
from ..result import Caution

__all__ = ["operating_point_block", "region_cautions", "stability_caution",
           "sample_region_cautions", "AMPLIFYING_REGION"]

#: the region in which a transistor amplifies (common practice, no source)
AMPLIFYING_REGION = {"npn": "forward-active", "pnp": "forward-active",
                     "nmos": "saturation", "pmos": "saturation",
                     "njf": "saturation", "pjf": "saturation"}
#: what puts a transistor in each other region, for the caution's words
_WHY = {"saturated": ("Vce", "its collector junction is forward-biased"),
        "off": ("Vbe", "neither junction conducts"),
        "reverse-active": ("Vbe", "its emitter junction is reverse-biased"),
        "triode": ("Vds", "Vds is below Vgs − Vth"),
        "cutoff": ("Vgs", "Vgs is below the threshold")}


def operating_point_block(op: Any) -> dict[str, Any]:
    """The JSON block of an :class:`~netcheck.mna.bias.OperatingPoint`."""
    return {
        "temperature_c": op.temp_c, "method": op.method, "iterations": op.iterations,
        "nodes": [{"node": n, "volts": v} for n, v in op.voltages],
        "source_currents": [{"branch": b, "amps": a} for b, a in op.currents],
        "devices": [{"name": d.name, "kind": d.kind, "region": d.region,
                     "quantities": [{"name": q, "value": v if math.isfinite(v) else None,
                                     "unit": u} for q, v, u in d.quantities]}
                    for d in op.devices],
    }


def stability_caution(response: Any) -> Caution | None:
    """analysis-309 when the small-signal circuit at the operating point has a pole in the
    right half-plane: that operating point is unstable (a latch's middle state, an
    oscillator), and the steady-state response computed there is not what the circuit
    does. None when every pole found is in the left half-plane (or on the axis)."""
    poles, _, complete = response.roots_hz()
    unstable = [p for p in poles if p.real > 1e-9 * abs(p) + 1e-12]
    if not unstable:
        return None
    worst = max(unstable, key=lambda p: p.real)
    shown = f"{worst.real:.4g} {'+' if worst.imag >= 0 else '-'} j{abs(worst.imag):.4g} Hz"
    return Caution(
        "analysis-309", f"the circuit is unstable at its DC operating point: "
        f"{len(unstable)} pole{'s' if len(unstable) > 1 else ''} in the right half-plane "
        f"(the largest real part: s/2π = {shown}). A circuit biased there does not stay: "
        "it latches or oscillates, and the frequency response computed around that point "
        "is not what it does. Check the feedback and the bias network", "warning")


def region_cautions(op: Any, circuit: Circuit) -> list[Caution]:
    """analysis-307 for every transistor outside its amplifying region and every diode
    that conducts (a note: a bias diode should; a clamp or protection diode should not)."""
    out = []
    for d in op.devices:
        values = {q: v for q, v, _ in d.quantities}
        element = circuit.element(d.name) if circuit.has_element(d.name) else None
        where = (element.span.path, element.span.line, element.span.column) \
            if element is not None and element.span is not None else (None, None, None)
        if d.kind == "diode":
            if d.region != "forward":
                continue
            message = (f"{d.name} conducts at the operating point (Vd = {values['Vd']:.4g} V, "
                       f"Id = {values['Id']:.4g} A, small-signal resistance "
                       f"{1.0 / values['gd'] if values['gd'] else float('inf'):.4g} Ω): the "
                       "response depends on that bias. A bias or detector diode should; a "
                       "clamp or protection diode should be off here")
            out.append(Caution("analysis-307", message, "note", *where))
            continue
        want = AMPLIFYING_REGION.get(d.kind)
        if want is None or d.region == want:
            continue
        quantity, why = _WHY.get(d.region, ("", "its bias is outside that region"))
        shown = f" ({quantity} = {values[quantity]:.4g} V)" if quantity in values else ""
        out.append(Caution(
            "analysis-307", f"{d.name} ({d.kind}) is {d.region} at the operating point, not "
            f"{want}: {why}{shown}. An amplifying stage works in the {want} region; the "
            "small-signal response here is that of this bias: check the bias network if "
            "this is not intended", "warning", *where))
    return out


def sample_region_cautions(entries: list[dict[str, Any]], circuit: Circuit,
                           samples: int) -> list[Caution]:
    """analysis-307 for every device whose Monte Carlo samples leave the region it has at
    the nominal operating point (``entries``: the ``device_regions`` of the Monte Carlo
    block): a transistor that leaves its amplifying region in some samples (a warning),
    a diode that conducts in some samples and not in others (a note)."""
    out = []
    for entry in entries:
        name, nominal, counts = entry["device"], entry["nominal_region"], entry["counts"]
        others = {r: n for r, n in counts.items() if r != nominal}
        if not others:
            continue
        element = circuit.element(name) if circuit.has_element(name) else None
        where = (element.span.path, element.span.line, element.span.column) \
            if element is not None and element.span is not None else (None, None, None)
        moved = sum(others.values())
        which = ", ".join(f"{r} in {n}" for r, n in sorted(others.items()))
        first = entry["first_other_sample"]
        at = ", ".join(f"{k} = {v:.6g}" for k, v in list(entry["first_other_values"].items())[:4])
        example = f"; the first is sample {first + 1} ({at})" if first is not None else ""
        want = AMPLIFYING_REGION.get(entry["kind"])
        if want is not None and nominal == want:
            out.append(Caution(
                "analysis-307", f"{name} ({entry['kind']}) leaves the {want} region in "
                f"{moved} of {samples} Monte Carlo samples ({which}){example}: those samples "
                "are not the amplifying stage the nominal design is, and their response is "
                "judged as it is; widen the bias margins if this is not intended", "warning",
                *where))
        elif entry["kind"] == "diode":
            out.append(Caution(
                "analysis-307", f"{name} is {nominal} at the nominal operating point and "
                f"{which} of {samples} Monte Carlo samples{example}: whether it conducts "
                "depends on the part tolerances", "note", *where))
    return out
