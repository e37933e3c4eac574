"""A pumped rising main that fills a break-pressure tank, with a gravity main below it,
as one study (contract sections 8 and 9).

Check values: hand calculation from the contract's formulas (Hazen-Williams friction,
section 5; the tank's inflow and restart, section 8; the station head and power,
section 9), and an independent linear programme written here with scipy's ``linprog``
(pipe lengths and the station head as its variables, after Alperovits & Shamir 1977),
not with the optimiser. Water density by Kell (1975), the check's own source, as in
``pump_reference.py``. All study data are invented.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from builders import csv_text, toml_text, write_pvc_catalogue
from pump_reference import water_density_kg_m3
from scipy.optimize import linprog
from typer.testing import CliRunner

from optimiser import load_design, load_study
from optimiser.analysis import check_design
from optimiser.cli import app
from optimiser.milp import optimise_design

G = 9.80665
HW = 10.67  # contract section 5, SI Hazen-Williams
SIZES = ((150, 150.0, 40.0), (200, 200.0, 55.0), (250, 250.0, 75.0), (300, 300.0, 100.0))
PROFILE = [(0.0, 100.0), (1000.0, 130.0), (3000.0, 60.0)]  # up to the tank, then down
TANK_LEVEL = 131.0
PUMP = {"efficiency": 0.7, "energy_price": 0.15, "life_years": 30, "discount_rate": 0.05}


def _write(folder, *, outlet=80.0, inlet_k=0.0, rules=None, sizes=SIZES, design=200):
    """The invented study: a 1 km rising main from a sump at 100 m to a tank at
    chainage 1,000 m (water level 131 m), then 2 km by gravity to an outlet."""
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "profile.csv").write_text(csv_text(PROFILE, ("chainage_m", "ground_m")),
                                        encoding="utf-8")
    write_pvc_catalogue(folder, sizes)
    study = {"title": "Invented rising main to a tank, gravity below", "currency": "USD",
             "water": {"temperature_c": 15.0},
             "source": {"level_m": 100.0, "entrance_k": 0.0},
             "outlet": {"required_head_m": outlet, "exit_k": 0.0},
             "route": {"profile": "profile.csv", "length": "chainage", "min_pressure_m": 0.0},
             "break_pressure_tank": [{"chainage_m": 1000.0, "water_level_m": TANK_LEVEL}],
             "break_pressure_tanks": {"inlet_k": inlet_k, "outlet_k": 0.0},
             "scenario": [{"name": "duty", "flow": "40 L/s", "hours_per_year": 3000.0}],
             "catalogue": {"file": "catalogue.csv", "friction": "hazen-williams"},
             "pump": PUMP}
    if rules:
        study["rules"] = rules
    (folder / "study.toml").write_text(toml_text(study), encoding="utf-8")
    (folder / "design.csv").write_text(csv_text(
        [(0.0, 3000.0, "PVC", design, "PN100")],
        ("from_m", "to_m", "material", "dn_mm", "pressure_class")), encoding="utf-8")
    return folder / "study.toml", folder / "design.csv"


def _gradient(q: float, d: np.ndarray | float) -> np.ndarray | float:
    return HW * q ** 1.852 / (140.0 ** 1.852 * np.asarray(d) ** 4.8704)


def test_station_fills_the_tank_and_leaves_the_gravity_part_alone(tmp_path):
    # Hand (sections 5, 8, 9): the station lifts only to the tank. Arriving energy less
    # the inlet loss must reach the water level: H = 131 + 1.0 V^2/2g + J x 1000 - 100.
    # Below the tank the energy restarts at 131 m whatever H is, so an outlet asking
    # for more (200 m) is reported as short and does not raise H.
    study_path, design_path = _write(tmp_path, outlet=200.0, inlet_k=1.0)
    study = load_study(study_path)
    result = check_design(study, load_design(design_path, study))
    q, d = 0.04, 0.2
    velocity_head = (q / (math.pi * d * d / 4.0)) ** 2 / (2 * G)
    head = TANK_LEVEL + velocity_head + _gradient(q, d) * 1000.0 - 100.0
    assert result.station.head_m["duty"] == pytest.approx(head, rel=1e-9)
    rho = water_density_kg_m3(15.0)
    assert result.station.power_kw["duty"] == pytest.approx(
        rho * G * q * head / (1000.0 * 0.7), rel=1e-9)
    kinds = {v.kind for v in result.violations}
    assert kinds == {"outlet_head"}  # the tank fills exactly; the outlet is short
    outlet = TANK_LEVEL - _gradient(q, d) * 2000.0
    assert result.scenarios[0].outlet_energy_m == pytest.approx(outlet, abs=1e-6)


def test_class_static_line_of_the_rising_main_is_the_tank_level(tmp_path):
    # Contract section 9: the non-return valve holds the line at the level the main
    # delivers to, here the tank's water level (131 m), not the outlet's (80 m); hand:
    # the lowest pipe level is at the sump, ground 100 m less 1 m of cover. (Below the
    # tank, in another size, the static line is the tank's too: 131 - (60 - 1) = 72 m.)
    study_path, design_path = _write(tmp_path)
    design_path.write_text(csv_text(
        [(0.0, 1000.0, "PVC", 200, "PN100"), (1000.0, 3000.0, "PVC", 250, "PN100")],
        ("from_m", "to_m", "material", "dn_mm", "pressure_class")), encoding="utf-8")
    study = load_study(study_path)
    result = check_design(study, load_design(design_path, study))
    first = result.pieces.iloc[0]
    assert first["still_head_m"] == pytest.approx(TANK_LEVEL - (100.0 - 1.0), abs=1e-9)
    assert result.pieces.iloc[1]["still_head_m"] == pytest.approx(72.0, abs=1e-9)


def _independent_life_cycle_cost(outlet: float) -> float:
    """The least life-cycle cost by linprog: lengths of each size on the rising main
    and below the tank, and the station head H (no point losses; one section each)."""
    q = 0.04
    diameter = np.array([d for _, d, _ in SIZES]) / 1000.0
    cost = np.array([c for _, _, c in SIZES])
    gradient = _gradient(q, diameter)
    m = len(SIZES)
    pwf = (1 - 1.05 ** -30) / 0.05
    energy_per_m = pwf * 0.15 * 3000.0 * water_density_kg_m3(15.0) * G * q / (1000.0 * 0.7)
    objective = np.concatenate([cost, cost, [energy_per_m]])
    # the tank fills: 100 + H - sum J x_up >= 131; the outlet: 131 - sum J x_down >= outlet
    rows = [np.concatenate([gradient, np.zeros(m), [-1.0]]),
            np.concatenate([np.zeros(m), gradient, [0.0]])]
    rhs = [100.0 - TANK_LEVEL, TANK_LEVEL - outlet]
    equal = [np.concatenate([np.ones(m), np.zeros(m), [0.0]]),
             np.concatenate([np.zeros(m), np.ones(m), [0.0]])]
    result = linprog(objective, A_ub=np.array(rows), b_ub=rhs, A_eq=np.array(equal),
                     b_eq=[1000.0, 2000.0], bounds=[(0.0, None)] * (2 * m + 1),
                     method="highs")
    assert result.status == 0
    return float(result.fun)


@pytest.mark.parametrize("outlet", [80.0, 110.0])
def test_design_equals_an_independent_linear_programme(tmp_path, outlet):
    # Rules off, no point losses: the split-pipe problem is a linear programme, so the
    # optimiser's least life-cycle cost must equal linprog's (to the gap, 1e-4).
    study_path, _ = _write(tmp_path, outlet=outlet)
    study = load_study(study_path)
    outcome = optimise_design(study, mip_gap=1e-6)
    assert outcome.verified and outcome.status.value == "optimal"
    reference = _independent_life_cycle_cost(outlet)
    assert outcome.check.life_cycle_cost == pytest.approx(reference, rel=1e-5)
    assert outcome.lower_bound <= outcome.check.life_cycle_cost + 1e-6


def test_a_shared_change_budget_is_met_and_bounded(tmp_path):
    # With at most one change over the whole route, each part alone would use one: the
    # budget is shared out; the design must meet it and cost no less than the rules-off
    # linear programme (a relaxation), with its bound no higher than its cost.
    study_path, _ = _write(tmp_path, outlet=110.0, rules={"max_changes": 1})
    study = load_study(study_path)
    outcome = optimise_design(study, mip_gap=1e-6)
    assert outcome.verified
    assert len(outcome.design.merged().pieces) <= 2
    cost = outcome.check.life_cycle_cost
    assert cost >= _independent_life_cycle_cost(110.0) * (1 - 1e-9)
    assert outcome.lower_bound <= cost + 1e-6


def test_cli_design_writes_the_station_and_the_tank(tmp_path):
    study_path, _ = _write(tmp_path)
    out = tmp_path / "out"
    result = CliRunner().invoke(app, ["design", str(study_path), "--out", str(out)])
    assert result.exit_code == 0, result.output
    data = json.loads((out / "result.json").read_text(encoding="utf-8"))
    assert data["pump"]["head_m"]["duty"] > 0
    assert [t["chainage_m"] for t in data["break_pressure_tanks"]] == [1000.0]
    assert data["life_cycle_cost"] > data["total_cost"]
    assert "licensed engineer" in " ".join(result.output.split())


def test_the_one_study_demo_loads_with_its_pump_and_tank():
    # The demo is invented; this only checks it is a valid study of this form.
    from pathlib import Path

    path = Path(__file__).resolve().parents[1] / "studies/demo-pumped-main/one-study/study.toml"
    study = load_study(path)
    assert study.pump is not None
    assert [t.chainage_m for t in study.tanks] == [8000.0]


def _write_scheme(folder):
    """A 1 km rising main from a sump at 100 m to a tank at chainage 1,000 m (water
    level 131 m), then a gravity trunk 1 km on to an outlet needing 80 m (40 L/s), with
    branch "b" leaving it at 1,500 m, 500 m to an end needing 85 m (10 L/s)."""
    folder.mkdir(parents=True, exist_ok=True)
    for name, rows in {"profile.csv": [(0.0, 100.0), (1000.0, 130.0), (1500.0, 100.0),
                                       (2000.0, 60.0)],
                       "b.csv": [(0.0, 100.0), (500.0, 80.0)]}.items():
        (folder / name).write_text(csv_text(rows, ("chainage_m", "ground_m")),
                                   encoding="utf-8")
    write_pvc_catalogue(folder, SIZES)
    study = {"title": "Invented rising main to a tank, a branched scheme below",
             "currency": "USD", "water": {"temperature_c": 15.0},
             "source": {"level_m": 100.0, "entrance_k": 0.0},
             "outlet": {"required_head_m": 80.0, "exit_k": 0.0},
             "route": {"profile": "profile.csv", "length": "chainage", "min_pressure_m": 0.0},
             "branch": [{"name": "b", "from": "main", "at_chainage_m": 1500.0,
                         "profile": "b.csv", "flow": "10 L/s", "required_head_m": 85.0,
                         "exit_k": 0.0, "junction_k": 0.0}],
             "break_pressure_tank": [{"chainage_m": 1000.0, "water_level_m": TANK_LEVEL}],
             "break_pressure_tanks": {"inlet_k": 0.0, "outlet_k": 0.0},
             "scenario": [{"name": "duty", "flow": "40 L/s", "hours_per_year": 3000.0}],
             "catalogue": {"file": "catalogue.csv", "friction": "hazen-williams"},
             "pump": PUMP}
    (folder / "study.toml").write_text(toml_text(study), encoding="utf-8")
    return folder / "study.toml"


def _independent_scheme_cost() -> float:
    """linprog over the lengths of each size in the four sections (rising main 50 L/s,
    trunk below the tank 50 then 40 L/s, branch 10 L/s) and the station head."""
    diameter = np.array([d for _, d, _ in SIZES]) / 1000.0
    cost = np.array([c for _, _, c in SIZES])
    m = len(SIZES)
    loss = [_gradient(q, diameter) for q in (0.05, 0.05, 0.04, 0.01)]
    pwf = (1 - 1.05 ** -30) / 0.05
    energy_per_m = pwf * 0.15 * 3000.0 * water_density_kg_m3(15.0) * G * 0.05 / 700.0

    def row(parts: dict[int, np.ndarray], head: float = 0.0) -> np.ndarray:
        values = np.zeros(4 * m + 1)
        for s, coefficients in parts.items():
            values[s * m:(s + 1) * m] = coefficients
        values[-1] = head
        return values

    rows = [row({0: loss[0]}, -1.0), row({1: loss[1], 2: loss[2]}),
            row({1: loss[1], 3: loss[3]})]
    rhs = [100.0 - TANK_LEVEL, TANK_LEVEL - 80.0, TANK_LEVEL - 85.0]
    equal = np.hstack([np.kron(np.eye(4), np.ones(m)), np.zeros((4, 1))])
    result = linprog(np.concatenate([np.tile(cost, 4), [energy_per_m]]), A_ub=np.array(rows),
                     b_ub=rhs, A_eq=equal, b_eq=[1000.0, 500.0, 500.0, 500.0],
                     bounds=[(0.0, None)] * (4 * m + 1), method="highs")
    assert result.status == 0
    return float(result.fun)


def test_a_rising_main_to_a_tank_feeding_a_branched_scheme(tmp_path):
    # The branches leave the trunk below the tank, so the station's head does not reach
    # them: the station fills the tank, the scheme below runs by gravity from it.
    study = load_study(_write_scheme(tmp_path))
    outcome = optimise_design(study, mip_gap=1e-6)
    assert outcome.verified and outcome.status.value == "optimal"
    assert outcome.check.life_cycle_cost == pytest.approx(_independent_scheme_cost(), rel=1e-5)
    assert {p.branch for p in outcome.design.pieces} == {"main", "b"}


def _write_steep(folder, extra_tanks=(), new_tanks=True):
    """A 1 km rising main to a tank (water level 331 m), then 3 km falling 190 m by
    gravity to an outlet needing 195 m: with classes of 150 m one more tank is needed
    below, at a marked site; at 3,000 m (level 201 m) it would leave the last kilometre
    6 m of head (a larger pipe), at 2,000 m (261 m) 66 m for two."""
    folder.mkdir(parents=True, exist_ok=True)
    profile = [(0.0, 300.0, ""), (1000.0, 330.0, ""), (2000.0, 260.0, "yes"),
               (3000.0, 200.0, "yes"), (4000.0, 140.0, "")]
    (folder / "profile.csv").write_text(csv_text(profile, ("chainage_m", "ground_m",
                                                           "tank_site")), encoding="utf-8")
    write_pvc_catalogue(folder, SIZES, "PN15", 150.0)
    tanks = [{"chainage_m": 1000.0, "water_level_m": 331.0}]
    tanks += [{"chainage_m": c} for c in extra_tanks]
    rules = {"inlet_k": 0.0, "outlet_k": 0.0, "sites": "marked"}
    if new_tanks:
        rules["cost"] = 5000.0
    study = {"title": "Invented rising main to a tank, steep gravity main below",
             "currency": "USD", "water": {"temperature_c": 15.0},
             "source": {"level_m": 300.0, "entrance_k": 0.0},
             "outlet": {"required_head_m": 195.0, "exit_k": 0.0},
             "route": {"profile": "profile.csv", "length": "chainage", "min_pressure_m": 0.0},
             "break_pressure_tank": tanks, "break_pressure_tanks": rules,
             "scenario": [{"name": "duty", "flow": "20 L/s", "hours_per_year": 3000.0}],
             "catalogue": {"file": "catalogue.csv", "friction": "hazen-williams"},
             "pump": PUMP}
    (folder / "study.toml").write_text(toml_text(study), encoding="utf-8")
    return folder / "study.toml"


def test_new_tanks_below_the_filled_tank_equal_the_best_fixed_set(tmp_path):
    # Enumeration (independent of the tank search): every set of the marked sites as
    # tanks of the study's own, each designed, plus 5,000 a tank; the cheapest must
    # equal the design that chooses the new tanks itself.
    chosen = optimise_design(load_study(_write_steep(tmp_path / "new")), mip_gap=1e-7)
    assert chosen.verified and chosen.status.value == "optimal"
    assert [t.chainage_m for t in chosen.design.tanks] == [2000.0]
    best = math.inf
    for sites in ([], [2000.0], [3000.0], [2000.0, 3000.0]):
        folder = tmp_path / ("fixed" + "-".join(str(int(c)) for c in sites))
        study = load_study(_write_steep(folder, sites, new_tanks=False))
        outcome = optimise_design(study, mip_gap=1e-7)
        if outcome.design is not None and outcome.verified:  # none without a tank
            best = min(best, outcome.check.life_cycle_cost + 5000.0 * len(sites))
    assert chosen.check.life_cycle_cost == pytest.approx(best, rel=1e-6)
