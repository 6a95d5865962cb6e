"""Samples of a large circuit on one sparsity pattern, each solved directly by SuperLU."""

from __future__ import annotations

import math
from typing import Any, Mapping

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from .assemble import System
from .bias_samples import stamp_sampled

__all__ = ["SparseBatch"]

_TWO_PI = 2.0 * math.pi


class SparseBatch:
    """S samples of G + jωC on one sparsity pattern, for systems too large for dense arrays.

    The entries of every sample are summed once into CSC data arrays (S, nnz) on the
    pattern shared by all samples; a solve forms one sample's matrix at one frequency
    and factors it with SuperLU. The loop runs over factorisations, which are the work.
    """

    def __init__(self, system: System, values: Mapping[str, np.ndarray], samples: int,
                 bias: Any = None) -> None:
        # devices: each sample at its own operating point (``bias``, solved if not given)
        st = stamp_sampled(system.circuit, values, samples, bias)
        n = self.n = system.size
        rg, cg, vg = st.batch_entries("G", samples)
        rc, cc, vc = st.batch_entries("C", samples)
        keys, where = np.unique(np.concatenate([cg * n + rg, cc * n + rc]),
                                return_inverse=True)
        self.indices = (keys % n).astype(np.int32)
        self.indptr = np.searchsorted(keys // n, np.arange(n + 1)).astype(np.int32)
        self.g = np.zeros((samples, keys.size))
        self.c = np.zeros((samples, keys.size))
        np.add.at(self.g, (slice(None), where[:rg.size]), vg)
        np.add.at(self.c, (slice(None), where[rg.size:]), vc)
        self.b = np.asarray(system.b, complex)

    def factor(self, row: int, f_hz: float):
        """SuperLU factors of sample ``row``'s G + j2πfC (RuntimeError when singular)."""
        return self.factor_at(row, 1j * _TWO_PI * f_hz)

    def factor_at(self, row: int, s: complex):
        """SuperLU factors of sample ``row``'s G + sC at complex s (RuntimeError when
        singular)."""
        data = self.g[row] + s * self.c[row]
        a = sp.csc_matrix((data, self.indices, self.indptr), shape=(self.n, self.n))
        return spla.splu(a, permc_spec="COLAMD")

    def solutions(self, row: int, f_hz: np.ndarray) -> np.ndarray:
        """x (K, n) of sample ``row`` at the frequencies ``f_hz`` (K,); NaN where singular."""
        f = np.atleast_1d(np.asarray(f_hz, float))
        out = np.empty((f.size, self.n), dtype=complex)
        for k, fk in enumerate(f):
            try:
                out[k] = self.factor(row, float(fk)).solve(self.b)
            except RuntimeError:
                out[k] = np.nan
        return out
