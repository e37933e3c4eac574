"""Infeasibility diagnosis names the right chainage, by the right number of metres.

Expected values are computed in the test from contract section 5 with Hazen-Williams in
SI units, J = 10.67 Q^1.852 / (C^1.852 d^4.8704) (Williams, G.S. & Hazen, A. (1905),
Hydraulic Tables), velocity head V^2/2g with g = 9.80665 m/s^2 (CGPM 1901), and
entrance loss K V^2/2g (Bernoulli with losses; e.g. Streeter & Wylie (1985), Fluid
Mechanics, ch. 3).
"""

from __future__ import annotations

import math

from test_milp_support import write_study

from optimiser import load_study
from optimiser.milp import diagnose_study, optimise_design

G = 9.80665


def test_ridge_shortfall_names_chainage_and_metres(tmp_path):
    # A ridge at 1 000 m whose pipe (98.4 - 1 = 97.4 m) is too high for 2 m of pressure
    # with 30 L/s even in the largest pipe (277.6 mm, C 150).
    path = write_study(tmp_path, profile=[(0.0, 95.0), (1000.0, 98.4), (2000.0, 60.0)],
                       source_level_m=100.0, required_head_m=70.0,
                       route={"min_pressure_m": 2.0}, entrance_k=0.5)
    q, d, c = 0.030, 0.2776, 150.0
    j = 10.67 * q**1.852 / (c**1.852 * d**4.8704)
    v = q / (math.pi * d**2 / 4)
    h = v**2 / (2 * G)
    length = math.hypot(1000.0, 3.4)  # slope length of the first section
    pressure = 100.0 - 0.5 * h - j * length - h - 97.4
    assert pressure < 2.0  # the case really is short at the ridge
    findings = diagnose_study(load_study(path))
    assert len(findings) == 1
    assert "1+000.0" in findings[0]
    assert f"{2.0 - pressure:.2f} m short" in findings[0]
    outcome = optimise_design(load_study(path), time_limit_s=20)
    assert outcome.status == "infeasible" and outcome.design is None
    assert outcome.diagnosis == findings


def test_static_head_beyond_every_class(tmp_path):
    # From 200 m down to 60 m: static head 200 - 59 = 141 m > 102 m of every PN10 option.
    path = write_study(tmp_path, profile=[(0.0, 199.0), (1000.0, 150.0), (2000.0, 60.0)],
                       source_level_m=200.0, required_head_m=120.0)
    findings = diagnose_study(load_study(path))
    # The finding starts where the class stops taking the static head, by hand (common
    # practice, no source: pipe level linear between survey points): pipe level
    # 149 - 0.09 (c - 1000) meets 200 - 102 = 98 m at c = 1000 + 51 / 0.09 = 1566.7 m.
    assert any("0+000.0" not in f and "1+566.7 to 2+000.0" in f and "141.0" in f
               and "break-pressure tank" in f for f in findings)


def test_velocity_window_admits_no_size(tmp_path):
    # 2 L/s in 141 mm pipe is 0.13 m/s, below a 0.5 m/s minimum; larger pipes are slower.
    path = write_study(tmp_path, profile=[(0.0, 99.0), (1000.0, 60.0)],
                       source_level_m=100.0, required_head_m=70.0,
                       scenarios=[{"name": "night", "flow": "2 L/s"}],
                       rules={"velocity_min_m_s": 0.5})
    findings = diagnose_study(load_study(path))
    assert len(findings) == 1 and "0+000.0 to 1+000.0" in findings[0]
    assert "velocity" in findings[0]
