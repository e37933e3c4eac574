"""Sites for new break-pressure tanks marked in the compact form (contract section 8;
docs/file-formats.md section 10, "Break-pressure tanks in a scheme", and the nodes table).

Check values: the same scheme written with ``[[branch]]`` profiles whose rows carry the
marks (the contract's own way of marking sites, section 8) must give the same sites, the
same tanks and the same cost as the compact form with the marks on its nodes and on a
link profile's inner row (common practice, no source: two spellings of one input give
one answer). Each design is also judged by the independent check. All study data are
invented: a scheme falling about 200 m, more than the highest class of its invented
catalogue takes, so it needs tanks.
"""

from __future__ import annotations

import json

import pytest
from builders import toml_text
from random_trees import catalogue_text
from typer.testing import CliRunner

from optimiser import load_study
from optimiser.analysis import check_design
from optimiser.cli import app
from optimiser.io import InputError
from optimiser.milp.scheme_tanks.sites import scheme_sites

TANK_COST = 3000.0
NODES = ("name,ground_m,demand,required_head_m,tank_site\n"
         "src,495,,,\nn1,430,,,\nn2,400,,,{n2}\nn3,360,,,{n3}\nend,300,6 L/s,330,\n"
         "b1,390,,,{b1}\nb2,350,,,\nbend,280,4 L/s,300,\n")
LINKS = ("from,to,length_m,profile\nsrc,n1,1000,\nn1,n2,500,\nn2,n3,500,\n"
         "n3,end,,last.csv\nn1,b1,500,\nb1,b2,500,\nb2,bend,1000,\n")
LAST_LINK = "chainage_m,ground_m,tank_site\n0,360,\n500,330,{inner}\n1000,300,\n"
"""The trunk's last link has its own profile: an inner point at 2,500 m of the trunk."""
TRUNK = "chainage_m,ground_m,tank_site\n0,495,\n1000,430,\n1500,400,yes\n2000,360,yes\n" \
        "2500,330,yes\n3000,300,\n"
BRANCH = "chainage_m,ground_m,tank_site\n0,430,\n500,390,yes\n1000,350,\n2000,280,\n"
SITES = [("main", 1500.0), ("main", 2000.0), ("main", 2500.0), ("bend", 500.0)]


def _common(folder):
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "catalogue.csv").write_text(catalogue_text((90, 110, 125, 160, 200)), "utf-8")
    return {"title": "Invented falling scheme, tank sites marked", "currency": "USD",
            "source": {"level_m": 500.0}, "catalogue": {"file": "catalogue.csv"},
            "break_pressure_tanks": {"cost": TANK_COST, "height_m": 5.0, "max_count": 2,
                                     "sites": "marked"}}


def _network(folder, n2="yes", n3="yes", b1="yes", inner="yes", nodes=None,
             last_link=None):
    """The scheme as nodes and links; the marks as given (cells of tank_site)."""
    study = _common(folder) | {
        "route": {"min_pressure_m": 2.0}, "scenario": [{"name": "peak"}],
        "network": {"nodes": "nodes.csv", "links": "links.csv", "source": "src"}}
    (folder / "nodes.csv").write_text(nodes or NODES.format(n2=n2, n3=n3, b1=b1), "utf-8")
    (folder / "links.csv").write_text(LINKS, "utf-8")
    (folder / "last.csv").write_text(last_link or LAST_LINK.format(inner=inner), "utf-8")
    (folder / "network.toml").write_text(toml_text(study), "utf-8")
    return folder / "network.toml"


def _tables(folder):
    """The same scheme as a trunk profile and a [[branch]] profile carrying the marks."""
    study = _common(folder) | {
        "route": {"profile": "trunk.csv", "min_pressure_m": 2.0},
        "outlet": {"required_head_m": 330.0, "exit_k": 1.0},
        "branch": [{"name": "bend", "at_chainage_m": 1000.0, "profile": "b.csv",
                    "flow": "4 L/s", "required_head_m": 300.0}],
        "scenario": [{"name": "peak", "flow": "6 L/s"}]}
    (folder / "trunk.csv").write_text(TRUNK, "utf-8")
    (folder / "b.csv").write_text(BRANCH, "utf-8")
    (folder / "tables.toml").write_text(toml_text(study), "utf-8")
    return folder / "tables.toml"


def _design(path, out):
    result = CliRunner().invoke(app, ["design", str(path), "--out", str(out)])
    assert result.exit_code == 0, result.output
    return json.loads((out / "result.json").read_text("utf-8"))


def test_marked_nodes_give_the_sites_of_marked_profile_rows(tmp_path):
    tables = load_study(_tables(tmp_path / "tables"))
    network = load_study(_network(tmp_path / "network"))
    for study in (tables, network):
        rules = study.tank_rules
        assert sorted([("main", c) for c in rules.marked_chainages_m] +
                      list(rules.marked_on_branches)) == sorted(SITES)
    assert scheme_sites(tables) == scheme_sites(network)


def test_both_forms_with_marks_give_the_same_design_and_cost(tmp_path):
    results = [_design(_tables(tmp_path / "tables"), tmp_path / "out-tables"),
               _design(_network(tmp_path / "network"), tmp_path / "out-network")]
    for result in results:
        assert result["status"] == "optimal" and result["verified"]
    assert results[0]["total_cost"] == pytest.approx(results[1]["total_cost"], rel=1e-9)
    tanks = [[(t["branch"], t["chainage_m"]) for t in r["break_pressure_tanks"] if t["new"]]
             for r in results]
    assert tanks[0] == tanks[1] and tanks[0]
    assert set(tanks[0]) <= set(SITES)  # only marked sites (contract section 8)
    pieces = [[(p["branch"], p["from_m"], p["to_m"], p["dn_mm"], p["pressure_class"])
               for p in r["pieces"]] for r in results]
    assert pieces[0] == pieces[1]


def test_the_design_of_the_marked_network_passes_the_check(tmp_path):
    from optimiser.milp import optimise_design

    study = load_study(_network(tmp_path / "network"))
    outcome = optimise_design(study, mip_gap=1e-7)
    assert outcome.design is not None and outcome.verified
    assert check_design(study, outcome.design).ok


def test_a_chain_without_branches_takes_its_marks_as_a_route_does(tmp_path):
    # A network with one path is a single route; its marked nodes are the route's sites.
    folder = tmp_path / "chain"
    common = _common(folder)
    (folder / "nodes.csv").write_text(
        "name,ground_m,demand,required_head_m,tank_site\nsrc,495,,,\nn1,430,,,yes\n"
        "n2,400,,,\nn3,360,,,yes\nend,300,6 L/s,330,\n", "utf-8")
    (folder / "links.csv").write_text(
        "from,to,length_m\nsrc,n1,1000\nn1,n2,500\nn2,n3,500\nn3,end,1000\n", "utf-8")
    network = common | {"route": {"min_pressure_m": 2.0}, "scenario": [{"name": "peak"}],
                        "network": {"nodes": "nodes.csv", "links": "links.csv",
                                    "source": "src"}}
    (folder / "network.toml").write_text(toml_text(network), "utf-8")
    (folder / "route.csv").write_text("chainage_m,ground_m,tank_site\n0,495,\n1000,430,yes\n"
                                      "1500,400,\n2000,360,yes\n3000,300,\n", "utf-8")
    route = common | {"route": {"profile": "route.csv", "min_pressure_m": 2.0},
                      "outlet": {"required_head_m": 330.0, "exit_k": 1.0},
                      "scenario": [{"name": "peak", "flow": "6 L/s"}]}
    (folder / "route.toml").write_text(toml_text(route), "utf-8")
    assert load_study(folder / "network.toml").tank_rules.marked_chainages_m == (1000.0,
                                                                                 2000.0)
    results = [_design(folder / name, tmp_path / f"out-{name}")
               for name in ("route.toml", "network.toml")]
    assert results[0]["total_cost"] == pytest.approx(results[1]["total_cost"], rel=1e-9)
    assert [t["chainage_m"] for t in results[0]["break_pressure_tanks"]] == \
        [t["chainage_m"] for t in results[1]["break_pressure_tanks"]]


def _refused(path, tmp_path) -> str:
    out = tmp_path / "never"
    result = CliRunner().invoke(app, ["design", str(path), "--out", str(out)])
    assert result.exit_code == 2, result.output
    assert "Traceback" not in result.output and not out.exists()
    return " ".join(result.output.split())


@pytest.mark.parametrize(("marks", "node", "why"), [
    ({"n2": "maybe"}, None, "'maybe' is not yes/true/1"),
    ({"b1": "2"}, None, "'2' is not yes/true/1"),
])
def test_a_bad_mark_names_file_line_and_column(tmp_path, marks, node, why):
    path = _network(tmp_path / "bad", **marks)
    text = _refused(path, tmp_path)
    line = 4 if "n2" in marks else 7  # the header is line 1
    assert f"nodes.csv: line {line}: column tank_site" in text and why in text


@pytest.mark.parametrize(("name", "why"), [
    ("src", "the source"),
    ("end", "the end of a path"),
    ("bend", "the end of a path"),
    ("n1", "a junction"),
])
def test_a_marked_node_that_cannot_hold_a_tank_is_refused(tmp_path, name, why):
    # contract section 8: not at a line's first or last point, a junction or an offtake
    rows = NODES.format(n2="", n3="", b1="yes").rstrip("\n").split("\n")
    line = next(i for i, row in enumerate(rows) if row.startswith(f"{name},"))
    rows[line] = ",".join([*rows[line].split(",")[:-1], "yes"])
    path = _network(tmp_path / name, nodes="\n".join(rows) + "\n")
    message = _refused(path, tmp_path)
    assert f"nodes.csv: line {line + 1}: column tank_site: node {name!r} is {why}" in message


def test_a_marked_node_with_a_demand_is_an_offtake_and_refused(tmp_path):
    nodes = NODES.format(n2="", n3="", b1="yes").replace("n3,360,,,", "n3,360,1 L/s,,yes")
    message = _refused(_network(tmp_path / "offtake", nodes=nodes), tmp_path)
    assert "nodes.csv: line 5: column tank_site: node 'n3' is an offtake" in message


def test_marks_on_a_link_profile(tmp_path):
    # an end row of a link profile is a node: marked in the nodes file instead
    ends = "chainage_m,ground_m,tank_site\n0,360,\n500,330,\n1000,300,yes\n"
    message = _refused(_network(tmp_path / "end", last_link=ends), tmp_path)
    assert "last.csv: line 4: column tank_site: marks an end of the link" in message
    bad = "chainage_m,ground_m,tank_site\n0,360,\n500,330,perhaps\n1000,300,\n"
    message = _refused(_network(tmp_path / "bad", last_link=bad), tmp_path)
    assert "last.csv: line 3: column tank_site: 'perhaps'" in message


def test_nothing_marked_is_refused_naming_the_study(tmp_path):
    path = _network(tmp_path / "none", n2="", n3="", b1="", inner="")
    with pytest.raises(InputError) as raised:
        load_study(path)
    assert any("network.toml" in p and "no node of nodes.csv is marked" in p
               for p in raised.value.problems)
    message = _refused(path, tmp_path)
    assert "network.toml" in message and "tank_site" in message


def test_marks_are_ignored_without_marked_sites(tmp_path):
    # with sites = "every point" the column is read (a bad cell is still an error) but
    # a mark at a junction is no error: it is not a site choice
    path = _network(tmp_path / "every", n2="", n3="", b1="")
    text = path.read_text("utf-8").replace('sites = "marked"', 'sites = "every point"')
    path.write_text(text, "utf-8")
    nodes = (path.parent / "nodes.csv")
    nodes.write_text(nodes.read_text("utf-8").replace("n1,430,,,", "n1,430,,,yes"), "utf-8")
    study = load_study(path)
    assert study.tank_rules.marked_on_branches == ()
