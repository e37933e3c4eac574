"""Regenerate the INVENTED demo schemes: the profiles of studies/demo-branched-scheme/ and
the nodes and links of studies/demo-village-network/.

Every place, level, name and flow is made up; the files describe nothing real. Ground
lines are straight between a handful of hand-picked control points plus a small seeded
jitter that mimics survey noise; a branch's first point is its parent's ground at the
junction, so the two always agree. The village network is a seeded random tree of short
links falling from a reservoir. Running the script again gives the same files byte for
byte.

    python studies/tools/make_demo_schemes.py

Needs numpy only.
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np

STUDIES = Path(__file__).resolve().parent.parent
SCHEME = STUDIES / "demo-branched-scheme"
VILLAGE = STUDIES / "demo-village-network"
SEED = 20261203

# (file, parent, junction chainage on the parent [m], spacing [m],
#  control points (chainage from the junction [m], ground [m]) with the first ground
#  taken from the parent). The trunk is "main".
TRUNK_CONTROL = [(0.0, 1176.0), (1500.0, 1150.0), (1800.0, 1146.0), (3500.0, 1105.0),
                 (5200.0, 1070.0), (6800.0, 1035.0), (8500.0, 1000.0), (10000.0, 975.0),
                 (11200.0, 962.0), (12000.0, 958.0)]
BRANCHES = [
    ("ridge-school.csv", "main", 1800.0, 150.0,
     [(1300.0, 1150.0), (2400.0, 1128.0)]),
    ("east-hamlet.csv", "main", 3500.0, 200.0,
     [(2000.0, 1060.0), (4200.0, 1012.0)]),
    ("clinic.csv", "main", 5200.0, 130.0, [(1300.0, 1058.0)]),
    ("west-village.csv", "main", 6800.0, 200.0,
     [(1500.0, 1010.0), (3000.0, 980.0), (5000.0, 962.0), (6500.0, 952.0)]),
    ("west-upper.csv", "west-village.csv", 3000.0, 160.0,
     [(800.0, 990.0), (2000.0, 972.0)]),
    ("river-farms.csv", "main", 8500.0, 250.0,
     [(2500.0, 960.0), (5000.0, 930.0), (7500.0, 905.0)]),
    ("north-terrace.csv", "main", 10000.0, 150.0,
     [(1200.0, 985.0), (3000.0, 968.0)]),
]
LABELS = {"profile.csv": {0.0: "spring box", 12000.0: "lower town tank"}}


def _line(control: list[tuple[float, float]], spacing_m: float,
          rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
    """Points every ~spacing_m (and at every control point), ground straight between
    control points plus a +/-0.4 m jitter; the ends keep their control levels."""
    chainage_c = np.array([c for c, _ in control])
    ground_c = np.array([g for _, g in control])
    regular = np.arange(0.0, chainage_c[-1], spacing_m)
    chainage = np.unique(np.round(np.concatenate([regular, chainage_c]), 1))
    ground = np.interp(chainage, chainage_c, ground_c)
    jitter = rng.uniform(-0.4, 0.4, size=len(chainage))
    at_control = np.isin(chainage, chainage_c)
    ground = ground + np.where(at_control, 0.0, jitter)
    return chainage, np.round(ground, 2)


def _write_profile(path: Path, chainage: np.ndarray, ground: np.ndarray) -> None:
    labels = LABELS.get(path.name, {})
    with path.open("w", newline="", encoding="utf-8") as handle:
        writer = csv.writer(handle, lineterminator="\n")
        writer.writerow(["chainage_m", "ground_m", "label"])
        for c, g in zip(chainage, ground, strict=True):
            writer.writerow([f"{c:.1f}", f"{g:.2f}", labels.get(float(c), "")])


def make_scheme() -> None:
    rng = np.random.default_rng(SEED)
    lines = {"main": _line(TRUNK_CONTROL, 250.0, rng)}
    _write_profile(SCHEME / "profile.csv", *lines["main"])
    for name, parent, at, spacing, control in BRANCHES:
        parent_chainage, parent_ground = lines[parent]
        start = round(float(np.interp(at, parent_chainage, parent_ground)), 2)
        lines[name] = _line([(0.0, start), *control], spacing, rng)
        _write_profile(SCHEME / name, *lines[name])


# ------------------------------------------------------------------ village network

VILLAGE_NODES = 70
RESERVOIR_GROUND_M = 412.0


def _village_tree(rng: np.random.Generator) -> list[dict]:
    """Nodes with parent, position and ground: a main street falling south from the
    reservoir, lanes leaving it east and west, short spurs off the lanes."""
    nodes = [{"name": "reservoir", "parent": None, "x": 0.0, "y": 0.0,
              "ground": RESERVOIR_GROUND_M, "depth": 0}]
    street = [0]
    for _ in range(16):  # the main street
        nodes.append(_next_node(nodes, street[-1], -np.pi / 2, rng, fall=(1.0, 2.5)))
        street.append(len(nodes) - 1)
    frontier = street[1:]
    while len(nodes) < VILLAGE_NODES:
        base = int(rng.choice(frontier))
        side = np.pi if rng.random() < 0.5 else 0.0
        previous = base
        for _ in range(int(rng.integers(2, 6))):
            if len(nodes) >= VILLAGE_NODES:
                break
            nodes.append(_next_node(nodes, previous, side + rng.uniform(-0.4, 0.4), rng,
                                    fall=(-0.5, 2.5)))
            previous = len(nodes) - 1
            frontier.append(previous)
    return nodes


def _next_node(nodes: list[dict], parent: int, heading: float, rng: np.random.Generator,
               fall: tuple[float, float]) -> dict:
    length = float(rng.uniform(10.0, 100.0))
    x = nodes[parent]["x"] + length * np.cos(heading)
    y = nodes[parent]["y"] + length * np.sin(heading)
    first = parent == 0
    drop = 6.0 if first else rng.uniform(*fall) * length / 100.0
    return {"name": f"N{len(nodes):02d}", "parent": parent, "x": round(x, 1),
            "y": round(y, 1), "ground": round(nodes[parent]["ground"] - drop, 2),
            "length": round(length, 1), "depth": nodes[parent]["depth"] + 1}


PLACES = {"N05": ("school", "1.2 L/s"), "N12": ("clinic", "0.8 L/s"),
          "N09": ("market", "1 L/s")}


def make_village() -> None:
    rng = np.random.default_rng(SEED + 1)
    nodes = _village_tree(rng)
    children = {i: [j for j, n in enumerate(nodes) if n["parent"] == i]
                for i in range(len(nodes))}
    names = {}
    for index, node in enumerate(nodes):
        place = PLACES.get(node["name"])
        names[index] = place[0] if place else node["name"]
    with (VILLAGE / "nodes.csv").open("w", newline="", encoding="utf-8") as handle:
        writer = csv.writer(handle, lineterminator="\n")
        writer.writerow(["name", "ground_m", "demand", "min_pressure_m", "x_m", "y_m"])
        for index, node in enumerate(nodes):
            place = PLACES.get(node["name"])
            if index == 0:
                demand = ""
            elif place:
                demand = place[1]
            elif not children[index] or rng.random() < 0.5:  # a standpipe
                demand = f"{rng.choice([0.2, 0.3, 0.4, 0.5]):g} L/s"
            else:
                demand = ""
            minimum = "7" if demand and index else ""
            writer.writerow([names[index], f"{node['ground']:.2f}", demand, minimum,
                             f"{node['x']:.1f}", f"{node['y']:.1f}"])
    with (VILLAGE / "links.csv").open("w", newline="", encoding="utf-8") as handle:
        writer = csv.writer(handle, lineterminator="\n")
        writer.writerow(["from", "to", "length_m"])
        for index, node in enumerate(nodes[1:], start=1):
            writer.writerow([names[node["parent"]], names[index], f"{node['length']:.1f}"])


if __name__ == "__main__":
    SCHEME.mkdir(exist_ok=True)
    VILLAGE.mkdir(exist_ok=True)
    make_scheme()
    make_village()
