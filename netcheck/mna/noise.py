"""Thermal noise at the output: every resistance's contribution by one adjoint solve per
frequency, and the noise integrated over a band.

Every resistance R at absolute temperature T is a noise source of one-sided power
spectral density 4kTR V²/Hz in series, or 4kT/R A²/Hz in parallel (J. B. Johnson,
"Thermal agitation of electricity in conductors", Phys. Rev. 32, 97, 1928; H. Nyquist,
"Thermal agitation of electric charge in conductors", Phys. Rev. 32, 110, 1928), the
sources uncorrelated. A source enters the MNA equations A(s)x = b as a right-hand side
u(s)·n with n its noise amplitude; its transfer to the output y = lᵀx is lᵀA⁻¹u = wᵀu
with the adjoint w = A⁻ᵀl. One adjoint solve per frequency therefore gives every
source's transfer at once (S. W. Director and R. A. Rohrer, IEEE Trans. Circuit Theory
16(3), 1969, the adjoint network), and the output density is

    S_out(f) = Σ_k S_k · |wᵀu_k(j2πf)|²      (V²/Hz at the output, per unit stimulus gain)

The sources and their right-hand sides, from each element's stamp:

* a resistor of conductance G = m/R between a and b: a current 4kT·G A²/Hz, u = e_a − e_b;
* the ``Rpar`` of an L or C: the same with G = m/Rpar;
* the ``Rser`` of an L (branch row k: v+ − v− − (sL + Rser)/m·i = 0): a voltage
  4kT·Rser/m V²/Hz in series, u = e_k;
* the ``Rser`` of a C (branch row k: sCm·(v+ − v−) − sCm·(Rser/m)·i − i = 0): the same
  voltage, entering as u = sCm·e_k.

A device at its operating point adds its shot noise (2q|I| of each junction current) or
channel noise ((8/3)kT·gm of a MOSFET or JFET); an amplifier written as an E card (or an
ideal op-amp) adds the datasheet noise its card gives, ``en`` in series with its input
and ``in`` into each input, each times (1 + ``noise_corner``/f). A device model's KF and
AF add flicker noise (SPICE convention, from memory).
Where the circuit is rational and small enough for dense QZ, every source's transfer is
put in pole–zero form once — the poles of the pencil (G, −C), shared, and its own zeros
from the pencil bordered with its right-hand side and l — checked against adjoint solves
at four frequencies to 1e-7, and the densities evaluated from it (:func:`rational_form`);
otherwise each frequency takes its adjoint solve. The integrated noise ∫S_out df over a
band is computed by adaptive Gauss–Kronrod quadrature (``scipy.integrate.quad``) on the
exact density in ln f, its breakpoints at the response's lightly damped poles, to a
relative tolerance of 1e-10.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np
import scipy.integrate as si
import scipy.sparse.linalg as spla

from ..netlist.elements.controlled import VCVS, IdealOpAmp
from ..netlist.elements.devices import Linearised
from ..netlist.elements.passives import Capacitor, Inductor, Resistor
from .assemble import System
from .dense import DenseEngine
from .pencil import pencil_roots
from .solve import DENSE_MAX

__all__ = ["NoiseSource", "noise_sources", "NoiseDensity", "output_noise",
           "integrated_noise", "rational_form", "BOLTZMANN", "kelvin"]

#: the Boltzmann constant, J/K, and the elementary charge, C (exact, SI 2019)
BOLTZMANN = 1.380649e-23
CHARGE = 1.602176634e-19
#: the permittivity of silicon dioxide, F/m (3.9·ε0; common practice, no source)
EPS_OX = 3.9 * 8.8541878128e-12
_TWO_PI = 2.0 * math.pi


def kelvin(temp_c: float) -> float:
    """Absolute temperature of ``temp_c`` °C."""
    return temp_c + 273.15


@dataclass(frozen=True, slots=True, eq=False)
class NoiseSource:
    """One uncorrelated noise source: its element, what it is (``R``, ``Rpar``,
    ``Rser``), its density (A²/Hz for a current, V²/Hz for a voltage) and its
    right-hand side u(s) = ``u0`` + s·``us``."""

    element: str
    what: str
    density: float
    u0: np.ndarray
    us: np.ndarray | None = None
    #: a 1/f corner (Hz): the density is ``density``·(1 + corner/f)
    corner: float = 0.0

    def at(self, f: np.ndarray) -> np.ndarray:
        """The density at frequencies ``f``."""
        return self.density * (1.0 + self.corner / f) if self.corner else \
            np.full(f.shape, self.density)

    def d_at(self, f: np.ndarray) -> np.ndarray:
        """d/df of :meth:`at`."""
        return -self.density * self.corner / (f * f) if self.corner else np.zeros(f.shape)


def noise_sources(system: System, temp_c: float = 27.0) -> list[NoiseSource]:
    """The thermal noise sources of ``system``'s circuit at ``temp_c`` °C."""
    four_kt = 4.0 * BOLTZMANN * kelvin(temp_c)
    n = system.size
    out: list[NoiseSource] = []
    large = system.circuit.large_signal  # the devices' models (KF, AF: flicker noise)
    models = {e.name: e.model for e in large.elements if hasattr(e, "model")} \
        if large is not None else {}

    def between(a: str, b: str) -> np.ndarray:
        u = np.zeros(n)
        if a in system.node_index:
            u[system.node_index[a]] += 1.0
        if b in system.node_index:
            u[system.node_index[b]] -= 1.0
        return u

    for e in system.circuit.elements:
        if isinstance(e, Linearised):  # a device at its operating point
            out.extend(_device_sources(e, between, four_kt, models.get(e.name)))
            continue
        if isinstance(e, VCVS) and (e.en or e.in_):  # an amplifier's own noise
            out.extend(_amplifier_sources(system, e, between))
            continue
        if isinstance(e, Resistor):
            if e.value:  # a 0 Ω resistor is a wire: no noise
                out.append(NoiseSource(e.name, "R", four_kt * e.m / e.value, between(*e.nodes[:2])))
            continue
        if not isinstance(e, (Inductor, Capacitor)):
            continue
        if e.rpar:
            out.append(NoiseSource(e.name, "Rpar", four_kt * e.m / e.rpar,
                                   between(*e.nodes[:2])))
        if e.rser:
            u = np.zeros(n)
            k = system.branch_index[e.name]
            if isinstance(e, Inductor):
                u[k] = 1.0
                out.append(NoiseSource(e.name, "Rser", four_kt * e.rser / e.m, u))
            else:
                u[k] = e.value * e.m
                out.append(NoiseSource(e.name, "Rser", four_kt * e.rser / e.m,
                                       np.zeros(n), u))
    return out


def _device_sources(e: Linearised, between: Any, four_kt: float, model: Any = None
                    ) -> list[NoiseSource]:
    """The noise of a device at its operating point (common practice; van der Ziel,
    *Noise in Solid State Devices and Circuits*, 1986, from memory): shot noise 2q|I| of
    each junction current — a diode's Id between its terminals; a bipolar transistor's
    Ic from collector to emitter and Ib from base to emitter — and the channel noise
    (8/3)kT·gm of a MOSFET or JFET from drain to source (saturation); with the model's
    KF, AF the flicker noise KF·|I|^AF/f of the diode's Id, the transistor's Ib, the
    JFET's Id, or the MOSFET's Id over COX·L² (COX = ε_ox/TOX; none without TOX), folded
    into the same source as its 1/f corner."""
    q = dict(e.quantities)
    n = e.nodes
    kf, af = (getattr(model, "KF", 0.0), getattr(model, "AF", 1.0))

    def corner(density: float, current: float, per: float = 1.0) -> float:
        """The 1/f corner that adds flicker noise KF·|I|^AF/(per·f) to ``density``."""
        return kf * abs(current) ** af / per / density if kf and density else 0.0

    if e.kind == "diode":
        d = 2 * CHARGE * abs(q["Id"])
        return [NoiseSource(e.name, "shot", d, between(n[0], n[1]), corner=corner(d, q["Id"]))]
    if e.kind in ("npn", "pnp"):  # nodes: collector, base, emitter; flicker in Ib
        dc, db = 2 * CHARGE * abs(q["Ic"]), 2 * CHARGE * abs(q["Ib"])
        return [NoiseSource(e.name, "shot Ic", dc, between(n[0], n[2])),
                NoiseSource(e.name, "shot Ib", db, between(n[1], n[2]),
                            corner=corner(db, q["Ib"]))]
    if "gm" in q:  # MOSFET or JFET: drain, gate, source, ...
        d = four_kt * 2.0 / 3.0 * abs(q["gm"])
        per = 1.0
        if e.kind in ("nmos", "pmos"):  # KF·Id^AF/(f·COX·L²), COX = ε_ox/TOX
            tox = getattr(model, "TOX", math.inf)
            per = (EPS_OX / tox) * getattr(model, "L", 1.0) ** 2 if math.isfinite(tox) else 0.0
        return [NoiseSource(e.name, "channel", d, between(n[0], n[2]),
                            corner=corner(d, q["Id"], per) if per else 0.0)]
    return []


def _amplifier_sources(system: System, e: VCVS, between: Any) -> list[NoiseSource]:
    """An amplifier's datasheet noise (the card's ``en``, ``in``, ``noise_corner``): ``en``
    in series with its control input — on an E card's row v+ − v− − A(vc+ − vc− + e) = 0 it
    enters as A·e, on an ideal op-amp's row vc+ − vc− (+ e) = 0 as e — and ``in`` into each
    control node, the three uncorrelated, each with the 1/f corner."""
    out = []
    k = system.branch_index[e.name]
    if e.en:
        u = np.zeros(system.size)
        u[k] = 1.0 if isinstance(e, IdealOpAmp) else e.gain
        out.append(NoiseSource(e.name, "en", e.en ** 2, u, corner=e.noise_corner))
    if e.in_:
        for node, what in ((e.nodes[2], "in+"), (e.nodes[3], "in-")):
            if node in system.node_index:
                out.append(NoiseSource(e.name, what, e.in_ ** 2, between(node, "0"),
                                       corner=e.noise_corner))
    return out


@dataclass(frozen=True, slots=True, eq=False)
class NoiseDensity:
    """Output noise at frequencies ``frequency_hz``: the total density ``total`` (V²/Hz
    for a voltage output) and each source's part ``parts`` (sources × frequencies), and
    with ``derivative``, d/df of both (per Hz)."""

    frequency_hz: np.ndarray
    total: np.ndarray
    parts: np.ndarray
    sources: tuple[NoiseSource, ...]
    d_total: np.ndarray | None = None
    d_parts: np.ndarray | None = None


def _engine(system: System) -> DenseEngine | None:
    """The dense engine of ``system`` (kept on it), None when it takes sparse solves."""
    if system.size > DENSE_MAX:
        return None
    cache = _ENGINES.get(id(system))
    if cache is None or cache[0] is not system:
        cache = _ENGINES[id(system)] = (system, DenseEngine(system))
        while len(_ENGINES) > 8:
            _ENGINES.pop(next(iter(_ENGINES)))
    return cache[1]


#: the dense engines of the last few systems asked about (an engine equilibrates per
#: frequency band once, which every noise evaluation of a band reuses)
_ENGINES: dict[int, tuple[System, DenseEngine]] = {}


def _adjoint(system: System, f: np.ndarray, derivative: bool = False
             ) -> tuple[np.ndarray, np.ndarray | None]:
    """w = A(j2πf)⁻ᵀ l for each frequency (F × n), and with ``derivative`` dw/df =
    −A⁻ᵀ (j2π Cᵀ) w (from Aᵀw = l: Aᵀ dw/df = −(dA/df)ᵀ w)."""
    l = np.asarray(system.l, complex)
    engine = _engine(system)
    if engine is not None:
        w = engine._solve(f, l, transpose=True)
        if not derivative:
            return w, None
        ct = system.C.T.tocsr()
        rhs = -(1j * _TWO_PI) * (ct @ w.T).T  # one right-hand side per frequency
        return w, engine._solve(f, rhs, transpose=True)
    w = np.empty((f.size, system.size), dtype=complex)
    dw = np.empty_like(w) if derivative else None
    for i, fi in enumerate(f):
        lu = spla.splu(system.matrix(float(fi)).tocsc())
        w[i] = lu.solve(l, trans="T")
        if dw is not None:
            dw[i] = lu.solve(-(1j * _TWO_PI) * (system.C.T @ w[i]), trans="T")
    return w, dw


class _Rational:
    """Every source's transfer to the output in pole–zero form, T_k(s) =
    g_k·∏(s − z)/∏(s − p): the poles of the pencil (G, −C), shared, and each source's
    zeros from the pencil bordered with its right-hand side and l (QZ,
    :func:`netcheck.mna.pencil.pencil_roots`), g_k from one direct solve. Checked against
    direct solves at a few frequencies; None where it does not hold there."""

    def __init__(self, system: System, sources: list[NoiseSource], f: np.ndarray) -> None:
        g, c = system.G.toarray(), system.C.toarray()
        w = _TWO_PI * math.sqrt(float(f[0]) * float(f[-1]))
        l = np.asarray(system.l, float)
        self.zeros: list[np.ndarray] = []
        poles = None
        for k, src in enumerate(sources):
            got, zeros = pencil_roots(g, c, src.u0, l, w, src.us, poles=k == 0)
            poles = got if k == 0 else poles
            if poles is None or zeros is None:
                raise ArithmeticError("no pole-zero form")
            self.zeros.append(zeros * w)
        self.poles: np.ndarray = poles * w  # type: ignore[operator]
        probe = np.array([f[0], math.sqrt(f[0] * f[-1]), f[-1], f[f.size // 3]])
        direct = _direct_transfers(system, sources, probe)
        s = 1j * _TWO_PI * probe[:, None]
        den = np.prod(s - self.poles[None, :], axis=1)
        shapes = np.array([np.prod(s - z[None, :], axis=1) / den for z in self.zeros])
        self.gain2 = np.abs(direct[:, 1] / shapes[:, 1]) ** 2
        for k in range(len(sources)):
            scale = np.max(np.abs(direct[k])) or 1.0
            got = np.sqrt(self.gain2[k]) * np.abs(shapes[k])
            if not np.all(np.abs(got - np.abs(direct[k])) <= 1e-7 * scale):
                raise ArithmeticError("the pole-zero form disagrees with direct solves")

    @staticmethod
    def _mag2(omega: np.ndarray, roots: np.ndarray) -> np.ndarray:
        """∏ |jω − r|² = ∏ ((ω − Im r)² + (Re r)²), in real arithmetic (F,)."""
        return np.prod((omega[:, None] - roots.imag[None, :]) ** 2
                       + (roots.real ** 2)[None, :], axis=1)

    def parts(self, f: np.ndarray, densities: np.ndarray, d_densities: np.ndarray,
              derivative: bool) -> tuple[np.ndarray, np.ndarray | None]:
        """Each source's output density (sources × frequencies) from its input density
        ``densities`` (same shape) and, with ``derivative``, both d/df."""
        omega = _TWO_PI * f
        den = self._mag2(omega, self.poles)
        shape = np.empty((len(self.zeros), f.size))  # |T_k|²
        for k, z in enumerate(self.zeros):
            shape[k] = self.gain2[k] * self._mag2(omega, z) / den
        out = densities * shape
        if not derivative:
            return out, None
        # d|T|²/df = |T|²·2π·d/dω ln|T|², d/dω ln((ω − b)² + a²) = 2(ω − b)/((ω − b)² + a²)
        def dlog(roots: np.ndarray) -> np.ndarray:
            d = omega[:, None] - roots.imag[None, :]
            return (2.0 * d / (d * d + (roots.real ** 2)[None, :])).sum(axis=1)
        d_den = dlog(self.poles)
        d_out = np.array([out[k] * _TWO_PI * (dlog(z) - d_den) + d_densities[k] * shape[k]
                          for k, z in enumerate(self.zeros)])
        return out, d_out


def _direct_transfers(system: System, sources: list[NoiseSource], f: np.ndarray
                      ) -> np.ndarray:
    """T_k(j2πf) = wᵀu_k by adjoint solves (sources × frequencies)."""
    w, _ = _adjoint(system, f)
    s = 1j * _TWO_PI * f
    return np.array([w @ src.u0 + (s * (w @ src.us) if src.us is not None else 0.0)
                     for src in sources])


def output_noise(system: System, f_hz: np.ndarray, temp_c: float = 27.0,
                 sources: list[NoiseSource] | None = None, derivative: bool = False,
                 rational: "_Rational | None | bool" = None) -> NoiseDensity:
    """The output noise density of ``system`` at ``f_hz`` and every source's share (and
    their derivatives in f with ``derivative``). ``rational`` (a :class:`_Rational` of
    the same sources) evaluates them from the pole–zero form instead of solving."""
    f = np.atleast_1d(np.asarray(f_hz, float))
    srcs = noise_sources(system, temp_c) if sources is None else sources
    if isinstance(rational, _Rational) and srcs:
        dens = np.array([src.at(f) for src in srcs])
        d_dens = np.array([src.d_at(f) for src in srcs])
        parts, d_parts = rational.parts(f, dens, d_dens, derivative)
        return NoiseDensity(f, parts.sum(axis=0), parts, tuple(srcs),
                            None if d_parts is None else d_parts.sum(axis=0), d_parts)
    w, dw = _adjoint(system, f, derivative)
    parts = np.empty((len(srcs), f.size))
    d_parts = np.empty_like(parts) if derivative else None
    s = 1j * _TWO_PI * f
    for k, src in enumerate(srcs):
        t = w @ src.u0
        if src.us is not None:
            t = t + s * (w @ src.us)
        parts[k] = src.at(f) * np.abs(t) ** 2
        if dw is not None and d_parts is not None:
            dt = dw @ src.u0
            if src.us is not None:
                dt = dt + 1j * _TWO_PI * (w @ src.us) + s * (dw @ src.us)
            d_parts[k] = (src.at(f) * 2.0 * (np.conj(t) * dt).real
                          + src.d_at(f) * np.abs(t) ** 2)
    return NoiseDensity(f, parts.sum(axis=0), parts, tuple(srcs),
                        None if d_parts is None else d_parts.sum(axis=0), d_parts)


def integrated_noise(system: System, lo_hz: float, hi_hz: float, temp_c: float = 27.0,
                     breakpoints_hz: np.ndarray | None = None) -> float:
    """∫ S_out df over [lo_hz, hi_hz] (V² for a voltage output): the RMS noise squared."""
    srcs = noise_sources(system, temp_c)
    if not srcs:
        return 0.0
    a, b = math.log(lo_hz), math.log(hi_hz)
    form = rational_form(system, srcs, np.array([lo_hz, hi_hz]))

    def density(u: float) -> float:
        f = math.exp(u)
        return float(output_noise(system, np.array([f]), temp_c, srcs,
                                  rational=form).total[0]) * f

    pts = [] if breakpoints_hz is None else sorted(
        math.log(p) for p in np.asarray(breakpoints_hz, float) if lo_hz < p < hi_hz)
    value, _ = si.quad(density, a, b, points=pts or None, epsrel=1e-10, epsabs=0.0,
                       limit=500)
    return float(value)


def rational_form(system: System, sources: list[NoiseSource], f_hz: np.ndarray
                  ) -> _Rational | None:
    """Every source's transfer in pole–zero form over the band of ``f_hz`` (for
    :func:`output_noise`), or None where that form does not serve: a transmission line,
    a system past the dense size, or a form that fails its check against direct solves
    (the densities are then solved directly)."""
    f = np.atleast_1d(np.asarray(f_hz, float))
    if not sources or system.delays is not None or system.size > DENSE_MAX or f.size < 2:
        return None
    try:
        return _Rational(system, sources, f)
    except (ArithmeticError, ValueError, np.linalg.LinAlgError):
        return None
