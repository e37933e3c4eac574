"""Seeded random trees written both ways, ``[[branch]]`` tables and the compact
``[network]`` form, load into the same scheme.

The ``[[branch]]`` form is written from an independent, plain recursive reading of the
compact form's rule as docs/file-formats.md states it (trunk along the largest
downstream demand, other subtrees as branches named after their end nodes, interior
demands as offtakes, end demands as delivery flows, required head = ground + minimum
pressure). Invented trees; no figure of a demo is used.
"""

from __future__ import annotations

import numpy as np
import pytest
from builders import DELETE, csv_text, write_study
from scheme_builders import write_network_scheme

from optimiser.io import load_study

MIN_PRESSURE_M = 2.0


def _tree(seed: int, size: int) -> dict:
    rng = np.random.default_rng(seed)
    # one pipe leaves the source (docs/file-formats.md); the tree divides below it
    parent = [-1, 0] + [int(rng.integers(1, i)) for i in range(2, size)]
    length = [0.0] + [round(float(rng.uniform(10.0, 100.0)), 1) for _ in range(1, size)]
    ground = [300.0]
    for i in range(1, size):
        ground.append(round(ground[parent[i]] - float(rng.uniform(0.5, 5.0)), 2))
    children = {i: [j for j in range(size) if parent[j] == i] for i in range(size)}
    demand = []  # L/s; every end node draws water, some inner nodes too
    for i in range(size):
        draws = i > 0 and (not children[i] or rng.random() < 0.4)
        demand.append(round(float(rng.uniform(0.05, 2.0)), 4) if draws else 0.0)
    return {"parent": parent, "length": length, "ground": ground, "children": children,
            "demand": demand}


def _paths(tree: dict) -> list[tuple[str, int, list[int], float]]:
    """(parent path name, junction node, nodes of the path, junction chainage), the trunk
    first, by the documented rule, read recursively."""
    children, demand = tree["children"], tree["demand"]

    def below(i: int) -> float:
        return demand[i] + sum(below(j) for j in children[i])

    def follow(i: int) -> list[int]:
        nodes = [i]
        while children[nodes[-1]]:
            options = children[nodes[-1]]
            nodes.append(max(options, key=below))  # first of equals: file order
        return nodes

    found = [("", 0, follow(0), 0.0)]
    for parent_name, _junction, nodes, _at in found:
        name = "main" if parent_name == "" else f"n{nodes[-1]}"
        chainage = np.cumsum([0.0] + [tree["length"][n] for n in nodes[1:]])
        inner = nodes[:-1] if name == "main" else nodes[1:-1]  # a branch's first is its parent's
        for node in inner:
            for child in children[node]:
                if child not in nodes:
                    at = float(chainage[nodes.index(node)])
                    found.append((name, node, [node, *follow(child)], at))
    return found


def _write_tables(tmp_path, tree: dict):
    paths = _paths(tree)
    branches, offtakes, profiles = [], [], {}
    for parent_name, _junction, nodes, at in paths:
        name = "main" if parent_name == "" else f"n{nodes[-1]}"
        chainage = np.cumsum([0.0] + [tree["length"][n] for n in nodes[1:]])
        profiles["profile.csv" if name == "main" else f"{name}.csv"] = [
            (round(float(c), 6), tree["ground"][n]) for c, n in zip(chainage, nodes,
                                                                    strict=True)]
        for node, c in zip(nodes[1:-1], chainage[1:-1], strict=True):
            if tree["demand"][node] > 0:
                offtakes.append({"chainage_m": round(float(c), 6), "branch": name,
                                 "flow": f"{tree['demand'][node]} L/s", "label": f"n{node}"})
        if name != "main":
            branches.append({"name": name, "from": parent_name, "at_chainage_m": at,
                             "profile": f"{name}.csv",
                             "flow": f"{tree['demand'][nodes[-1]]} L/s",
                             "required_head_m": tree["ground"][nodes[-1]] + MIN_PRESSURE_M})
    trunk_end = paths[0][2][-1]
    study = {"route": {"fitting": DELETE, "min_pressure_m": MIN_PRESSURE_M},
             "outlet": {"required_head_m": tree["ground"][trunk_end] + MIN_PRESSURE_M,
                        "exit_k": 1.0},
             "scenario": [{"name": "peak", "flow": f"{tree['demand'][trunk_end]} L/s"}],
             "offtake": offtakes or DELETE, "branch": branches or DELETE}
    files = write_study(tmp_path, study=study, folder="tables",
                        profile=profiles.pop("profile.csv"))
    for name, rows in profiles.items():
        (files.folder / name).write_text(csv_text(rows, ("chainage_m", "ground_m")),
                                         encoding="utf-8")
    return files


def _write_network(tmp_path, tree: dict):
    size = len(tree["parent"])
    nodes = [{"name": f"n{i}", "ground_m": tree["ground"][i],
              "demand": f"{tree['demand'][i]} L/s" if tree["demand"][i] else ""}
             for i in range(size)]
    links = [{"from": f"n{tree['parent'][i]}", "to": f"n{i}", "length_m": tree["length"][i]}
             for i in range(1, size)]
    return write_network_scheme(tmp_path, nodes=nodes, links=links, study={
        "network": {"nodes": "nodes.csv", "links": "links.csv", "source": "n0"},
        "route": {"profile": DELETE, "fitting": DELETE, "min_pressure_m": MIN_PRESSURE_M},
        "scenario": [{"name": "peak"}]})


def _rounded(study) -> tuple:
    """What both forms must agree on, chainages rounded to 1e-6 m (sums of lengths)."""
    def route(r):
        return (tuple(np.round(r.chainage_m, 6)), tuple(r.ground_m), tuple(r.zones),
                r.cover_m, r.slope_length)

    def offtakes(items):
        return tuple((round(o.chainage_m, 6), o.flow_m3_s, o.min_pressure_m, o.label)
                     for o in items)

    branches = tuple((b.name, b.parent, round(b.at_chainage_m, 6), route(b.route),
                      b.flow_m3_s, b.required_head_m, b.exit_k, b.junction_k,
                      b.min_pressure_m, b.local_k_per_km, b.fittings, offtakes(b.offtakes))
                     for b in study.branches)
    return (route(study.route), offtakes(study.offtakes), study.outlet, study.scenarios,
            branches)


@pytest.mark.parametrize("seed", range(12))
def test_random_trees_load_the_same_both_ways(tmp_path, seed):
    tree = _tree(seed, size=8 + 3 * seed)
    by_tables = load_study(_write_tables(tmp_path, tree).study)
    by_network = load_study(_write_network(tmp_path, tree).study)
    assert by_network.branch_names == by_tables.branch_names
    assert _rounded(by_network) == _rounded(by_tables)
