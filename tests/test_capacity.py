"""Gravity capacity reported by ``check_design`` (contract section 5, outlet condition).

Checks are internal consistency of the contract's definitions (no outside source needed):
at the reported outlet-only capacity the outlet margin is zero; at the all-limits
capacity the smallest margin is zero; rougher pipe carries less.
"""

from __future__ import annotations

import itertools

import pytest
from builders import flow_text_m3_s

import optimiser


def _check(files, **kwargs):
    study = optimiser.load_study(files.study)
    return optimiser.check_design(study, optimiser.load_design(files.design, study), **kwargs)


def test_outlet_only_capacity_makes_the_outlet_margin_zero(make_study):
    """Re-run the check with the reported capacity as the scenario flow: margin ~ 0."""
    first = _check(make_study())
    capacity = first.scenarios[0].capacity_outlet_only_m3_s
    assert capacity is not None and 0.025 < capacity < 1.0
    again = _check(make_study(study={"scenario": [
        {"name": "at capacity", "flow": flow_text_m3_s(capacity)}]}), capacity=False)
    assert again.scenarios[0].outlet_margin_m == pytest.approx(0.0, abs=1e-6)


def test_all_limits_capacity_makes_the_least_margin_zero(make_study):
    """With pressure minima as well, the least of all margins is zero at that capacity."""
    first = _check(make_study())
    capacity = first.scenarios[0].capacity_m3_s
    assert capacity is not None
    assert capacity <= first.scenarios[0].capacity_outlet_only_m3_s * (1 + 1e-8)
    again = _check(make_study(study={"scenario": [
        {"name": "at capacity", "flow": flow_text_m3_s(capacity)}]}), capacity=False)
    scenario = again.scenarios[0]
    points = scenario.points
    least = min(scenario.outlet_margin_m,
                float((points["pressure_m"] - points["min_pressure_m"]).min()))
    assert least == pytest.approx(0.0, abs=1e-6)


def test_capacity_falls_as_roughness_grows(make_study):
    """Colebrook-White friction grows with roughness at fixed flow, so capacity falls
    (scenario roughness_mm replaces every option's roughness, contract section 1)."""
    roughness = [0.0, 0.01, 0.1, 0.5, 2.0]
    scenarios = [{"name": f"k={k}", "flow": "25 L/s", "roughness_mm": k} for k in roughness]
    result = _check(make_study(study={"scenario": scenarios}))
    capacities = [s.capacity_outlet_only_m3_s for s in result.scenarios]
    assert all(a > b for a, b in itertools.pairwise(capacities)), capacities
    full = [s.capacity_m3_s for s in result.scenarios]
    assert all(a > b for a, b in itertools.pairwise(full)), full


def test_capacity_falls_with_roughness_factor(make_study):
    """roughness_factor multiplies every option's roughness (contract section 1)."""
    scenarios = [{"name": f"x{f}", "flow": "25 L/s", "roughness_factor": f}
                 for f in (1.0, 5.0, 50.0)]
    result = _check(make_study(study={"scenario": scenarios}))
    capacities = [s.capacity_outlet_only_m3_s for s in result.scenarios]
    assert capacities[0] > capacities[1] > capacities[2], capacities


def test_capacity_grows_with_source_level(make_study):
    """More head available at the source carries more flow (source_level_m override)."""
    scenarios = [{"name": f"H={h}", "flow": "25 L/s", "source_level_m": h}
                 for h in (199.0, 201.0, 205.0)]
    result = _check(make_study(study={"scenario": scenarios,
                                      "source": {"top_water_level_m": 206.0}}))
    capacities = [s.capacity_outlet_only_m3_s for s in result.scenarios]
    assert capacities[0] < capacities[1] < capacities[2], capacities
