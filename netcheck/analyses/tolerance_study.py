"""The tolerance study a spec asks for: preferred-value lint, Monte Carlo, worst case."""

from __future__ import annotations

from ..result import Caution
from .registry import Nominal, Outcome, diag_caution

__all__ = ["analyse"]


def analyse(nominal: Nominal) -> Outcome | None:
    """Run the modes of ``[analysis]`` over the parts of ``[tolerances]``; None when the
    spec has neither table.

    Both tables were parsed when the spec was loaded (``spec.analysis``,
    ``spec.tolerances``; an absent one takes its defaults); matching the tolerances
    against the circuit's parts is done here, since it needs the circuit. The outcome's
    block is the ``tolerance`` part of the JSON result; its envelope is the Monte Carlo
    gain envelope the plots draw.
    """
    spec, circuit = nominal.spec, nominal.circuit
    if spec.tolerances is None and spec.analysis is None:
        return None
    from ..spec.tolerances import Tolerances, parse_analysis
    from .eseries import check_preferred
    from .tolerance import monte_carlo, toleranced_parts

    # the defaults of an absent [analysis] (its memory budget capped to this machine)
    analysis = spec.analysis if spec.analysis is not None else parse_analysis({}, spec.path)
    tol = spec.tolerances if spec.tolerances is not None else Tolerances()
    parts = toleranced_parts(tol, circuit, spec.path)
    params = ()
    if tol.params:  # a .param's tolerance acts through the elements that depend on it
        from .param_spread import toleranced_params

        params = tuple(toleranced_params(tol, circuit, nominal.rebuild, spec.path))
        follow = {q[0] for p in params for q in p.parts}
        parts = [p for p in parts if p[0] not in follow]  # the parameter's spread wins
    rows: list = []
    # the elements that follow a toleranced .param count as toleranced parts
    block: dict = {"modes": list(analysis.modes),
                   "parts": len(parts) + sum(len(p.parts) for p in params)}
    preferred = [(n, circuit.element(n).letter, v, t, circuit.element(n).span)
                 for n, v, t in parts
                 if circuit.element(n).letter in "RLC" and 0 < t <= 0.2 and v > 0
                 # part_models: a model's parameters are not parts bought by E-series value
                 and circuit.part_model_of(n) is None]
    cautions = [diag_caution(d) for d in check_preferred(preferred)]
    following = [q for p in params for q in p.parts]
    if tol.temperature is not None:
        lo_t, hi_t, ref = tol.temperature
        block["temperature"] = {"range_c": [lo_t, hi_t], "reference_c": ref}
    if params:
        block["params"] = [p.name for p in params]
    if not parts and not params and set(analysis.modes) - {"nominal"}:
        cautions.append(Caution("spec-250", "tolerance analysis asked for, but no part has a "
                                "tolerance ([tolerances] default/parts)", "warning", spec.path))
        return Outcome((), tuple(cautions), block, (None, None))
    envelope: tuple = (None, None)
    if "monte_carlo" in analysis.modes:
        mc, mc_rows, envelope = monte_carlo(nominal.system, spec, parts, tol, analysis,
                                            nominal.probe.curve.response, params,
                                            nominal.rebuild)
        block["monte_carlo"] = mc
        rows.extend(mc_rows)
        if mc.get("device_regions"):
            from .operating import sample_region_cautions
            cautions += sample_region_cautions(mc["device_regions"], circuit,
                                               analysis.samples)
    if "worst_case" in analysis.modes:
        wc, wc_rows = _worst_case(nominal, parts + following, analysis)
        block["worst_case"] = wc
        rows.extend(wc_rows)
    return Outcome(tuple(rows), tuple(cautions), block, envelope)


def _worst_case(nominal: Nominal, parts: list, analysis: object) -> tuple[dict, list]:
    """The worst case of every limit, each on the System of the output it judges.

    A spec with named outputs (``[outputs]``) runs one worst case per output that has
    limits (the main one always: its measurements are the summary's), each on a spec
    holding that output's limits only; their rows and JSON lists are joined.
    """
    import dataclasses

    from .outputs import output_label, output_systems
    from .worstcase import worst_case

    spec = nominal.spec
    if not spec.outputs:
        return worst_case(nominal.system, spec, parts, nominal.limits,
                          dict(nominal.measurements), analysis, nominal.probe)
    block: dict = {}
    rows: list = []
    for name, system in output_systems(spec, nominal.system).items():
        ks = [k for k in range(len(spec.limits)) if spec.output_of(k) == name]
        main = system is nominal.system
        if not ks and not main:
            continue
        own = dataclasses.replace(spec, output=spec.output_pair(name),
                                  limits=tuple(spec.limits[k] for k in ks),
                                  limit_outputs=tuple(name for _ in ks))
        wc, wc_rows = worst_case(system, own, parts, nominal.limits,
                                 dict(nominal.measurements) if main else {}, analysis,
                                 nominal.probe.sibling(name))
        labels = {spec.limits[k].index: output_label(spec, k) for k in ks}
        rows.extend(dataclasses.replace(r, output=labels.get(r.index)) for r in wc_rows)
        if not block:
            block = wc
        else:
            for key in ("limits", "sensitivities"):
                block[key] = block[key] + wc[key]
    return block, rows
