"""The trunk and every branch seen alike: a :class:`Line` per pipeline of a study.

A single route has one line, the trunk (``"main"``). A scheme (contract section 7) adds
one line per branch. Code that walks a scheme (the check, the optimiser's data, the
reports) asks for :func:`study_lines` and treats each line as the route of version 1
with its own start loss, delivery point, fittings and offtakes; the junction links a
line to its parent.
"""

from __future__ import annotations

from dataclasses import dataclass

from optimiser.model.route import Fitting, Offtake, Route
from optimiser.model.scenario import Scenario
from optimiser.model.scheme import TRUNK, Branch
from optimiser.model.study import Study


@dataclass(frozen=True)
class Line:
    """One pipeline of a study: the trunk or a branch.

    ``start_k`` is the entrance K at the source for the trunk, the junction K for a
    branch (x V^2/2g of its first pipe). ``parent`` is None for the trunk;
    ``at_chainage_m`` is the junction's chainage on the parent (0 for the trunk).
    """

    name: str
    parent: str | None
    at_chainage_m: float
    route: Route
    fittings: tuple[Fitting, ...]
    offtakes: tuple[Offtake, ...]
    min_pressure_m: float
    local_k_per_km: float
    start_k: float
    required_head_m: float
    exit_k: float
    design_flow_m3_s: float | None
    """The branch's flow key (None for the trunk: the scenario's ``flow``)."""

    @property
    def is_trunk(self) -> bool:
        return self.parent is None

    def delivery_flow_m3_s(self, scenario: Scenario) -> float:
        """Flow delivered at the end of this line in ``scenario`` [m^3/s]."""
        if self.design_flow_m3_s is None:
            return scenario.outlet_flow_m3_s
        return scenario.branch_flow_m3_s(self.name, self.design_flow_m3_s)


def trunk_line(study: Study) -> Line:
    """The trunk of ``study`` as a line."""
    return Line(name=TRUNK, parent=None, at_chainage_m=0.0, route=study.route,
                fittings=study.fittings, offtakes=study.offtakes,
                min_pressure_m=study.min_pressure_m, local_k_per_km=study.local_k_per_km,
                start_k=study.source.entrance_k, required_head_m=study.outlet.required_head_m,
                exit_k=study.outlet.exit_k, design_flow_m3_s=None)


def branch_line(branch: Branch) -> Line:
    """A branch of a scheme as a line."""
    return Line(name=branch.name, parent=branch.parent, at_chainage_m=branch.at_chainage_m,
                route=branch.route, fittings=branch.fittings, offtakes=branch.offtakes,
                min_pressure_m=branch.min_pressure_m, local_k_per_km=branch.local_k_per_km,
                start_k=branch.junction_k, required_head_m=branch.required_head_m,
                exit_k=branch.exit_k, design_flow_m3_s=branch.flow_m3_s)


def study_lines(study: Study) -> tuple[Line, ...]:
    """Every line of ``study``: the trunk, then the branches, parents before children.

    Kept on the study while the fields it is made of are the same objects (the flow
    rule asks for it once per line and pipe, thousands of times on a scheme)."""
    made_of = (study.route, study.fittings, study.offtakes, study.min_pressure_m,
               study.local_k_per_km, study.source, study.outlet, study.branches)
    kept = study.__dict__.get("_lines_kept")
    if kept is not None and all(a is b for a, b in zip(kept[0], made_of, strict=True)):
        return kept[1]
    lines = _make_lines(study)
    study.__dict__["_lines_kept"] = (made_of, lines)
    return lines


def _make_lines(study: Study) -> tuple[Line, ...]:
    return (trunk_line(study), *(branch_line(branch) for branch in study.branches))


def line_of(study: Study, name: str) -> Line:
    """The line called ``name`` (the trunk is ``"main"``)."""
    for line in study_lines(study):
        if line.name == name:
            return line
    raise KeyError(name)


def children_of(study: Study, name: str) -> tuple[Line, ...]:
    """Lines whose junction is on line ``name``, in the study's order."""
    # Only the children are built: the flow rule asks this for every line it walks.
    return tuple(branch_line(b) for b in study.branches if b.parent == name)
