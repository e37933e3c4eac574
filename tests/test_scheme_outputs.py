"""JSON and terminal output of the check on a branched scheme (contract section 7:
every point, violation and piece carries ``branch``; ``outlets`` has one object per
delivery point; ``outlet_energy_m`` stays the trunk's).

The figures themselves are checked by hand in ``test_scheme_check.py``; here the fields
are checked against the contract and against each other (common practice, no source).
"""

from __future__ import annotations

import json

from rich.console import Console
from scheme_api_builders import two_branch_scheme

from optimiser import check_design
from optimiser.reports.results import check_dict
from optimiser.reports.terminal import print_check

OUTLET_KEYS = {"branch", "flow_m3_s", "energy_m", "required_head_m", "margin_m",
               "spare_head_m", "uncontrolled_flow_m3_s"}


def _short_scheme(tmp_path):
    """The two-branch scheme with 'north' asking 40 m more head than it can have."""
    study, design = two_branch_scheme(tmp_path, north_required_m=220.0)
    return study, design, check_design(study, design)


def test_json_names_the_branch_everywhere(tmp_path):
    _, _, result = _short_scheme(tmp_path)
    payload = json.loads(json.dumps(check_dict(result)))  # what --json writes
    assert payload["ok"] is False
    assert {p["branch"] for p in payload["pieces"]} == {"main", "north", "south"}
    short = [v for v in payload["violations"] if v["kind"] == "outlet_head"]
    assert [v["branch"] for v in short] == ["north"]
    assert all("branch" in v for v in payload["violations"])
    scenario = payload["scenarios"][0]
    assert {p["branch"] for p in scenario["points"]} == {"main", "north", "south"}
    assert [o["branch"] for o in scenario["outlets"]] == ["main", "north", "south"]
    for outlet in scenario["outlets"]:
        assert set(outlet) == OUTLET_KEYS
        assert outlet["margin_m"] == outlet["energy_m"] - outlet["required_head_m"]
        assert outlet["spare_head_m"] == outlet["margin_m"]
    assert scenario["outlet_energy_m"] == scenario["outlets"][0]["energy_m"]
    north = scenario["outlets"][1]
    assert north["required_head_m"] == 220.0 and north["margin_m"] < 0
    assert north["uncontrolled_flow_m3_s"] is None  # short even with no delivery
    trunk_points = [p for p in scenario["points"] if p["branch"] == "main"]
    assert trunk_points[0]["chainage_m"] == 0.0
    assert scenario["points"][len(trunk_points)]["branch"] == "north"


def test_single_route_json_has_one_outlet_on_main(make_study):
    import optimiser
    files = make_study()
    study = optimiser.load_study(files.study)
    result = check_design(study, optimiser.load_design(files.design, study))
    scenario = check_dict(result)["scenarios"][0]
    assert [o["branch"] for o in scenario["outlets"]] == ["main"]
    assert {p["branch"] for p in scenario["points"]} == {"main"}
    assert scenario["outlets"][0]["energy_m"] == scenario["outlet_energy_m"]


def test_terminal_lists_every_delivery_point_and_names_the_branch(tmp_path):
    _, _, result = _short_scheme(tmp_path)
    console = Console(record=True, width=160)
    print_check(console, result)
    text = console.export_text()
    assert "a trunk and 2 branches" in text
    assert "Delivery points" in text
    rows = [line for line in text.splitlines() if line.lstrip("│ ").startswith("peak")]
    delivery = [row for row in rows if any(name in row for name in ("north", "south"))]
    assert len(delivery) >= 2
    assert "peak, branch 'north': energy at the outlet" in text
    assert "NOT OK" in text


def test_sensitivity_monte_carlo_judges_every_delivery_point_of_a_scheme(tmp_path,
                                                                        monkeypatch, runner):
    """The Monte Carlo on a scheme gives figures for the whole tree, not the trunk alone:
    every delivery point has its row (tests/test_sensitivity_scheme_monte_carlo.py checks
    the figures)."""
    import pandas as pd
    import typer

    import optimiser.io
    from optimiser.cli.sweeps import sensitivity
    study, _ = two_branch_scheme(tmp_path)
    monkeypatch.setattr(optimiser.io, "load_study", lambda path: study)
    app = typer.Typer()
    app.command()(sensitivity)
    app.command()(lambda: None)  # two commands, so the name is given as with the tool
    folder = tmp_path / "study"
    out = tmp_path / "out"
    result = runner.invoke(app, ["sensitivity", str(folder / "study.toml"),
                                 "--roughness-from", "0.01", "--roughness-to", "0.1",
                                 "--no-reoptimise", "--samples", "20", "--out", str(out)])
    assert result.exit_code == 0, result.output
    points = pd.read_csv(out / "monte_carlo_delivery_points.csv")
    assert set(points["branch"]) == {"main", *(b.name for b in study.branches)}


def test_limiting_point_of_a_design_names_its_branch(tmp_path):
    """The least pressure margin of a scheme may lie on a branch: a hump on 'north'
    whose pipe rises to within 2 m of the energy line (the trunk's least is 1.98 m)."""
    import dataclasses

    from scheme_api_builders import route_of

    from optimiser.milp.outcome import binding_points
    study, design = two_branch_scheme(tmp_path)
    hump = dataclasses.replace(study.branches[0], route=route_of(
        [(0.0, 190.0), (300.0, 199.2), (800.0, 180.0)]))
    study = dataclasses.replace(study, branches=(hump, study.branches[1]))
    result = check_design(study, design, capacity=False)
    (point,) = binding_points(result)
    assert point.branch == "north" and point.chainage_m == 300.0
    assert point.outlet_margin_m == result.scenarios[0].outlets[0].margin_m
