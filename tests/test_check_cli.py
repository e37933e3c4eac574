"""``optimiser check`` through the CLI (contract section 6): exit codes, terminal output,
the JSON contract fields, and each violation kind built deliberately.

Expected values come from ``reference.gradeline`` (independent hand calculation with
``fluids`` Colebrook (1939) and ``iapws`` viscosity) or are written out in the test from
the contract's definitions; the studies are invented test data.
"""

from __future__ import annotations

import json
import math

import pytest
from builders import DEFAULT_CATALOGUE, DEFAULT_DESIGN, DEFAULT_PROFILE, DEFAULT_STUDY, merge
from reference import Pipe, gradeline, water_nu_m2_s

from optimiser.cli import app
from optimiser.reports.cautions import CAUTIONS

BOX = set("│┃║╭╮╰╯─━┏┓┗┛┣┫┳┻╋┡┩┠┨┯┷┿╇╈┼├┤┬┴")


def squash(text: str) -> str:
    """Terminal text without whitespace or box-drawing characters (rich wraps anywhere)."""
    return "".join(c for c in text if not c.isspace() and c not in BOX)


def _pipes(design=DEFAULT_DESIGN, catalogue=DEFAULT_CATALOGUE) -> list[Pipe]:
    by_key = {(r[0], float(r[1]), r[3]): r for r in catalogue}
    pipes = []
    for start, stop, material, dn, pressure_class in design:
        row = by_key[(material, float(dn), pressure_class)]
        pipes.append(Pipe(float(start), float(stop), row[2] / 1000, roughness_m=row[5] / 1000,
                          hazen_williams_c=row[6], allowable_head_m=row[4]))
    return pipes


def _reference(study: dict, profile=DEFAULT_PROFILE, design=DEFAULT_DESIGN):
    """Hand calculation of the first scenario of a builders-style study dict."""
    study = merge(DEFAULT_STUDY, study)
    scenario = study["scenario"][0]
    assert scenario["flow"].endswith(" L/s")
    route = study["route"]
    return gradeline(
        profile=[(p[0], p[1]) for p in profile], pipes=_pipes(design),
        outlet_flow_m3_s=float(scenario["flow"].split()[0]) / 1000,
        source_level_m=study["source"]["level_m"],
        top_water_level_m=study["source"]["top_water_level_m"],
        cover_m=route["cover_m"], entrance_k=study["source"]["entrance_k"],
        exit_k=study["outlet"]["exit_k"], local_k_per_km=route.get("local_k_per_km", 0.0),
        fittings=[(f["chainage_m"], f["k"]) for f in route.get("fitting", [])],
        offtakes=[(o["chainage_m"], float(o["flow"].split()[0]) / 1000, o.get("min_pressure_m"))
                  for o in study.get("offtake", [])],
        min_pressure_m=route["min_pressure_m"],
        nu_m2_s=water_nu_m2_s(study["water"]["temperature_c"]))


def _run(runner, files, tmp_path, *extra):
    json_path = tmp_path / f"{files.folder.name}.json"
    result = runner.invoke(app, ["check", str(files.study), "--design", str(files.design),
                                 "--json", str(json_path), *extra])
    assert "Traceback" not in result.output
    assert result.exception is None or isinstance(result.exception, SystemExit), result.output
    payload = json.loads(json_path.read_text()) if json_path.exists() else None
    return result, payload


# --------------------------------------------------------------------------- a good study


def test_good_study_exits_0_with_limiting_points_and_cautions(study_files, runner, tmp_path):
    result, payload = _run(runner, study_files, tmp_path)
    assert result.exit_code == 0, result.output
    text = squash(result.output)
    assert "Limitingpoints" in text
    assert "Cautions" in text
    for caution in CAUTIONS:
        assert squash(caution) in text
    assert payload["ok"] is True
    assert payload["violations"] == []


def test_json_has_the_contract_fields(study_files, runner, tmp_path):
    """Contract section 6: ok, violations, scenarios with points."""
    _, payload = _run(runner, study_files, tmp_path)
    assert isinstance(payload["ok"], bool)
    assert isinstance(payload["violations"], list)
    assert len(payload["scenarios"]) == 1
    scenario = payload["scenarios"][0]
    for key in ("name", "inflow_m3_s", "outlet_energy_m", "points"):
        assert key in scenario
    assert scenario["name"] == "peak day"
    assert scenario["inflow_m3_s"] == pytest.approx(0.025 + 0.004)
    for point in scenario["points"]:
        for key in ("chainage_m", "ground_m", "pipe_level_m", "energy_m", "hgl_m",
                    "pressure_m", "static_pressure_m"):
            assert isinstance(point[key], float), key


def test_json_values_match_the_hand_calculation(study_files, runner, tmp_path):
    """Every JSON point agrees with the independent calculation within 1 mm."""
    _, payload = _run(runner, study_files, tmp_path)
    expected = _reference({})
    scenario = payload["scenarios"][0]
    assert scenario["outlet_energy_m"] == pytest.approx(expected.outlet_energy_m, abs=1e-3)
    assert len(scenario["points"]) == len(expected.points)
    for point, ref in zip(scenario["points"], expected.points, strict=True):
        assert point["chainage_m"] == pytest.approx(ref.chainage_m)
        assert point["ground_m"] == pytest.approx(ref.ground_m)
        assert point["pipe_level_m"] == pytest.approx(ref.pipe_level_m)
        assert point["energy_m"] == pytest.approx(ref.energy_m, abs=1e-3)
        assert point["hgl_m"] == pytest.approx(ref.hgl_m, abs=1e-3)
        assert point["pressure_m"] == pytest.approx(ref.pressure_m, abs=1e-3)
        assert point["static_pressure_m"] == pytest.approx(ref.static_pressure_m)


def test_several_scenarios_each_reported(make_study, runner, tmp_path):
    files = make_study(study={"scenario": [{"name": "average", "flow": "15 L/s"},
                                           {"name": "peak day", "flow": "25 L/s"}]})
    result, payload = _run(runner, files, tmp_path)
    assert result.exit_code == 0, result.output
    assert [s["name"] for s in payload["scenarios"]] == ["average", "peak day"]
    assert payload["scenarios"][0]["inflow_m3_s"] == pytest.approx(0.019)


# --------------------------------------------------------------------------- violations


def _violations(payload, kind):
    return [v for v in payload["violations"] if v["kind"] == kind]


def _assert_only(result, payload, kind):
    assert result.exit_code == 1, result.output
    assert payload["ok"] is False
    assert {v["kind"] for v in payload["violations"]} == {kind}, payload["violations"]
    assert kind in result.output
    for v in payload["violations"]:
        for key in ("kind", "scenario", "chainage_m", "value", "limit"):
            assert key in v


def test_min_pressure_at_a_ridge(make_study, runner, tmp_path):
    """A ridge at 1000 m whose pipe rises above the hydraulic grade line."""
    profile = [(0.0, 199.0, "intake", ""), (600.0, 192.0, "", ""),
               (1000.0, 199.5, "ridge", ""), (1600.0, 160.0, "", ""),
               (2400.0, 128.0, "", ""), (3000.0, 145.0, "", "")]
    files = make_study(profile=profile)
    result, payload = _run(runner, files, tmp_path)
    _assert_only(result, payload, "min_pressure")
    expected = _reference({}, profile=profile)
    ridge = next(p for p in expected.points if p.chainage_m == 1000.0)
    assert ridge.pressure_m < 2.0
    others = [p for p in expected.points if p.chainage_m != 1000.0]
    assert all(p.pressure_m >= 2.0 for p in others)  # guard: the ridge is the only one
    (violation,) = payload["violations"]
    assert violation["scenario"] == "peak day"
    assert violation["chainage_m"] == pytest.approx(1000.0)
    assert violation["value"] == pytest.approx(ridge.pressure_m, abs=1e-3)
    assert violation["limit"] == pytest.approx(2.0)


def test_min_pressure_uses_the_offtakes_own_minimum(make_study, runner, tmp_path):
    """An offtake's min_pressure_m overrides the route's at its point (contract 1)."""
    expected = _reference({})
    at_offtake = [p for p in expected.points if p.chainage_m == 2200.0]
    own = max(p.pressure_m for p in at_offtake) + 1.0
    files = make_study(study={"offtake": [{"chainage_m": 2200.0, "flow": "4 L/s",
                                           "min_pressure_m": own}]})
    result, payload = _run(runner, files, tmp_path)
    _assert_only(result, payload, "min_pressure")
    assert {v["chainage_m"] for v in payload["violations"]} == {2200.0}
    values = sorted(v["value"] for v in payload["violations"])
    assert values == pytest.approx(sorted(p.pressure_m for p in at_offtake), abs=1e-3)
    assert all(v["limit"] == pytest.approx(own) for v in payload["violations"])


def test_max_pressure_class_too_low_at_a_valley(make_study, runner, tmp_path):
    """Static head = top_water_level_m - pipe level; + surge_allowance_m > allowable_head_m
    of PN10 (102 m) at the valley at 2400 m: 203 - (105 - 1) + 5 = 104 m."""
    profile = [*DEFAULT_PROFILE[:3], (2400.0, 105.0, "valley", ""), DEFAULT_PROFILE[4]]
    files = make_study(profile=profile, study={"catalogue": {"surge_allowance_m": 5.0}})
    result, payload = _run(runner, files, tmp_path)
    _assert_only(result, payload, "max_pressure")
    (violation,) = payload["violations"]
    assert violation["chainage_m"] == pytest.approx(2400.0)
    assert violation["value"] == pytest.approx(203.0 - (105.0 - 1.0) + 5.0)
    assert violation["limit"] == pytest.approx(102.0)
    # The same route in PN16 (163 m) passes.
    stronger = make_study(profile=profile, study={"catalogue": {"surge_allowance_m": 5.0}},
                          design=[DEFAULT_DESIGN[0], (1200.0, 3000.0, "PE", 200, "PN16")])
    result, payload = _run(runner, stronger, tmp_path)
    assert result.exit_code == 0, result.output


def test_velocity_min(make_study, runner, tmp_path):
    """V = Q / (pi d^2 / 4) = 0.029 / (pi 0.2204^2 / 4) = 0.760 m/s < 0.9 in piece 1."""
    files = make_study(study={"rules": {"velocity_min_m_s": 0.9}})
    result, payload = _run(runner, files, tmp_path)
    _assert_only(result, payload, "velocity_min")
    (violation,) = payload["violations"]
    assert violation["value"] == pytest.approx(0.029 / (math.pi * 0.2204**2 / 4), rel=1e-9)
    assert violation["limit"] == pytest.approx(0.9)
    assert 0.0 <= violation["chainage_m"] < 1200.0
    assert violation["scenario"] == "peak day"


def test_velocity_max(make_study, runner, tmp_path):
    """Piece 2 (d 176.2 mm) carries 29 L/s above the offtake at 2200 m: 1.189 m/s > 1.1;
    below it 25 L/s, 1.025 m/s, is within the limit."""
    files = make_study(study={"rules": {"velocity_max_m_s": 1.1}})
    result, payload = _run(runner, files, tmp_path)
    _assert_only(result, payload, "velocity_max")
    (violation,) = payload["violations"]
    assert violation["value"] == pytest.approx(0.029 / (math.pi * 0.1762**2 / 4), rel=1e-9)
    assert violation["limit"] == pytest.approx(1.1)
    assert 1200.0 <= violation["chainage_m"] < 2200.0


def test_velocity_limits_off_in_a_scenario(make_study, runner, tmp_path):
    """velocity_limits = false: the rules' velocity limits do not apply (contract 1)."""
    files = make_study(study={"rules": {"velocity_max_m_s": 1.1},
                              "scenario": [{"name": "fire", "flow": "25 L/s",
                                            "velocity_limits": False}]})
    result, payload = _run(runner, files, tmp_path)
    assert result.exit_code == 0, result.output
    assert payload["violations"] == []


def test_outlet_head(make_study, runner, tmp_path):
    """Outlet energy after the exit loss below required_head_m (190 m)."""
    files = make_study(study={"outlet": {"required_head_m": 190.0}})
    result, payload = _run(runner, files, tmp_path)
    _assert_only(result, payload, "outlet_head")
    expected = _reference({"outlet": {"required_head_m": 190.0}})
    (violation,) = payload["violations"]
    assert violation["chainage_m"] == pytest.approx(3000.0)
    assert violation["value"] == pytest.approx(expected.outlet_energy_m, abs=1e-3)
    assert violation["limit"] == pytest.approx(190.0)
    assert payload["scenarios"][0]["outlet_energy_m"] == pytest.approx(violation["value"])


def test_all_kinds_at_once_are_listed(make_study, runner, tmp_path):
    profile = [(0.0, 199.0, "", ""), (600.0, 192.0, "", ""), (1000.0, 199.5, "ridge", ""),
               (1600.0, 160.0, "", ""), (2400.0, 95.0, "valley", ""), (3000.0, 145.0, "", "")]
    files = make_study(profile=profile, study={
        "outlet": {"required_head_m": 190.0},
        "rules": {"velocity_min_m_s": 0.9, "velocity_max_m_s": 1.1}})
    result, payload = _run(runner, files, tmp_path)
    assert result.exit_code == 1
    kinds = {v["kind"] for v in payload["violations"]}
    assert kinds == {"min_pressure", "max_pressure", "velocity_min", "velocity_max",
                     "outlet_head"}
    for kind in kinds:
        assert kind in result.output
    assert "NOTOK" in squash(result.output)


# --------------------------------------------------------------------------- usage


def test_missing_design_is_a_usage_error(study_files, runner, tmp_path):
    result = runner.invoke(app, ["check", str(study_files.study), "--json",
                                 str(tmp_path / "r.json")])
    assert result.exit_code == 2
    assert "Traceback" not in result.output
    assert not (tmp_path / "r.json").exists()


def test_missing_study_argument_is_a_usage_error(runner):
    result = runner.invoke(app, ["check"])
    assert result.exit_code == 2
    assert "Traceback" not in result.output


def test_no_arguments_prints_help(runner):
    result = runner.invoke(app, [])
    assert "check" in result.output
    assert "Traceback" not in result.output


def test_check_without_json_writes_nothing(study_files, runner):
    before = set(study_files.folder.iterdir())
    result = runner.invoke(app, ["check", str(study_files.study), "--design",
                                 str(study_files.design)])
    assert result.exit_code == 0, result.output
    assert set(study_files.folder.iterdir()) == before
