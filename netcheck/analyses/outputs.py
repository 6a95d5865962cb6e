"""Several named outputs of one spec (``[outputs]``): one System per output, sharing the
circuit's matrices and stimulus (:func:`netcheck.mna.assemble.with_output`); the samples
of each output in Monte Carlo; what a row says it judged."""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from ..exceptions import ElaborationError, SpecError
from ..mna.assemble import System, with_output
from ..mna.sampling import SampleSet
from .sample_probe import BatchProbe

if TYPE_CHECKING:  # pragma: no cover
    from ..spec.load import Spec

__all__ = ["output_systems", "output_label", "output_probes"]


def output_systems(spec: "Spec", system: System) -> dict[str, System]:
    """The System of each named output of ``spec``: ``system`` for its own output, the
    others sharing its matrices; empty for a spec with the single ``output``.

    Raises
    ------
    SpecError
        spec-203 at ``outputs.<name>`` for a node the circuit does not have.
    """
    out = {}
    for name, (node, ref) in spec.outputs:
        try:
            same = (node.lower(), ref.lower()) == (system.node, system.ref)
            out[name] = system if same else with_output(system, node, ref)
        except ElaborationError as err:
            raise SpecError(f"outputs.{name}: {err.message}", code="spec-203",
                            path=spec.path, where=f"outputs.{name}") from None
    return out


def output_label(spec: "Spec", k: int) -> str | None:
    """What the rows of ``spec.limits[k]`` say they judged: the output's name, the two
    names of a crossover (``low/high``), None in a spec with the single ``output``."""
    pair = getattr(spec.limits[k], "outputs", None)
    return "/".join(pair) if pair else spec.output_of(k)


def output_probes(system: System, spec: "Spec", values: dict[str, np.ndarray], n: int,
                  memory: int, bp: BatchProbe) -> dict[str, BatchProbe]:
    """The samples of every named output (``[outputs]``) the limits judge: ``bp`` for
    the output of ``system``, a SampleSet of its own (same parts, another selector) for
    each other one; each probe's ``siblings`` holds them all (a crossover compares two).
    Empty for a spec with one output."""
    if not spec.outputs:
        return {}
    used = {spec.output_of(k) for k in range(len(spec.limits))}
    used.update(n for lim in spec.limits for n in getattr(lim, "outputs", ()))
    probes: dict[str, BatchProbe] = {}
    for name, sys_o in output_systems(spec, system).items():
        if name not in used:
            continue
        probes[name] = bp if sys_o is system else BatchProbe(
            SampleSet(sys_o, values, n, spec.sweep.grid(), memory), spec.ports)
    for p in probes.values():
        p.siblings = probes
    return probes
