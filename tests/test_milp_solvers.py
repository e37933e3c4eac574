"""HiGHS and CBC agree on the optimum cost within the gap.

Two independent general-purpose MILP solvers (HiGHS: Huangfu, Q. & Hall, J.A.J. (2018),
Parallelizing the dual revised simplex method, Math. Prog. Comp. 10; CBC: the COIN-OR
branch-and-cut solver) given the same model must agree on the optimal cost to within
the relative gap they were asked for (common practice, no source).
"""

from __future__ import annotations

import pytest
from test_milp_brute_force import PROFILE
from test_milp_support import write_study

from optimiser import load_study
from optimiser.milp import optimise_design

GAP = 1e-4


@pytest.mark.parametrize("rules, costs", [
    (None, None),
    ({"max_changes": 2, "min_piece_length_m": 200.0}, {"change_cost": 500.0}),
    ({"sizes_downstream": "non-increasing", "max_changes": 1}, None),
])
def test_highs_and_cbc_agree(tmp_path, rules, costs):
    path = write_study(tmp_path, profile=PROFILE, source_level_m=101.0,
                       required_head_m=74.0, route={"min_pressure_m": 2.0,
                                                    "local_k_per_km": 0.5},
                       offtakes=[{"chainage_m": 450.0, "flow": "3 L/s"}],
                       scenarios=[{"name": "peak", "flow": "28 L/s"},
                                  {"name": "future", "flow": "33 L/s",
                                   "offtake_factor": 1.5}],
                       rules=rules, costs=costs,
                       extra={"route": {"fitting": [{"chainage_m": 300.0, "k": 2.0}]}})
    study = load_study(path)
    highs = optimise_design(study, solver_name="highs", time_limit_s=60, mip_gap=GAP)
    cbc = optimise_design(study, solver_name="cbc", time_limit_s=60, mip_gap=GAP)
    assert highs.status == cbc.status == "optimal"
    assert highs.verified and cbc.verified
    assert cbc.total_cost == pytest.approx(highs.total_cost, rel=2 * GAP)


@pytest.mark.parametrize("gap", [1e-6, 1e-3])
def test_cbc_objective_and_bound_on_a_model_with_an_offset(tmp_path, gap):
    """The change cost puts a constant in the objective (changes = uses - continuations
    - 1): CBC must report the same optimum as HiGHS, and when it stops at its gap its
    bound must be within that gap of its objective, never above it."""
    from test_milp_priced import undulating_rules_study

    from optimiser.milp import prepare
    from optimiser.milp.formulation import build
    from optimiser.milp.solvers import solve

    study = undulating_rules_study(tmp_path)
    data = prepare(study)
    reports = {}
    for name in ("highs", "cbc"):
        form = build(data, with_rules=True)
        assert form.objective_offset != 0
        reports[name] = solve(form, name, time_limit_s=60.0, mip_gap=gap)
    highs, cbc = reports["highs"], reports["cbc"]
    assert highs.status == cbc.status == "optimal"
    assert cbc.objective == pytest.approx(highs.objective, rel=2 * gap)
    assert cbc.bound is not None
    assert cbc.bound <= cbc.objective + 1e-6 * abs(cbc.objective)
    # CBC's -ratio is a fraction of the larger of its objective and its root value (its
    # own help for ratioGap); its presolve drops the fixed column carrying the offset, so
    # either may be counted without the offset: the gap's scale is at most |obj| + |offset|.
    scale = abs(cbc.objective) + abs(form.objective_offset)
    assert cbc.bound >= cbc.objective - (gap + 1e-9) * scale
    assert cbc.bound <= highs.objective * (1 + 1e-9)  # a bound, below the optimum
