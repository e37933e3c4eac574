"""Why no design exists: findings stated in the trade's terms, before solving where possible.

Three findings need no solver:

- sections where no pressure class of the catalogue takes the static head (top water
  level minus the lowest pipe level of the section, plus the surge allowance);
- sections where the velocity window admits no catalogue size at the section's flow;
- per scenario, the first chainage where even the lowest-loss admissible option in
  every section (in practice the largest admissible pipe) leaves the pressure head or
  the outlet energy short, and by how much. That energy line is the highest any design
  can have (every section loses at least its least loss, every point loss takes at
  least the smallest velocity head), so a shortfall on it is a proof of infeasibility.

When all three pass but the solver still proves the model infeasible, the scenarios
together, the safety margin or the rules are the reason, and :func:`diagnose_after`
says which.
"""

from __future__ import annotations

import numpy as np

from optimiser.analysis.surge import surge_head_m, wave_speeds_m_s
from optimiser.milp.data import ProblemData
from optimiser.milp.tank_diagnosis import tank_hint
from optimiser.model import SurgeMethod

_TOLERANCE_M = 1e-9


def chainage_label(chainage_m: float) -> str:
    """Chainage in km+m notation: 12345.6 -> '12+345.6'."""
    kilometres = int(chainage_m // 1000)
    return f"{kilometres}+{chainage_m - 1000 * kilometres:05.1f}"


def _ranges(mask: np.ndarray) -> list[tuple[int, int]]:
    """Runs of consecutive True sections as (first, last) indices."""
    runs: list[tuple[int, int]] = []
    start = None
    for index, flag in enumerate([*mask.tolist(), False]):
        if flag and start is None:
            start = index
        elif not flag and start is not None:
            runs.append((start, index - 1))
            start = None
    return runs


def diagnose(data: ProblemData) -> list[str]:
    """Findings that prove no design exists (empty list: none found before solving)."""
    return admissibility_findings(data) or _energy_shortfalls(data)


def admissibility_findings(data: ProblemData) -> list[str]:
    """Reaches where no option is admissible: no class takes the static head (with
    surge), no size keeps the velocity in its window, or no option does both."""
    study = data.study
    chainage = data.node_chainage_m
    findings: list[str] = []
    allowable = data.study.catalogue.allowable_head_m
    highest = float(allowable.max()) if allowable.size else 0.0
    for first, last in _ranges(~data.class_ok.any(axis=1)):
        demand = float(data.static_demand_m[first:last + 1].max())
        if study.surge.method is SurgeMethod.JOUKOWSKY:
            findings.append(_own_surge_finding(data, first, last))
            continue
        findings.append(
            f"chainage {chainage_label(chainage[first])} to {chainage_label(chainage[last + 1])}:"
            f" static head {demand - study.surge_allowance_m:.1f} m + surge allowance "
            f"{study.surge_allowance_m:g} m = {demand:.1f} m exceeds every pressure class of "
            f"the catalogue (highest allowable head {highest:g} m). Use a higher class, or a "
            "pressure-reducing valve or a break-pressure tank upstream of this reach."
            + tank_hint(data, first, last, chainage_label))
    rules = study.rules
    for first, last in _ranges(~data.velocity_ok.any(axis=1)):
        flows = data.flow_m3_s[:, first:last + 1]
        findings.append(
            f"chainage {chainage_label(chainage[first])} to {chainage_label(chainage[last + 1])}:"
            f" at flows {flows.min() * 1000:.2f} to {flows.max() * 1000:.2f} L/s no catalogue "
            f"size keeps the velocity within {rules.velocity_min_m_s:g} to "
            f"{rules.velocity_max_m_s:g} m/s in every scenario with velocity limits. Widen "
            "the window, add sizes to the catalogue, or review the scenarios' flows.")
    both_ok = data.class_ok.any(axis=1) & data.velocity_ok.any(axis=1)
    for first, last in _ranges(both_ok & ~data.admissible.any(axis=1)):
        findings.append(
            f"chainage {chainage_label(chainage[first])} to {chainage_label(chainage[last + 1])}:"
            " the options whose class takes the static head are not those whose velocity "
            "is within the window; no option meets both.")
    return findings


def _own_surge_finding(data: ProblemData, first: int, last: int) -> str:
    """No class fits by wave speed: name, for the options whose class takes the static
    head, the surge of each (its wave speed, its largest velocity there) against its
    limit (contract section 10)."""
    study = data.study
    catalogue = study.catalogue
    static = float(data.static_demand_m[first:last + 1].max()) - study.surge_allowance_m
    fastest = data.velocity_m_s[:, first:last + 1].max(axis=(0, 1))  # (m,)
    surge = surge_head_m(study, wave_speeds_m_s(study, catalogue), fastest)
    limit = catalogue.surge_limit_head_m
    chainage = data.node_chainage_m
    parts = [f"{catalogue[j].label}: surge {surge[j]:.1f} m (wave speed "
             f"{wave_speeds_m_s(study, [catalogue[j]])[0]:.0f} m/s, {fastest[j]:.2f} m/s), "
             f"{static + surge[j]:.1f} m against {limit[j]:g} m"
             for j in range(len(catalogue)) if static <= catalogue[j].allowable_head_m]
    return (f"chainage {chainage_label(chainage[first])} to "
            f"{chainage_label(chainage[last + 1])}: static head {static:.1f} m plus each "
            "option's own surge exceeds its class"
            + (f" ({'; '.join(parts[:6])}{'; ...' if len(parts) > 6 else ''})" if parts
               else " (no class takes even the static head)")
            + ". Use a higher class or a more flexible pipe, slow the closure, or a "
            "pressure-reducing valve or a break-pressure tank upstream of this reach.")


def _energy_shortfalls(data: ProblemData) -> list[str]:
    study = data.study
    n = data.n_sections
    chainage = data.node_chainage_m
    pipe = data.node_pipe_level_m
    limit = data.node_min_pressure_m
    labels = study.route.labels
    k_node = data.node_point_k
    findings = []
    admissible = data.admissible
    for k, scenario in enumerate(study.scenarios):
        loss = np.where(admissible, data.section_loss_m[k], np.inf).min(axis=1)
        head = np.where(admissible, data.velocity_head_m[k], np.inf).min(axis=1)
        point = k_node[:-1] * head
        point[0] += study.source.entrance_k * head[0]
        drops = np.empty(2 * n)
        drops[0::2] = point
        drops[1::2] = loss
        cumulative = np.cumsum(drops)
        start = data.source_level_m[k] - cumulative[0::2]
        end = data.source_level_m[k] - cumulative[1::2]
        # pressure at each node: the worse of its two sides on this best line
        pressure = np.full(n + 1, np.inf)
        pressure[:-1] = start - head - pipe[:-1]
        pressure[1:] = np.minimum(pressure[1:], end - head - pipe[1:])
        pressure[n] = min(pressure[n], end[-1] - (k_node[n] + 1.0) * head[-1] - pipe[n])
        short = np.flatnonzero(pressure < limit - _TOLERANCE_M)
        if short.size:
            i = int(short[0])
            label = f" ({labels[i]})" if labels[i] else ""
            findings.append(
                f"scenario {scenario.name!r}: at chainage {chainage_label(chainage[i])}{label} "
                f"even the lowest-loss admissible pipe in every section (the largest, in "
                f"practice) leaves a pressure head of {pressure[i]:.2f} m, "
                f"{limit[i] - pressure[i]:.2f} m short of the minimum {limit[i]:g} m"
                + (f"; {short.size - 1} more points downstream are short too"
                   if short.size > 1 else "") + ".")
        outlet = end[-1] - (k_node[n] + study.outlet.exit_k) * head[-1]
        if outlet < study.outlet.required_head_m - _TOLERANCE_M:
            findings.append(
                f"scenario {scenario.name!r}: at the outlet even the lowest-loss admissible "
                f"pipe in every section leaves an energy of {outlet:.2f} m after the exit "
                f"loss, {study.outlet.required_head_m - outlet:.2f} m short of the required "
                f"{study.outlet.required_head_m:g} m.")
    return findings


def diagnose_after(data: ProblemData, *, rules_relaxed_feasible: bool) -> list[str]:
    """Findings when the solver proves infeasibility that the checks above did not see."""
    study = data.study
    if rules_relaxed_feasible:
        rules = study.rules
        parts = []
        if rules.max_changes is not None:
            parts.append(f"max_changes = {rules.max_changes}")
        if rules.min_piece_length_m > 0:
            parts.append(f"min_piece_length_m = {rules.min_piece_length_m:g}")
        if rules.sizes_non_increasing:
            parts.append('sizes_downstream = "non-increasing"')
        return [
            "designs meeting every hydraulic limit exist, but none meets the rules "
            f"({', '.join(parts) or 'none set'}) as well: relax a rule (e.g. allow more "
            "changes or shorter pieces)."]
    return [
        "each scenario on its own could be met by the largest admissible pipes, but no "
        "single design meets every scenario and limit together (within the optimiser's "
        "0.01 mm safety margin on heads). Review the scenarios that compete: a high-flow "
        "case needs large pipes, a low-flow case may then fall under the minimum velocity."]
