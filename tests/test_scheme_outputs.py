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
