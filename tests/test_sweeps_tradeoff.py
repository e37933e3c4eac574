"""Trade-off sweeps: properties of least cost against available head and flow.

The study is the invented test main of ``builders.py`` (test data, not check values).
Each check below is a property of the problem, not a number:

- more available head (a higher source, a lower required outlet head) can only enlarge
  the set of feasible designs, so the least cost cannot rise and a step that is
  feasible stays feasible as head grows: common practice, no source. A higher intake
  also raises the top water level and so the static head on every pipe; the property
  holds for the source level only while no pressure class binds, which the test checks
  first;
- with no minimum velocity, more flow means more friction loss in every pipe (Darcy-
  Weisbach with Colebrook, C.F. (1939), Turbulent flow in pipes, J. Inst. Civil Eng. 11),
  so the feasible set shrinks and the least cost cannot fall: common practice, no source.

The optimiser proves each cost within its relative gap ``GAP`` of the optimum, so two
steps are compared with that tolerance.
"""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest

import optimiser
from optimiser.sweeps.tradeoff import (
    COLUMNS,
    pieces_summary,
    tradeoff,
    tradeoff_with_study_point,
)

GAP = 1e-6


@pytest.fixture
def study(study_files):
    return optimiser.load_study(study_files.study)


def _non_increasing(costs: np.ndarray) -> bool:
    return all(later <= earlier * (1 + 2 * GAP) + 1e-6
               for earlier, later in itertools.pairwise(costs))


def test_cost_non_increasing_as_source_level_rises(study):
    values = [197.0, 200.0, 203.0, 208.0, 215.0]
    # Premise: at the highest intake the static head stays below every class's limit.
    top_water_m = study.source.top_water_level_m + (values[-1] - study.source.level_m)
    static_m = top_water_m - study.route.pipe_level_m.min() + study.surge_allowance_m
    assert static_m < study.catalogue.allowable_head_m.min()
    table = tradeoff(study, "source-level", values, mip_gap=GAP)
    assert list(table.columns) == COLUMNS
    assert table["value"].tolist() == values  # every step kept, in order
    feasible = table["status"].isin(["optimal", "feasible"]).to_numpy()
    # Infeasible steps may only sit at the low-head end: once feasible, always feasible.
    assert feasible.any()
    first = int(np.argmax(feasible))
    assert feasible[first:].all()
    costs = table.loc[feasible, "cost"].to_numpy(dtype=float)
    assert _non_increasing(costs)
    assert costs[-1] < costs[0]  # 15 m more head buys a smaller pipe here
    assert table.loc[feasible, "verified"].all()


def test_cost_non_decreasing_as_required_head_rises(study):
    values = [160.0, 166.0, 172.0, 178.0]
    table = tradeoff(study, "required-head", values, mip_gap=GAP)
    feasible = table["status"].isin(["optimal", "feasible"]).to_numpy()
    assert feasible[0]
    # Feasible steps form a prefix (less head as the requirement grows).
    last = len(feasible) - int(np.argmax(feasible[::-1]))
    assert feasible[:last].all() and not feasible[last:].any()
    costs = table.loc[feasible, "cost"].to_numpy(dtype=float)
    assert _non_increasing(costs[::-1])


def test_cost_non_decreasing_as_flow_grows(study):
    values = [0.010, 0.020, 0.030]
    table = tradeoff(study, "flow", values, mip_gap=GAP)
    assert table["status"].isin(["optimal", "feasible"]).all()
    assert _non_increasing(table["cost"].to_numpy(dtype=float)[::-1])


def test_infeasible_steps_are_rows_with_a_reason(study):
    # 20 m below the source as written: the outlet lies higher than the available head.
    table = tradeoff(study, "source-level", [170.0, 201.0])
    row = table.iloc[0]
    assert row["status"] == "infeasible"
    assert math.isnan(row["cost"]) and row["n_pieces"] == 0
    assert isinstance(row["note"], str) and row["note"]
    assert table.iloc[1]["status"] == "optimal"


def test_rows_describe_the_design(study):
    table = tradeoff(study, "source-level", [205.0])
    row = table.iloc[0]
    # The schedule lists runs whose pipe lengths add up to the route's pipe length
    # (slope length of the profile: contract section 5).
    lengths = []
    for part in row["pieces"].split("; "):
        amount, unit = part.rsplit("×", 1)[1].split()
        lengths.append(float(amount) * (1000.0 if unit == "km" else 1.0))
    assert len(lengths) == row["n_pieces"]
    assert sum(lengths) == pytest.approx(study.route.length_m.sum(), rel=0.05)
    # The binding point is the design's tightest margin: never negative (verified).
    assert row["binding_margin_m"] >= -1e-9
    assert row["binding_what"] in ("pressure", "outlet head")
    assert row["lower_bound"] <= row["cost"] * (1 + 1e-9)


def test_study_point_is_solved_when_not_a_step(study):
    result = tradeoff_with_study_point(study, "source-level", [205.0, 210.0])
    assert result.own_value == study.source.level_m
    assert result.own_row["status"] == "optimal"
    assert len(result.table) == 2
    # Less head than the first step: it cannot be cheaper (property above).
    assert result.own_row["cost"] >= result.table.iloc[0]["cost"] * (1 - 1e-3)
    on_step = tradeoff_with_study_point(study, "source-level", [201.0, 205.0])
    assert on_step.own_row["cost"] == on_step.table.iloc[0]["cost"]


def test_study_point_is_the_design_that_design_gives(study):
    # Issue 16, item 7: a curve solved at a looser gap than the study's must not move the
    # study's own point; it is solved as `design` solves it (the study's own [solver]
    # gap and time limit). The reference is the optimiser's own `design` run of the
    # same study (common practice, no source: one study, one answer).
    own = study.source.level_m
    loose = 0.05
    assert loose > study.solver.mip_gap
    result = tradeoff_with_study_point(study, "source-level", [own, own + 5.0],
                                       mip_gap=loose)
    expected = optimiser.optimise_design(study)
    assert result.own_row["target_gap"] == study.solver.mip_gap
    assert result.own_row["time_limit_s"] == study.solver.time_limit_s
    assert result.own_row["cost"] == pytest.approx(expected.total_cost, rel=1e-12)
    assert result.own_row["pieces"] == pieces_summary(expected)[1]
    # The steps keep the gap they were asked for.
    assert set(result.table["target_gap"]) == {loose}


def test_unknown_variable_is_refused(study):
    with pytest.raises(ValueError, match="cannot vary"):
        tradeoff(study, "roughness", [0.1, 0.2])
