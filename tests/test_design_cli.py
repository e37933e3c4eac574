"""`optimiser design` as a user runs it: outputs and exit codes of the contract
(shared/specs/study-format.md, sections 4 and 6), and the round trip of design.csv into
`optimiser check`."""

from __future__ import annotations

import csv
import json

import pytest
from test_milp_brute_force import PROFILE
from test_milp_support import write_study
from typer.testing import CliRunner

from optimiser.cli import app

SECTION_4 = ["from_m", "to_m", "material", "dn_mm", "pressure_class"]


@pytest.fixture()
def feasible_study(tmp_path):
    return write_study(tmp_path / "study", profile=PROFILE, source_level_m=101.0,
                       required_head_m=74.0, route={"min_pressure_m": 2.0},
                       scenarios=[{"name": "peak", "flow": "28 L/s"}],
                       rules={"max_changes": 2, "min_piece_length_m": 200.0},
                       costs={"change_cost": 250.0})


def run(*args):
    return CliRunner().invoke(app, [str(a) for a in args])


def test_design_writes_contract_outputs_and_round_trips(tmp_path, feasible_study):
    out = tmp_path / "out"
    result = run("design", feasible_study, "--out", out, "--json", tmp_path / "r.json")
    assert result.exit_code == 0, result.output
    assert "licensed engineer" in result.output  # cautions shown with every design
    payload = json.loads((tmp_path / "r.json").read_text())
    assert payload == json.loads((out / "result.json").read_text())
    assert payload["ok"] is True and payload["verified"] is True
    assert payload["status"] == "optimal" and payload["solver"] == "highs"
    assert payload["currency"] == "USD" and payload["violations"] == []
    assert payload["lower_bound"] <= payload["total_cost"] * (1 + 1e-9)
    assert payload["lp_bound"] <= payload["total_cost"]
    for key in ("gap", "solve_time_s", "uniform", "diagnosis", "scenarios", "cautions"):
        assert key in payload
    for piece in payload["pieces"]:
        assert set([*SECTION_4, "length_m", "internal_diameter_mm", "cost"]) <= set(piece)
    with open(out / "design.csv", newline="") as handle:
        header = next(csv.reader(handle))
    assert header[:5] == SECTION_4
    check = run("check", feasible_study, "--design", out / "design.csv", "--json",
                tmp_path / "c.json")
    assert check.exit_code == 0, check.output
    checked = json.loads((tmp_path / "c.json").read_text())
    assert checked["total_cost"] == pytest.approx(payload["total_cost"], rel=1e-9)


def test_cbc_from_the_command_line(tmp_path, feasible_study):
    result = run("design", feasible_study, "--solver", "cbc", "--json", tmp_path / "r.json",
                 "--time-limit", "60", "--gap", "1e-4")
    assert result.exit_code == 0, result.output
    payload = json.loads((tmp_path / "r.json").read_text())
    assert payload["solver"] == "cbc" and payload["verified"] is True


def test_infeasible_study_exits_1_with_diagnosis(tmp_path):
    study = write_study(tmp_path / "study", profile=[(0.0, 95.0), (1000.0, 99.5),
                                                     (2000.0, 60.0)],
                        source_level_m=100.0, required_head_m=70.0,
                        route={"min_pressure_m": 2.0})
    out = tmp_path / "out"
    result = run("design", study, "--out", out)
    assert result.exit_code == 1
    payload = json.loads((out / "result.json").read_text())
    assert payload["ok"] is False and payload["status"] == "infeasible"
    assert payload["diagnosis"] and "1+000.0" in payload["diagnosis"][0]
    assert not (out / "design.csv").exists()
    assert "1+000.0" in result.output


@pytest.mark.parametrize("extra, word", [
    (["--solver", "gurobi"], "--solver"),
    (["--gap", "2"], "--gap"),
    (["--time-limit", "0"], "--time-limit"),
    # section 9: [solver] time_limit_s 0 to 1e6 s; the option keeps the range (inf ran
    # with no limit at all, found by fuzzing the options)
    (["--time-limit", "inf"], "--time-limit"),
    (["--time-limit", "1e300"], "--time-limit"),
])
def test_bad_options_exit_2_and_write_nothing(tmp_path, feasible_study, extra, word):
    out = tmp_path / "out"
    result = run("design", feasible_study, "--out", out, "--json", tmp_path / "r.json",
                 *extra)
    assert result.exit_code == 2
    assert word in result.output
    assert not out.exists() and not (tmp_path / "r.json").exists()


def test_missing_study_exits_2(tmp_path):
    result = run("design", tmp_path / "nowhere.toml")
    assert result.exit_code == 2
    assert "nowhere.toml" in result.output
