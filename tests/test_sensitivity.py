"""Fixed-design sensitivity: the reduced form equals the full check; Monte Carlo with a
degenerate distribution equals the deterministic check; capacity falls as roughness grows.

Check values come from the project's own independent check (``check_design``, itself
tested against hand calculations with the ``fluids`` and ``iapws`` references) and from
a fact of the trade: a rougher pipe carries less (Colebrook, C.F. & White, C.M. (1937),
The reduction of carrying capacity of pipes with age).
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

import optimiser
from optimiser.analysis.linear_check import linear_check
from optimiser.analysis.sensitivity import (
    RoughnessDistribution,
    monte_carlo,
    roughness_sweep,
)


@pytest.fixture
def study_and_design(study_files):
    study = optimiser.load_study(study_files.study)
    return study, optimiser.load_design(study_files.design, study)


def _with_roughness(study, roughness_mm):
    scenarios = tuple(dataclasses.replace(s, roughness_mm=roughness_mm,
                                          roughness_factor=None) for s in study.scenarios)
    return dataclasses.replace(study, scenarios=scenarios)


@pytest.mark.parametrize("roughness_mm", [0.005, 0.1, 0.8])
def test_sweep_matches_full_check(study_and_design, roughness_mm):
    study, design = study_and_design
    table = roughness_sweep(study, design, np.array([roughness_mm]))
    full = optimiser.check_design(_with_roughness(study, roughness_mm), design)
    for scenario in full.scenarios:
        row = table[table["scenario"] == scenario.name].iloc[0]
        least = scenario.least_pressure_margin
        assert row["outlet_margin_m"] == pytest.approx(scenario.outlet_margin_m, abs=1e-9)
        assert row["least_pressure_margin_m"] == pytest.approx(
            least["pressure_m"] - least["min_pressure_m"], abs=1e-9)
        if scenario.capacity_m3_s is None:
            assert np.isnan(row["capacity_m3_s"])
        else:
            assert row["capacity_m3_s"] == pytest.approx(scenario.capacity_m3_s, abs=1e-8)
        assert row["capacity_outlet_only_m3_s"] == pytest.approx(
            scenario.capacity_outlet_only_m3_s, abs=1e-8)
        assert bool(row["meets"]) == (not [v for v in full.violations
                                           if v.scenario == scenario.name
                                           and v.kind in ("min_pressure", "outlet_head")])


def test_capacity_falls_as_roughness_grows(study_and_design):
    study, design = study_and_design
    table = roughness_sweep(study, design, np.linspace(0.0, 3.0, 13))
    for _, part in table.groupby("scenario"):
        capacity = part["capacity_outlet_only_m3_s"].to_numpy()
        assert np.all(np.diff(capacity) < 0)


def test_degenerate_monte_carlo_equals_deterministic_check(study_and_design):
    study, design = study_and_design
    # Fixed 0.05 mm plus 0.01 mm/year for 15 years = 0.2 mm for every material.
    rates = {o.material: 0.01 for o in study.full_catalogue}
    result = monte_carlo(study, design, RoughnessDistribution("fixed", 0.05, 0.05),
                         samples=7, seed=3, years=15.0, ageing_mm_per_year=rates)
    full = optimiser.check_design(_with_roughness(study, 0.2), design)
    for scenario in full.scenarios:
        rows = result.samples[result.samples["scenario"] == scenario.name]
        assert np.allclose(rows["capacity_m3_s"], scenario.capacity_m3_s, atol=1e-8)
        assert np.allclose(rows["outlet_margin_m"], scenario.outlet_margin_m, atol=1e-9)
        fails = any(v.scenario == scenario.name and v.kind in ("min_pressure", "outlet_head")
                    for v in full.violations)
        summary = result.summary.set_index("scenario").loc[scenario.name]
        assert summary["probability_meets"] == (0.0 if fails else 1.0)


def test_same_seed_same_numbers(study_and_design):
    study, design = study_and_design
    distribution = RoughnessDistribution("log-uniform", 0.01, 1.0)
    first = monte_carlo(study, design, distribution, samples=50, seed=11)
    second = monte_carlo(study, design, distribution, samples=50, seed=11)
    other = monte_carlo(study, design, distribution, samples=50, seed=12)
    assert first.samples.equals(second.samples)
    assert not first.samples.equals(other.samples)


def test_reduced_form_outlet_row_is_total_pipe_length(study_and_design):
    study, design = study_and_design
    reduced = linear_check(study, design)
    result = optimiser.check_design(study, design, capacity=False)
    assert reduced.outlet_length.sum() == pytest.approx(result.pieces["length_m"].sum())


# A scenario with its own roughness rule beside the default one (invented test data).
AGED_SCENARIOS = {"scenario": [
    {"name": "peak day", "flow": "25 L/s"},
    {"name": "aged pipe", "flow": "22 L/s", "roughness_factor": 2.5},
    {"name": "stated", "flow": "20 L/s", "roughness_mm": 0.3},
]}


@pytest.fixture
def aged_study_and_design(make_study):
    files = make_study(study=AGED_SCENARIOS)
    study = optimiser.load_study(files.study)
    return study, optimiser.load_design(files.design, study)


def _scenario_at(study, scenario_roughness_mm):
    """The study with each scenario's roughness stated directly (by name)."""
    scenarios = tuple(dataclasses.replace(s, roughness_mm=scenario_roughness_mm[s.name],
                                          roughness_factor=None) for s in study.scenarios)
    return dataclasses.replace(study, scenarios=scenarios)


def _assert_matches_check(rows, full):
    for scenario in full.scenarios:
        row = rows[rows["scenario"] == scenario.name]
        assert np.allclose(row["outlet_margin_m"], scenario.outlet_margin_m, atol=1e-9)
        least = scenario.least_pressure_margin
        assert np.allclose(row["least_pressure_margin_m"],
                           least["pressure_m"] - least["min_pressure_m"], atol=1e-9)


def test_sweep_keeps_each_scenarios_roughness_rule(aged_study_and_design):
    # Issue 16, item 6: the swept value stands for the catalogue roughness; a scenario's
    # roughness_factor still multiplies it and its own roughness_mm replaces it, as the
    # check applies them to the catalogue's (docs/user-guide.md). The reference is the
    # independent check with each scenario's roughness written out.
    study, design = aged_study_and_design
    swept = 0.12
    table = roughness_sweep(study, design, np.array([swept]))
    used = {"peak day": swept, "aged pipe": 2.5 * swept, "stated": 0.3}
    assert dict(zip(table["scenario"], table["scenario_roughness_mm"],
                    strict=True)) == pytest.approx(used)
    _assert_matches_check(table, optimiser.check_design(_scenario_at(study, used), design))


def test_monte_carlo_ages_every_scenario_with_its_own_factor(aged_study_and_design):
    # Linear ageing eps(T) = eps_0 + rate * T (Colebrook, C.F. & White, C.M. (1937), The
    # reduction of carrying capacity of pipes with age, J. Inst. Civil Eng. 7(1)):
    # 0.04 mm + 0.008 mm/year x 20 years = 0.2 mm at year 20 in every scenario that
    # uses the catalogue roughness; the aged scenario's factor 2.5 multiplies it (0.5 mm);
    # a scenario stating its own 0.3 mm keeps it. Reference: the independent check.
    study, design = aged_study_and_design
    rates = {o.material: 0.008 for o in study.full_catalogue}
    result = monte_carlo(study, design, RoughnessDistribution("fixed", 0.04, 0.04),
                         samples=5, seed=2, years=20.0, ageing_mm_per_year=rates)
    used = {"peak day": 0.2, "aged pipe": 0.5, "stated": 0.3}
    for name, value in used.items():
        rows = result.samples[result.samples["scenario"] == name]
        assert np.allclose(rows["roughness_mm[PE]"], value, rtol=0, atol=1e-12)
    _assert_matches_check(result.samples,
                          optimiser.check_design(_scenario_at(study, used), design))


def test_robust_study_keeps_factors_and_states_fixed_scenarios_once(aged_study_and_design):
    from optimiser.sweeps.robust import robust_study

    study, _ = aged_study_and_design
    robust = robust_study(study, [0.1, 0.4])
    by_name = {s.name: s.roughness_mm for s in robust.scenarios}
    # common practice, no source: the rule above, written out scenario by scenario.
    assert by_name == pytest.approx({"peak day @ 0.1 mm": 0.1, "peak day @ 0.4 mm": 0.4,
                                     "aged pipe @ 0.1 mm x 2.5": 0.25,
                                     "aged pipe @ 0.4 mm x 2.5": 1.0,
                                     "stated": 0.3})
