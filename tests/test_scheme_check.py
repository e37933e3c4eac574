"""The check on a branched scheme (contract section 7).

Check values are hand arithmetic of Bernoulli's equation with losses along each line
(Streeter, V.L. & Wylie, E.B. (1985), Fluid Mechanics, ch. 3), the Darcy friction factor
from ``fluids.friction.Colebrook`` (reference implementation of Colebrook, C.F. (1939),
Turbulent flow in pipes, J. Inst. Civil Eng. 11) and the viscosity of water from the
``iapws`` package, through ``tests/reference.py``; continuity at junctions (what enters
a junction leaves it) is common practice, no source. The scheme itself is invented
test data: a trunk falling 30 m over 3 km, a branch at a survey point of the trunk where
a valve also stands, and a branch at a junction that is not a survey point.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest
from builders import write_study
from reference import G, colebrook_f, water_nu_m2_s
from scheme_api_builders import route_of, two_branch_scheme

from optimiser import check_design, load_design, load_study
from optimiser.model import Branch, Design, Piece

NU = water_nu_m2_s(15.0)
EPS_M = 0.02e-3  # roughness of the test catalogue's PE rows
BORE = {"PE250": 0.2204, "PE160": 0.141}
TOL_M = 1e-4
"""The tool takes its viscosity from IAPWS 2008, the hand calculation from the ``iapws``
package's IAPWS-95 value: they differ in the last digits, worth well under 0.1 mm here."""


def _head(velocity_m_s: float) -> float:
    return velocity_m_s ** 2 / (2 * G)


def _velocity(flow_m3_s: float, bore_m: float) -> float:
    return flow_m3_s / (math.pi * bore_m ** 2 / 4)


def _friction_m(flow_m3_s: float, bore_m: float, length_m: float) -> float:
    """Darcy-Weisbach head loss with the Colebrook factor of ``fluids``."""
    velocity = _velocity(flow_m3_s, bore_m)
    f = colebrook_f(velocity * bore_m / NU, EPS_M / bore_m)
    return f * length_m / bore_m * _head(velocity)


def _hand(north_required_m: float = 180.0) -> dict[str, float]:
    """The scheme of :func:`two_branch_scheme` worked by hand."""
    trunk_d, branch_d = BORE["PE250"], BORE["PE160"]
    q_north, q_south, q_out = 0.005, 0.004, 0.010
    slope = math.hypot(1000.0, 10.0)  # every trunk kilometre falls 10 m
    v0 = _velocity(q_out + q_north + q_south, trunk_d)
    v1 = _velocity(q_out + q_south, trunk_d)
    e_source = 201.0 - 0.5 * _head(v0)
    e_1000_up = e_source - _friction_m(q_out + q_north + q_south, trunk_d, slope)
    e_1000_down = e_1000_up - 2.0 * _head(v1)
    e_2300_up = e_1000_down - _friction_m(q_out + q_south, trunk_d, 1.3 * slope)
    e_3000 = e_2300_up - _friction_m(q_out, trunk_d, 0.7 * slope)
    trunk_outlet = e_3000 - 1.0 * _head(_velocity(q_out, trunk_d))
    vn = _velocity(q_north, branch_d)
    north_start = e_1000_up - 0.8 * _head(vn)  # upstream side: before the trunk's valve
    north_length = math.hypot(500.0, 5.0) + math.hypot(300.0, 5.0)
    north_outlet = north_start - _friction_m(q_north, branch_d, north_length) - _head(vn)
    vs = _velocity(q_south, branch_d)
    south_start = e_2300_up - 0.0 * _head(vs)
    south_outlet = south_start - _friction_m(q_south, branch_d, math.hypot(600.0, 12.0)) \
        - _head(vs)
    return {"e_1000_up": e_1000_up, "e_1000_down": e_1000_down, "e_2300_up": e_2300_up,
            "trunk_outlet": trunk_outlet, "north_start": north_start,
            "north_outlet": north_outlet, "north_margin": north_outlet - north_required_m,
            "south_start": south_start, "south_outlet": south_outlet,
            "north_velocity": vn}


def test_two_branch_scheme_by_hand(tmp_path):
    study, design = two_branch_scheme(tmp_path)
    hand = _hand()
    result = check_design(study, design)
    scenario = result.scenarios[0]
    points = scenario.points
    trunk = points[points["branch"] == "main"]
    at_1000 = trunk[trunk["chainage_m"] == 1000.0].set_index("side")["energy_m"]
    assert at_1000["upstream"] == pytest.approx(hand["e_1000_up"], abs=TOL_M)
    assert at_1000["downstream"] == pytest.approx(hand["e_1000_down"], abs=TOL_M)
    north = points[points["branch"] == "north"]
    assert north.iloc[0]["chainage_m"] == 0.0
    assert north.iloc[0]["energy_m"] == pytest.approx(hand["north_start"], abs=TOL_M)
    assert north.iloc[0]["velocity_m_s"] == pytest.approx(hand["north_velocity"], rel=1e-9)
    # Pressure on the branch: HGL - pipe level, the pipe 1 m below ground.
    assert north.iloc[0]["pressure_m"] == pytest.approx(
        hand["north_start"] - _head(hand["north_velocity"]) - 189.0, abs=TOL_M)
    # Static line: the source's top water level on every branch.
    assert north.iloc[-1]["static_pressure_m"] == pytest.approx(203.0 - 179.0, abs=1e-9)
    south = points[points["branch"] == "south"]
    assert south.iloc[0]["energy_m"] == pytest.approx(hand["south_start"], abs=TOL_M)
    outlets = {o.branch: o for o in scenario.outlets}
    assert list(outlets) == ["main", "north", "south"]
    assert outlets["main"].energy_m == pytest.approx(hand["trunk_outlet"], abs=TOL_M)
    assert scenario.outlet_energy_m == outlets["main"].energy_m
    assert outlets["north"].energy_m == pytest.approx(hand["north_outlet"], abs=TOL_M)
    assert outlets["north"].margin_m == pytest.approx(hand["north_margin"], abs=TOL_M)
    assert outlets["south"].energy_m == pytest.approx(hand["south_outlet"], abs=TOL_M)
    assert outlets["north"].flow_m3_s == pytest.approx(0.005)
    assert scenario.inflow_m3_s == pytest.approx(0.019)  # continuity
    assert result.ok, [v.message for v in result.violations]


def test_pieces_and_segments_carry_their_branch(tmp_path):
    study, design = two_branch_scheme(tmp_path)
    result = check_design(study, design, capacity=False)
    assert list(result.pieces["branch"]) == ["main", "north", "south"]
    north = result.pieces.iloc[1]
    # Lowest pipe level of the north branch: its end, 180 m ground less 1 m cover.
    assert north["static_head_m"] == pytest.approx(203.0 - 179.0, abs=1e-9)
    assert north["length_m"] == pytest.approx(math.hypot(500.0, 5.0) + math.hypot(300.0, 5.0))
    segments = result.scenarios[0].segments
    assert set(segments["branch"]) == {"main", "north", "south"}
    # Continuity on the trunk: 19, 14 then 10 L/s (common practice, no source).
    trunk = segments[segments["branch"] == "main"]
    assert list(np.round(trunk["flow_m3_s"] * 1000, 9)) == [19.0, 14.0, 14.0, 10.0]


def test_a_branch_short_of_head_is_named(tmp_path):
    hand = _hand()
    required = hand["north_outlet"] + 1.5
    study, design = two_branch_scheme(tmp_path, north_required_m=required)
    result = check_design(study, design)
    assert not result.ok
    short = [v for v in result.violations if v.kind == "outlet_head"]
    assert len(short) == 1
    assert short[0].branch == "north"
    assert short[0].value == pytest.approx(hand["north_outlet"], abs=TOL_M)
    assert short[0].limit == required
    assert short[0].chainage_m == 800.0
    assert "north" in short[0].message and "1.50 m short" in short[0].message
    assert result.scenarios[0].outlets[1].uncontrolled_flow_m3_s is None


def test_trunk_energy_line_equals_the_branches_as_offtakes(tmp_path):
    """Equivalence (contract sections 5 and 7 state one flow rule): a branch's inflow
    leaves the trunk like an offtake at its junction, so the trunk's energy line is the
    same as that of the single route with each branch replaced by an offtake of its
    inflow, when the junction K and the branch are on the branch side only."""
    study, design = two_branch_scheme(tmp_path)
    from optimiser.model import Offtake
    single = dataclasses.replace(
        study, branches=(), offtakes=(Offtake(1000.0, 0.005), Offtake(2300.0, 0.004)))
    scheme_points = check_design(study, design, capacity=False).scenarios[0].points
    single_points = check_design(single, design.on("main"), capacity=False).scenarios[0].points
    trunk = scheme_points[scheme_points["branch"] == "main"].reset_index(drop=True)
    columns = ["chainage_m", "side", "energy_m", "hgl_m", "pressure_m", "flow_m3_s"]
    assert trunk[columns].equals(single_points[columns])


def test_uncontrolled_flow_of_a_branch_runs_through_the_trunk(tmp_path):
    """At its uncontrolled flow the branch's energy after the exit loss equals its
    required head (contract section 8, the definition), with the trunk above the
    junction carrying the extra flow too: holding the junction's energy fixed would
    overstate it."""
    study, design = two_branch_scheme(tmp_path)
    outlets = check_design(study, design).scenarios[0].outlets
    north = outlets[1]
    assert north.branch == "north" and north.uncontrolled_flow_m3_s > north.flow_m3_s
    scenario = dataclasses.replace(study.scenarios[0],
                                   branch_flows_m3_s=(("north", north.uncontrolled_flow_m3_s),))
    moved = check_design(dataclasses.replace(study, scenarios=(scenario,)), design,
                         capacity=False)
    assert moved.scenarios[0].outlets[1].margin_m == pytest.approx(0.0, abs=1e-6)
    hand = _hand()
    # With the trunk's energy at the junction held at today's value the branch alone
    # would pass more: its margin at that flow stays positive.
    q = north.uncontrolled_flow_m3_s
    vn = _velocity(q, BORE["PE160"])
    length = math.hypot(500.0, 5.0) + math.hypot(300.0, 5.0)
    held = hand["e_1000_up"] - 0.8 * _head(vn) - _friction_m(q, BORE["PE160"], length) \
        - _head(vn)
    assert held - 180.0 > 0.1


def test_a_single_route_names_the_trunk(tmp_path):
    files = write_study(tmp_path)
    study = load_study(files.study)
    result = check_design(study, load_design(files.design, study))
    scenario = result.scenarios[0]
    assert set(scenario.points["branch"]) == {"main"}
    assert set(result.pieces["branch"]) == {"main"}
    assert [o.branch for o in scenario.outlets] == ["main"]
    assert scenario.outlets[0].uncontrolled_flow_m3_s == scenario.capacity_outlet_only_m3_s


def test_a_sub_branch_starts_from_its_parent_branch(tmp_path):
    """A branch of a branch: 'spur' leaves 'north' at its survey point 500 m (2 L/s,
    junction K 1.5); the trunk and 'north' carry its flow above their junctions
    (continuity, common practice, no source)."""
    study, design = two_branch_scheme(tmp_path)
    spur = Branch(name="spur", parent="north", at_chainage_m=500.0,
                  route=route_of([(0.0, 185.0), (400.0, 175.0)]), flow_m3_s=0.002,
                  required_head_m=150.0, junction_k=1.5)
    study = dataclasses.replace(study, branches=(*study.branches, spur))
    pe160 = design.pieces[1].option
    design = Design((*design.pieces, Piece(0.0, 400.0, pe160, "spur")))
    result = check_design(study, design, capacity=False)
    points = result.scenarios[0].points
    trunk_d, branch_d = BORE["PE250"], BORE["PE160"]
    q0 = 0.010 + 0.007 + 0.004
    e_1000_up = 201.0 - 0.5 * _head(_velocity(q0, trunk_d)) \
        - _friction_m(q0, trunk_d, math.hypot(1000.0, 10.0))
    v_north_up = _velocity(0.007, branch_d)
    e_500_up = e_1000_up - 0.8 * _head(v_north_up) \
        - _friction_m(0.007, branch_d, math.hypot(500.0, 5.0))
    v_spur = _velocity(0.002, branch_d)
    spur_points = points[points["branch"] == "spur"]
    assert spur_points.iloc[0]["energy_m"] == pytest.approx(e_500_up - 1.5 * _head(v_spur),
                                                            abs=TOL_M)
    spur_outlet = e_500_up - 1.5 * _head(v_spur) \
        - _friction_m(0.002, branch_d, math.hypot(400.0, 10.0)) - _head(v_spur)
    assert result.scenarios[0].outlets[3].branch == "spur"
    assert result.scenarios[0].outlets[3].energy_m == pytest.approx(spur_outlet, abs=TOL_M)
    north = points[(points["branch"] == "north") & (points["chainage_m"] == 500.0)]
    assert list(north["side"]) == ["upstream", "downstream"]  # the flow drops there
    assert north.iloc[0]["flow_m3_s"] == pytest.approx(0.007)
    assert north.iloc[1]["flow_m3_s"] == pytest.approx(0.005)


def test_reflection_length_of_a_branch_runs_from_the_source(tmp_path):
    """Slow-closure surge on a branch (contract section 10): L from the source through
    the junction to the end of the branch."""
    from optimiser.analysis.surge import reflection_length_m
    from optimiser.model.lines import line_of
    study, _ = two_branch_scheme(tmp_path)
    north = line_of(study, "north")
    expected = math.hypot(1000.0, 10.0) + math.hypot(500.0, 5.0) + math.hypot(300.0, 5.0)
    assert reflection_length_m(study, north) == pytest.approx(expected, rel=1e-12)
    south = line_of(study, "south")
    assert reflection_length_m(study, south) == pytest.approx(
        2.3 * math.hypot(1000.0, 10.0) + math.hypot(600.0, 12.0), rel=1e-12)
    assert reflection_length_m(study) == pytest.approx(3 * math.hypot(1000.0, 10.0))


def test_the_linear_check_refuses_atwo_branch_scheme(tmp_path):
    from optimiser.analysis.linear_check import linear_check
    study, design = two_branch_scheme(tmp_path)
    with pytest.raises(ValueError, match="single route"):
        linear_check(study, design)


def test_appurtenances_on_each_branch(tmp_path):
    """An air valve at a local high point and a washout at a local low point of a
    branch's own profile (common practice, no source; e.g. AWWA Manual M51)."""
    from optimiser.analysis.appurtenances import schedule
    study, design = two_branch_scheme(tmp_path)
    hump = dataclasses.replace(study.branches[0], route=route_of(
        [(0.0, 190.0), (200.0, 184.0), (500.0, 187.0), (800.0, 180.0)]))
    study = dataclasses.replace(study, branches=(hump, study.branches[1]))
    items = schedule(check_design(study, design, capacity=False))
    on_north = {(a.kind, a.chainage_m) for a in items if a.branch == "north"}
    assert ("washout", 200.0) in on_north and ("air valve", 500.0) in on_north
    assert all(a.branch in ("main", "north", "south") for a in items)
