"""Break-pressure tanks of a branched scheme's own, in ``check`` and ``design``
(contract sections 7 and 8).

Check value: an independent linear programme written here with scipy's ``linprog``
from the contract (split-pipe lengths per section and option, Karmeli, Gadish & Meyers
1968; Hazen-Williams friction, section 5; the tank's inflow and restart, section 8), not
with the optimiser. Without rules, point losses or binding pressures the design problem
is that linear programme, so the two optima must agree. All study data are invented.
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from builders import csv_text, toml_text, write_pvc_catalogue
from scipy.optimize import linprog
from typer.testing import CliRunner

from optimiser import load_study
from optimiser.cli import app
from optimiser.milp import optimise_design

HW = 10.67  # contract section 5, SI Hazen-Williams
SIZES = ((100, 100.0, 20.0), (150, 150.0, 32.0), (200, 200.0, 48.0), (250, 250.0, 70.0))
TANK_LEVEL = 123.0


def _write(folder, rules=None):
    """Trunk 1 km from a source at 200 m to an outlet needing 170 m (20 L/s); branch "b"
    leaves it at 500 m, runs 2 km to 80 m needed (15 L/s) through a tank at its 1,000 m
    (water level 123 m); sub-branch "c" leaves "b" at 1,500 m, below the tank (5 L/s,
    75 m needed)."""
    folder.mkdir(parents=True, exist_ok=True)
    profiles = {"trunk.csv": [(0.0, 200.0), (500.0, 165.0), (1000.0, 150.0)],
                "b.csv": [(0.0, 165.0), (1000.0, 122.0), (2000.0, 60.0)],
                "c.csv": [(0.0, 91.0), (500.0, 70.0)]}
    for name, rows in profiles.items():
        (folder / name).write_text(csv_text(rows, ("chainage_m", "ground_m")), encoding="utf-8")
    write_pvc_catalogue(folder, SIZES)
    branch = {"exit_k": 0.0, "junction_k": 0.0}
    study = {"title": "Invented scheme with a tank on a branch", "currency": "USD",
             "water": {"temperature_c": 15.0},
             "source": {"level_m": 200.0, "entrance_k": 0.0},
             "outlet": {"required_head_m": 170.0, "exit_k": 0.0},
             "route": {"profile": "trunk.csv", "length": "chainage", "min_pressure_m": 0.0,
                       "cover_m": 1.0},
             "branch": [dict(branch, name="b", **{"from": "main"}, at_chainage_m=500.0,
                             profile="b.csv", flow="15 L/s", required_head_m=80.0),
                        dict(branch, name="c", **{"from": "b"}, at_chainage_m=1500.0,
                             profile="c.csv", flow="5 L/s", required_head_m=75.0)],
             "break_pressure_tank": [{"chainage_m": 1000.0, "branch": "b",
                                      "water_level_m": TANK_LEVEL}],
             "break_pressure_tanks": {"inlet_k": 0.0, "outlet_k": 0.0},
             "scenario": [{"name": "peak", "flow": "20 L/s"}],
             "catalogue": {"file": "catalogue.csv", "friction": "hazen-williams"}}
    if rules:
        study["rules"] = rules
    (folder / "study.toml").write_text(toml_text(study), encoding="utf-8")
    return folder / "study.toml"


def _independent_cost() -> float:
    """Least cost by linprog. Sections (length, flow L/s): trunk 0-500 (500, 40),
    trunk 500-1000 (500, 20), b 0-1000 (1000, 20), b 1000-1500 (500, 20), b 1500-2000
    (500, 15), c (500, 5). Rows: outlet 200 - t1 - t2 >= 170; tank inflow
    200 - t1 - b1 >= 123; b's end 123 - b2 - b3 >= 80; c's end 123 - b2 - c1 >= 75."""
    sections = [(500.0, 0.040), (500.0, 0.020), (1000.0, 0.020), (500.0, 0.020),
                (500.0, 0.015), (500.0, 0.005)]
    diameter = np.array([d for _, d, _ in SIZES]) / 1000.0
    cost = np.array([c for _, _, c in SIZES])
    m = len(SIZES)
    loss = [HW * q ** 1.852 / (140.0 ** 1.852 * diameter ** 4.8704) for _, q in sections]

    def row(*parts: int) -> np.ndarray:
        values = np.zeros(len(sections) * m)
        for s in parts:
            values[s * m:(s + 1) * m] = loss[s]
        return values

    rows = [row(0, 1), row(0, 2), row(3, 4), row(3, 5)]
    rhs = [200.0 - 170.0, 200.0 - TANK_LEVEL, TANK_LEVEL - 80.0, TANK_LEVEL - 75.0]
    equal = np.kron(np.eye(len(sections)), np.ones(m))
    result = linprog(np.tile(cost, len(sections)), A_ub=np.array(rows), b_ub=rhs,
                     A_eq=equal, b_eq=[length for length, _ in sections],
                     bounds=[(0.0, None)] * (len(sections) * m), method="highs")
    assert result.status == 0
    return float(result.fun)


def test_design_with_a_tank_on_a_branch_equals_an_independent_programme(tmp_path):
    study = load_study(_write(tmp_path))
    outcome = optimise_design(study, mip_gap=1e-7)
    assert outcome.verified and outcome.status.value == "optimal"
    assert outcome.total_cost == pytest.approx(_independent_cost(), rel=1e-6)
    check = outcome.check
    assert [t.branch for t in check.tanks] == ["b"]
    # The tank fills (its inflow margin is what the programme's tank row leaves).
    assert min(check.scenarios[0].tank_inflow_energy_m) >= TANK_LEVEL - 1e-6


def test_rules_per_line_across_the_tank(tmp_path):
    # At most one change on every line: "b" runs through the tank, so its two parts
    # share the budget; the joined design must meet it, cost no less than the programme
    # (a relaxation) and keep its bound at or below its cost.
    study = load_study(_write(tmp_path, rules={"max_changes": 1}))
    outcome = optimise_design(study, mip_gap=1e-6)
    assert outcome.verified
    for line in ("main", "b", "c"):
        assert len(outcome.design.merged().on(line).pieces) <= 2
    assert outcome.total_cost >= _independent_cost() * (1 - 1e-9)
    assert outcome.lower_bound <= outcome.total_cost + 1e-6


def test_cli_design_and_check_of_a_scheme_with_a_tank(tmp_path):
    study_path = _write(tmp_path)
    out = tmp_path / "out"
    result = CliRunner().invoke(app, ["design", str(study_path), "--out", str(out)])
    assert result.exit_code == 0, result.output
    data = json.loads((out / "result.json").read_text(encoding="utf-8"))
    assert data["status"] == "optimal"
    assert [(t["branch"], t["chainage_m"]) for t in data["break_pressure_tanks"]] == [("b", 1000.0)]
    checked = CliRunner().invoke(app, ["check", str(study_path), "--design",
                                       str(out / "design.csv")])
    assert checked.exit_code == 0, checked.output


def test_no_design_below_the_tank_is_diagnosed_there(tmp_path):
    # Branch "b" asks for 130 m at its end, above the tank's water level (123 m): no
    # pipe can deliver it (energy only falls below the tank, contract section 8).
    study_path = _write(tmp_path)
    study_path.write_text(study_path.read_text(encoding="utf-8").replace(
        "required_head_m = 80.0", "required_head_m = 130.0"), encoding="utf-8")
    outcome = optimise_design(load_study(study_path))
    assert outcome.status.value == "infeasible" and outcome.design is None
    text = " ".join(outcome.diagnosis)
    assert "below the tank at 1000 m of 'b'" in text and "130 m" in text
