"""Sensitivity of a fixed design with break-pressure tanks: the samples restart the
energy line at every tank, as the check does (contract section 8).

The reference is the project's independent check (``check_design``, itself tested
against hand calculation and ``fluids`` in ``test_tanks_check.py`` and
``test_scheme_tanks.py``): at a fixed roughness every sample must give the check's
delivery margins and the trunk's capacity, which with a tank on a branch is limited
partly by margins that move with the trunk's energy (above the tank, its inflow) and
partly by margins that do not (below it). Invented study data.
"""

from __future__ import annotations

import pytest
from builders import csv_text, toml_text
from test_scheme_tanks import _write as write_scheme_with_tank

from optimiser import load_design, load_study
from optimiser.analysis import check_design
from optimiser.analysis.sensitivity import RoughnessDistribution
from optimiser.sweeps.scheme_monte_carlo import scheme_monte_carlo


def _design_csv(rows) -> str:
    return csv_text(rows, ("branch", "from_m", "to_m", "material", "dn_mm", "pressure_class"))


def _route_with_tank(folder):
    """A 3 km falling route, a tank at 1,500 m (water level 127 m), one size."""
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "profile.csv").write_text(csv_text(
        [(0.0, 200.0), (1000.0, 150.0), (1500.0, 125.0), (2000.0, 100.0), (3000.0, 60.0)],
        ("chainage_m", "ground_m")), encoding="utf-8")
    (folder / "catalogue.csv").write_text(csv_text(
        [("PVC", 150, 150.0, "PN100", 1000.0, 0.01, 140, 30.0, "invented")],
        ("material", "dn_mm", "internal_diameter_mm", "pressure_class", "allowable_head_m",
         "roughness_mm", "hazen_williams_c", "cost_per_m", "note")), encoding="utf-8")
    study = {"title": "Invented route with a tank", "currency": "USD",
             "water": {"temperature_c": 15.0},
             "source": {"level_m": 203.0, "entrance_k": 0.5},
             "outlet": {"required_head_m": 80.0, "exit_k": 1.0},
             "route": {"profile": "profile.csv", "length": "chainage", "min_pressure_m": 2.0},
             "break_pressure_tank": [{"chainage_m": 1500.0, "water_level_m": 127.0}],
             "scenario": [{"name": "peak", "flow": "15 L/s"}],
             "catalogue": {"file": "catalogue.csv"}}
    (folder / "study.toml").write_text(toml_text(study), encoding="utf-8")
    (folder / "design.csv").write_text(csv_text(
        [(0.0, 3000.0, "PVC", 150, "PN100")],
        ("from_m", "to_m", "material", "dn_mm", "pressure_class")), encoding="utf-8")
    return folder / "study.toml", folder / "design.csv"


def _assert_samples_equal_the_check(study, design):
    check = check_design(study, design)
    scenario = check.scenarios[0]
    result = scheme_monte_carlo(study, design, RoughnessDistribution("fixed", 0.01, 0.01),
                                samples=2, seed=0)
    row = result.samples.iloc[0]
    assert row["outlet_margin_m"] == pytest.approx(
        min(o.margin_m for o in scenario.outlets), abs=1e-9)
    assert row["capacity_m3_s"] == pytest.approx(scenario.capacity_m3_s, rel=1e-6)
    return check, row


def test_route_with_a_tank_equals_the_check(tmp_path):
    study_path, design_path = _route_with_tank(tmp_path)
    study = load_study(study_path)
    check, row = _assert_samples_equal_the_check(study, load_design(design_path, study))
    assert check.ok and bool(row["meets"])
    least = check.scenarios[0].least_pressure_margin
    assert row["least_pressure_margin_m"] == pytest.approx(
        float(least["pressure_m"] - least["min_pressure_m"]), abs=1e-9)


@pytest.mark.parametrize("sizes", [(200, 200, 200, 150, 100), (200, 250, 100, 150, 100)])
def test_scheme_with_a_tank_on_a_branch_equals_the_check(tmp_path, sizes):
    # Two designs: in the first the trunk's delivery limits its capacity; in the second
    # (small pipe above the tank) the tank on branch "b" stops filling first, a margin
    # that moves with the trunk's energy at the junction while those below it do not.
    study_path = write_scheme_with_tank(tmp_path)
    first, second, above, below, school = sizes
    (tmp_path / "design.csv").write_text(_design_csv([
        ("main", 0.0, 500.0, "PVC", first, "PN100"),
        ("main", 500.0, 1000.0, "PVC", second, "PN100"),
        ("b", 0.0, 1000.0, "PVC", above, "PN100"),
        ("b", 1000.0, 2000.0, "PVC", below, "PN100"),
        ("c", 0.0, 500.0, "PVC", school, "PN100")]), encoding="utf-8")
    study = load_study(study_path)
    check, _ = _assert_samples_equal_the_check(study, load_design(tmp_path / "design.csv",
                                                                   study))
    scenario = check.scenarios[0]
    tank_limits = scenario.capacity_m3_s < scenario.capacity_outlet_only_m3_s - 1e-6
    assert tank_limits == (above == 100)


@pytest.mark.parametrize("form", ["route", "scheme"])
def test_pumped_samples_with_a_tank_equal_the_check(tmp_path, form):
    # A rising main filling a tank (then gravity, or a branched scheme below it): each
    # sample's least station head, class verdict and life-cycle cost are the check's.
    from test_rising_main_tank import _write, _write_scheme

    from optimiser.milp import optimise_design
    from optimiser.sweeps.pump_monte_carlo import pump_monte_carlo

    study_path = _write(tmp_path)[0] if form == "route" else _write_scheme(tmp_path)
    study = load_study(study_path)
    design = optimise_design(study, mip_gap=1e-4).design
    check = check_design(study, design)
    result = pump_monte_carlo(study, design, RoughnessDistribution("fixed", 0.01, 0.01),
                              samples=2, seed=0)
    row = result.samples.iloc[0]
    assert row["station_head_m"] == pytest.approx(check.station.head_m["duty"], abs=1e-9)
    assert row["life_cycle_cost"] == pytest.approx(check.life_cycle_cost, rel=1e-12)
    assert bool(row["classes_hold"]) and bool(row["meets"])
