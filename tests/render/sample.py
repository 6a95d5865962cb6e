"""A hand-built CheckResult shared by the renderer tests (Quillmere Instruments sample designs).

Every status appears: passed, failed, erroring and skipped limits, a spec that could not
be checked at all, a family of three variants of one spec file, cautions with and
without a source position, and a title full of characters that XML and Markdown treat
specially. Gold files in ``tests/render/gold/`` are the renderers' output for
:func:`sample_result`; rewrite them with ``NETCHECK_UPDATE_GOLD=1`` after a deliberate
change and review the diff.
"""

from __future__ import annotations

import os
from pathlib import Path

import pytest

from netcheck.result import CheckResult, Caution, LimitResult, SpecResult, Status

GOLD = Path(__file__).resolve().parent / "gold"
DATA = Path(__file__).resolve().parents[1] / "data"

NOTCH_SPEC = "specs/quillmere_hum_notch.toml"
NOTCH_NET = "sample_netlists/hum_notch.cir"
RX_SPEC = "specs/quillmere_rx40k.toml"
RX_NET = "sample_netlists/rx40k.cir"
LP_SPEC = "specs/quillmere_sk_lowpass.toml"
LP_NET = "sample_netlists/sk_lowpass.cir"

#: A title with XML-illegal characters, markup characters and Markdown punctuation.
HOSTILE_TITLE = 'RX-40k front end <rev "B"> & | *draft* \x1b[31mred\x00'

#: The same lint warning reaches every variant of the notch family (one netlist).
LINT_NODE = Caution("netlist-152", "node 'tap' has one connection", "warning", NOTCH_NET, 14, 9)
LINT_SERIES = Caution("netlist-154", "R7 = 4.75k is off the E24 series", "warning", RX_NET, 22, 1)
NO_POSITION = Caution("analysis-302", "matrix badly conditioned near 38.0 kHz; result kept",
                      "warning")
#: A hazard caution, as evaluate() attaches it to a spec whose result warrants it (a
#: resonant part far above the input voltage); the notch variants carry none.
HAZARD = Caution("analysis-voltage", "L2 sees 14.2× the input voltage at 40.1 kHz; a resonant section "
                 "holds about Q times its input across its reactances: rate these parts "
                 "for it and confirm by measurement.", "caution")
#: As error_result() attaches the error that stopped a spec.
SINGULAR = Caution("analysis-300", "singular circuit: node 'n3' has no path to ground at DC",
                   "error", LP_NET, 7, 1)
#: A run-wide caution (not tied to one spec), with a position in a shared library.
LIBRARY = Caution("netlist-150", "unknown directive .temp ignored", "warning",
                  "sample_netlists/lib/quillmere_opamps.lib", 3, 1)


def _notch(variant: str, nominal: float, f0: float, depth: float,
           q: float | None) -> SpecResult:
    depth_status = Status.PASS if depth <= -40.0 else Status.FAIL
    limits = (
        LimitResult("notch depth", "gain", depth_status, depth, None, -40.0, -40.0 - depth,
                    "dB", at_hz=f0, index=0, line=8,
                    definition="gain at the notch centre relative to the pass-band"),
        LimitResult("pass-band flatness", "gain", Status.PASS, -0.58, -1.0, 0.5, 0.42, "dB",
                    at_hz=1250.0, index=1, line=13),
        LimitResult("centre", "resonance", Status.PASS, f0, nominal - 1.5, nominal + 1.5,
                    1.5 - abs(f0 - nominal), "Hz", index=2, line=18),
        (LimitResult("q", "resonance", Status.PASS, q, 2.0, 8.0, min(q - 2.0, 8.0 - q), "",
                     index=3, line=18) if q is not None else
         LimitResult("q", "resonance", Status.SKIPPED, None, 2.0, 8.0, None, "",
                     index=3, line=18,
                     message="no half-power points inside the sweep; Q is not defined")),
    )
    status = Status.FAIL if depth_status is Status.FAIL else Status.PASS
    return SpecResult(spec=NOTCH_SPEC, netlist=NOTCH_NET,
                      title="Quillmere Instruments mains hum notch", status=status,
                      limits=limits, cautions=(LINT_NODE,), variant=variant)


def _rx() -> SpecResult:
    limits = (
        LimitResult("pass-band gain", "gain", Status.PASS, 19.874, 18.0, 22.0, 1.874, "dB",
                    at_hz=38_000.0, index=0, line=6),
        LimitResult("ripple", "ripple", Status.FAIL, 1.3, None, 1.0, -0.3, "dB",
                    at_hz=41_250.0, index=1, line=11,
                    message="peak of the upper section exceeds the allowance"),
        LimitResult("group delay", "group_delay", Status.ERROR, None, None, 200e-6, None, "s",
                    index=2, line=16,
                    message="no sweep points inside the 39k…37k band (band is reversed)"),
        LimitResult("input impedance", "impedance", Status.PASS, 9_870.0, 4_700.0, None,
                    5_170.0, "Ω", at_hz=35_000.0, index=3, line=21),
        LimitResult("C4 voltage", "stress", Status.FAIL, 27.5, None, 25.0, -2.5, "V",
                    at_hz=40_100.0, index=4, line=26),
        LimitResult("phase at 40k", "phase", Status.PASS, -12.25, -30.0, 30.0, 17.75, "deg",
                    at_hz=40_000.0, index=5, line=31),
    )
    return SpecResult(spec=RX_SPEC, netlist=RX_NET, title=HOSTILE_TITLE,
                      status=Status.ERROR, limits=limits,
                      cautions=(HAZARD, LINT_SERIES, NO_POSITION))


def _lowpass() -> SpecResult:
    error = ("sample_netlists/sk_lowpass.cir:7:1: error analysis-300: singular circuit: "
             "node 'n3' has no path to ground at DC\n    C3 n3 n4 ``1n``\n    ^")
    return SpecResult(spec=LP_SPEC, netlist=LP_NET,
                      title="Quillmere Instruments anti-alias low-pass",
                      status=Status.ERROR, error=error, cautions=(SINGULAR,))


def sample_result(created_utc: str = "2026-03-14T09:26:53Z") -> CheckResult:
    """Five spec results: three notch variants, the receiver, the unsolvable low-pass."""
    return CheckResult(
        specs=(
            _notch("50hz", 50.0, 50.2, -46.2, 4.1),
            _notch("60hz", 60.0, 60.4, -38.7, 3.9),
            _notch("60hz-economy", 60.0, 59.6, -41.05, None),
            _rx(),
            _lowpass(),
        ),
        tool_version="0.1.0",
        created_utc=created_utc,
        cautions=(LIBRARY,),
    )


def compare_gold(name: str, text: str, normalise=lambda s: s) -> None:
    """Assert ``normalise(text) == normalise(gold)``; rewrite the gold file on request."""
    path = GOLD / name
    if os.environ.get("NETCHECK_UPDATE_GOLD"):
        path.write_text(text, encoding="utf-8", newline="\n")
        pytest.skip(f"rewrote {path.name}; review the diff")
    expected = path.read_text(encoding="utf-8")
    assert normalise(text) == normalise(expected)
