"""The analysis grid: route sections cut at every piece boundary of a design.

A piece boundary inside a section splits it in proportion to chainage (contract
section 4): each part's pipe length is the section's length times its share of the
section's chainage, and the pipe level is linear in chainage between survey points.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from optimiser.model import Design, Route, Study

_SNAP_M = 1e-6


@dataclass(frozen=True)
class Grid:
    """Segments (arrays of length n) between nodes (arrays of length n + 1)."""

    node_chainage_m: np.ndarray
    node_pipe_level_m: np.ndarray
    node_ground_m: np.ndarray
    node_label: list[str]
    node_is_survey_point: np.ndarray
    segment_length_m: np.ndarray
    segment_section: np.ndarray
    segment_piece: np.ndarray
    segment_zone: list[str]

    @property
    def start_m(self) -> np.ndarray:
        return self.node_chainage_m[:-1]

    @property
    def end_m(self) -> np.ndarray:
        return self.node_chainage_m[1:]


def build_grid(route: Route, boundaries_m: np.ndarray) -> Grid:
    """Cut the route's sections at the given piece boundaries (first 0, last route end)."""
    survey = route.chainage_m
    inner = [b for b in boundaries_m[1:-1]
             if not np.any(np.abs(survey - b) <= _SNAP_M)]
    chainage = np.union1d(survey, np.asarray(inner, dtype=float))
    is_survey = np.isin(chainage, survey)
    pipe_level = route.pipe_level_at(chainage)
    ground = route.ground_at(chainage)
    starts = chainage[:-1]
    section = np.clip(np.searchsorted(survey, starts, side="right") - 1, 0,
                      route.n_sections - 1)
    share = np.diff(chainage) / route.chainage_length_m[section]
    length = route.length_m[section] * share
    piece_edges = np.asarray(boundaries_m, dtype=float)
    piece = np.clip(np.searchsorted(piece_edges, starts + _SNAP_M, side="right") - 1, 0,
                    len(piece_edges) - 2)
    label_by_chainage = dict(zip(survey.tolist(), route.labels, strict=True))
    labels = [label_by_chainage.get(c, "") for c in chainage.tolist()]
    zones = [route.zones[s] for s in section.tolist()]
    return Grid(chainage, pipe_level, ground, labels, is_survey, length, section, piece, zones)


def design_grid(study: Study, design: Design) -> Grid:
    return build_grid(study.route, design.boundaries_m)
