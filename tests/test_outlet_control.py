"""Outlet flow control (contract sections 7 and 8): ``outlets`` with the spare head and
the flow the line would carry with no control valve."""

from __future__ import annotations

import json
import math

import pytest
from fluids.friction import Colebrook
from scipy.optimize import brentq

import optimiser
from optimiser.cli import app

G = 9.80665  # standard gravity [m/s^2]


@pytest.fixture
def single_pipe(make_study):
    # One straight pipe, no offtake, no fitting: 2,000 m falling 40 m (invented).
    return make_study(profile=[(0.0, 141.0, "intake", ""), (2000.0, 101.0, "tank", "")],
                      design=[(0.0, 2000.0, "PE", 200, "PN10")],
                      study={"offtake": [], "route": {"fitting": [], "min_pressure_m": 0.0},
                             "source": {"level_m": 143.0, "top_water_level_m": 143.0,
                                        "entrance_k": 0.5},
                             "outlet": {"required_head_m": 110.0, "exit_k": 1.0},
                             "scenario": [{"name": "design", "flow": "20 L/s"}]})


def independent_uncontrolled_flow(study) -> float:
    """Flow [m^3/s] at which source level - (entrance + exit + f L/D) V^2/2g equals the
    required head: Darcy-Weisbach with Colebrook-White from the ``fluids`` package
    (Colebrook, C.F. 1939; a reference library used only in tests), root by Brent."""
    option = study.catalogue.find("PE", 200, "PN10")
    d = option.internal_diameter_m
    length = float(study.route.length_m.sum())
    nu = study.kinematic_viscosity_m2_s
    available = study.source.level_m - study.outlet.required_head_m

    def surplus(q: float) -> float:
        v = q / (math.pi * d * d / 4)
        f = Colebrook(v * d / nu, option.roughness_mm / 1000 / d)
        k = study.source.entrance_k + study.outlet.exit_k + f * length / d
        return available - k * v * v / (2 * G)

    return brentq(surplus, 1e-4, 1.0, xtol=1e-14, rtol=1e-14)


def test_uncontrolled_flow_of_a_single_pipe_matches_an_independent_solve(single_pipe):
    study = optimiser.load_study(single_pipe.study)
    design = optimiser.load_design(single_pipe.design, study)
    result = optimiser.check_design(study, design)
    scenario = result.scenarios[0]
    expected = independent_uncontrolled_flow(study)
    assert scenario.capacity_outlet_only_m3_s == pytest.approx(expected, rel=1e-6)
    assert expected > 0.020  # the case means something: head to spare at 20 L/s


def test_outlets_in_the_json_of_check(single_pipe, runner, tmp_path):
    path = tmp_path / "check.json"
    result = runner.invoke(app, ["check", str(single_pipe.study), "--design",
                                 str(single_pipe.design), "--json", str(path)])
    assert result.exit_code == 0, result.output
    scenario = json.loads(path.read_text())["scenarios"][0]
    (outlet,) = scenario["outlets"]
    assert outlet["branch"] == "main"
    assert outlet["flow_m3_s"] == pytest.approx(0.020)
    assert outlet["required_head_m"] == 110.0
    assert outlet["spare_head_m"] == pytest.approx(outlet["energy_m"] - 110.0)
    assert outlet["margin_m"] == pytest.approx(outlet["spare_head_m"])
    assert outlet["uncontrolled_flow_m3_s"] == pytest.approx(
        scenario["capacity_outlet_only_m3_s"])
    # More than 10 % above the design flow: the terminal says so, with a caution.
    assert outlet["uncontrolled_flow_m3_s"] > 1.1 * 0.020
    text = " ".join(result.output.split())
    assert "without flow control the line would carry" in text
    assert "Caution: fit flow control" in text


def test_the_report_states_the_outlet_flow_control(single_pipe):
    from optimiser.analysis.appurtenances import schedule
    from optimiser.reports.html import render_report

    study = optimiser.load_study(single_pipe.study)
    result = optimiser.check_design(study, optimiser.load_design(single_pipe.design, study))
    page = render_report(result, schedule(result))
    section = page.split("Outlet flow control", 1)[1]
    assert "without flow control the line would carry" in section
    assert "Caution: fit flow control" in section


def test_a_scheme_gets_one_flow_control_sentence_per_scenario(tmp_path):
    """On a scheme the report and terminal summarise flow control per scenario (the
    figures are in the delivery margins table): the count of delivery points that would
    overdraw by over 10 % (common practice, no source) is that of the outlets' own
    figures, and the caution is kept."""
    from scheme_api_builders import two_branch_scheme

    from optimiser.analysis import check_design
    from optimiser.reports.outlet_control import scheme_control_summary

    study, design = two_branch_scheme(tmp_path)
    result = check_design(study, design)
    for scenario in result.scenarios:
        over = sum(1 for p in scenario.outlets if p.uncontrolled_flow_m3_s is not None
                   and p.uncontrolled_flow_m3_s > 1.1 * p.flow_m3_s)
        sentence = scheme_control_summary(scenario)
        assert sentence.startswith(f"{scenario.name}: ")
        if over:
            assert f"{over} of {len(scenario.outlets)} delivery points" in sentence
            assert "Caution: fit flow control" in sentence
        else:
            assert "no delivery point would carry" in sentence
