"""Ruiz equilibration (netcheck/mna/conditioning.py) on small dense and large sparse paths.

Reference: the iteration of D. Ruiz, "A scaling algorithm to equilibrate both rows and
columns norms in matrices" (RAL-TR-2001-034, 2001), written out here on a dense matrix
with plain loops — divide every row, then every column, by the square root of its
largest entry rounded to a power of two, until every largest entry lies in [1/2, 2).
Both of netcheck's paths (grouped maxima for any size, dense sweeps for small systems)
must give exactly these scales: they are powers of two, so nothing is rounded.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from netcheck.mna import conditioning
from netcheck.mna.conditioning import Pattern, equilibrate


def _pow2_rsqrt(m: float) -> float:
    if not (m > 0 and math.isfinite(m)):
        return 1.0
    _, e = math.frexp(m)
    return math.ldexp(1.0, -(e // 2))


def ruiz(a: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Row and column scales of one n × n magnitude matrix, by plain loops."""
    n = a.shape[0]
    r, c = [1.0] * n, [1.0] * n
    for _ in range(conditioning.EQUILIBRATE_SWEEPS):
        m = [[a[i, j] * r[i] * c[j] for j in range(n)] for i in range(n)]
        dr = [_pow2_rsqrt(max(m[i])) for i in range(n)]
        dc = [_pow2_rsqrt(max(m[i][j] for i in range(n))) for j in range(n)]
        if all(x == 1.0 for x in dr + dc):
            break
        r = [x * y for x, y in zip(r, dr)]
        c = [x * y for x, y in zip(c, dc)]
    return np.array(r), np.array(c)


@pytest.mark.parametrize("dense_max", [48, 0], ids=["dense sweeps", "grouped maxima"])
@pytest.mark.parametrize("seed", range(6))
def test_scales_match_the_plain_iteration(seed, dense_max, monkeypatch):
    monkeypatch.setattr(conditioning, "DENSE_SWEEPS_MAX", dense_max)
    rng = np.random.default_rng(seed)
    n = int(rng.integers(2, 12))
    mask = rng.random((n, n)) < 0.4
    mask[np.arange(n), rng.permutation(n)] = True  # every row and column has an entry
    if seed == 5:
        mask[0, :] = False  # an empty row: scale 1
    rows, cols = np.nonzero(mask)
    # magnitudes over 40 decades, some exactly 0, and one frequency with an inf
    mags = 10.0 ** rng.uniform(-20, 20, size=(3, rows.size))
    mags[1, ::3] = 0.0
    mags[2, 0] = np.inf
    r, c = equilibrate(Pattern(rows, cols, n), mags)
    for f in range(3):
        a = np.zeros((n, n))
        a[rows, cols] = mags[f]
        want_r, want_c = ruiz(a)
        assert r[f].tolist() == want_r.tolist()
        assert c[f].tolist() == want_c.tolist()
