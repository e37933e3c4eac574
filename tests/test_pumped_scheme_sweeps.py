"""The sweeps on a pump feeding branches directly (contract sections 7 and 9): trade-off,
sensitivity (fixed design, robust, Monte Carlo) and compare.

Check values: ``optimiser check`` run on the same design with the roughness written into
the study file (the independent check, contract section 5, judged at that roughness);
the energy by hand, P = rho g Q H / (1000 eff) (contract section 9) with rho of water at
15 C from ``iapws`` (IAPWS-95; a reference library used only in tests) and Q the
scenario's total inflow summed by hand (contract section 7); the life-cycle cost as the
sum of its parts (contract section 9); the slow-closure surge 2 L V / (g T) (Michaud,
contract section 10) by hand. The schemes are invented test data.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest
from builders import csv_text, toml_text
from typer.testing import CliRunner

from optimiser import load_design, load_study
from optimiser.analysis import check_design
from optimiser.analysis.sensitivity import RoughnessDistribution
from optimiser.cli import app
from optimiser.sweeps.pump_monte_carlo import pump_monte_carlo
from optimiser.sweeps.variants import with_roughness

G = 9.80665  # standard gravity [m/s^2] (contract section 5)
CATALOGUE_COLUMNS = ("material", "dn_mm", "internal_diameter_mm", "pressure_class",
                     "allowable_head_m", "roughness_mm", "hazen_williams_c", "cost_per_m",
                     "note")
PE = [("PE", 110, 96.8, "PN10", 100.0, 0.01, 150, 12.0, "invented"),
      ("PE", 160, 141.0, "PN10", 100.0, 0.01, 150, 25.0, "invented"),
      ("PE", 200, 176.2, "PN10", 100.0, 0.01, 150, 38.0, "invented")]
INFLOW_M3_S = {"peak": 0.010 + 0.003 + 0.005, "night": 0.006 + 0.5 * (0.003 + 0.005)}
"""Total inflow of each scenario, by hand (contract section 7): the trunk's delivery
plus every branch's (times the scenario's branch_factor)."""
HOURS = {"peak": 2000.0, "night": 4000.0}
PUMP = {"efficiency": 0.7, "energy_price": 0.15, "life_years": 25, "discount_rate": 0.06,
        "station_cost_per_kw": 600.0, "max_head_m": 80.0}


def _rho_kg_m3() -> float:
    from iapws import IAPWS95

    return float(IAPWS95(T=288.15, P=0.101325).rho)


def _write(folder, *, roughness_mm: float | None = None, catalogue=PE,
           title: str = "Invented pumped scheme"):
    """A pump at a sump (98 m) feeding a rising trunk of 1.5 km and two branches,
    "hill" (leaving at 500 m, climbing to 132 m) and "east" (at 1,000 m); ``roughness_mm``
    written into every scenario when given."""
    folder.mkdir(parents=True, exist_ok=True)
    for name, rows in (("trunk", [(0, 100), (500, 104), (1000, 110), (1500, 116)]),
                       ("hill", [(0, 104), (300, 118), (600, 132)]),
                       ("east", [(0, 110), (500, 112)])):
        (folder / f"{name}.csv").write_text(csv_text(rows, ("chainage_m", "ground_m")),
                                            encoding="utf-8")
    (folder / "catalogue.csv").write_text(csv_text(catalogue, CATALOGUE_COLUMNS), "utf-8")
    own = {} if roughness_mm is None else {"roughness_mm": roughness_mm}
    study = {
        "title": title, "currency": "USD", "water": {"temperature_c": 15.0},
        "source": {"level_m": 98.0, "top_water_level_m": 99.0, "entrance_k": 0.5},
        "outlet": {"required_head_m": 130.0, "exit_k": 1.0},
        "route": {"profile": "trunk.csv", "cover_m": 1.0, "min_pressure_m": 3.0},
        "branch": [{"name": "hill", "at_chainage_m": 500.0, "profile": "hill.csv",
                    "flow": "3 L/s", "required_head_m": 142.0},
                   {"name": "east", "at_chainage_m": 1000.0, "profile": "east.csv",
                    "flow": "5 L/s", "required_head_m": 120.0}],
        "scenario": [{"name": "peak", "flow": "10 L/s", "hours_per_year": HOURS["peak"]}
                     | own,
                     {"name": "night", "flow": "6 L/s", "branch_factor": 0.5,
                      "hours_per_year": HOURS["night"]} | own],
        "catalogue": {"file": "catalogue.csv"}, "pump": PUMP,
        "solver": {"time_limit_s": 30}}
    (folder / "study.toml").write_text(toml_text(study), encoding="utf-8")
    (folder / "design.csv").write_text(
        "branch,from_m,to_m,material,dn_mm,pressure_class\nmain,0,1500,PE,160,PN10\n"
        "hill,0,600,PE,110,PN10\neast,0,500,PE,110,PN10\n", encoding="utf-8")
    return folder / "study.toml", folder / "design.csv"


def _invoke(*args: str) -> None:
    result = CliRunner().invoke(app, [str(a) for a in args])
    assert result.exit_code in (0, 1), result.output
    assert "Traceback" not in result.output


def _checked_at(tmp_path, roughness_mm: float) -> dict:
    """``optimiser check`` of the fixed design with the roughness in the study file."""
    study, design = _write(tmp_path / f"at-{roughness_mm:g}", roughness_mm=roughness_mm)
    out = tmp_path / f"check-{roughness_mm:g}.json"
    _invoke("check", study, "--design", design, "--json", out)
    return json.loads(out.read_text("utf-8"))


def test_fixed_design_station_and_life_cycle_equal_the_check_at_each_roughness(tmp_path):
    study, design = _write(tmp_path / "study")
    out = tmp_path / "sens"
    _invoke("sensitivity", study, "--design", design, "--roughness-from", "0.01",
            "--roughness-to", "0.5", "--steps", "2", "--no-reoptimise", "--out", out)
    table = pd.read_csv(out / "fixed_design_roughness.csv")
    rho = _rho_kg_m3()
    for roughness in (0.01, 0.5):
        checked = _checked_at(tmp_path, roughness)
        rows = table[np.isclose(table["roughness_mm"], roughness)].set_index("scenario")
        assert rows["life_cycle_cost"].iloc[0] == pytest.approx(
            checked["life_cycle_cost"], rel=1e-9)
        for name in ("peak", "night"):
            head = checked["pump"]["head_m"][name]
            assert rows.at[name, "head_m"] == pytest.approx(head, rel=1e-9)
            by_hand = rho * G * INFLOW_M3_S[name] * head / (1000.0 * PUMP["efficiency"])
            assert rows.at[name, "power_kw"] == pytest.approx(by_hand, rel=1e-4)
            assert rows.at[name, "energy_cost_per_year"] == pytest.approx(
                by_hand * HOURS[name] * PUMP["energy_price"], rel=1e-4)
    # Rougher pipe, more head (Colebrook 1939): the station's energy cannot fall.
    costs = table.groupby("roughness_mm")["life_cycle_cost"].first()
    assert costs.iloc[-1] > costs.iloc[0]


@pytest.mark.parametrize("roughness_mm", [0.01, 0.3])
def test_monte_carlo_station_meets_every_branch_as_the_check(tmp_path, roughness_mm):
    # The station must lift every line its head reaches (contract section 9): here the
    # branch "hill" sets the head, so a Monte Carlo judging the trunk alone falls short.
    study_path, design_path = _write(tmp_path / "study")
    study = load_study(study_path)
    design = load_design(design_path, study)
    fixed = RoughnessDistribution("fixed", roughness_mm, roughness_mm)
    samples = pump_monte_carlo(study, design, fixed, samples=2, seed=0).samples
    checked = _checked_at(tmp_path, roughness_mm)
    for name in ("peak", "night"):
        rows = samples[samples["scenario"] == name]
        assert np.allclose(rows["station_head_m"], checked["pump"]["needed_head_m"][name],
                           rtol=1e-9)
        outlets = {o["branch"]: o["margin_m"] for o in
                   next(s for s in checked["scenarios"] if s["name"] == name)["outlets"]}
        assert outlets["hill"] == pytest.approx(0.0, abs=1e-6)
        assert outlets["main"] > 1.0 and outlets["east"] > 1.0
    assert np.allclose(samples["life_cycle_cost"], checked["life_cycle_cost"], rtol=1e-9)
    assert samples["classes_hold"].all()


def test_tradeoff_on_a_pumped_scheme(tmp_path):
    study, _ = _write(tmp_path / "study")
    out = tmp_path / "trade"
    _invoke("tradeoff", study, "--vary", "energy-price", "--from", "0.1", "--to", "0.3",
            "--steps", "2", "--out", out)
    table = pd.read_csv(out / "tradeoff.csv")
    assert (table["status"] == "optimal").all() and table["verified"].all()
    # contract section 9: life-cycle cost = pipes + station + energy present value
    parts = table["cost"] + table["station_cost"] + table["energy_present_value"]
    assert np.allclose(table["life_cycle_cost"], parts, rtol=1e-9)
    # every design's energy costs more at a dearer kWh, so the least cannot fall
    # (common practice, no source: a minimum of increasing functions)
    assert table["life_cycle_cost"].iloc[1] > table["life_cycle_cost"].iloc[0]
    # The limiting point names its line: the branch whose delivery sets the head.
    assert (table["binding_what"] == "outlet head of hill").all()
    assert np.allclose(table["binding_margin_m"], 0.0, atol=1e-6)
    assert np.allclose(table["binding_chainage_m"], 600.0)
    design_out = tmp_path / "design"
    _invoke("design", study, "--out", design_out)
    own = json.loads((design_out / "result.json").read_text("utf-8"))
    point = json.loads((out / "tradeoff.json").read_text("utf-8"))["study_point"]
    assert point["cost"] == pytest.approx(own["total_cost"], rel=1e-9)


def test_robust_design_of_a_pumped_scheme_holds_over_the_range(tmp_path):
    study, _ = _write(tmp_path / "study")
    out = tmp_path / "robust"
    _invoke("sensitivity", study, "--roughness-from", "0.01", "--roughness-to", "0.5",
            "--steps", "2", "--robust", "--no-reoptimise", "--out", out)
    payload = json.loads((out / "sensitivity.json").read_text("utf-8"))
    robust, nominal = payload["robust"], payload["nominal"]
    assert robust["status"] == "optimal" and robust["verified"]
    assert robust["premium"] == pytest.approx(
        robust["life_cycle_cost"] - nominal["life_cycle_cost"], rel=1e-9)
    sweep = pd.read_csv(out / "robust_design_roughness.csv")
    assert sweep["meets"].all() and sweep["classes_hold"].all()
    # The robust design checked at the top of the range by the check itself.
    robust_design = out / "robust" / "design.csv"
    study_at, _ = _write(tmp_path / "top", roughness_mm=0.5)
    json_out = tmp_path / "top.json"
    _invoke("check", study_at, "--design", robust_design, "--json", json_out)
    assert json.loads(json_out.read_text("utf-8"))["ok"]


def test_compare_ranks_pumped_schemes_by_life_cycle_cost(tmp_path):
    dear = [(*row[:7], row[7] * 1.5, *row[8:]) for row in PE]
    cheap, _ = _write(tmp_path / "cheap", title="Invented pumped scheme, cheap pipe")
    costly, _ = _write(tmp_path / "costly", catalogue=dear,
                       title="Invented pumped scheme, dear pipe")
    out = tmp_path / "compare"
    _invoke("compare", costly, cheap, "--out", out)
    table = pd.read_csv(out / "comparison.csv")
    assert list(table["option"]) == ["cheap", "costly"]  # ranked by life-cycle cost
    for option in ("cheap", "costly"):
        row = table[table["option"] == option].iloc[0]
        own = json.loads((out / option / "result.json").read_text("utf-8"))
        assert row["life_cycle_cost"] == pytest.approx(own["life_cycle_cost"], rel=1e-6)
        assert row["life_cycle_cost"] == pytest.approx(
            row["total_cost"] + row["station_cost"] + row["energy_present_value"],
            rel=1e-6)
        assert math.isfinite(row["installed_kw"]) and row["installed_kw"] > 0


# A pump, its hill tank and slow closure: each side of the tank has its own surge.
TANK_LEVEL_M, WAVE_M_S, CLOSURE_S, FLOW_M3_S, BORE_M = 145.0, 300.0, 30.0, 0.03, 0.18


def _write_tank_main(folder, transient_limit_m: float | None, required_m: float = 60.0,
                     tank_level_m: float = TANK_LEVEL_M):
    """A rising main of 1 km from a sump at 100 m to a hill tank (water level 145 m unless
    ``tank_level_m``), then 2 km falling to 40 m; one pipe throughout (so its one piece
    runs through the tank), surge by wave speed, closure slower than 2 L / a on both
    sides."""
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "route.csv").write_text(csv_text(
        [(0, 100), (500, 120), (1000, 140), (2000, 90), (3000, 40)],
        ("chainage_m", "ground_m")), encoding="utf-8")
    (folder / "catalogue.csv").write_text(
        "material,dn_mm,internal_diameter_mm,pressure_class,allowable_head_m,roughness_mm,"
        f"hazen_williams_c,cost_per_m,wave_speed_m_s,note\nPE,200,{BORE_M * 1000:g},PN16,"
        f"160,0.01,150,40,{WAVE_M_S:g},invented\n", encoding="utf-8")
    surge = {"method": "joukowsky", "closure_time_s": CLOSURE_S}
    if transient_limit_m is not None:
        surge["min_transient_pressure_m"] = transient_limit_m
    study = {
        "title": "Invented rising main to a hill tank", "currency": "USD",
        "water": {"temperature_c": 15.0},
        "source": {"level_m": 100.0, "entrance_k": 0.5},
        "outlet": {"required_head_m": required_m},
        "route": {"profile": "route.csv", "cover_m": 1.0, "min_pressure_m": 2.0},
        "break_pressure_tank": [{"chainage_m": 1000.0, "water_level_m": tank_level_m}],
        "scenario": [{"name": "duty", "flow": f"{FLOW_M3_S * 1000:g} L/s",
                      "hours_per_year": 3000.0}],
        "catalogue": {"file": "catalogue.csv", "surge_allowance_m": 0.0},
        "surge": surge, "pump": {"efficiency": 0.7, "energy_price": 0.15}}
    (folder / "study.toml").write_text(toml_text(study), encoding="utf-8")
    (folder / "design.csv").write_text(
        "from_m,to_m,material,dn_mm,pressure_class\n0,3000,PE,200,PN16\n", "utf-8")
    return folder / "study.toml", folder / "design.csv"


def test_monte_carlo_down_surge_takes_each_side_of_a_tank_as_the_check(tmp_path):
    study_path, design_path = _write_tank_main(tmp_path / "limit", transient_limit_m=0.0)
    study = load_study(study_path)
    design = load_design(design_path, study)
    check = check_design(study, design, capacity=False)
    # Michaud: 2 L V / (g T), L the pipe (slope) length from the free surface above to the
    # route's end: from the sump on the rising main, from the tank below it (contract
    # section 10).
    velocity = FLOW_M3_S / (math.pi * BORE_M ** 2 / 4)
    below_m = 2 * math.hypot(1000.0, 50.0)
    rising, falling = (2 * length * velocity / (G * CLOSURE_S)
                       for length in (2 * math.hypot(500.0, 20.0) + below_m, below_m))
    points = check.scenarios[0].points
    above = points[points["chainage_m"] < 1000.0 - 1e-6]["surge_head_m"]
    below = points[points["chainage_m"] > 1000.0 + 1e-6]["surge_head_m"]
    assert np.allclose(above, rising, rtol=1e-9) and np.allclose(below, falling, rtol=1e-9)
    # The down-surge on the rising main sets the head: without the limit it is lower.
    free = check_design(load_study(_write_tank_main(tmp_path / "free", None)[0]), design,
                        capacity=False)
    needed = check.station.needed_head_m["duty"]
    assert needed > free.station.needed_head_m["duty"] + 1.0
    fixed = RoughnessDistribution("fixed", 0.01, 0.01)
    samples = pump_monte_carlo(study, design, fixed, samples=2, seed=0).samples
    assert np.allclose(samples["station_head_m"], needed, rtol=1e-9)
    assert np.allclose(samples["life_cycle_cost"], check.life_cycle_cost, rtol=1e-9)


@pytest.mark.parametrize(("roughness_mm", "meets"), [(0.01, True), (2.0, False)])
def test_monte_carlo_meets_only_when_the_gravity_line_below_the_tank_does(
        tmp_path, roughness_mm, meets):
    # Below its tank the gravity main answers for itself (contract section 8: the energy
    # restarts at the tank, the station does not reach it): at 2 mm it loses about 31 m
    # over its 2 km (Colebrook 1939, rough turbulent flow) and misses the 125 m its
    # outlet needs, though the station still fills the tank within its means.
    study_path, design_path = _write_tank_main(tmp_path, -8.0, required_m=125.0,
                                               tank_level_m=150.0)
    study = load_study(study_path)
    design = load_design(design_path, study)
    fixed = RoughnessDistribution("fixed", roughness_mm, roughness_mm)
    samples = pump_monte_carlo(study, design, fixed, samples=2, seed=0).samples
    checked = check_design(with_roughness(study, roughness_mm), design, capacity=False)
    short = [v.kind for v in checked.violations
             if v.kind in ("min_pressure", "outlet_head", "transient_pressure")]
    assert (not short) is meets
    assert samples["within_max_head"].all()
    assert (samples["meets"] == meets).all()
