"""Flows on a branched scheme (contract section 7) and the lines of a study.

Check values come from continuity (what enters a junction leaves it; common practice, no
source) worked by hand on an invented tree: a trunk with an offtake and two branches,
one branch with a sub-branch and an offtake of its own.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from builders import write_study

from optimiser import load_study
from optimiser.analysis.flows import (
    branch_inflow_m3_s,
    flow_below_m3_s,
    inflow_m3_s,
    line_flows_m3_s,
)
from optimiser.model import Branch, Offtake, Route
from optimiser.model.lines import children_of, study_lines


def _route(length_m: float) -> Route:
    return Route(chainage_m=np.array([0.0, length_m / 2, length_m]),
                 ground_m=np.array([100.0, 95.0, 90.0]), cover_m=1.0,
                 labels=["", "", ""], zones=["", ""])


@pytest.fixture
def scheme(tmp_path):
    study = load_study(write_study(tmp_path).study)
    b1 = Branch(name="east", parent="main", at_chainage_m=1000.0, route=_route(800.0),
                flow_m3_s=0.004, required_head_m=80.0,
                offtakes=(Offtake(chainage_m=300.0, flow_m3_s=0.001),))
    b2 = Branch(name="east spur", parent="east", at_chainage_m=400.0,
                route=_route(500.0), flow_m3_s=0.002, required_head_m=80.0)
    b3 = Branch(name="west", parent="main", at_chainage_m=2000.0, route=_route(600.0),
                flow_m3_s=0.003, required_head_m=80.0)
    return dataclasses.replace(study, branches=(b1, b2, b3))


def test_lines_list_trunk_then_branches_parents_first(scheme):
    names = [line.name for line in study_lines(scheme)]
    assert names == ["main", "east", "east spur", "west"]
    assert [c.name for c in children_of(scheme, "main")] == ["east", "west"]
    assert study_lines(scheme)[0].start_k == scheme.source.entrance_k


def test_continuity_on_every_line(scheme):
    scenario = scheme.scenarios[0]
    factor = scenario.offtake_factor
    # east spur: only its delivery
    assert branch_inflow_m3_s(scheme, scenario, "east spur") == pytest.approx(0.002)
    # east: delivery + offtake at 300 m + spur at 400 m
    east = line_flows_m3_s(scheme, scenario, "east", np.array([0.0, 300.0, 350.0, 400.0]))
    assert east == pytest.approx([0.004 + factor * 0.001 + 0.002,
                                  0.004 + 0.002, 0.004 + 0.002, 0.004])
    inflow_east = 0.004 + factor * 0.001 + 0.002
    # trunk: a branch leaving at c is downstream of every section starting before c
    trunk_offtakes = sum(o.flow_m3_s for o in scheme.offtakes) * factor
    before = flow_below_m3_s(scheme, scenario, np.array([0.0]))[0]
    assert before == pytest.approx(scenario.outlet_flow_m3_s + trunk_offtakes
                                   + inflow_east + 0.003)
    def trunk_offtakes_below(c: float) -> float:
        return factor * sum(o.flow_m3_s for o in scheme.offtakes if o.chainage_m > c + 1e-6)

    at = flow_below_m3_s(scheme, scenario, np.array([999.0, 1000.0, 2000.0]))
    outlet = scenario.outlet_flow_m3_s
    assert at == pytest.approx([outlet + trunk_offtakes_below(999.0) + inflow_east + 0.003,
                                outlet + trunk_offtakes_below(1000.0) + 0.003,
                                outlet + trunk_offtakes_below(2000.0)])
    assert inflow_m3_s(scheme, scenario) == pytest.approx(before)


def test_branch_flow_per_scenario_and_factor(scheme):
    scenario = dataclasses.replace(scheme.scenarios[0], branch_factor=1.5,
                                   branch_flows_m3_s=(("west", 0.01),))
    assert branch_inflow_m3_s(scheme, scenario, "west") == pytest.approx(0.01)
    assert branch_inflow_m3_s(scheme, scenario, "east spur") == pytest.approx(0.003)


def test_a_single_route_has_one_line_and_unchanged_flows(tmp_path):
    study = load_study(write_study(tmp_path).study)
    assert [line.name for line in study_lines(study)] == ["main"]
    scenario = study.scenarios[0]
    starts = study.route.chainage_m[:-1]
    direct = scenario.outlet_flow_m3_s + scenario.offtake_factor * np.array(
        [sum(o.flow_m3_s for o in study.offtakes if o.chainage_m > c + 1e-6) for c in starts])
    assert flow_below_m3_s(study, scenario, starts) == pytest.approx(direct, rel=0, abs=0)
