"""The fixed design of a pumped main and its station across a roughness range.

Check values: the least station head of a level main worked by hand from the contract's
energy line (sections 5 and 9) with the Darcy friction factor of ``fluids.friction.
Colebrook`` (Colebrook, C.F. (1939), Turbulent flow in pipes, J. Inst. Civil Eng. 11; a
reference library used only in tests); the power P = rho g Q H / (1000 eta) with rho by
Kell (1975), the check's own source as in ``test_pumps.py``; and the fact that the least
life-cycle cost cannot fall as the pipe gets rougher (every design loses more head at
the same flow, Colebrook 1939). Studies are invented test data.
"""

from __future__ import annotations

import itertools
import json
import math

import numpy as np
import pandas as pd
import pytest
from builders import csv_text, toml_text
from typer.testing import CliRunner

from optimiser import load_design, load_study
from optimiser.analysis.sensitivity import RoughnessDistribution
from optimiser.cli import app
from optimiser.hydraulics.water import density_kg_m3
from optimiser.sweeps.pump_monte_carlo import pump_monte_carlo
from optimiser.sweeps.pump_roughness import pump_roughness_sweep

G = 9.80665  # contract section 5
LENGTH_M, DIAMETER_M, FLOW_M3_S = 2000.0, 0.2, 0.04
COLUMNS = ("material", "dn_mm", "internal_diameter_mm", "pressure_class",
           "allowable_head_m", "roughness_mm", "hazen_williams_c", "cost_per_m", "note")


def _write(folder, *, allowable_head_m=250.0, max_head_m=None, extra_option=False):
    """A level main of 2,000 m (pipe at 99 m) from a sump at 100 m to a tank needing
    180 m, no local losses, 40 L/s for 3,000 h a year; invented data."""
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "profile.csv").write_text(csv_text([(0.0, 100.0), (LENGTH_M, 100.0)],
                                                 ("chainage_m", "ground_m")),
                                        encoding="utf-8")
    options = [("PVC", 200, 1000 * DIAMETER_M, "PN25", allowable_head_m, 0.01, 140, 50.0,
                "invented")]
    if extra_option:
        options.append(("PVC", 250, 250.0, "PN25", allowable_head_m, 0.01, 140, 75.0,
                        "invented"))
    (folder / "catalogue.csv").write_text(csv_text(options, COLUMNS), encoding="utf-8")
    pump = {"efficiency": 0.7, "energy_price": 0.15, "station_cost_per_kw": 400.0}
    if max_head_m is not None:
        pump["max_head_m"] = max_head_m
    study = {"title": "Invented pumped test main", "currency": "USD",
             "water": {"temperature_c": 15.0},
             "source": {"level_m": 100.0, "entrance_k": 0.0},
             "outlet": {"required_head_m": 180.0, "exit_k": 0.0},
             "route": {"profile": "profile.csv", "length": "chainage",
                       "min_pressure_m": 0.0},
             "scenario": [{"name": "duty", "flow": "40 L/s", "hours_per_year": 3000.0}],
             "catalogue": {"file": "catalogue.csv"}, "pump": pump,
             "solver": {"mip_gap": 1e-6}}
    (folder / "study.toml").write_text(toml_text(study), encoding="utf-8")
    (folder / "design.csv").write_text(csv_text(
        [(0.0, LENGTH_M, "PVC", 200, "PN25")],
        ("from_m", "to_m", "material", "dn_mm", "pressure_class")), encoding="utf-8")
    return folder / "study.toml", folder / "design.csv"


def _hand_head_m(study, roughness_mm: float) -> float:
    """H = 180 - 100 + f L/D V^2/2g (level pipe, no local losses), f by fluids."""
    from fluids.friction import Colebrook

    velocity = FLOW_M3_S / (math.pi * DIAMETER_M ** 2 / 4)
    reynolds = velocity * DIAMETER_M / study.kinematic_viscosity_m2_s
    factor = Colebrook(reynolds, roughness_mm / 1000 / DIAMETER_M)
    return 80.0 + factor * LENGTH_M / DIAMETER_M * velocity ** 2 / (2 * G)


def test_station_head_power_and_energy_at_higher_roughness_by_hand(tmp_path):
    study_path, design_path = _write(tmp_path)
    study = load_study(study_path)
    table = pump_roughness_sweep(study, load_design(design_path, study), [0.05, 0.5, 1.5])
    rho = float(density_kg_m3(15.0))
    own = _hand_head_m(study, 0.01)  # the catalogue's roughness
    for row in table.itertuples():
        head = _hand_head_m(study, row.roughness_mm)
        assert row.station_head_m == pytest.approx(head, rel=1e-6)
        assert row.extra_head_m == pytest.approx(head - own, rel=1e-5)
        power = rho * G * FLOW_M3_S * head / (1000 * 0.7)
        assert row.power_kw == pytest.approx(power, rel=1e-6)
        assert row.energy_cost_per_year == pytest.approx(power * 3000 * 0.15, rel=1e-6)
        pwf = (1 - 1.05 ** -30) / 0.05  # contract defaults: 5 %, 30 years
        assert row.life_cycle_cost == pytest.approx(
            50.0 * LENGTH_M + 400.0 * power + pwf * power * 450.0, rel=1e-6)
        assert row.meets and row.within_max_head and row.classes_hold
    assert table["station_head_m"].is_monotonic_increasing


def test_a_pump_short_of_head_and_a_class_overrun_at_high_roughness(tmp_path):
    study_path, design_path = _write(tmp_path / "a", max_head_m=100.0)
    study = load_study(study_path)
    limit = _hand_head_m(study, 0.5)
    assert 80.0 < _hand_head_m(study, 0.05) < 100.0 < limit
    table = pump_roughness_sweep(study, load_design(design_path, study), [0.05, 0.5])
    low, high = table.itertuples()
    assert low.within_max_head and low.meets and low.head_m == low.station_head_m
    assert not high.within_max_head and not high.meets and high.head_m == 100.0
    # Pumping pressure head at the station: 100 + H - V^2/2g - 99 (hand); a class
    # between the two roughnesses' takes the lower and not the higher.
    velocity_head = (FLOW_M3_S / (math.pi * DIAMETER_M ** 2 / 4)) ** 2 / (2 * G)
    between = 1.0 + 0.5 * (_hand_head_m(study, 0.05) + limit) - velocity_head
    study_path, design_path = _write(tmp_path / "b", allowable_head_m=between)
    study = load_study(study_path)
    table = pump_roughness_sweep(study, load_design(design_path, study), [0.05, 0.5])
    assert list(table["classes_hold"]) == [True, False]
    design = load_design(design_path, study)
    for roughness, holds in ((0.05, True), (0.5, False)):
        fixed = RoughnessDistribution("fixed", roughness, roughness)
        summary = pump_monte_carlo(study, design, fixed, samples=2, seed=0).summary
        assert summary["probability_classes_hold"].iloc[0] == (1.0 if holds else 0.0)


def test_the_command_on_a_pumped_main(tmp_path):
    study_path, design_path = _write(tmp_path, extra_option=True)
    out = tmp_path / "out"
    run = CliRunner().invoke(app, ["sensitivity", str(study_path), "--design",
                                   str(design_path), "--roughness-from", "0.01",
                                   "--roughness-to", "1.0", "--steps", "3",
                                   "--out", str(out)])
    assert run.exit_code == 0, run.output
    table = pd.read_csv(out / "fixed_design_roughness.csv")
    for column in ("station_head_m", "extra_head_m", "within_max_head", "power_kw",
                   "energy_cost_per_year", "life_cycle_cost", "meets", "classes_hold"):
        assert column in table.columns
    payload = json.loads((out / "sensitivity.json").read_text())
    assert payload["fixed_design"]["pump"]["head_m"]["duty"] == pytest.approx(
        _hand_head_m(load_study(study_path), 0.01), rel=1e-6)
    assert payload["cautions"] and "licensed engineer" in (out /
                                                         "sensitivity.html").read_text()
    # Re-optimised through the optimiser: the least life-cycle cost cannot fall as the
    # pipe gets rougher (each design loses more head at the same flow; Colebrook 1939).
    costs = pd.read_csv(out / "reoptimised_roughness.csv")["life_cycle_cost"].to_numpy()
    assert all(b >= a * (1 - 1e-6) for a, b in itertools.pairwise(costs))


def test_monte_carlo_station_as_the_check_and_by_hand(tmp_path):
    study_path, design_path = _write(tmp_path)
    study = load_study(study_path)
    design = load_design(design_path, study)
    for roughness in (0.05, 0.8):
        fixed = RoughnessDistribution("fixed", roughness, roughness)
        samples = pump_monte_carlo(study, design, fixed, samples=3, seed=0).samples
        row = pump_roughness_sweep(study, design, [roughness]).iloc[0]
        for column in ("station_head_m", "head_m", "power_kw", "energy_cost_per_year",
                       "life_cycle_cost"):
            assert np.allclose(samples[column], row[column], rtol=1e-12), column
        assert samples["station_head_m"].iloc[0] == pytest.approx(
            _hand_head_m(study, roughness), rel=1e-6)
        assert bool(samples["classes_hold"].iloc[0]) == bool(row["classes_hold"])


def test_monte_carlo_probability_bounds_at_the_pumps_maximum(tmp_path):
    # A rougher pipe needs more head (Colebrook 1939): with the pump's maximum at the
    # head needed at 0.3 mm (fluids), every draw below it is within, none above.
    study_path, design_path = _write(tmp_path / "a", max_head_m=100.0)
    study = load_study(study_path)
    design = load_design(design_path, study)
    assert _hand_head_m(study, 0.2) < 100.0 < _hand_head_m(study, 0.4)
    low = pump_monte_carlo(study, design, RoughnessDistribution("uniform", 0.01, 0.2),
                           samples=50, seed=1).summary.iloc[0]
    high = pump_monte_carlo(study, design, RoughnessDistribution("uniform", 0.4, 2.0),
                            samples=50, seed=1).summary.iloc[0]
    assert low["probability_meets"] == 1.0 and high["probability_meets"] == 0.0
    assert high["station_head_p05_m"] > 100.0 > low["station_head_p95_m"]
    # Ageing: 0.05 mm + 0.01 mm/year x 30 years = 0.35 mm in every sample.
    aged = pump_monte_carlo(study, design, RoughnessDistribution("fixed", 0.05, 0.05),
                            samples=2, seed=0, years=30.0, ageing_mm_per_year={"PVC": 0.01})
    assert aged.samples["station_head_m"].iloc[0] == pytest.approx(
        _hand_head_m(study, 0.35), rel=1e-6)


def test_monte_carlo_command_on_a_pumped_main(tmp_path):
    study_path, design_path = _write(tmp_path)
    out = tmp_path / "out"
    run = CliRunner().invoke(app, ["sensitivity", str(study_path), "--design",
                                   str(design_path), "--roughness-from", "0.01",
                                   "--roughness-to", "1.0", "--steps", "2",
                                   "--no-reoptimise", "--samples", "40", "--seed", "4",
                                   "--out", str(out)])
    assert run.exit_code == 0, run.output
    summary = pd.read_csv(out / "monte_carlo_summary.csv")
    assert {"probability_meets", "probability_classes_hold", "station_head_p50_m",
            "life_cycle_cost_p50"} <= set(summary.columns)
    payload = json.loads((out / "sensitivity.json").read_text())
    assert payload["monte_carlo"]["samples"] == 40 and payload["cautions"]
    page = (out / "sensitivity.html").read_text()
    assert "can the station do it" in page and "licensed engineer" in page
