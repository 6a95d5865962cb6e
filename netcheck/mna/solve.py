"""MNA system × frequencies → Response: the choice of engine and :func:`solve`.

Three engines share one interface (:class:`~netcheck.mna.response.Engine`).
:class:`~netcheck.mna.dense.DenseEngine` solves (G + sC)x = b batched over frequency
with LAPACK LU; :class:`~netcheck.mna.sparse.SparseEngine` factorises each frequency
with SuperLU for large systems (memory ∝ non-zeros);
:class:`~netcheck.mna.polezero.PoleZeroEngine` evaluates the transfer function in
pole–zero product form from generalized eigenvalues of the MNA pencil [2]_, which is
fast for many points and keeps full relative accuracy deep in a stop-band (no
cancellation), but is trusted only where it agrees with direct solves: it is verified
at check points and every point whose error estimate is too large is solved directly.
Both direct engines solve on the equilibrated matrix [4]_ and judge regularity from
its condition [5]_ (:mod:`netcheck.mna.conditioning`). :class:`Response`, the three
engines, :data:`CHECK_TOL` and :func:`sparse_poles` are re-exported from their modules.

References
----------
.. [1] C.-W. Ho, A. E. Ruehli and P. A. Brennan, "The modified nodal approach to
   network analysis", IEEE Trans. Circuits and Systems 22(6), 504-509, 1975.
.. [2] C. B. Moler and G. W. Stewart, "An algorithm for generalized matrix
   eigenvalue problems", SIAM J. Numer. Anal. 10(2), 241-256, 1973.
.. [3] A. J. Laub, "Efficient multivariable frequency response computations",
   IEEE Trans. Automatic Control 26(2), 407-408, 1981.
.. [4] D. Ruiz, "A scaling algorithm to equilibrate both rows and columns norms in
   matrices", Rutherford Appleton Laboratory report RAL-TR-2001-034, 2001.
.. [5] N. J. Higham, "FORTRAN codes for estimating the one-norm of a real or complex
   matrix, with applications to condition estimation", ACM Trans. Math. Software
   14(4), 381-396, 1988.
"""

from __future__ import annotations

import warnings

import numpy as np

from .assemble import System
from .dense import DenseEngine
from .polezero import CHECK_TOL, PoleZeroEngine
from .response import Response, readonly, validate_frequencies
from .singular import check_finite
from .sparse import SparseEngine
from .sparse_poles import sparse_poles
from ..exceptions import NetcheckWarning

__all__ = ["Response", "solve", "make_engine", "DenseEngine", "SparseEngine",
           "PoleZeroEngine", "DENSE_MAX", "CHECK_TOL", "sparse_poles"]

#: largest system solved with dense LAPACK (larger ones take the sparse path)
DENSE_MAX = 300
#: relative offset of the regularity probes of a circuit with transmission lines
_PROBE_NUDGE = 1.0 / 997.0
#: fewest points for which the pole–zero engine is worth building
PZ_MIN_POINTS = 40


def make_engine(system: System, grid: np.ndarray) -> DenseEngine | SparseEngine | PoleZeroEngine:
    """Pick the engine for ``system`` and a sweep ``grid`` (Hz), checking regularity.

    analysis-303 first if G + j2πfC is not finite somewhere on the grid (an overflowing 1/R or
    2πf·C): no engine is built on a matrix that is not finite.
    """
    check_finite(system, grid)
    probe = np.unique(np.array([grid.min(), np.sqrt(grid.min() * grid.max()), grid.max()]))
    if system.delays is not None:
        # a line circuit can be singular at isolated frequencies (a shorted half-wave
        # line: a lossless resonance), often at round ones such as a sweep end; what is
        # tested is a circuit singular everywhere, so probe just beside them
        probe = probe * (1.0 + _PROBE_NUDGE)
    if system.size > DENSE_MAX:
        sparse = SparseEngine(system)
        sparse.check_regular(probe)
        return sparse
    direct = DenseEngine(system)
    # a transmission line (delayed entries) has no pole-zero form: direct solves only
    if grid.size >= PZ_MIN_POINTS and system.delays is None:
        try:
            with np.errstate(all="ignore"):
                pz = PoleZeroEngine.build(direct, grid)
        except (np.linalg.LinAlgError, ValueError, FloatingPointError) as err:
            warnings.warn(f"pole-zero form unavailable ({err}); using direct solves",
                          NetcheckWarning, stacklevel=2)
            pz = None
        if pz is not None:
            return pz  # a regular pencil whose form matched direct solves
    direct.check_regular(probe)
    return direct


def solve(system: System, freqs: object) -> Response:
    """Solve ``system`` at ``freqs`` (Hz) and return the :class:`Response`.

    Examples
    --------
    >>> from netcheck import read_netlist
    >>> ckt = read_netlist("rc\\nV1 in 0 AC 1\\nR1 in out 1k\\nC1 out 0 159.15494n\\n")
    >>> r = ckt.ac("V1", "out", freqs=[1000.0])
    >>> round(float(r.magnitude_db[0]), 4)   # RC low-pass at its corner: -3.0103 dB
    -3.0103
    """
    f = validate_frequencies(freqs)
    engine = make_engine(system, f)
    h, _ = engine.transfer(f, derivative=False)
    return Response(readonly(f), readonly(h), system, engine)
