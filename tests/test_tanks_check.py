"""Break-pressure tanks in the loader and the check (contract section 8).

The hand-worked case: a 2 km main falling 100 m with a tank at 1,000 m. Every figure
is worked from the contract's formulas with the Darcy friction factor of
``fluids.friction.Colebrook`` (a reference library, test-only; Colebrook, C.F. (1939),
J. ICE 11(4)) and g = 9.80665 m/s^2; the tank's free surface is at its water level
(Bernoulli with losses, Streeter & Wylie (1985), Fluid Mechanics, ch. 3). The inlet and
outlet loss coefficients are the contract's defaults (1.0 and 0.5; common practice, no
source).
"""

from __future__ import annotations

import math

import pytest
from builders import DELETE
from reference import G, colebrook_f

from optimiser.analysis import check_design
from optimiser.io import InputError, load_design, load_study

NU = 1.14e-6
PIPE = ("PE", 200, 176.2, "PN10", 102.0, 0.02, 150, 45.0, "invented test data")
PROFILE = [(0.0, 199.0, "intake", ""), (1000.0, 150.0, "", ""), (2000.0, 100.0, "", "")]
BASE = {
    "water": {"kinematic_viscosity_m2_s": NU},
    "route": {"fitting": DELETE, "min_pressure_m": 1.0},
    "offtake": DELETE,
    "outlet": {"required_head_m": 110.0, "exit_k": 1.0},
    "break_pressure_tank": [{"chainage_m": 1000.0, "label": "tank A"}],
}


def _study(make_study, **study):
    files = make_study(study={**BASE, **study}, profile=PROFILE, catalogue=[PIPE],
                       design=[(0.0, 2000.0, "PE", 200, "PN10")])
    return files, load_study(files.study)


def test_hand_worked_tank(make_study):
    files, study = _study(make_study)
    result = check_design(study, load_design(files.design, study))
    # By hand: V = Q / (pi d^2 / 4), h = V^2 / 2g, the tank's water level is the ground
    # at 1,000 m plus the default height 1.0 m = 151.0 m.
    velocity = 0.025 / (math.pi * 0.1762 ** 2 / 4.0)
    head = velocity ** 2 / (2 * G)
    friction = colebrook_f(velocity * 0.1762 / NU, 0.02 / 176.2)
    slope_length = math.hypot(1000.0, 49.0)  # pipe 198 m -> 149 m
    arriving = 201.0 - 0.5 * head - friction / 0.1762 * head * slope_length
    points = result.scenarios[0].points
    at_tank = points[points["chainage_m"] == 1000.0]
    up = at_tank[at_tank["side"] == "upstream"].iloc[0]
    down = at_tank[at_tank["side"] == "downstream"].iloc[0]
    assert up["energy_m"] == pytest.approx(arriving, abs=1e-3)
    assert down["energy_m"] == pytest.approx(151.0 - 0.5 * head, abs=1e-3)
    # Static head: the source's top water level (203 m) above the tank, the tank's level
    # below it: 203 - 149 = 54 m on the arriving side, 151 - 149 = 2 m leaving, and
    # 151 - 99 = 52 m at the outlet.
    assert up["static_pressure_m"] == pytest.approx(54.0, abs=1e-3)
    assert down["static_pressure_m"] == pytest.approx(2.0, abs=1e-3)
    assert points.iloc[-1]["static_pressure_m"] == pytest.approx(52.0, abs=1e-3)
    # The single piece's class is judged on its worse side of the tank: 54 m at 1,000 m.
    assert result.pieces.iloc[0]["static_head_m"] == pytest.approx(54.0, abs=1e-3)
    # tank_inflow margin: arriving energy - 1.0 h - 151 m.
    margin = arriving - head - 151.0
    energy = result.scenarios[0].tank_inflow_energy_m[0]
    assert energy - 151.0 == pytest.approx(margin, abs=1e-3)
    assert margin > 0 and result.ok


def test_tank_that_cannot_fill_is_a_violation(make_study):
    tank = [{"chainage_m": 1000.0, "water_level_m": 199.0}]
    files, study = _study(make_study, break_pressure_tank=tank)
    result = check_design(study, load_design(files.design, study))
    found = [v for v in result.violations if v.kind == "tank_inflow"]
    assert len(found) == 1 and found[0].chainage_m == 1000.0 and found[0].limit == 199.0
    assert "cannot fill" in found[0].message


def test_outlet_energy_restarts_at_the_tank(make_study):
    """Below the tank the outlet's energy is set by the tank's level, not the source's:
    raising the source leaves it unchanged (common practice, no source)."""
    files, study = _study(make_study)
    higher = {"level_m": 240.0, "top_water_level_m": 241.0}
    files2, study2 = _study(make_study, source=higher)
    first = check_design(study, load_design(files.design, study)).scenarios[0]
    second = check_design(study2, load_design(files2.design, study2)).scenarios[0]
    assert first.outlet_energy_m == pytest.approx(second.outlet_energy_m, abs=1e-9)
    assert first.capacity_outlet_only_m3_s == pytest.approx(
        second.capacity_outlet_only_m3_s, rel=1e-9)


@pytest.mark.parametrize(("tank", "words"), [
    ({"chainage_m": 0.0}, "strictly inside the route"),
    ({"chainage_m": 2000.0}, "strictly inside the route"),
    ({"chainage_m": 500.0, "branch": "east"}, "no such line"),
    ({"chainage_m": 1000.0, "water_level_m": float("nan")}, "water_level_m"),
])
def test_bad_tank_is_refused(make_study, tank, words):
    files = make_study(study={**BASE, "break_pressure_tank": [tank]}, profile=PROFILE,
                       catalogue=[PIPE])
    with pytest.raises(InputError) as error:
        load_study(files.study)
    assert words in str(error.value) and "break_pressure_tank" in str(error.value)


def test_tank_at_an_offtake_is_refused(make_study):
    offtake = [{"chainage_m": 1000.0, "flow": "2 L/s", "label": "farm"}]
    files = make_study(study={**BASE, "offtake": offtake}, profile=PROFILE, catalogue=[PIPE])
    with pytest.raises(InputError, match="at an offtake"):
        load_study(files.study)


@pytest.mark.parametrize(("rules", "words"), [
    ({"cost": 0.0}, "cost"), ({"max_count": -1}, "max_count"),
    ({"sites": "marked"}, "tank_site"), ({"colour": 1}, "unknown key"),
])
def test_bad_tank_rules_are_refused(make_study, rules, words):
    files = make_study(study={**BASE, "break_pressure_tanks": rules}, profile=PROFILE,
                       catalogue=[PIPE])
    with pytest.raises(InputError) as error:
        load_study(files.study)
    assert words in str(error.value)


def test_marked_sites_are_read(make_study):
    profile = "chainage_m,ground_m,tank_site\n0,199,\n1000,150,yes\n1500,125,no\n2000,100,\n"
    files = make_study(study={**BASE, "break_pressure_tanks": {"cost": 5000.0,
                                                             "sites": "marked"}},
                       profile=profile, catalogue=[PIPE])
    study = load_study(files.study)
    assert study.tank_rules.marked_chainages_m == (1000.0,)
    assert study.tanks[0].water_level_m == 151.0
