"""Break-pressure tanks in the check (contract section 8).

An open tank with a float valve on the line: the water arriving gives up its head, and
both the energy line and the static line restart at the tank's water level WL.

- Leaving: E = WL - K_out V^2/2g, V of the pipe leaving (plus a fitting's K at the same
  node, which like every point loss takes the pipe just downstream of it).
- Arriving: E - K_in V^2/2g >= WL, V of the pipe arriving; else the tank cannot fill at
  that scenario's flows (violation ``tank_inflow``).
- Static: below a tank, down to the next one, the static head is WL - pipe level.

These are the energy equation with a free surface at the tank (Bernoulli with losses,
Streeter, V.L. & Wylie, E.B. (1985), Fluid Mechanics, ch. 3): the tank's water surface
is at atmospheric pressure and negligible velocity, so the energy there is its level;
the inlet and outlet losses are the usual K V^2/2g point losses with the contract's K.
Like the rest of the check, this reads only the study and the design.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from optimiser.hydraulics.gradeline import energy_along_chain
from optimiser.hydraulics.local_losses import velocity_head_m
from optimiser.model import TRUNK, BreakPressureTank, Design, Study

SAME_POINT_M = 1e-6
"""A tank is at a grid node within this distance [m]."""


def tanks_of(study: Study, design: Design, branch: str = TRUNK
             ) -> tuple[BreakPressureTank, ...]:
    """The study's own tanks and the design's new ones on ``branch``, by chainage."""
    found = [t for t in (*study.tanks, *design.tanks) if t.branch == branch]
    return tuple(sorted(found, key=lambda t: t.chainage_m))


def tank_cost(study: Study, tank: BreakPressureTank) -> float:
    """Capital cost of a tank: the study's price of a new tank, nothing for its own."""
    if not tank.new:
        return 0.0
    return float(study.tank_rules.cost or 0.0)


@dataclass(frozen=True)
class TankNodes:
    """The tanks of a design on the analysis grid, in route order."""

    tanks: tuple[BreakPressureTank, ...]
    node: np.ndarray
    """Grid node index of each tank."""
    level_m: np.ndarray
    """Water level of each tank [m]."""

    @property
    def any(self) -> bool:
        return len(self.tanks) > 0


def tank_nodes(tanks: tuple[BreakPressureTank, ...], node_chainage_m: np.ndarray
               ) -> TankNodes:
    """Locate every tank at its grid node (the grid has a node at every tank)."""
    index = [int(np.argmin(np.abs(node_chainage_m - t.chainage_m))) for t in tanks]
    for tank, i in zip(tanks, index, strict=True):
        if abs(node_chainage_m[i] - tank.chainage_m) > SAME_POINT_M:
            raise ValueError(f"no grid node at the tank at {tank.chainage_m:g} m")
    return TankNodes(tanks, np.array(index, dtype=int),
                     np.array([t.water_level_m for t in tanks], dtype=float))


def static_levels_m(top_water_level_m: float, n_segments: int, at: TankNodes) -> np.ndarray:
    """(n,) the static line over each segment: the source's top water level, and below
    each tank (from its node down to the next tank) the tank's water level."""
    level = np.full(n_segments, float(top_water_level_m))
    for node, water in zip(at.node.tolist(), at.level_m.tolist(), strict=True):
        level[node:] = water
    return level


def energy_with_tanks(source_level_m: float, entrance_k: float, outlet_k: float,
                      segment_length_m: np.ndarray, gradient: np.ndarray,
                      local_k_per_km: float, velocity_m_s: np.ndarray,
                      node_point_k: np.ndarray, at: TankNodes
                      ) -> tuple[np.ndarray, np.ndarray]:
    """Energy [m] at the start and end of every segment, restarting at every tank.

    Each reach between tanks is a chain of its own (:func:`energy_along_chain`): from the
    source level with the entrance loss, or from a tank's water level with its outlet
    loss ``outlet_k`` (a fitting at the tank's node adds its K, as at the source).
    """
    starts = [0, *at.node.tolist()]
    ends = [*at.node.tolist(), len(segment_length_m)]
    levels = [float(source_level_m), *at.level_m.tolist()]
    start = np.empty(len(segment_length_m))
    end = np.empty(len(segment_length_m))
    for first, stop, level in zip(starts, ends, levels, strict=True):
        k_entry = entrance_k if first == 0 else outlet_k
        start[first:stop], end[first:stop] = energy_along_chain(
            level, k_entry, segment_length_m[first:stop], gradient[first:stop],
            local_k_per_km, velocity_m_s[first:stop], node_point_k[first:stop + 1])
    return start, end


def inflow_energy_m(energy_end_m: np.ndarray, velocity_m_s: np.ndarray, inlet_k: float,
                    at: TankNodes) -> np.ndarray:
    """Energy left to fill each tank [m]: the energy arriving (end of the segment above
    its node) minus ``inlet_k`` V^2/2g of that segment; it must reach the water level."""
    above = at.node - 1
    return energy_end_m[above] - inlet_k * velocity_head_m(velocity_m_s[above])


def piece_static_heads(piece_of_segment: np.ndarray, n_pieces: int,
                       static_level_m: np.ndarray, start_level_m: np.ndarray,
                       end_level_m: np.ndarray, start_m: np.ndarray, end_m: np.ndarray
                       ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Largest static head of each piece [m] over its segments (static line of the
    segment minus the lower of its end pipe levels), with the pipe level and chainage
    where it occurs: a piece that runs through a tank is judged on both sides of it."""
    low_is_start = start_level_m <= end_level_m
    low_level = np.where(low_is_start, start_level_m, end_level_m)
    low_at = np.where(low_is_start, start_m, end_m)
    head = static_level_m - low_level
    heads = np.empty(n_pieces)
    levels = np.empty(n_pieces)
    chainages = np.empty(n_pieces)
    for piece in range(n_pieces):
        segments = np.flatnonzero(piece_of_segment == piece)
        worst = segments[int(np.argmax(head[segments]))]
        heads[piece], levels[piece], chainages[piece] = head[worst], low_level[worst], \
            low_at[worst]
    return heads, levels, chainages


def tank_table_rows(study: Study, tanks: tuple[BreakPressureTank, ...]) -> list[dict]:
    """The rows of ``break_pressure_tanks.csv`` and of the JSON's ``break_pressure_tanks``
    (contract section 8)."""
    return [{"branch": t.branch, "chainage_m": t.chainage_m, "water_level_m": t.water_level_m,
             "new": t.new, "cost": tank_cost(study, t), "label": t.label} for t in tanks]


def tanks_short(at: TankNodes, inflow_energy: np.ndarray | None, tolerance_m: float
                ) -> list[tuple[BreakPressureTank, float]]:
    """Tanks the line cannot fill in one scenario, with their energy left to fill them
    (arriving energy after the inlet loss below the water level by over ``tolerance_m``)."""
    if inflow_energy is None:
        return []
    return [(tank, float(energy))
            for tank, energy in zip(at.tanks, inflow_energy.tolist(), strict=True)
            if energy < tank.water_level_m - tolerance_m]
