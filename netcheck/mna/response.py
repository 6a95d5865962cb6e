"""The :class:`Response` of one output to one stimulus; the :class:`Engine` interface.

Also the check of a list of sweep frequencies (:func:`validate_frequencies`).

References
----------
.. [1] C. B. Moler and G. W. Stewart, "An algorithm for generalized matrix
   eigenvalue problems", SIAM J. Numer. Anal. 10(2), 241-256, 1973.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Protocol

import numpy as np

from .assemble import System
from .dense import DenseEngine
from .polezero import PoleZeroEngine
from .sparse import SparseEngine

__all__ = ["Response", "Engine", "validate_frequencies", "readonly"]

_TWO_PI = 2.0 * np.pi


def readonly(a: np.ndarray) -> np.ndarray:
    """``a`` as an array that cannot be written to (the arrays a Response hands out)."""
    a = np.asarray(a)
    a.flags.writeable = False
    return a


def validate_frequencies(freqs: object) -> np.ndarray:
    """Return ``freqs`` as a 1-D float array of finite positive Hz, or raise ValueError."""
    f = np.atleast_1d(np.asarray(freqs, dtype=float))
    if f.ndim != 1 or f.size == 0:
        raise ValueError("freqs: expected a non-empty 1-D array of frequencies in Hz")
    if not np.isfinite(f).all() or (f <= 0).any():
        raise ValueError("freqs: every frequency must be finite and > 0 Hz")
    return f


class Engine(Protocol):
    """What every solver engine provides."""

    method: str

    def transfer(self, f: np.ndarray, derivative: bool = True
                 ) -> tuple[np.ndarray, np.ndarray | None]:
        """H(f) and dH/df (per Hz; None unless ``derivative``) at the frequencies ``f``."""
        ...


@dataclass(frozen=True, slots=True, eq=False)
class Response:
    """Frequency response of one output to one stimulus.

    Attributes
    ----------
    frequency_hz : ndarray
        Sweep frequencies, Hz (read-only).
    transfer : ndarray
        Complex V(node) − V(ref) per unit stimulus (V/V or V/A).
    dtransfer : ndarray
        Exact derivative dH/df, per Hz (from one adjoint solve, not differences; computed
        when first asked for).
    """

    frequency_hz: np.ndarray
    transfer: np.ndarray
    system: System
    engine: object = field(repr=False)
    _dtransfer: np.ndarray | None = field(default=None, repr=False)
    _solution: np.ndarray | None = field(default=None, repr=False)

    @property
    def dtransfer(self) -> np.ndarray:
        """Exact dH/df per Hz (one adjoint solve per point, made on first use)."""
        if self._dtransfer is None:
            _, dh = self.engine.transfer(self.frequency_hz, derivative=True)
            object.__setattr__(self, "_dtransfer", readonly(dh))
        return self._dtransfer

    @property
    def method(self) -> str:
        """Engine used: ``pole-zero``, ``dense`` or ``sparse``."""
        return self.engine.method

    @property
    def magnitude_db(self) -> np.ndarray:
        """20·log10|H| in dB (−inf where H is exactly 0)."""
        with np.errstate(divide="ignore"):
            return readonly(20.0 * np.log10(np.abs(self.transfer)))

    @property
    def phase_deg(self) -> np.ndarray:
        """Phase of H in degrees, unwrapped along frequency."""
        return readonly(np.degrees(np.unwrap(np.angle(self.transfer))))

    @property
    def group_delay_s(self) -> np.ndarray:
        """Group delay −dφ/dω in seconds, from the exact derivative."""
        with np.errstate(all="ignore"):
            return readonly(-np.imag(self.dtransfer / self.transfer) / _TWO_PI)

    def roots_hz(self, l: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray, bool]:
        """Poles and zeros of the response (or of l·x for another selector ``l``) as
        complex frequencies s/2π (Hz), and whether the sets are complete.

        On the dense paths (dense and pole–zero engines) every finite pole and zero,
        from QZ of the MNA pencil and of the pencil bordered with b and l [1]_,
        whatever the number of sweep points (complete: True). On the sparse path every
        lightly damped pole and zero (Q > 1/√2) of the sweep, found by adaptive
        shift-invert Arnoldi (:func:`~netcheck.mna.sparse_poles.sparse_poles`), with
        others met on the way (complete: False). They seed the measurements: narrow
        features and every extreme between grid points are found from them
        (:mod:`netcheck.measure`).
        """
        f = self.frequency_hz
        eng = self.engine
        if not hasattr(eng, "roots"):
            empty = np.zeros(0, dtype=complex)
            return readonly(empty), readonly(empty.copy()), False
        poles, zeros, complete = eng.roots(float(f.min()), float(f.max()), l)
        return readonly(np.array(poles)), readonly(np.array(zeros)), complete

    @property
    def poles_hz(self) -> np.ndarray:
        """Poles as complex frequencies s/2π (Hz) (see :meth:`roots_hz`)."""
        return self.roots_hz()[0]

    @property
    def zeros_hz(self) -> np.ndarray:
        """Zeros as complex frequencies s/2π (Hz) (see :meth:`roots_hz`)."""
        return self.roots_hz()[1]

    def at(self, f_hz: object, derivative: bool = True
           ) -> tuple[np.ndarray, np.ndarray | None]:
        """H and dH/df (None unless ``derivative``) at other frequencies, same engine."""
        return self.engine.transfer(validate_frequencies(f_hz), derivative=derivative)

    def solution(self, f_hz: object | None = None) -> np.ndarray:
        """Every node voltage and branch current (F × n, columns ``system.unknowns``).

        On the sweep grid (``f_hz`` None) it is solved once and kept: part stress and the
        hazard check both read it."""
        if f_hz is None:
            if self._solution is None:
                object.__setattr__(self, "_solution",
                                   readonly(self.engine.solution(self.frequency_hz)))
            return self._solution
        return readonly(self.engine.solution(validate_frequencies(f_hz)))

    def direct(self) -> DenseEngine | SparseEngine:
        """A direct-solve engine on the same system (for other outputs and checks)."""
        eng = self.engine
        if isinstance(eng, PoleZeroEngine):
            return eng.direct
        return eng
