"""The noise section of a spec's report: for each noise limit, the sources of thermal
noise at the frequency that decided it, largest first (the JSON's ``noise`` block)."""

from __future__ import annotations

from typing import Any

from ..netlist.units import format_eng, format_si
from ..result import SpecResult
from .formatting import shown_name

__all__ = ["noise_view", "SOURCES_SHOWN"]

#: the most sources listed per limit (the JSON result carries them all)
SOURCES_SHOWN = 12
_WHAT = {"R": "resistor", "Rpar": "parallel resistance", "Rser": "series resistance",
         "shot": "shot noise", "shot Ic": "shot noise of Ic", "shot Ib": "shot noise of Ib",
         "channel": "channel noise", "en": "voltage noise (en)",
         "in+": "current noise into in+", "in-": "current noise into in−"}


def noise_view(s: SpecResult) -> list[dict[str, Any]] | None:
    """The view of ``s``'s ``noise`` block; None when the spec has no noise limit."""
    block = s.extra_value("noise")
    if not isinstance(block, list) or not block:
        return None
    out = []
    for entry in block:
        sources = entry["sources"]
        band = entry.get("band_hz")
        rows = [{"rank": k + 1, "part": shown_name(x["part"]),
                 "what": _WHAT.get(x["what"], x["what"]),
                 "value": format_eng(x["rms"], "V") if band else
                 format_eng(x["density"], "V/√Hz"), "share": f"{x['share_pct']:.1f} %"}
                for k, x in enumerate(sources[:SOURCES_SHOWN])]
        where = (f"over {format_si(band[0], 'Hz', 4)} to {format_si(band[1], 'Hz', 4)}"
                 if band else f"at {format_si(entry['at_hz'], 'Hz', 5)}")
        out.append({"limit": entry["limit"], "where": where,
                    "column": "RMS at the output" if band else "Density at the output",
                    "temperature": f"{entry['temperature_c']:g} °C", "rows": rows,
                    "more": max(0, len(sources) - SOURCES_SHOWN)})
    return out
