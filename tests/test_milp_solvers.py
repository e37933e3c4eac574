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
