"""The reach model (quiet survey sections merged, pressure rows generated lazily).

Checks of structure, not of hydraulics (the hydraulics are checked against published
values elsewhere): merging sections whose cost and head loss are linear in slope length
with the same coefficients changes no optimum of the split-pipe programme (Karmeli,
Gadish & Meyers 1968, the linearity that makes the programme exact); a relaxation's
optimum never exceeds the optimum of the model it relaxes (common practice, no source).
All data are invented.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from test_milp_support import write_study

from optimiser import load_study
from optimiser.milp import optimise_design, prepare
from optimiser.milp.formulation import build
from optimiser.milp.reaches import ActivePoints, merge, refine, with_active
from optimiser.milp.solvers import solve


def undulating_profile(count: int = 41) -> list[tuple]:
    chainage = np.linspace(0.0, 4000.0, count)
    x = chainage / chainage[-1]
    ground = 100.0 - 45.0 * x + 3.0 * np.sin(9.0 * x) + 9.0 * np.exp(-((x - 0.35) / 0.08) ** 2)
    zone = ["rock" if 0.6 < v < 0.7 else "normal" for v in x]
    return [(float(c), round(float(g), 3), "", z)
            for c, g, z in zip(chainage, ground, zone, strict=True)]


@pytest.fixture(scope="module")
def study(tmp_path_factory):
    path = write_study(
        tmp_path_factory.mktemp("reach"), profile=undulating_profile(),
        source_level_m=106.0, required_head_m=58.0, friction="colebrook-white",
        route={"min_pressure_m": 2.0, "local_k_per_km": 0.3},
        scenarios=[{"name": "today", "flow": "25 L/s"},
                   {"name": "horizon", "flow": "32 L/s", "roughness_factor": 2.0}],
        offtakes=[{"chainage_m": 2500.0, "flow": "3 L/s"}],
        rules={"min_piece_length_m": 300.0, "max_changes": 3},
        costs={"change_cost": 500.0, "zone_factor": {"normal": 1.0, "rock": 1.7}})
    return load_study(path)


def optimum(form) -> float:
    # A generous limit: the proof of the full model at gap 1e-9 takes seconds on a quiet
    # machine, but a minute was not always enough on a shared one. Not a speed check.
    report = solve(form, "highs", time_limit_s=600.0, mip_gap=1e-9)
    assert report.status == "optimal"
    return float(report.objective)


@pytest.mark.parametrize("points", ["none", "every"])
def test_merging_quiet_sections_changes_no_lp_optimum(study, points):
    data = with_active(prepare(study), getattr(ActivePoints, points)(prepare(study)))
    reaches = merge(data)
    assert reaches.n_reaches < data.n_sections  # something was merged
    fine = optimum(build(data, with_rules=False, relaxed=True))
    coarse = optimum(build(reaches.data, with_rules=False, relaxed=True))
    assert coarse == pytest.approx(fine, rel=1e-9)


def test_refined_fractions_keep_each_reach_s_slope_lengths(study):
    data = prepare(study)
    reaches = merge(with_active(data, ActivePoints.none(data)))
    form = build(reaches.data, with_rules=False, relaxed=True)
    solve(form, "highs", time_limit_s=30.0, mip_gap=1e-9)
    coarse = form.fractions()
    fine = refine(data, reaches, coarse)
    assert np.allclose(fine.sum(axis=1), 1.0)
    for r, (a, b) in enumerate(zip(reaches.first, reaches.last, strict=True)):
        laid = (fine[a:b + 1] * data.length_m[a:b + 1, None]).sum(axis=0)
        assert np.allclose(laid, coarse[r] * data.length_m[a:b + 1].sum(), atol=1e-6)


def test_reach_model_with_the_rules_is_a_relaxation(study):
    data = prepare(study)
    fine = build(data, with_rules=True)
    fine_cost = optimum(fine)  # the solver report includes the objective offset
    reach = build(merge(with_active(data, ActivePoints.every(data))).data, with_rules=True)
    reach_cost = optimum(reach)
    lp = optimum(build(data, with_rules=False, relaxed=True))
    assert lp <= reach_cost * (1 + 1e-9)
    assert reach_cost <= fine_cost * (1 + 1e-9)
    outcome = optimise_design(study, mip_gap=1e-6)
    assert outcome.verified
    assert outcome.lower_bound is not None and math.isfinite(outcome.lower_bound)
    assert outcome.lower_bound <= outcome.total_cost * (1 + 1e-9)
    assert outcome.total_cost <= fine_cost * (1 + 1e-6)
