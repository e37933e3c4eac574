"""The robust design of a pumped main over a roughness range (`sensitivity --robust`).

Reference: an independent linear programme (scipy's ``linprog``) of the same problem,
written from contract sections 5 and 9: the lengths laid in each of two sizes and the
station head at each roughness are its variables; the energy a year is the mean over the
roughness values (the duty's hours shared equally among them, the rule chosen for the
robust design of a pumped main, docs/file-formats.md section 7) and the installed power
the largest over them. Friction factors from ``fluids.friction.Colebrook`` (Colebrook,
C.F. (1939), Turbulent flow in pipes, J. Inst. Civil Eng. 11; a reference library used
only in tests), water density by Kell (1975), the check's own source as in
``test_pumps.py``. With two sizes on a level main and no rules the split-pipe design is
exact, so the robust life-cycle cost must equal the programme's optimum. Invented data.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy.optimize import linprog
from test_sensitivity_pump import _write
from typer.testing import CliRunner

from optimiser import load_study
from optimiser.cli import app
from optimiser.hydraulics.water import density_kg_m3
from optimiser.sweeps.robust import robust_design

G = 9.80665  # contract section 5
LENGTH_M, FLOW_M3_S, HOURS, PRICE, EFFICIENCY, PER_KW = 2000.0, 0.04, 3000.0, 0.15, 0.7, 400.0
SIZES = ((0.200, 50.0), (0.250, 75.0))  # internal diameter [m], cost per metre (invented)
ROUGHNESS_MM = (0.01, 0.5, 1.5)


def _gradient(study, diameter_m: float, roughness_mm: float) -> float:
    """Darcy-Weisbach friction gradient [m/m] with fluids' Colebrook factor."""
    from fluids.friction import Colebrook

    velocity = FLOW_M3_S / (math.pi * diameter_m ** 2 / 4)
    reynolds = velocity * diameter_m / study.kinematic_viscosity_m2_s
    factor = Colebrook(reynolds, roughness_mm / 1000 / diameter_m)
    return factor / diameter_m * velocity ** 2 / (2 * G)


def _reference_life_cycle_cost(study, roughness_values=ROUGHNESS_MM) -> float:
    """min sum c_j x_j + PER_KW P + PWF * sum_r (HOURS / n) PRICE k H_r, with
    k = rho g Q / (1000 eta): x_1 + x_2 = L; H_r >= 80 + sum_j J_j(r) x_j; P >= k H_r."""
    n = len(roughness_values)
    power_per_m = float(density_kg_m3(15.0)) * G * FLOW_M3_S / (1000 * EFFICIENCY)
    pwf = (1 - 1.05 ** -30) / 0.05  # contract defaults: 5 %, 30 years
    # variables: x_200, x_250, H_1..H_n, P
    cost = np.array([SIZES[0][1], SIZES[1][1], *([pwf * HOURS / n * PRICE * power_per_m] * n),
                     PER_KW])
    upper, rhs = [], []
    for r, roughness in enumerate(roughness_values):
        row = np.zeros(n + 3)
        row[:2] = [_gradient(study, d, roughness) for d, _ in SIZES]
        row[2 + r] = -1.0
        upper.append(row)
        rhs.append(-80.0)  # 180 m required less the 100 m sump, level pipe
        row = np.zeros(n + 3)
        row[2 + r], row[-1] = power_per_m, -1.0
        upper.append(row)
        rhs.append(0.0)
    equal = np.zeros((1, n + 3))
    equal[0, :2] = 1.0
    result = linprog(cost, A_ub=np.array(upper), b_ub=rhs, A_eq=equal, b_eq=[LENGTH_M],
                     bounds=[(0, None)] * (n + 3), method="highs")
    assert result.status == 0
    return float(result.fun)


def test_robust_pumped_main_equals_the_independent_programme(tmp_path):
    study_path, _ = _write(tmp_path, extra_option=True)
    study = load_study(study_path)
    runs = robust_design(study, ROUGHNESS_MM)
    assert runs.robust is not None and runs.robust.outcome is not None
    outcome = runs.robust.outcome
    assert outcome.verified
    assert runs.robust.objective == pytest.approx(_reference_life_cycle_cost(study), rel=1e-6)
    # The station meets every roughness: one scenario per value, hours shared equally.
    robust_scenarios = runs.robust.study.scenarios
    assert len(robust_scenarios) == len(ROUGHNESS_MM)
    assert sum(s.hours_per_year for s in robust_scenarios) == pytest.approx(HOURS)
    # Premium: the robust life-cycle cost less the nominal one (at 0.01 mm, 3,000 h).
    assert runs.premium == pytest.approx(runs.robust.objective - runs.nominal.objective)
    assert runs.premium > 0.0  # rougher pipe pumps dearer (Colebrook 1939)


def test_robust_command_on_a_pumped_main(tmp_path):
    study_path, _ = _write(tmp_path, extra_option=True)
    out = tmp_path / "out"
    run = CliRunner().invoke(app, ["sensitivity", str(study_path), "--roughness-from",
                                   "0.01", "--roughness-to", "1.5", "--steps", "3",
                                   "--robust", "--out", str(out)])
    assert run.exit_code == 0, run.output
    payload = json.loads((out / "sensitivity.json").read_text())
    robust = payload["robust"]
    assert robust["status"] == "optimal" and robust["verified"]
    assert robust["life_cycle_cost"] == pytest.approx(
        _reference_life_cycle_cost(load_study(study_path), (0.01, 0.755, 1.5)), rel=1e-6)
    assert robust["premium"] == pytest.approx(
        robust["life_cycle_cost"] - payload["nominal"]["life_cycle_cost"])
    assert (out / "robust" / "design.csv").exists()
