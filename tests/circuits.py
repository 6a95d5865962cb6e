"""Netlists shared by several test modules (values invented for the tests)."""

from __future__ import annotations

#: a series RLC band-pass, output across R: f0 = 1/(2π√(LC)) ≈ 40.0 kHz, Q ≈ 11.8
L, C, R = 2.2e-3, 7.2e-9, 47.0
SERIES_RLC = f"""Quillmere test: series RLC band-pass
V1 in 0 AC 1
L1 in a {L!r}
C1 a out {C!r}
R1 out 0 {R!r}
"""
