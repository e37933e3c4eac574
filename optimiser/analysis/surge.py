"""Surge head of pipe options in a study (contract section 10), shared by the check and
the optimiser so that both use one rule.

``[surge] method = "allowance"``: every piece takes ``[catalogue] surge_allowance_m``.
``method = "joukowsky"``: a piece's surge head is a V / g (Joukowsky), V the largest
velocity in it in any scenario, a the option's wave speed (the catalogue's
``wave_speed_m_s``, else Korteweg's from its wall); 2 L V / (g T) instead when the closure
time T exceeds 2 L / a (Michaud), L the pipe length from the free surface upstream of
the piece (the source, or the last break-pressure tank above it) to the end of the route
(on a scheme, to the end of the piece's branch, through its junctions: contract section
10). A piece that runs through a tank is judged on each side with that side's L, as its
static head is (:func:`segment_reflection_lengths_m`). The formulas live in
:mod:`optimiser.hydraulics.surge`.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from typing import Any

import numpy as np
import pandas as pd

from optimiser.hydraulics.constants import REFERENCE_DENSITY_KG_M3
from optimiser.hydraulics.surge import closure_head_rise_m, korteweg_wave_speed_m_s
from optimiser.hydraulics.water import density_kg_m3
from optimiser.model import TRUNK, BreakPressureTank, PipeOption, Study, SurgeMethod
from optimiser.model.lines import Line, line_of

SAME_POINT_M = 1e-6
"""A tank within this distance [m] of a point stands at it (as the check's grid)."""


def water_density_kg_m3(study: Study) -> float:
    """Density [kg/m^3] for the wave speed: at the study's water temperature (Kell 1975),
    or the trade's 1000 kg/m^3 when the study gives a viscosity instead of a temperature."""
    if study.temperature_c is None:
        return REFERENCE_DENSITY_KG_M3
    return float(density_kg_m3(study.temperature_c))


def option_wave_speed_m_s(option: PipeOption, density: float) -> float:
    """Wave speed [m/s] of an option: as given, else Korteweg's from wall and modulus;
    NaN when the catalogue gives neither."""
    if option.wave_speed_m_s is not None:
        return option.wave_speed_m_s
    if option.wall_thickness_mm is None or option.elastic_modulus_gpa is None:
        return float("nan")
    return float(korteweg_wave_speed_m_s(
        option.internal_diameter_m, option.wall_thickness_mm / 1000.0,
        option.elastic_modulus_gpa * 1e9, density, option.poisson_ratio))


def wave_speeds_m_s(study: Study, options: Iterable[PipeOption]) -> np.ndarray:
    """Wave speed [m/s] of each option (NaN where the catalogue gives no way to find it)."""
    density = water_density_kg_m3(study)
    return np.array([option_wave_speed_m_s(o, density) for o in options], dtype=float)


def reflection_length_m(study: Study, line: Line | None = None) -> float:
    """Pipe length L [m] from the free surface upstream (the source) to the end of the
    route, or of ``line`` through the junctions above it: the length the slow-closure
    formula uses."""
    name = TRUNK if line is None else line.name
    beyond = dict(study.pipe_length_beyond_m).get(name, 0.0)
    if line is None or line.is_trunk:
        return study.upstream_pipe_length_m + float(study.route.length_m.sum()) + beyond
    return length_above_m(study, line) + float(line.route.length_m.sum()) + beyond


def length_above_m(study: Study, line: Line) -> float:
    """Pipe length [m] from the source to the junction of branch ``line``."""
    parent = line_of(study, line.parent or "")
    route = parent.route.with_nodes([line.at_chainage_m])
    upstream = float(route.length_m[route.chainage_m[1:] <= line.at_chainage_m + 1e-6].sum())
    return upstream + (0.0 if parent.is_trunk else length_above_m(study, parent))


def surge_head_m(study: Study, wave_speed_m_s: np.ndarray, velocity_m_s: np.ndarray,
                 line: Line | None = None, length_m: np.ndarray | float | None = None
                 ) -> np.ndarray:
    """Surge head [m] of pipes with the given wave speeds and largest velocities (arrays
    broadcast), by the study's method; on ``line`` (default the trunk) for the reflection
    length, or with the reflection lengths ``length_m`` given (they broadcast too:
    below a break-pressure tank L starts at the tank)."""
    shape = np.broadcast_shapes(np.shape(wave_speed_m_s), np.shape(velocity_m_s),
                                np.shape(0.0 if length_m is None else length_m))
    surge = study.surge
    if surge.method is SurgeMethod.ALLOWANCE:
        return np.full(shape, study.surge_allowance_m)
    length = reflection_length_m(study, line) if length_m is None else length_m
    return closure_head_rise_m(wave_speed_m_s, velocity_m_s, length, surge.closure_time_s)


def start_length_m(study: Study, line: Line) -> float:
    """Pipe length [m] from the source's free surface to the start of ``line``."""
    return study.upstream_pipe_length_m if line.is_trunk else length_above_m(study, line)


def surface_above_line_m(study: Study, tanks: Sequence[BreakPressureTank], line: Line
                         ) -> float:
    """Pipe length [m] from the source to the last free surface above the start of
    ``line``: the source (0), or the last tank of ``tanks`` on the lines above it (a
    tank never stands at a junction)."""
    while not line.is_trunk:
        parent = line_of(study, line.parent or "")
        above = [t.chainage_m for t in tanks
                 if t.branch == parent.name and t.chainage_m < line.at_chainage_m]
        if above:
            route = parent.route.with_nodes([max(above)])
            along = route.length_m[route.chainage_m[1:] <= max(above) + SAME_POINT_M]
            return start_length_m(study, parent) + float(along.sum())
        line = parent
    return 0.0


def reflection_lengths_m(study: Study, tanks: Sequence[BreakPressureTank], line: Line,
                         node_chainage_m: np.ndarray, node_length_m: np.ndarray
                         ) -> np.ndarray:
    """Reflection length L [m] below each node of ``line`` (contract section 10): from
    the last free surface at or above the node (the source, or a tank of ``tanks``) to
    the end of the line. ``node_length_m``: pipe length from the line's start to each
    node (nodes in route order, every tank on the line at one of them)."""
    total = reflection_length_m(study, line)
    surface = np.full(len(node_chainage_m), surface_above_line_m(study, tanks, line))
    own = np.sort([t.chainage_m for t in tanks if t.branch == line.name])
    if len(own):
        at = np.interp(own, node_chainage_m, node_length_m) + start_length_m(study, line)
        index = np.searchsorted(own, np.asarray(node_chainage_m) + SAME_POINT_M, "right") - 1
        surface = np.where(index >= 0, at[np.maximum(index, 0)], surface)
    return total - surface


def segment_surges_m(study: Study, tanks: Sequence[BreakPressureTank], line: Line, grid,
                     wave_speed_m_s: np.ndarray, fastest_m_s: np.ndarray) -> np.ndarray:
    """Surge head [m] on each segment of the check's ``grid`` of ``line`` (an
    :class:`optimiser.analysis.grid.Grid`): its piece's wave speed and largest velocity
    (``wave_speed_m_s`` per piece, ``fastest_m_s`` per segment), its own length L."""
    piece = grid.segment_piece
    surge = study.surge
    # L only matters to a slow closure by wave speed (0: the formulas ignore it).
    lengths = segment_reflection_lengths_m(study, tanks, line, grid.start_m,
                                           grid.segment_length_m) \
        if surge.method is SurgeMethod.JOUKOWSKY and surge.closure_time_s > 0 else 0.0
    by_piece = np.full(len(wave_speed_m_s), -np.inf)
    np.maximum.at(by_piece, piece, fastest_m_s)
    return surge_head_m(study, wave_speed_m_s[piece], by_piece[piece], length_m=lengths)


def segment_reflection_lengths_m(study: Study, tanks: Sequence[BreakPressureTank],
                                 line: Line, start_m: np.ndarray, length_m: np.ndarray
                                 ) -> np.ndarray:
    """L [m] of each stretch of ``line`` (chainage ``start_m`` at its start, pipe length
    ``length_m``, in route order from the line's start): that of the node it leaves."""
    along = np.concatenate([[0.0], np.cumsum(length_m)[:-1]])
    return reflection_lengths_m(study, tanks, line, start_m, along)


def piece_surges_m(piece_of_segment: np.ndarray, static_level_m: np.ndarray,
                   node_pipe_level_m: np.ndarray, segment_surge_m: np.ndarray,
                   static_head_m: np.ndarray) -> np.ndarray:
    """Surge head [m] of each piece for the class check: a piece that runs through a tank
    with a different surge on each side (the slow-closure length L restarts at the tank,
    contract section 10) takes the surge that, added to its largest static head
    ``static_head_m``, gives its worst static + surge head over its segments (the
    static line per segment ``static_level_m``, restarting at each tank); every other
    piece keeps its one surge."""
    n = len(static_head_m)
    low = np.minimum(node_pipe_level_m[:-1], node_pipe_level_m[1:])
    worst, highest, lowest = np.full(n, -np.inf), np.full(n, -np.inf), np.full(n, np.inf)
    np.maximum.at(worst, piece_of_segment, static_level_m - low + segment_surge_m)
    np.maximum.at(highest, piece_of_segment, segment_surge_m)
    np.minimum.at(lowest, piece_of_segment, segment_surge_m)
    return np.where(lowest < highest, worst - static_head_m, highest)


def point_surges_m(points: pd.DataFrame, parts: Mapping[str, Any],
                   segment_surge_m: dict[str, np.ndarray], piece_surge_m: np.ndarray
                   ) -> np.ndarray:
    """Surge head [m] of the pipe at each check point (the down-surge limit, contract
    section 10): its segment's (on the upstream side of a node the segment arriving),
    so a piece through a tank counts each side's own; else its piece's. ``parts``: the
    check's :class:`~optimiser.analysis.design_hydraulics.DesignHydraulics` by line."""
    surge = piece_surge_m[points["piece"].to_numpy()].astype(float)
    for name, surges in segment_surge_m.items():
        rows = np.flatnonzero(points["branch"].to_numpy() == name)
        node = np.searchsorted(parts[name].grid.node_chainage_m,
                               points["chainage_m"].to_numpy()[rows])
        upstream = points["side"].to_numpy()[rows] == "upstream"
        segment = np.where(upstream, node - 1, np.minimum(node, len(surges) - 1))
        surge[rows] = surges[segment]
    return surge
