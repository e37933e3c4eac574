"""Small invented schemes for report tests (contract section 7), built in code.

Everything here is invented test data, never a check value in itself. The scheme: the
default 3 km test main of ``builders.py`` as the trunk, a branch "east" leaving it at
1 000 m with an offtake and a sub-branch "east spur", and a branch "west" leaving it at
2 000 m. Each junction is a node of its parent's route, and each branch's ground at its
chainage 0 is the parent's ground there.
"""

from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np
from builders import write_study

from optimiser import load_study
from optimiser.model import Branch, Design, Offtake, Piece, Route, Study
from optimiser.model.route import RouteCoordinates


def _route(start_ground_m: float, length_m: float, fall_m: float, end_label: str) -> Route:
    return Route(chainage_m=np.array([0.0, length_m / 2, length_m]),
                 ground_m=np.array([start_ground_m, start_ground_m - fall_m / 2,
                                    start_ground_m - fall_m]),
                 cover_m=1.0, labels=["", "", end_label], zones=["", ""])


def scheme_study(folder: Path) -> Study:
    """The invented scheme described in the module docstring."""
    study = load_study(write_study(folder).study)
    trunk = study.route.with_nodes([1000.0, 2000.0])
    east_route = _route(float(trunk.ground_at(np.array([1000.0]))[0]), 800.0, 20.0,
                        "east tank")
    east_route = east_route.with_nodes([400.0])
    east = Branch(name="east", parent="main", at_chainage_m=1000.0, route=east_route,
                  flow_m3_s=0.004, required_head_m=150.0,
                  offtakes=(Offtake(chainage_m=300.0, flow_m3_s=0.001, label="school"),))
    spur = Branch(name="east spur", parent="east", at_chainage_m=400.0,
                  route=_route(float(east_route.ground_at(np.array([400.0]))[0]), 500.0,
                               10.0, ""),
                  flow_m3_s=0.002, required_head_m=150.0)
    west = Branch(name="west", parent="main", at_chainage_m=2000.0,
                  route=_route(float(trunk.ground_at(np.array([2000.0]))[0]), 600.0, 5.0,
                               "west tank"),
                  flow_m3_s=0.003, required_head_m=120.0)
    return dataclasses.replace(study, route=trunk, branches=(east, spur, west))


def scheme_design(study: Study) -> Design:
    """A telescoping design by hand: the trunk in two sizes, each branch in one or two."""
    def option(dn_mm: float):
        found = study.catalogue.find("PE", dn_mm, "PN10")
        assert found is not None
        return found

    return Design(pieces=(
        Piece(0.0, 1200.0, option(250)), Piece(1200.0, 3000.0, option(200)),
        Piece(0.0, 500.0, option(200), "east"), Piece(500.0, 800.0, option(160), "east"),
        Piece(0.0, 500.0, option(160), "east spur"),
        Piece(0.0, 600.0, option(160), "west")))


def _straight(route: Route, origin: tuple[float, float], heading_deg: float,
              crs: str | None) -> Route:
    angle = np.radians(heading_deg)
    chainage = np.array([0.0, route.total_chainage_m])
    return dataclasses.replace(route, coordinates=RouteCoordinates(
        crs=crs, chainage_m=chainage, x_m=origin[0] + chainage * np.cos(angle),
        y_m=origin[1] + chainage * np.sin(angle)))


def with_plan(study: Study, crs: str | None = None,
              origin: tuple[float, float] = (0.0, 0.0)) -> Study:
    """``study`` with straight lines in plan: the trunk east from ``origin``, each branch
    south from its junction (the position of its parent there)."""
    trunk = _straight(study.route, origin, 0.0, crs)
    placed = {"main": trunk}
    branches = []
    for branch in study.branches:
        x, y = placed[branch.parent].coordinates.xy_at(np.array([branch.at_chainage_m]))
        route = _straight(branch.route, (float(x[0]), float(y[0])), -90.0, crs)
        placed[branch.name] = route
        branches.append(dataclasses.replace(branch, route=route))
    return dataclasses.replace(study, route=trunk, branches=tuple(branches))
