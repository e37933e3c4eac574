"""Why no design of a scheme exists, branch by branch, before any solve.

Each line is judged as a single route by :func:`optimiser.milp.diagnose.diagnose`
(classes, velocity window, and the highest energy line any design can have: the
lowest-loss admissible option in every section), fed at its start by the highest energy
its parent can deliver at the junction on that line (the source level for the trunk).
Every design loses at least that much, so a shortfall there proves that no design
exists.

For a branch that is short, the finding says whose fault it is: fed at its junction
with the source's own level (as if no head were lost upstream), is it still short? Then
the branch itself cannot be met (its delivery stands too high, or its pipes are too
small for its length, whatever the trunk does). If not, the lines upstream are short:
even their largest pipes leave too little energy at the junction, and the shortfall of
the branch is the energy the junction lacks (energy shifts one for one along a branch
when its start does).
"""

from __future__ import annotations

import dataclasses

import numpy as np

from optimiser.milp.data import ProblemData
from optimiser.milp.diagnose import diagnose
from optimiser.milp.tree.model import junction_nodes
from optimiser.milp.tree.problem import TreeProblem


def best_energy_m(data: ProblemData) -> np.ndarray:
    """(K, n+1) highest energy [m] any design can have on the upstream side of each node
    of a line fed at ``data.source_level_m``: every section losing its least loss, the
    start loss and every fitting taking the smallest admissible velocity head."""
    n = data.n_sections
    energies = np.empty((data.n_scenarios, n + 1))
    for k in range(data.n_scenarios):
        loss = np.where(data.admissible, data.section_loss_m[k], np.inf).min(axis=1)
        head = np.where(data.admissible, data.velocity_head_m[k], np.inf).min(axis=1)
        # A section with no admissible option (infinite head) leaves the energies below
        # it undefined (nan), so nothing is concluded downstream of it from them.
        with np.errstate(invalid="ignore"):
            point = data.node_point_k[:-1] * head
            point[0] += data.study.source.entrance_k * head[0]
        energies[k, 0] = data.source_level_m[k]
        energies[k, 1:] = data.source_level_m[k] - np.cumsum(point + loss)
    return energies


def diagnose_scheme(problem: TreeProblem) -> list[str]:
    """Findings that prove no design of the scheme exists (empty: none found)."""
    findings: list[str] = []
    starts: dict[str, np.ndarray] = {}
    for index, (line, data) in enumerate(zip(problem.lines, problem.datas, strict=True)):
        fed = data if line.is_trunk else dataclasses.replace(
            data, source_level_m=starts[line.name])
        energies = best_energy_m(fed)
        for child, node in junction_nodes(problem.lines, problem.datas, index):
            starts[child] = energies[:, node]
        found = diagnose(fed)
        if not found:
            continue
        if line.is_trunk:
            findings.extend(f"trunk {line.name!r}: {text}" for text in found)
            continue
        findings.extend(_branch_findings(problem, line.name, data, fed, found))
    return findings


def _branch_findings(problem: TreeProblem, name: str, data: ProblemData, fed: ProblemData,
                     found: list[str]) -> list[str]:
    """A short branch's findings, saying whether the branch itself or the lines upstream
    are short."""
    scenarios = [s.name for s in problem.study.scenarios]
    junction = ", ".join(f"{scenario!r} {energy:.2f} m"
                         for scenario, energy in zip(scenarios, fed.source_level_m,
                                                     strict=True))
    if diagnose(data):  # fed at the source's own level: still short
        cause = ("the branch itself is short: even fed at its junction with the source's "
                 "own level (no head lost upstream) it cannot be met")
    else:
        cause = ("the lines upstream are short: fed at the source's level the branch could "
                 "be met, but even their largest pipes leave at most "
                 f"{junction} of energy at its junction; the junction lacks the shortfall "
                 "below (a larger trunk cannot help past that; lower the branch's required "
                 "head or raise the source)")
    return [f"branch {name!r}: {text} ({cause})" for text in found]
