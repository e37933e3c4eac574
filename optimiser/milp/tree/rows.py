"""Which check points of each line join the tree's models next (row generation).

The check judges the whole scheme at once; :func:`line_result` gives the part of its
result on one line, so that :func:`optimiser.milp.reaches.points_near` (written for a
single route) picks that line's points.
"""

from __future__ import annotations

from dataclasses import dataclass

from optimiser.analysis import CheckResult
from optimiser.milp.reaches import ActivePoints, points_near
from optimiser.milp.tree.problem import TreeProblem
from optimiser.model.scheme import TRUNK


@dataclass(frozen=True)
class _Scenario:
    points: object


@dataclass(frozen=True)
class _LineResult:
    scenarios: list[_Scenario]


def line_result(result: CheckResult, name: str) -> _LineResult:
    """The check points of line ``name`` in every scenario of ``result`` (points carry
    their ``branch``, contract section 7; without that column, all are the trunk's)."""
    scenarios = []
    for scenario in result.scenarios:
        points = scenario.points
        if "branch" in points:
            points = points[points["branch"] == name]
        elif name != TRUNK:
            points = points.iloc[0:0]
        scenarios.append(_Scenario(points))
    return _LineResult(scenarios)


def grown_points(problem: TreeProblem, actives: list[ActivePoints], result: CheckResult
                 ) -> tuple[list[ActivePoints], bool]:
    """Every line's active points with those ``result`` came close to added; and whether
    any was added."""
    grown = []
    added = False
    for line, data, active in zip(problem.lines, problem.datas, actives, strict=True):
        more = active.union(points_near(data, line_result(result, line.name)))
        added |= more.count() > active.count()
        grown.append(more)
    return grown, added
