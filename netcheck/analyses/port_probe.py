"""Port quantities of a spec with ``[ports]``: the impedance looking into each port and its
reflection coefficient, as exact curves the measurements find band extremes on.

The input port: the stimulus E drives the input node through Rs, so E sees
Z_E = Rs + Z_in (with the output loaded by RL), and

    Z_in = Z_E − Rs,    Γ_in = (Z_in − Rs)/(Z_in + Rs) = 1 − 2Rs/Z_E.

The output port: the probe current source at the output node (the stimulus of a second
solve, E zero so the input is terminated in Rs) sees Z_P = Z_out ‖ RL, so

    1/Z_out = 1/Z_P − 1/RL,    Γ_out = (Z_out − RL)/(Z_out + RL) = 2 Z_P/RL − 1.

Return loss is −20 log10 |Γ| and VSWR (1 + |Γ|)/(1 − |Γ|) (Pozar, *Microwave
Engineering*, 4th ed., 2012, §2.3, from memory). Each curve carries the exact
derivative in f from the impedance's (dΓ_in/df = 2Rs/Z_E² · dZ_E/df,
dΓ_out/df = 2/RL · dZ_P/df), so the band extremes are found as those of the gain are.

The transfer H = V(out)/E gives the two-port's power figures (Pozar §11.1, from memory):
transducer gain G_T = |H|²·4Rs/RL (the power into RL over the power the source has
available), and insertion loss IL = −20 log10 |H·(Rs + RL)/RL| (the load voltage with
the network in place against the source joined straight to the load: negative where a
matching network delivers more than the direct connection).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ..measure.measurements import FunctionCurve
from ..mna.assemble import assemble
from ..mna.solve import solve
from ..netlist.ports import PORT_PROBE, PortSpec

__all__ = ["PortCurves"]


class PortCurves:
    """The port curves of one solved response (built on first use, kept)."""

    def __init__(self, response: Any, ports: PortSpec, impedance: Any, seeds_hz: np.ndarray,
                 impedance_curve: Any) -> None:
        self.response, self.ports, self.seeds = response, ports, seeds_hz
        self._curve_of = impedance_curve  # ImpedanceCurve.of: the exact impedance curve
        self._input_z = impedance  # Z_E(f): the stimulus's impedance curve
        self._output_z: Any = None
        self._made: dict[str, FunctionCurve] = {}

    def _output(self) -> Any:
        if self._output_z is None:
            r = self.response
            system = assemble(r.system.circuit, PORT_PROBE, self.ports.output_node)
            self._output_z = self._curve_of(solve(system, r.frequency_hz), self.seeds)
        return self._output_z

    def curve(self, port: str, quantity: str) -> FunctionCurve:
        """``quantity`` 'impedance' (Z looking into the port) or 'reflection' (Γ) of
        ``port`` 'input' or 'output', as a curve whose |H| is that magnitude."""
        key = f"{port} {quantity}"
        if key not in self._made:
            self._made[key] = self._build(port, quantity)
        return self._made[key]

    def _build(self, port: str, quantity: str) -> FunctionCurve:
        rs, rl = self.ports.source_ohms, self.ports.load_ohms
        if port == "input":
            z = self._input_z
            if quantity == "impedance":
                fn, dfn = (lambda f: z.transfer(f) - rs), z.dtransfer
            else:
                def fn(f: np.ndarray) -> np.ndarray:
                    with np.errstate(all="ignore"):
                        return 1.0 - 2.0 * rs / z.transfer(f)

                def dfn(f: np.ndarray) -> np.ndarray:
                    ze = z.transfer(f)
                    with np.errstate(all="ignore"):
                        return 2.0 * rs / (ze * ze) * z.dtransfer(f)
        else:
            z = self._output()
            if quantity == "impedance":
                if rl is None:
                    fn, dfn = z.transfer, z.dtransfer
                else:
                    def fn(f: np.ndarray) -> np.ndarray:
                        zp = z.transfer(f)
                        with np.errstate(all="ignore"):
                            return zp * rl / (rl - zp)

                    def dfn(f: np.ndarray) -> np.ndarray:
                        zp = z.transfer(f)
                        with np.errstate(all="ignore"):
                            return rl * rl / (rl - zp) ** 2 * z.dtransfer(f)
            else:
                assert rl is not None
                fn = lambda f: 2.0 * z.transfer(f) / rl - 1.0  # noqa: E731
                dfn = lambda f: 2.0 * z.dtransfer(f) / rl  # noqa: E731
        return FunctionCurve(self.response.frequency_hz, fn, dfn, self.seeds)
