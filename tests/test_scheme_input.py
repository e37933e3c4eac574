"""Loading branched schemes (contract section 7): the ``[[branch]]`` form, the compact
``[network]`` form (an extension, docs/file-formats.md), and the design CSV's ``branch``
column. The scheme is invented (``scheme_builders.py``); checks are the contract's rules
and facts named beside them, never figures of a demo.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from builders import DEFAULT_PROFILE, csv_text, write_study
from scheme_builders import (
    BRANCH_TABLES,
    NODES,
    write_branch_scheme,
    write_csv,
    write_network_scheme,
)

from optimiser.cli import app
from optimiser.io import load_design, load_study
from optimiser.model import Study
from optimiser.model.scheme import TRUNK, Branch

ROOT = Path(__file__).resolve().parent.parent
LITRE_M3 = 1e-3  # 1 L = 1e-3 m^3 (SI Brochure, BIPM 2019, table 8)


def _route_arrays(route) -> tuple:
    return (list(route.chainage_m), list(route.ground_m), route.zones, route.cover_m,
            route.slope_length)


def _branch_key(branch: Branch) -> tuple:
    """Everything of a branch but where its profile came from (file or links)."""
    return (branch.name, branch.parent, branch.at_chainage_m, _route_arrays(branch.route),
            branch.flow_m3_s, branch.required_head_m, branch.exit_k, branch.junction_k,
            branch.min_pressure_m, branch.local_k_per_km, branch.fittings, branch.offtakes)


def _study_key(study: Study) -> tuple:
    return (_route_arrays(study.route), study.offtakes, study.outlet, study.scenarios,
            tuple(_branch_key(b) for b in study.branches), study.min_pressure_m)


def test_the_same_scheme_written_both_ways_loads_the_same(tmp_path):
    """Contract section 7 and the compact form's rule (docs/file-formats.md): the trunk
    follows the largest downstream demand, other subtrees hang as branches named after
    their end nodes, node demands become offtakes and delivery flows."""
    by_tables = load_study(write_branch_scheme(tmp_path).study)
    by_network = load_study(write_network_scheme(tmp_path).study)
    assert by_tables.is_scheme and by_network.is_scheme
    assert by_tables.branch_names == by_network.branch_names == (TRUNK, "north end", "school")
    assert _study_key(by_tables) == _study_key(by_network)


def test_branches_come_parents_first_with_junction_nodes_on_their_parents(tmp_path):
    """Contract section 7: the junction is inserted as a point of the parent's profile
    (ground interpolated linearly, as for an offtake, contract section 2)."""
    north, school = BRANCH_TABLES
    files = write_branch_scheme(tmp_path, study={"branch": [
        {**school, "at_chainage_m": 450.0}, {**north, "at_chainage_m": 1100.0}]},
        north=[(0.0, 178.75), (500.0, 170.0), (1000.0, 160.0)],
        school=[(0.0, 170.9), (400.0, 165.0)])
    study = load_study(files.study)
    assert study.branch_names == (TRUNK, "north end", "school")
    trunk = study.route
    at = int(np.flatnonzero(trunk.chainage_m == 1100.0)[0])
    # 190 + (160 - 190) * 300 / 800 on the section 800-1600 m of the default profile
    assert trunk.ground_m[at] == pytest.approx(178.75)
    north_route = study.branch("north end").route
    at = int(np.flatnonzero(north_route.chainage_m == 450.0)[0])
    assert north_route.ground_m[at] == pytest.approx(178.75 - 8.75 * 450.0 / 500.0)
    assert study.branch("school").parent == "north end"


def test_branch_defaults_come_from_the_route_and_offtakes_from_their_branch(tmp_path):
    """Contract section 7: cover, minimum pressure and K per km default to [route]'s;
    exit_k 1.0 and junction_k 0.0; an offtake with ``branch`` lies on that branch."""
    files = write_branch_scheme(tmp_path, study={"route": {
        "fitting": [], "cover_m": 1.5, "min_pressure_m": 3.0, "local_k_per_km": 0.2}})
    study = load_study(files.study)
    north = study.branch("north end")
    assert (north.route.cover_m, north.min_pressure_m, north.local_k_per_km) == \
        (1.5, 3.0, 0.2)
    assert (north.exit_k, north.junction_k) == (1.0, 0.0)
    assert [o.label for o in north.offtakes] == ["north tap"]
    assert [o.label for o in study.offtakes] == ["village"]
    assert north.flow_m3_s == pytest.approx(3 * LITRE_M3)


def test_branch_fittings_become_nodes_of_the_branch(tmp_path):
    """Contract section 7: [[branch.fitting]] as [[route.fitting]], chainage on the branch;
    contract section 2: a point is inserted at every fitting chainage."""
    north = {**BRANCH_TABLES[0], "fitting": [{"chainage_m": 300.0, "k": 2.0,
                                              "label": "valve"}]}
    files = write_branch_scheme(tmp_path, study={"branch": [north, BRANCH_TABLES[1]]})
    branch = load_study(files.study).branch("north end")
    assert branch.fittings[0].k == 2.0 and branch.fittings[0].chainage_m == 300.0
    assert 300.0 in branch.route.chainage_m


def test_scenario_branch_factor_and_branch_flow(tmp_path):
    """Contract section 7: branch_factor multiplies every branch's flow unless the
    scenario gives that branch's flow in branch_flow."""
    files = write_branch_scheme(tmp_path, study={"scenario": [
        {"name": "peak day", "flow": "25 L/s", "branch_factor": 1.5,
         "branch_flow": {"school": "8 L/s"}}]})
    scenario = load_study(files.study).scenarios[0]
    assert scenario.branch_flow_m3_s("school", 1.5 * LITRE_M3) == pytest.approx(8 * LITRE_M3)
    assert scenario.branch_flow_m3_s("north end", 3 * LITRE_M3) == \
        pytest.approx(4.5 * LITRE_M3)


def test_a_branch_may_take_its_flow_from_every_scenario(tmp_path):
    """A branch without ``flow`` is accepted when every scenario gives it (extension)."""
    north = {k: v for k, v in BRANCH_TABLES[0].items() if k != "flow"}
    files = write_branch_scheme(tmp_path, study={
        "branch": [north, BRANCH_TABLES[1]],
        "scenario": [{"name": "a", "flow": "25 L/s", "branch_flow": {"north end": "3 L/s"}},
                     {"name": "b", "flow": "20 L/s", "branch_flow": {"north end": "1 L/s"}}]})
    study = load_study(files.study)
    assert [s.branch_flow_m3_s("north end", study.branch("north end").flow_m3_s)
            for s in study.scenarios] == pytest.approx([3 * LITRE_M3, 1 * LITRE_M3])


def test_the_compact_form_scales_the_trunk_delivery_by_branch_factor(tmp_path):
    """Compact form: a scenario without ``flow`` delivers the trunk's end demand times its
    branch_factor; with ``flow`` it delivers that (docs/file-formats.md)."""
    files = write_network_scheme(tmp_path, study={"scenario": [
        {"name": "a", "branch_factor": 2.0}, {"name": "b", "flow": "30 L/s"}]})
    a, b = load_study(files.study).scenarios
    assert a.outlet_flow_m3_s == pytest.approx(50 * LITRE_M3)
    assert b.outlet_flow_m3_s == pytest.approx(30 * LITRE_M3)


def test_compact_form_link_profile_gives_intermediate_ground(tmp_path):
    """A link's own profile (section 2 columns, chainage 0 at its ``from`` node) adds
    its interior points to the route; its length is the profile's last chainage."""
    links = [dict(link) for link in _links()]
    links[0] = {"from": "intake", "to": "n800", "profile": "dip.csv"}
    files = write_network_scheme(tmp_path, links=links)
    write_csv(files.folder / "dip.csv", [(0.0, 199.2), (300.0, 185.0), (800.0, 190.0)],
              ("chainage_m", "ground_m"))
    study = load_study(files.study)
    assert list(study.route.chainage_m[:4]) == [0.0, 300.0, 800.0, 1200.0]
    # the link's ends take the nodes' levels (they agree within 0.5 m)
    assert list(study.route.ground_m[:3]) == [199.0, 185.0, 190.0]


def _links():
    from scheme_builders import LINKS
    return LINKS


def test_compact_form_nodes_with_coordinates_give_a_plan(tmp_path):
    """x_m, y_m of the nodes become the plan of each path (a local grid, no CRS)."""
    nodes = [{**node, "x_m": 10.0 * i, "y_m": 5.0 * i} for i, node in enumerate(NODES)]
    study = load_study(write_network_scheme(tmp_path, nodes=nodes).study)
    coordinates = study.branch("school").route.coordinates
    assert coordinates is not None and coordinates.crs is None
    assert list(coordinates.x_m) == [70.0, 100.0]  # node n500 then node school


# ----------------------------------------------------------------- a single route


def _chain_network(tmp_path):
    """The default test main (fitting left out) as a chain of nodes."""
    nodes = [{"name": label or f"p{int(c)}", "ground_m": g}
             for c, g, label, _zone in DEFAULT_PROFILE]
    nodes.insert(3, {"name": "village", "ground_m": 136.0, "demand": "4 L/s",
                     "min_pressure_m": 5.0})
    nodes[-1].update(required_head_m=175.0)
    chainage = [0.0, 800.0, 1600.0, 2200.0, 2400.0, 3000.0]
    zones = ["", "", "rock", "rock", ""]
    links = [{"from": a["name"], "to": b["name"], "length_m": c1 - c0, "zone": z}
             for a, b, c0, c1, z in zip(nodes, nodes[1:], chainage, chainage[1:], zones,
                                        strict=False)]
    return write_network_scheme(
        tmp_path, folder="chain", nodes=nodes, links=links,
        study={"scenario": [{"name": "peak day", "flow": "25 L/s"}]})


def test_a_chain_of_nodes_loads_as_the_profile_form(tmp_path):
    """A single route written in the compact form: same route, offtakes and outlet."""
    profile_form = load_study(write_study(tmp_path, study={"route": {"fitting": []}}).study)
    compact = load_study(_chain_network(tmp_path).study)
    assert not compact.is_scheme
    assert _study_key(compact) == _study_key(profile_form)


def test_a_chain_of_nodes_designs_at_the_profile_forms_cost(tmp_path, runner):
    """``optimiser design`` gives the same cost on both forms of one route."""
    profile_files = write_study(tmp_path, study={"route": {"fitting": []}})
    costs = []
    for files in (profile_files, _chain_network(tmp_path)):
        result = runner.invoke(app, ["design", str(files.study), "--json",
                                     str(files.folder / "result.json")])
        assert result.exit_code == 0, result.output
        payload = json.loads((files.folder / "result.json").read_text())
        costs.append(payload["total_cost"])
    assert costs[1] == pytest.approx(costs[0], rel=1e-9)


# ----------------------------------------------------------------- design CSV


DESIGN_ROWS = [
    ("main", 0.0, 1200.0, "PE", 250, "PN10"), ("main", 1200.0, 3000.0, "PE", 200, "PN10"),
    ("north end", 0.0, 1000.0, "PE", 160, "PN10"), ("school", 0.0, 400.0, "PE", 160, "PN10"),
]
DESIGN_COLUMNS = ("branch", "from_m", "to_m", "material", "dn_mm", "pressure_class")


def test_a_design_csv_with_a_branch_column_reads_every_branch(tmp_path):
    """Contract section 7: a ``branch`` column (default "main"); pieces of each branch
    contiguous from 0 to its last chainage."""
    files = write_branch_scheme(tmp_path)
    study = load_study(files.study)
    rows = [("", *DESIGN_ROWS[0][1:]), *DESIGN_ROWS[1:]]  # an empty cell is the trunk
    path = files.folder / "scheme-design.csv"
    path.write_text(csv_text(rows, DESIGN_COLUMNS), encoding="utf-8")
    design = load_design(path, study)
    assert design.branch_names == (TRUNK, "north end", "school")
    assert [p.to_m for p in design.on("north end").pieces] == [1000.0]


def test_a_single_route_design_without_branch_column_is_unchanged(study_files):
    design = load_design(study_files.design, load_study(study_files.study))
    assert {p.branch for p in design.pieces} == {TRUNK}


def test_design_csv_columns_add_branch_only_for_a_scheme(tmp_path, study_files):
    from optimiser.io.design_file import design_csv_columns
    columns = ["from_m", "to_m"]
    assert design_csv_columns(load_study(study_files.study), columns) == columns
    scheme = load_study(write_branch_scheme(tmp_path).study)
    assert design_csv_columns(scheme, columns) == ["branch", "from_m", "to_m"]


# ----------------------------------------------------------------- the compact form's rule


def _fork(tmp_path, folder: str, east_first: bool, east_demand: str):
    nodes = [{"name": "intake", "ground_m": 199.0}, {"name": "fork", "ground_m": 180.0},
             {"name": "east", "ground_m": 170.0, "demand": east_demand},
             {"name": "west", "ground_m": 170.0, "demand": "2 L/s"}]
    links = [{"from": "intake", "to": "fork", "length_m": 500.0},
             {"from": "fork", "to": "east", "length_m": 300.0},
             {"from": "fork", "to": "west", "length_m": 300.0}]
    if not east_first:
        links[1], links[2] = links[2], links[1]
    return load_study(write_network_scheme(tmp_path, folder=folder, nodes=nodes,
                                           links=links).study)


@pytest.mark.parametrize(("east_first", "east_demand", "trunk_end"), [
    (True, "3 L/s", "east"), (False, "3 L/s", "east"),   # the larger demand wins
    (True, "1 L/s", "west"), (False, "1 L/s", "west"),
    (True, "2 L/s", "east"), (False, "2 L/s", "west"),   # a tie: the link given first
])
def test_the_trunk_follows_the_largest_downstream_demand(tmp_path, east_first, east_demand,
                                                         trunk_end):
    """The compact form's rule (docs/file-formats.md): at each node the path follows the
    link whose end carries the largest downstream demand, ties by file order; the other
    subtree is a branch named after its end node, leaving at the fork's chainage."""
    study = _fork(tmp_path, "fork", east_first, east_demand)
    assert study.route.labels[-1] == trunk_end
    other = "west" if trunk_end == "east" else "east"
    assert study.branch_names == (TRUNK, other)
    assert study.branch(other).at_chainage_m == 500.0


def test_every_node_of_the_demo_network_is_on_exactly_one_path():
    """The demo village (invented; checked for structure only): each of its nodes is a
    point of one path, junction nodes also start their branches."""
    study = load_study(ROOT / "studies/demo-village-network/study.toml")
    labels = [label for label in study.route.labels if label]
    for branch in study.branches:
        labels.extend(label for label in branch.route.labels[1:] if label)
    nodes = ((ROOT / "studies/demo-village-network/nodes.csv").read_text().splitlines())[1:]
    assert sorted(labels) == sorted(line.split(",")[0] for line in nodes)


def test_the_demo_scheme_loads_with_its_branches_and_sub_branch():
    study = load_study(ROOT / "studies/demo-branched-scheme/study.toml")
    assert len(study.branches) >= 6
    assert any(b.parent != TRUNK for b in study.branches)
    assert any(b.offtakes for b in study.branches) and any(b.fittings for b in study.branches)
