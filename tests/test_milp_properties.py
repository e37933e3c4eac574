"""Property tests on random invented studies: every design the optimiser returns passes
the independent check (contract section 5) and obeys every rule (contract section 1);
a case without a design gets a diagnosis, never a traceback; the cost is never below the
optimiser's own LP bound (weak duality of linear programming, e.g. Dantzig, G.B. (1963),
Linear Programming and Extensions).
"""

from __future__ import annotations

import tempfile
from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from test_milp_support import write_study

from optimiser import load_study
from optimiser.analysis import check_design
from optimiser.milp import optimise_design, rule_problems

SIZES = [(141.0, 30.0), (176.2, 42.0), (220.4, 60.0), (277.6, 90.0), (352.6, 140.0)]


@st.composite
def studies(draw):
    n_points = draw(st.integers(3, 7))
    steps = draw(st.lists(st.floats(60.0, 400.0), min_size=n_points - 1,
                          max_size=n_points - 1))
    grounds = [draw(st.floats(85.0, 99.0))]
    for _ in steps:
        grounds.append(grounds[-1] + draw(st.floats(-25.0, 6.0)))
    chainage = [0.0]
    for step in steps:
        chainage.append(round(chainage[-1] + step, 1))
    zones = [draw(st.sampled_from(["", "rock"])) for _ in chainage]
    profile = [(c, round(g, 2), "", z) for c, g, z in zip(chainage, grounds, zones,
                                                          strict=True)]
    chosen = sorted(draw(st.sets(st.integers(0, len(SIZES) - 1), min_size=2, max_size=4)))
    catalogue = [("PE", 100 + i, SIZES[i][0], "PN10", 102.0, 0.02, 150.0,
                  SIZES[i][1] * draw(st.floats(0.8, 1.25))) for i in chosen]
    n_scenarios = draw(st.integers(1, 2))
    scenarios = [{"name": f"case {i}", "flow": f"{draw(st.floats(5.0, 45.0)):.2f} L/s",
                  "velocity_limits": draw(st.booleans())} for i in range(n_scenarios)]
    rules = {}
    if draw(st.booleans()):
        rules["max_changes"] = draw(st.integers(0, 2))
    if draw(st.booleans()):
        rules["min_piece_length_m"] = draw(st.sampled_from([50.0, 150.0]))
    if draw(st.booleans()):
        rules["sizes_downstream"] = "non-increasing"
    rules["velocity_min_m_s"] = draw(st.sampled_from([0.0, 0.3]))
    costs = {"change_cost": draw(st.sampled_from([0.0, 300.0]))}
    if any(zones[:-1]):
        costs["zone_factor"] = {"rock": 1.5}
    offtakes = []
    if draw(st.booleans()) and n_points > 2:
        offtakes.append({"chainage_m": chainage[1], "flow": "2 L/s",
                         "min_pressure_m": draw(st.sampled_from([1.0, 4.0]))})
    required = min(grounds) - 1.0 + draw(st.floats(0.0, 12.0))
    return dict(profile=profile, catalogue=catalogue, scenarios=scenarios, rules=rules,
                costs=costs, offtakes=offtakes, required_head_m=required,
                source_level_m=grounds[0] + draw(st.floats(2.0, 15.0)),
                route={"min_pressure_m": draw(st.sampled_from([0.0, 2.0])),
                       "local_k_per_km": draw(st.sampled_from([0.0, 0.5]))},
                friction=draw(st.sampled_from(["hazen-williams", "colebrook-white"])))


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(studies())
def test_every_returned_design_passes_check_and_rules(spec):
    with tempfile.TemporaryDirectory() as folder:
        study = load_study(write_study(Path(folder), **spec))
        outcome = optimise_design(study, time_limit_s=30)
    if outcome.status == "infeasible":
        assert outcome.design is None
        assert outcome.diagnosis and all(isinstance(f, str) and f for f in outcome.diagnosis)
        return
    assert outcome.status in ("optimal", "feasible")
    assert outcome.verified
    result = check_design(study, outcome.design, capacity=False)
    assert result.ok, [v.message for v in result.violations]
    assert not rule_problems(study, outcome.design)
    assert abs(result.total_cost - outcome.total_cost) <= 1e-6 * max(1.0, result.total_cost)
    assert outcome.total_cost >= outcome.lp_bound * (1 - 1e-9) - 1e-6
    assert outcome.lower_bound <= outcome.total_cost * (1 + 1e-9) + 1e-6
    if outcome.uniform is not None:
        assert outcome.total_cost <= outcome.uniform.cost * (1 + 1e-6) + 1e-6
