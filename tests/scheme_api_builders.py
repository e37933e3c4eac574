"""A small branched scheme for tests (invented test data, never a check value in itself).

Until the study loader reads ``[[branch]]``, a scheme is built from a single-route study
(:func:`builders.write_study`) with its branches added, and a node put on the trunk at
each junction as the loader will do.
"""

from __future__ import annotations

import dataclasses

import numpy as np
from builders import DELETE, write_study

from optimiser import load_design, load_study
from optimiser.model import Branch, Design, Piece, Route, Study

TRUNK_PROFILE = [(0.0, 200.0, "intake", ""), (1000.0, 190.0, "", ""),
                 (2000.0, 180.0, "", ""), (3000.0, 170.0, "tank", "")]


def route_of(points: list[tuple[float, float]]) -> Route:
    return Route(chainage_m=np.array([c for c, _ in points]),
                 ground_m=np.array([g for _, g in points]), cover_m=1.0,
                 labels=[""] * len(points), zones=[""] * (len(points) - 1))


def two_branch_scheme(tmp_path, north_required_m: float = 180.0) -> tuple[Study, Design]:
    """Trunk 0-3000 m (10 L/s delivered, a valve K = 2 at 1000 m); 'north' leaves at
    1000 m (5 L/s, junction K 0.8); 'south' leaves at 2300 m, between survey points
    (4 L/s, junction K 0)."""
    files = write_study(tmp_path, profile=TRUNK_PROFILE, study={
        "route": {"fitting": [{"chainage_m": 1000.0, "k": 2.0}], "min_pressure_m": 0.0},
        "offtake": DELETE,
        "scenario": [{"name": "peak", "flow": "10 L/s"}],
        "outlet": {"required_head_m": 170.0, "exit_k": 1.0}},
        design=[(0.0, 3000.0, "PE", 250, "PN10")])
    study = load_study(files.study)
    trunk_design = load_design(files.design, study)
    north = Branch(name="north", parent="main", at_chainage_m=1000.0,
                   route=route_of([(0.0, 190.0), (500.0, 185.0), (800.0, 180.0)]),
                   flow_m3_s=0.005, required_head_m=north_required_m, junction_k=0.8)
    south = Branch(name="south", parent="main", at_chainage_m=2300.0,
                   route=route_of([(0.0, 177.0), (600.0, 165.0)]),
                   flow_m3_s=0.004, required_head_m=160.0)
    # The loader puts a node of the parent at each junction.
    scheme = dataclasses.replace(study, route=study.route.with_nodes([2300.0]),
                                 branches=(north, south))
    pe160 = next(o for o in study.catalogue.options if o.dn_mm == 160)
    design = Design((*trunk_design.pieces, Piece(0.0, 800.0, pe160, "north"),
                     Piece(0.0, 600.0, pe160, "south")))
    return scheme, design
