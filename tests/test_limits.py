"""The rules of contract section 5 that the check and the optimiser share, applied once.

Checks here are of the contract's own rules (the study format, section 5) on invented
test data (``builders``), plus the pressure-unit fact of the trade marked beside it; the
hydraulics themselves are checked against outside references in the other test files.
"""

from __future__ import annotations

import numpy as np
import pytest

import optimiser
from optimiser.analysis.flows import flow_below_m3_s, offtakes_downstream
from optimiser.analysis.limits import (
    CHECK_TOLERANCE,
    class_holds,
    node_min_pressure_m,
    within_velocity_window,
)
from optimiser.hydraulics.constants import bar_to_head_m
from optimiser.hydraulics.gradeline import static_head_m
from optimiser.milp.data import prepare
from optimiser.model import DesignRules

TWO_OFFTAKES_AT_ONE_NODE = [
    {"chainage_m": 2400.0, "flow": "2 L/s", "min_pressure_m": 5.0},
    {"chainage_m": 2400.0, "flow": "1 L/s", "min_pressure_m": 9.0},
    {"chainage_m": 800.0, "flow": "1 L/s"},
]


def test_offtake_minimum_overrides_the_route_minimum_strictest_first(make_study):
    # contract section 5: min_pressure_m, or the offtake's own minimum at its node
    study = optimiser.load_study(make_study(study={"offtake": TWO_OFFTAKES_AT_ONE_NODE}).study)
    chainage = study.route.chainage_m
    limits = node_min_pressure_m(study, chainage)
    at_offtake = int(np.flatnonzero(chainage == 2400.0)[0])
    assert limits[at_offtake] == 9.0
    others = np.delete(limits, at_offtake)
    assert np.all(others == study.min_pressure_m)  # no own minimum at 800 m: the route's


def test_optimiser_data_and_check_hold_nodes_to_the_same_minimum(make_study):
    # contract section 5: one rule, so the optimiser's data and the check must agree
    files = make_study(study={"offtake": TWO_OFFTAKES_AT_ONE_NODE})
    study = optimiser.load_study(files.study)
    design = optimiser.load_design(files.design, study)
    data = prepare(study)
    points = optimiser.check_design(study, design, capacity=False).scenarios[0].points
    for chainage, limit in zip(data.node_chainage_m, data.node_min_pressure_m, strict=True):
        at_node = points.loc[np.isclose(points["chainage_m"], chainage), "min_pressure_m"]
        assert set(at_node) == {limit}


def test_offtake_is_upstream_of_a_section_starting_at_its_chainage(make_study):
    # contract section 5: "An offtake at chainage c is upstream of every section starting
    # at c or later"; flow = outlet flow + offtake_factor x offtakes downstream
    files = make_study(study={"offtake": [{"chainage_m": 1600.0, "flow": "4 L/s"}],
                              "scenario": [{"name": "a", "flow": "25 L/s",
                                            "offtake_factor": 1.5}]})
    study = optimiser.load_study(files.study)
    starts = np.array([0.0, 1599.0, 1600.0, 2000.0])
    assert offtakes_downstream(study, starts)[:, 0].tolist() == [True, True, False, False]
    flows = flow_below_m3_s(study, study.scenarios[0], starts)
    assert flows == pytest.approx([0.031, 0.031, 0.025, 0.025], rel=1e-12)


def test_class_admissibility_static_head_plus_surge():
    # contract section 5: static head at the lowest point + surge_allowance_m <=
    # allowable_head_m; 16 bar = 163.2 m and 10 bar = 102.0 m of water (common practice,
    # no source; catalogues round 101.97 m to 102)
    pn10, pn16 = float(bar_to_head_m(10.0)), float(bar_to_head_m(16.0))
    demand = static_head_m(154.0, np.array([40.0, 70.0]), 20.0)  # 134 m and 104 m
    assert class_holds(demand[:, None], np.array([pn10, pn16])[None, :]).tolist() == [
        [False, True], [False, True]]
    assert class_holds(static_head_m(154.0, 72.0, 20.0), 102.0)  # the limit itself holds
    assert not class_holds(static_head_m(154.0, 72.0, 20.0), pn10)  # 102 m > 101.97 m
    # the check forgives round-off only
    assert class_holds(pn16 + 0.5 * CHECK_TOLERANCE, pn16, CHECK_TOLERANCE)
    assert not class_holds(pn16 + 0.5 * CHECK_TOLERANCE, pn16)


def test_velocity_window_is_inclusive():
    # contract section 5: velocity_min_m_s <= V <= velocity_max_m_s
    rules = DesignRules(velocity_min_m_s=0.3, velocity_max_m_s=2.5)
    velocity = np.array([0.29, 0.3, 1.0, 2.5, 2.51])
    assert within_velocity_window(velocity, rules).tolist() == [False, True, True, True, False]
