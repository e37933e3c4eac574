"""The check's energy lines of a fixed design on a tree, for many roughness samples at once.

The single route's Monte Carlo runs on the linear check (:mod:`optimiser.analysis.
linear_check`), which follows one chain from the source. A scheme is a tree, so here
every line of it (:class:`optimiser.analysis.scheme_check.SchemeHydraulics`: the trunk,
then every branch, parents first) is evaluated for S samples at once with the same
functions the check calls (:func:`optimiser.hydraulics.gradeline.energy_along_chain`,
:func:`optimiser.hydraulics.gradeline.outlet_energy_m`, friction from
:func:`optimiser.analysis.flows.gradient_with_roughness`), the samples along a second
axis: Bernoulli's equation with losses (Streeter, V.L. & Wylie, E.B. (1985), Fluid
Mechanics, ch. 3), Darcy--Weisbach with Colebrook--White (Colebrook, C.F. (1939),
Turbulent flow in pipes, J. Inst. Civil Eng. 11). Flows come from the check's flow rule
(:func:`optimiser.analysis.flows.line_flows_m3_s`) and do not depend on roughness.

The check points are both sides of every node, as in
:meth:`optimiser.analysis.design_hydraulics.DesignHydraulics.point_arrays` (which keeps
one where the two agree; the least margin is the same). A branch starts from its
parent's energy arriving at the junction node, less its junction loss.

Capacity of the trunk's delivery point (every branch at its stated flow): more trunk
delivery changes only the trunk's flows; every line below a junction of the trunk then
moves with the energy arriving there, by the same amount at every one of its points. So
each subtree hanging from the trunk is kept as one offset (its least margin less the
trunk's energy arriving at its junction) and the root search re-evaluates the trunk
only (the vectorised search of :mod:`optimiser.analysis.linear_check`).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from optimiser.analysis.design_hydraulics import DesignHydraulics
from optimiser.analysis.flows import gradient_with_roughness, line_flows_m3_s, nearest_node
from optimiser.analysis.linear_check import bracketed_root
from optimiser.analysis.scheme_check import SchemeHydraulics
from optimiser.analysis.tanks import inflow_energy_m
from optimiser.hydraulics.gradeline import energy_along_chain, outlet_energy_m
from optimiser.hydraulics.local_losses import velocity_head_m, velocity_m_s
from optimiser.model import Scenario
from optimiser.model.lines import Line


@dataclass(frozen=True)
class LineSamples:
    """One line's energy line for S samples: energies (n, S) and margins (S,) [m]."""

    energy_end_m: np.ndarray
    outlet_margin_m: np.ndarray
    least_pressure_margin_m: np.ndarray
    transient_margin_m: np.ndarray | None = None
    """Least pressure head less its pipe's surge head less the down-surge limit, when
    :func:`line_samples` is given the surge head of each segment."""
    largest_pressure_m: np.ndarray | None = None
    """(line's pieces, S): the largest pressure head in each piece of the line, when
    :func:`line_samples` is asked for it."""
    fixed_margin_m: np.ndarray | None = None
    """(S,) with break-pressure tanks on the line: the least margin at and below its
    first tank (points, later tanks' inflow, the delivery), which the energy arriving
    at the line's start does not move; None without tanks."""
    moving_margin_m: np.ndarray | None = None
    """(S,) with tanks: the least margin above the first tank, its inflow included."""
    moving_transient_m: np.ndarray | None = None
    """(S,) with tanks and a down-surge limit: the transient margin above the first tank."""
    largest_below_m: np.ndarray | None = None
    """(line's pieces, S) with tanks and ``by_piece``: the largest pressure head in each
    piece at and below the first tank (-inf where a piece has none); then
    ``largest_pressure_m`` holds the part above it."""
    fixed_transient_m: np.ndarray | None = None
    """(S,) with tanks and a down-surge limit: the transient margin at and below the
    first tank (+inf where the line has no point there)."""

    @property
    def margin_that_moves_m(self) -> np.ndarray:
        """Least margin that moves with the energy arriving at the line's start."""
        if self.moving_margin_m is not None:
            return self.moving_margin_m
        return np.minimum(self.outlet_margin_m, self.least_pressure_margin_m)

    @property
    def margin_that_stays_m(self) -> np.ndarray:
        """Least margin the energy arriving at the line's start does not move."""
        if self.fixed_margin_m is not None:
            return self.fixed_margin_m
        return np.full(np.shape(self.outlet_margin_m), np.inf)

    def energy_arriving_m(self, part: DesignHydraulics, chainage_m: float) -> np.ndarray:
        """Energy (S,) arriving at the node at ``chainage_m``, before a fitting there
        (:meth:`DesignHydraulics.energy_arriving_m`)."""
        node = nearest_node(part.grid.node_chainage_m, chainage_m)
        if node == 0:
            raise ValueError(f"a junction at {chainage_m} m is not inside line "
                             f"'{part.line.name}'")
        return self.energy_end_m[node - 1]


def segment_materials(part: DesignHydraulics) -> list[str]:
    """Material of each grid segment of the line."""
    pieces = part.design.pieces
    return [pieces[part.piece_index[p]].option.material for p in part.grid.segment_piece]


def line_samples(part: DesignHydraulics, start_energy_m: np.ndarray, flow_m3_s: np.ndarray,
                 roughness_mm: np.ndarray, extra_flow_m3_s: np.ndarray | None = None,
                 surge_head_m: np.ndarray | None = None,
                 transient_limit_m: float | None = None, by_piece: bool = False
                 ) -> LineSamples:
    """The line's energy line and margins for S samples.

    ``start_energy_m`` (S,) is the energy arriving at its start (source level, or the
    parent's energy at the junction) before its start loss; ``flow_m3_s`` (n,) per
    segment, plus ``extra_flow_m3_s`` (S,) in every segment of a sample when given;
    ``roughness_mm`` (S, n) as the scenario uses it (the same in segments of one
    piece). With
    ``surge_head_m`` per segment and ``transient_limit_m``, the down-surge margin too;
    with ``by_piece``, the largest pressure head in each of the line's pieces.
    """
    line = part.line
    base = np.asarray(flow_m3_s, dtype=float)
    flow = base[None, :] if extra_flow_m3_s is None else base[None, :] + \
        np.asarray(extra_flow_m3_s, dtype=float)[:, None]
    # Segments of one piece carrying one flow have one gradient: solve Colebrook-White
    # once per such group (the same inputs, so the same numbers).
    _, first, group = np.unique(np.column_stack([base, part.grid.segment_piece]), axis=0,
                                return_index=True, return_inverse=True)
    gradient = gradient_with_roughness(part.study, flow[:, first], part.diameter_m[first],
                                       roughness_mm[:, first],
                                       part.hazen_williams_c[first])[:, group.reshape(-1)]
    velocity = velocity_m_s(flow, part.diameter_m).T  # (n, S) or (n, 1)
    start, end = _energy_line(part, np.asarray(start_energy_m, dtype=float), gradient.T,
                              velocity)
    head = velocity_head_m(velocity)
    after, outlet = outlet_energy_m(end[-1], head[-1], part.node_point_k[-1], line.exit_k)
    level = part.grid.node_pipe_level_m[:, None]
    # Pressure heads: upstream side of nodes 1..n, downstream side of nodes 0..n-1, and
    # past the last node's fitting.
    pressure = np.vstack([end - head - level[1:], start - head - level[:-1],
                          (after - head[-1] - level[-1])[None, :]])
    minimum = part.node_min_pressure_m
    required = np.concatenate([minimum[1:], minimum[:-1], minimum[-1:]])[:, None]
    transient = None
    if surge_head_m is not None and transient_limit_m is not None:
        surge = np.concatenate([surge_head_m, surge_head_m, surge_head_m[-1:]])[:, None]
        transient = pressure - surge - transient_limit_m
    outlet_margin = np.broadcast_to(outlet - line.required_head_m, end.shape[1:])
    if not part.tanks.any:
        largest = _largest_by_piece(part, pressure) if by_piece else None
        return LineSamples(end, outlet_margin, (pressure - required).min(axis=0),
                           None if transient is None else transient.min(axis=0), largest)
    return _with_tanks(part, end, velocity, pressure, pressure - required, outlet_margin,
                       transient, by_piece)


def _energy_line(part: DesignHydraulics, start_energy_m: np.ndarray, gradient: np.ndarray,
                 velocity: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Energy (n, S) at the start and end of every segment: one chain from the line's
    start, or with break-pressure tanks a chain from each tank's water level with its
    outlet loss (contract section 8, as :func:`optimiser.analysis.tanks.energy_with_tanks`
    for one sample)."""
    line, length = part.line, part.grid.segment_length_m[:, None]
    n = gradient.shape[0]
    count = np.broadcast_shapes(gradient.shape[1:], np.shape(start_energy_m),
                                velocity.shape[1:])[0]
    cuts = part.tanks.node.tolist()
    levels = [start_energy_m, *(np.full(count, level) for level in part.tanks.level_m)]
    start, end = np.empty((n, count)), np.empty((n, count))
    for first, stop, level in zip([0, *cuts], [*cuts, n], levels, strict=True):
        k_entry = line.start_k if first == 0 else part.study.tank_rules.outlet_k
        start[first:stop], end[first:stop] = energy_along_chain(
            level, k_entry, length[first:stop], gradient[first:stop], line.local_k_per_km,
            velocity[first:stop], part.node_point_k[first:stop + 1])
    return start, end


def _with_tanks(part: DesignHydraulics, end: np.ndarray, velocity: np.ndarray,
                pressure: np.ndarray, margin: np.ndarray, outlet_margin: np.ndarray,
                transient: np.ndarray | None, by_piece: bool) -> LineSamples:
    """The line's margins with its tanks: every tank must fill (arriving energy less the
    inlet loss at least its level), and the margins split at the first tank into those
    that move with the energy at the line's start and those that do not (``pressure``,
    ``margin`` and ``transient`` are the rows of :func:`line_samples`)."""
    inflow = inflow_energy_m(end, velocity, part.study.tank_rules.inlet_k, part.tanks) \
        - part.tanks.level_m[:, None]
    segment = part.grid.segment_piece.size
    row_segment = np.concatenate([np.arange(segment), np.arange(segment), [segment - 1]])
    above = row_segment < part.tanks.node[0]
    moving = np.minimum(margin[above].min(axis=0), inflow[0])
    fixed = np.minimum(margin[~above].min(axis=0), outlet_margin)
    if inflow.shape[0] > 1:
        fixed = np.minimum(fixed, inflow[1:].min(axis=0))
    least = np.minimum(margin.min(axis=0), inflow.min(axis=0))
    return LineSamples(
        end, outlet_margin, least, None if transient is None else transient.min(axis=0),
        _largest_by_piece(part, pressure, above) if by_piece else None, fixed, moving,
        None if transient is None else transient[above].min(axis=0),
        _largest_by_piece(part, pressure, ~above) if by_piece else None,
        None if transient is None else transient[~above].min(axis=0, initial=np.inf))


def _largest_by_piece(part: DesignHydraulics, pressure: np.ndarray,
                      rows: np.ndarray | None = None) -> np.ndarray:
    """(line's pieces, S) largest of the pressure rows of :func:`line_samples` (each row
    on the segment it belongs to, only the ``rows`` marked when given) within each
    piece; -inf where a piece has no such row."""
    piece = part.grid.segment_piece
    row_piece = np.concatenate([piece, piece, piece[-1:]])
    keep = np.ones(len(row_piece), dtype=bool) if rows is None else rows
    largest = np.full((len(part.piece_index), pressure.shape[1]), -np.inf)
    for p in range(len(part.piece_index)):
        chosen = (row_piece == p) & keep
        if chosen.any():
            largest[p] = pressure[chosen].max(axis=0)
    return largest


@dataclass(frozen=True)
class TreeSamples:
    """Every line of a scheme in one scenario for S samples (stated flows)."""

    hydraulics: SchemeHydraulics
    scenario: Scenario
    source_level_m: np.ndarray  # (S,)
    roughness_mm: dict[str, np.ndarray]  # per line, (S, n) as the scenario uses it
    lines: dict[str, LineSamples]

    @property
    def outlet_margins_m(self) -> np.ndarray:
        """(S, lines) delivery margin of every line, in the study's order of lines."""
        return np.column_stack([self.lines[line.name].outlet_margin_m
                                for line in self.hydraulics.lines])

    @property
    def least_pressure_margin_m(self) -> np.ndarray:
        return np.min([state.least_pressure_margin_m for state in self.lines.values()],
                      axis=0)

    def trunk_capacity_m3_s(self, tolerance_m3_s: float = 1e-9) -> np.ndarray:
        """Largest delivery (S,) of the trunk with every limit of the tree met, every
        branch at its stated flow (module docstring); NaN where even none fails."""
        hydraulics, scenario = self.hydraulics, self.scenario
        trunk = hydraulics.trunk
        inflows = hydraulics.inflows_m3_s(scenario)
        others = line_flows_m3_s(hydraulics.study, scenario, trunk.line, trunk.grid.start_m,
                                 0.0, inflows)
        offsets = self._subtree_offsets()
        count = self.source_level_m.shape[0]

        def margin(q: np.ndarray, rows: np.ndarray) -> np.ndarray:
            state = line_samples(trunk, self.source_level_m[rows], others,
                                 self.roughness_mm[trunk.line.name][rows], q)
            least = np.minimum(state.outlet_margin_m, state.least_pressure_margin_m)
            for chainage, offset, fixed in offsets:
                least = np.minimum(least, np.minimum(
                    state.energy_arriving_m(trunk, chainage) + offset[rows], fixed[rows]))
            return least

        result = np.full(count, np.nan)
        alive = np.flatnonzero(margin(np.zeros(count), np.arange(count)) >= 0.0)
        if alive.size:
            result[alive] = bracketed_root(lambda q: margin(q, alive), alive.size,
                                            tolerance_m3_s)
        return result

    def _subtree_offsets(self) -> list[tuple[float, np.ndarray, np.ndarray]]:
        """Per branch leaving the trunk: its junction chainage, the least margin of the
        lines below it that moves with the trunk's energy arriving there, less that
        energy, and the least margin that does not (below a break-pressure tank), (S,)."""
        hydraulics = self.hydraulics
        trunk = hydraulics.trunk
        moves = _moving_lines(hydraulics)
        offsets = []
        for line in hydraulics.lines[1:]:
            if line.parent != trunk.line.name:
                continue
            below = [other.name for other in hydraulics.lines
                     if line.name in hydraulics.path(other.name)]
            moving = np.min([self.lines[n].margin_that_moves_m if moves[n] else
                             np.full(self.source_level_m.shape, np.inf) for n in below], axis=0)
            fixed = np.min([self.lines[n].margin_that_stays_m if moves[n] else
                            np.minimum(self.lines[n].outlet_margin_m,
                                       self.lines[n].least_pressure_margin_m)
                            for n in below], axis=0)
            arriving = self.lines[trunk.line.name].energy_arriving_m(trunk,
                                                                     line.at_chainage_m)
            offsets.append((line.at_chainage_m, moving - arriving, fixed))
        return offsets


def _moving_lines(hydraulics: SchemeHydraulics) -> dict[str, bool]:
    """Whether each branch's energy moves with its trunk junction's: its parent is the
    trunk, or its parent moves and it leaves the parent above the parent's first tank."""
    moves: dict[str, bool] = {}
    trunk = hydraulics.trunk.line.name
    for line in hydraulics.lines[1:]:
        parent = line.parent
        assert parent is not None
        tanks = hydraulics.parts[parent].tanks
        above = not tanks.any or line.at_chainage_m < tanks.tanks[0].chainage_m
        moves[line.name] = parent == trunk or (moves.get(parent, False) and above)
    return moves


def tree_samples(hydraulics: SchemeHydraulics, scenario: Scenario, materials: list[str],
                 aged_mm: np.ndarray, surge_by_piece: np.ndarray | None = None,
                 by_piece: bool = False,
                 surge_by_segment: Mapping[str, np.ndarray] | None = None) -> TreeSamples:
    """Every line of ``hydraulics``' study in ``scenario`` for the samples of
    ``aged_mm`` (S, materials): the roughness of each material, which the scenario's
    own rule turns into the value it uses (:meth:`Scenario.effective_roughness_mm`).
    With ``surge_by_piece`` (by index in the design), or ``surge_by_segment`` (each
    line's surge by grid segment, as the check judges each side of a tank), and a
    down-surge limit in the study, each line's transient margin too; with ``by_piece``
    the largest pressure head in each piece (:attr:`LineSamples.largest_pressure_m`)."""
    study = hydraulics.study
    column = {material: i for i, material in enumerate(materials)}
    count = aged_mm.shape[0]
    source = np.full(count, scenario.source_level_m)
    inflows = hydraulics.inflows_m3_s(scenario)
    limit = study.surge.min_transient_pressure_m
    roughness: dict[str, np.ndarray] = {}
    states: dict[str, LineSamples] = {}
    for line in hydraulics.lines:
        part = hydraulics.parts[line.name]
        used = aged_mm[:, [column[m] for m in segment_materials(part)]]
        roughness[line.name] = scenario.effective_roughness_mm(used)
        start = source if line.parent is None else _arriving(hydraulics, states, line)
        flow = line_flows_m3_s(study, scenario, line, part.grid.start_m,
                               inflows_m3_s=inflows)
        surge = None
        if surge_by_segment is not None:
            surge = surge_by_segment[line.name]
        elif surge_by_piece is not None:
            surge = surge_by_piece[part.piece_index[part.grid.segment_piece]]
        states[line.name] = line_samples(part, start, flow, roughness[line.name], None,
                                         surge, limit, by_piece)
    return TreeSamples(hydraulics, scenario, source, roughness, states)


def _arriving(hydraulics: SchemeHydraulics, states: dict[str, LineSamples], line: Line
              ) -> np.ndarray:
    parent = line.parent
    assert parent is not None
    return states[parent].energy_arriving_m(hydraulics.parts[parent], line.at_chainage_m)
