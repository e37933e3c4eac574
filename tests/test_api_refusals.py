"""A study built or changed from Python is refused as the loader refuses its file.

Without these refusals the API gave ``nan`` surges and an "infeasible" diagnosis
(Joukowsky surge on a catalogue without wave speeds), a solver failure (Hazen-Williams
without C values) or a traceback deep in the optimiser (a reversed route, no
scenario). Source of each rule: the study contract (study-format.md) section named beside
the check, as the loader applies it (docs/file-formats.md sections 1, 3 and 9). The
study is the invented default test main of ``builders.py``.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest

from optimiser import load_design, load_study
from optimiser.analysis import check_design
from optimiser.model import (
    Catalogue,
    Friction,
    PumpStation,
    Route,
    Scenario,
    SurgeMethod,
    SurgeSettings,
)


@pytest.fixture
def study(study_files):
    return load_study(study_files.study)


def test_joukowsky_without_wave_speeds_names_the_missing_columns(study):
    # contract section 10: with "joukowsky" every option needs wave_speed_m_s, or
    # wall_thickness_mm with elastic_modulus_gpa (the loader refuses such a catalogue)
    assert not any(o.has_wave_speed for o in study.catalogue)
    with pytest.raises(ValueError) as raised:
        dataclasses.replace(study, surge=SurgeSettings(SurgeMethod.JOUKOWSKY))
    text = str(raised.value)
    for column in ("wave_speed_m_s", "wall_thickness_mm", "elastic_modulus_gpa"):
        assert column in text
    assert study.catalogue[0].label in text and study.catalogue_path.name in text


def test_joukowsky_with_wave_speeds_is_accepted_and_gives_finite_surges(study):
    # The same study once every option has a wave speed: built, and checked without nan
    # (contract section 10: the surge head of a piece is a V / g).
    options = tuple(dataclasses.replace(o, wave_speed_m_s=400.0) for o in study.catalogue)
    sound = dataclasses.replace(study, catalogue=Catalogue(options),
                                full_catalogue=Catalogue(options), surge_allowance_m=0.0,
                                surge=SurgeSettings(SurgeMethod.JOUKOWSKY))
    from optimiser.milp import optimise_design

    outcome = optimise_design(sound, time_limit_s=30)
    assert outcome.design is not None
    pieces = check_design(sound, outcome.design).pieces
    # Joukowsky (1898): dH = a V / g, by hand with g = 9.80665 m/s^2 (standard gravity)
    assert np.allclose(pieces["surge_head_m"], 400.0 * pieces["max_velocity_m_s"] / 9.80665)
    assert np.all(np.isfinite(pieces["surge_head_m"]))


def test_a_wall_with_its_modulus_gives_a_wave_speed(study):
    # contract section 10: wall_thickness_mm with elastic_modulus_gpa stands for the speed
    option = dataclasses.replace(study.catalogue[0], wall_thickness_mm=10.0)
    assert not option.has_wave_speed
    assert dataclasses.replace(option, elastic_modulus_gpa=170.0).has_wave_speed


def test_hazen_williams_without_c_values_is_refused(study):
    # contract section 3: hazen_williams_c is required with friction "hazen-williams"
    options = Catalogue(tuple(dataclasses.replace(o, hazen_williams_c=None)
                              for o in study.catalogue))
    with pytest.raises(ValueError, match="hazen_williams_c"):
        dataclasses.replace(study, friction=Friction.HAZEN_WILLIAMS, catalogue=options)


@pytest.mark.parametrize(("field", "value", "words"), [
    ("efficiency", 0.0, "efficiency must lie in (0, 1]"),
    ("efficiency", 1.2, "efficiency must lie in (0, 1]"),
    ("efficiency", math.nan, "efficiency"),
    ("energy_price", -0.1, "energy_price"),
    ("life_years", 0.0, "life_years"),
    ("discount_rate", -0.05, "discount_rate"),
    ("discount_rate", math.inf, "discount_rate"),
    ("station_cost_per_kw", -1.0, "station_cost_per_kw"),
    ("max_head_m", -5.0, "max_head_m"),
])
def test_a_pump_that_would_give_nan_power_or_worth_is_refused(field, value, words):
    # contract section 9: 0 < eff <= 1; PWF = (1 - (1 + r)^-n) / r needs n > 0, r >= 0
    with pytest.raises(ValueError) as raised:
        dataclasses.replace(PumpStation(0.7, 0.15), **{field: value})
    assert words in str(raised.value) and str(raised.value).startswith("PumpStation")


def test_a_sound_pump_is_accepted(study):
    pump = PumpStation(0.7, 0.15, discount_rate=0.0, max_head_m=0.0)  # r = 0 allowed
    assert dataclasses.replace(study, pump=pump).pump is pump


@pytest.mark.parametrize(("change", "words"), [
    ({"hours_per_year": -1.0}, "hours_per_year"),
    ({"hours_per_year": math.nan}, "hours_per_year"),
    ({"offtake_factor": -0.5}, "offtake_factor"),
    ({"roughness_mm": -0.1}, "roughness_mm"),
    ({"roughness_factor": 0.0}, "roughness_factor"),
    ({"outlet_flow_m3_s": -0.01}, "outlet_flow_m3_s"),
    ({"source_level_m": math.inf}, "source_level_m"),
    ({"branch_flows_m3_s": (("east", -1.0),)}, "branch_flows_m3_s"),
])
def test_a_scenario_that_would_give_nan_or_negative_flows_is_refused(change, words):
    # contract section 1: flows 0 to 100 m3/s, factors >= 0, hours >= 0
    with pytest.raises(ValueError, match=words):
        Scenario(**({"name": "peak", "outlet_flow_m3_s": 0.02, "source_level_m": 500.0}
                    | change))


def test_a_study_needs_scenarios_with_flows_options_and_a_viscosity(study):
    # contract section 1: at least one scenario, each with its flow; a catalogue
    with pytest.raises(ValueError, match="at least one scenario"):
        dataclasses.replace(study, scenarios=())
    unknown = dataclasses.replace(study.scenarios[0], outlet_flow_m3_s=math.nan)
    with pytest.raises(ValueError, match="outlet_flow_m3_s is nan"):
        dataclasses.replace(study, scenarios=(unknown,))
    with pytest.raises(ValueError, match="no pipe option"):
        dataclasses.replace(study, catalogue=Catalogue(()))
    with pytest.raises(ValueError, match="kinematic_viscosity_m2_s"):
        dataclasses.replace(study, kinematic_viscosity_m2_s=0.0)


@pytest.mark.parametrize(("chainage", "ground", "words"), [
    ([0.0, 500.0, 400.0], [100.0, 90.0, 80.0], "node 2: 500 then 400 m"),
    ([0.0, 500.0, 500.0], [100.0, 90.0, 80.0], "increase strictly"),
    ([0.0, math.nan, 900.0], [100.0, 90.0, 80.0], "finite"),
    ([0.0, 500.0, 900.0], [100.0, math.inf, 80.0], "finite"),
    ([0.0], [100.0], "at least 2 nodes"),
])
def test_a_route_with_negative_lengths_or_nan_levels_is_refused(chainage, ground, words):
    # contract section 2: chainage strictly increasing, levels numbers
    with pytest.raises(ValueError, match="Route") as raised:
        Route(np.array(chainage), np.array(ground), 1.0, [""] * len(chainage),
              [""] * (len(chainage) - 1))
    assert words in str(raised.value)


@pytest.mark.parametrize(("field", "value"), [
    ("internal_diameter_mm", 0.0), ("roughness_mm", -0.01), ("cost_per_m", math.nan),
    ("wave_speed_m_s", 0.0), ("hazen_williams_c", -1.0),
])
def test_a_pipe_option_with_impossible_data_is_refused(study, field, value):
    # contract section 3: diameters, roughness and wave speeds positive; prices numbers
    with pytest.raises(ValueError, match=field):
        dataclasses.replace(study.catalogue[0], **{field: value})


def test_the_loaded_study_and_its_changes_in_range_are_accepted(study):
    # the refusals do not touch a sound study: the default test main loads and checks
    changed = dataclasses.replace(study, scenarios=tuple(
        dataclasses.replace(s, hours_per_year=8760.0, roughness_factor=2.0,
                            roughness_mm=None) for s in study.scenarios))
    assert len(changed.scenarios) == len(study.scenarios)


@pytest.fixture
def scheme(tmp_path):
    from scheme_builders import write_branch_scheme

    return load_study(write_branch_scheme(tmp_path).study)


def _refused_by_the_api(study, match: str) -> None:
    """``optimiser.check_design`` and ``optimiser.optimise_design`` both refuse it."""
    import optimiser

    design = None  # refused before the design is looked at
    for call in (lambda: optimiser.check_design(study, design),
                 lambda: optimiser.optimise_design(study, time_limit_s=5)):
        with pytest.raises(ValueError, match=match):
            call()


def test_a_branch_must_hang_strictly_inside_a_line_given_before_it(scheme):
    # contract section 7: the junction is a chainage strictly inside `from`; parents first
    north, school = scheme.branches
    _refused_by_the_api(dataclasses.replace(scheme, branches=(
        dataclasses.replace(north, at_chainage_m=5000.0), school)),
        r"not strictly inside 'main' \(0 to 3000 m\)")
    _refused_by_the_api(dataclasses.replace(scheme, branches=(school, north)),
                        "parents come first")
    with pytest.raises(ValueError, match="flow_m3_s"):
        dataclasses.replace(scheme, branches=(dataclasses.replace(north, flow_m3_s=-1e-3),
                                              school))


def test_tanks_offtakes_and_fittings_must_lie_on_their_line(scheme):
    # contract sections 1 and 8: strictly inside the route for a tank, on it otherwise
    from optimiser.model import BreakPressureTank, Fitting, Offtake

    _refused_by_the_api(dataclasses.replace(scheme, tanks=(BreakPressureTank(5000.0, 150.0),)),
                        "not strictly inside its line")
    _refused_by_the_api(dataclasses.replace(
        scheme, tanks=(BreakPressureTank(100.0, 150.0, "east"),)), "no line named 'east'")
    with pytest.raises(ValueError, match="offtake at 3500 m is outside its line"):
        dataclasses.replace(scheme, offtakes=(Offtake(3500.0, 0.001),))
    with pytest.raises(ValueError, match="fitting at -5 m is outside its line"):
        dataclasses.replace(scheme, fittings=(Fitting(-5.0, 1.0),))
    with pytest.raises(ValueError, match="offtake at 700 m: flow_m3_s"):
        dataclasses.replace(scheme, offtakes=(Offtake(700.0, -0.001),))


def test_the_api_checks_a_sound_scheme_as_the_analysis_does(scheme, tmp_path):
    # The public entry point adds only the refusals: the same check, the same numbers.
    from scheme_builders import write_scheme_design

    import optimiser

    design = load_design(write_scheme_design(tmp_path), scheme)
    ours = optimiser.check_design(scheme, design, capacity=False)
    theirs = check_design(scheme, design, capacity=False)
    assert ours.total_cost == theirs.total_cost and ours.ok == theirs.ok
    assert ours.scenarios[0].points.equals(theirs.scenarios[0].points)


def test_a_pump_choosing_new_tanks_needs_a_tank_of_its_own(study):
    # docs/file-formats.md section 11: a pump with new tanks needs the tank the rising
    # main fills (the loader refuses the file without it; the optimiser designed it by
    # gravity, the station ignored)
    from optimiser.model import PumpStation, TankRules

    pumped = dataclasses.replace(study, pump=PumpStation(0.7, 0.15),
                                 tank_rules=TankRules(1e4))
    _refused_by_the_api(pumped, "the tank the rising main fills")
