"""A circuit with some part values replaced: one sample of a tolerance analysis, solved
as a circuit of its own (the exact re-checks of Monte Carlo, stress and noise samples)."""

from __future__ import annotations

import dataclasses

from ..netlist.circuit import Circuit

__all__ = ["with_values"]


def with_values(circuit: Circuit, values: dict[str, float]) -> Circuit:
    """A copy of ``circuit`` with the main value of the named elements replaced (a
    linearised circuit: its devices linearised again at the new operating point)."""
    if circuit.large_signal is not None:
        from ..mna.bias import linearised

        return linearised(with_values(circuit.large_signal, values),
                          circuit.operating_point.temp_c)[0]
    fields = ("magnitude", "gain", "k", "ac_magnitude")
    out = []
    for e in circuit.elements:
        if e.name in values:
            name = next(f for f in fields if hasattr(e, f))
            e = dataclasses.replace(e, **{name: float(values[e.name])})
        out.append(e)
    return dataclasses.replace(circuit, elements=tuple(out), _index=None)
