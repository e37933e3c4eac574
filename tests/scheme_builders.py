"""Builders of a small invented branched scheme, written both ways (contract section 7
``[[branch]]`` tables, and the compact ``[network]`` form of nodes and links).

Invented test data, never a check value in itself. The scheme: the default 3 km test
main of ``builders.py`` (fitting left out: the compact form has none) with a branch
"north end" leaving it at 1,200 m, an offtake "north tap" on that branch at 700 m, and a
sub-branch "school" leaving "north end" at 500 m. Branches are named after their end
nodes, so the compact form's rule gives the same names.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from builders import DELETE, MISSING, csv_text, write_study

NORTH_PROFILE = [(0.0, 175.0), (500.0, 170.0), (1000.0, 160.0)]
SCHOOL_PROFILE = [(0.0, 170.0), (400.0, 165.0)]

BRANCH_TABLES: list[dict[str, Any]] = [
    {"name": "north end", "from": "main", "at_chainage_m": 1200.0,
     "profile": "north.csv", "flow": "3 L/s", "required_head_m": 162.0},
    {"name": "school", "from": "north end", "at_chainage_m": 500.0,
     "profile": "school.csv", "flow": "1.5 L/s", "required_head_m": 167.0},
]

BRANCH_OFFTAKES: list[dict[str, Any]] = [
    {"chainage_m": 2200.0, "flow": "4 L/s", "min_pressure_m": 5.0, "label": "village"},
    {"chainage_m": 700.0, "flow": "2 L/s", "label": "north tap", "branch": "north end"},
]

# The same scheme as nodes and links. Ground at 1,200 m and 2,200 m of the trunk and at
# 700 m of "north end" is the profile's, interpolated (175, 136, 166 m).
NODES = [
    {"name": "intake", "ground_m": 199.0},
    {"name": "n800", "ground_m": 190.0},
    {"name": "junction", "ground_m": 175.0},
    {"name": "n1600", "ground_m": 160.0},
    {"name": "village", "ground_m": 136.0, "demand": "4 L/s", "min_pressure_m": 5.0},
    {"name": "low point", "ground_m": 128.0},
    {"name": "tank", "ground_m": 145.0, "demand": "25 L/s", "required_head_m": 175.0},
    {"name": "n500", "ground_m": 170.0},
    {"name": "north tap", "ground_m": 166.0, "demand": "2 L/s"},
    {"name": "north end", "ground_m": 160.0, "demand": "3 L/s"},
    {"name": "school", "ground_m": 165.0, "demand": "1.5 L/s"},
]
LINKS = [
    {"from": "intake", "to": "n800", "length_m": 800.0},
    {"from": "n800", "to": "junction", "length_m": 400.0},
    {"from": "junction", "to": "n1600", "length_m": 400.0},
    {"from": "n1600", "to": "village", "length_m": 600.0, "zone": "rock"},
    {"from": "village", "to": "low point", "length_m": 200.0, "zone": "rock"},
    {"from": "low point", "to": "tank", "length_m": 600.0},
    {"from": "junction", "to": "n500", "length_m": 500.0},
    {"from": "n500", "to": "north tap", "length_m": 200.0},
    {"from": "north tap", "to": "north end", "length_m": 300.0},
    {"from": "n500", "to": "school", "length_m": 400.0},
]
NODE_COLUMNS = ("name", "ground_m", "demand", "min_pressure_m", "required_head_m", "x_m",
                "y_m")
LINK_COLUMNS = ("from", "to", "length_m", "profile", "zone")


def write_csv(path: Path, rows: list[dict] | list[tuple] | str,
              columns: tuple[str, ...]) -> Path:
    text = rows if isinstance(rows, str) else csv_text(list(rows), columns)
    path.write_text(text, encoding="utf-8")
    return path


def write_branch_scheme(tmp_path: Path, folder: str = "branches",
                        study: dict[str, Any] | None = None, **tables: Any):
    """The scheme as ``[[branch]]`` tables; ``tables`` may replace north/school
    profiles."""
    override: dict[str, Any] = {"route": {"fitting": DELETE}, "branch": BRANCH_TABLES,
                                "offtake": BRANCH_OFFTAKES}
    override.update(study or {})  # top-level keys replace (a merge would copy DELETE)
    files = write_study(tmp_path, study=override, folder=folder)
    write_csv(files.folder / "north.csv", tables.get("north", NORTH_PROFILE),
              ("chainage_m", "ground_m", "label", "zone"))
    write_csv(files.folder / "school.csv", tables.get("school", SCHOOL_PROFILE),
              ("chainage_m", "ground_m", "label", "zone"))
    return files


def network_study(**override: Any) -> dict[str, Any]:
    """Overrides of the default study for the compact form (top-level keys of
    ``override`` replace these)."""
    base: dict[str, Any] = {
        "route": {"profile": DELETE, "fitting": DELETE}, "outlet": DELETE,
        "offtake": DELETE, "scenario": [{"name": "peak day"}],
        "network": {"nodes": "nodes.csv", "links": "links.csv", "source": "intake"}}
    base.update(override)
    return base


def write_network_scheme(tmp_path: Path, folder: str = "network",
                         study: dict[str, Any] | None = None,
                         nodes: Any = None, links: Any = None):
    """The scheme in the compact form; ``study`` holds top-level overrides (see
    :func:`network_study`)."""
    files = write_study(tmp_path, study=network_study(**(study or {})), folder=folder,
                        profile=MISSING)
    write_csv(files.folder / "nodes.csv", NODES if nodes is None else nodes, NODE_COLUMNS)
    write_csv(files.folder / "links.csv", LINKS if links is None else links, LINK_COLUMNS)
    return files


def write_scheme_design(folder: Path) -> Path:
    """A design of the invented scheme of :func:`write_branch_scheme` (PE, every line),
    written to ``scheme_design.csv`` in ``folder``."""
    path = folder / "scheme_design.csv"
    path.write_text("branch,from_m,to_m,material,dn_mm,pressure_class\n"
                    "main,0,1200,PE,250,PN10\nmain,1200,3000,PE,200,PN10\n"
                    "north end,0,1000,PE,160,PN10\nschool,0,400,PE,160,PN10\n",
                    encoding="utf-8")
    return path
