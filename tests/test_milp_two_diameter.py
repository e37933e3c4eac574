"""The optimum of a single pipeline with one head constraint at its end is the analytic
two-diameter solution.

Source: Karmeli, D., Gadish, Y. & Meyers, S. (1968), Design of optimal water distribution
networks, J. Pipeline Div. ASCE 94(PL1): with one head constraint at the end of a
pipeline of known flow, the cheapest design uses at most two catalogue diameters, the
neighbours on the lower convex hull of (unit head loss, cost per m) around the available
gradient; their lengths solve L1 + L2 = L and J1 L1 + J2 L2 = available head.
Unit head loss here by Hazen-Williams in SI units, J = 10.67 Q^1.852 / (C^1.852 d^4.8704)
(Williams, G.S. & Hazen, A. (1905), Hydraulic Tables), computed in the test.
Tolerance: rel 1e-6 on cost (reference-checks.md).
"""

from __future__ import annotations

import itertools

import pytest
from test_milp_support import write_study

from optimiser import load_study
from optimiser.analysis import check_design
from optimiser.milp import optimise_design

FLOW_M3_S = 0.030
LENGTH_M = 5000.0
# (ID mm, C, cost per m): invented; the 200 mm option is off the lower hull on purpose.
OPTIONS = [(141.0, 150.0, 30.0), (176.2, 150.0, 44.0), (200.0, 150.0, 58.0),
           (220.4, 150.0, 60.0), (277.6, 150.0, 92.0)]


def hazen_williams_j(flow_m3_s: float, diameter_m: float, c: float) -> float:
    """Williams & Hazen (1905), SI form."""
    return 10.67 * flow_m3_s**1.852 / (c**1.852 * diameter_m**4.8704)


def lower_hull(points: list[tuple[float, float, int]]) -> list[tuple[float, float, int]]:
    """Lower convex hull of (J, cost) points, by ascending J (Andrew's monotone chain)."""
    hull: list[tuple[float, float, int]] = []
    for point in sorted(points):
        while len(hull) >= 2:
            (x1, y1, _), (x2, y2, _) = hull[-2], hull[-1]
            if (x2 - x1) * (point[1] - y1) - (y2 - y1) * (point[0] - x1) <= 0:
                hull.pop()
            else:
                break
        hull.append(point)
    return hull


def analytic_cost(available_head_m: float) -> tuple[float, set[int]]:
    points = [(hazen_williams_j(FLOW_M3_S, d / 1000, c), cost, index)
              for index, (d, c, cost) in enumerate(OPTIONS)]
    hull = lower_hull(points)
    target = available_head_m / LENGTH_M
    for (j_low, c_low, a), (j_high, c_high, b) in itertools.pairwise(hull):
        if j_low <= target <= j_high:
            # J1 L1 + J2 L2 = H, L1 + L2 = L
            length_high = (available_head_m - j_low * LENGTH_M) / (j_high - j_low)
            length_low = LENGTH_M - length_high
            return c_low * length_low + c_high * length_high, {a, b}
    raise AssertionError("target gradient outside the catalogue")


@pytest.mark.parametrize("available_head_m", [12.0, 25.0, 60.0])
def test_two_diameter_theorem(tmp_path, available_head_m):
    # Steep drop after the intake keeps every pressure far above zero: only the end
    # constraint can bind. No local losses, chainage lengths, no velocity limits.
    path = write_study(
        tmp_path, profile=[(0.0, 190.0), (100.0, 60.0), (LENGTH_M, 40.0)],
        catalogue=[("PE", 100 + i, d, "PN25", 250.0, 0.0, c, cost)
                   for i, (d, c, cost) in enumerate(OPTIONS)],
        source_level_m=200.0, required_head_m=200.0 - available_head_m,
        scenarios=[{"name": "design", "flow": f"{FLOW_M3_S * 1000:g} L/s",
                    "velocity_limits": False}],
        route={"length": "chainage", "min_pressure_m": 0.0}, entrance_k=0.0, exit_k=0.0)
    study = load_study(path)
    outcome = optimise_design(study, time_limit_s=30)
    expected, pair = analytic_cost(available_head_m)
    assert outcome.status == "optimal"
    assert outcome.total_cost == pytest.approx(expected, rel=1e-6)
    used = {study.catalogue.index_of(p.option) for p in outcome.design.pieces}
    assert used <= pair  # at most the two hull neighbours (the theorem)
    assert check_design(study, outcome.design).ok
    # with the rules off the LP bound is the same optimum
    assert outcome.lp_bound == pytest.approx(expected, rel=1e-6)
