"""An independent grid MILP of the design problem, to judge the optimiser from outside.

Written from the contract (section 5 of the study format, ``docs/file-formats.md``) and
nothing of ``optimiser.milp``: each survey section is cut into ``cells`` of equal
chainage, and also at every chainage where the static head (top water level minus pipe
level, plus the surge allowance) crosses an option's allowable head, so that a class
is admissible on a whole cell exactly when it is admissible at both of its ends (the
pipe level is linear between survey points). Each cell takes exactly one option (a
binary per cell and option), so the energy line, the velocity head on either side of
every cell boundary, the local losses and the outlet head are all linear in the
binaries: the model is exact for the designs it can represent (pieces whose ends lie on
the cells), and every design it returns is judged again by ``check_design``.

Friction comes from the ``fluids`` package (Colebrook, C.F. 1939, as implemented by
``fluids.friction.Colebrook``; a reference library used only in tests) and the solver is
``scipy.optimize.milp``; neither is what the optimiser uses to build its model.

Rules it represents: ``max_changes`` (a binary per cell boundary where the option
changes), ``change_cost`` and ``sizes_downstream = "non-increasing"`` (internal diameter
never grows from one cell to the next). ``min_piece_length_m`` is not represented: use
it only on studies without it. Hazen–Williams and scenario roughness overrides are
handled; the surge method is the allowance of contract section 5.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from fluids.friction import Colebrook
from scipy.optimize import Bounds, LinearConstraint, milp
from scipy.sparse import lil_matrix

from optimiser.model import Design, Piece, Study

G = 9.80665  # standard gravity [m/s^2], contract section 5


@dataclass(frozen=True)
class GridDesign:
    """The independent model's design and its cost as the model counts it."""

    design: Design
    cost: float
    status: str


def _cell_edges(study: Study, cells: int) -> tuple[np.ndarray, np.ndarray]:
    """Cell edges by chainage, and the survey section of each cell."""
    chainage = np.asarray(study.route.chainage_m, dtype=float)
    pipe = np.asarray(study.route.ground_m, dtype=float) - study.route.cover_m
    top = study.source.top_water_level_m + study.surge_allowance_m
    levels = sorted({top - o.allowable_head_m for o in study.catalogue})
    edges: list[float] = []
    section: list[int] = []
    for s in range(len(chainage) - 1):
        a, b = chainage[s], chainage[s + 1]
        cuts = set(np.linspace(a, b, cells + 1)[:-1].tolist())
        for level in levels:  # where the pipe level crosses a class's limit
            low, high = sorted((pipe[s], pipe[s + 1]))
            if low < level < high:
                t = (level - pipe[s]) / (pipe[s + 1] - pipe[s])
                cuts.add(a + t * (b - a))
        for cut in sorted(cuts):
            edges.append(cut)
            section.append(s)
    edges.append(float(chainage[-1]))
    return np.array(edges), np.array(section)


def _gradient(study: Study, flow: float, option, roughness_mm: float) -> float:
    """Friction gradient [m/m] of one option at one flow (contract section 5)."""
    d = option.internal_diameter_m
    if study.friction.value == "hazen-williams":
        return 10.67 * flow ** 1.852 / (option.hazen_williams_c ** 1.852 * d ** 4.8704)
    velocity = flow / (math.pi * d * d / 4)
    reynolds = velocity * d / study.kinematic_viscosity_m2_s
    factor = 64 / reynolds if reynolds < 2000 else Colebrook(reynolds, roughness_mm / 1000 / d)
    return factor / d * velocity ** 2 / (2 * G)


@dataclass
class _Arrays:
    """Per cell, option and scenario: loss along the cell, velocity head, velocity."""

    loss: np.ndarray
    head: np.ndarray
    velocity: np.ndarray


def _arrays(study: Study, edges: np.ndarray, section: np.ndarray) -> _Arrays:
    route = study.route
    chainage = np.asarray(route.chainage_m, dtype=float)
    pipe = np.asarray(route.ground_m, dtype=float) - route.cover_m
    dx = np.diff(chainage)
    slope = np.sqrt(dx ** 2 + np.diff(pipe) ** 2) if route.slope_length else dx
    cell_length = slope[section] * np.diff(edges) / dx[section]
    options = list(study.catalogue)
    shape = (len(section), len(options), len(study.scenarios))
    loss, head, velocity = np.zeros(shape), np.zeros(shape), np.zeros(shape)
    for k, scenario in enumerate(study.scenarios):
        for c, s in enumerate(section):
            start = chainage[s]
            flow = scenario.outlet_flow_m3_s + scenario.offtake_factor * sum(
                o.flow_m3_s for o in study.offtakes if o.chainage_m > start + 1e-6)
            for j, option in enumerate(options):
                rough = float(scenario.effective_roughness_mm(np.array([option.roughness_mm]))[0])
                v = flow / (math.pi * option.internal_diameter_m ** 2 / 4)
                h = v * v / (2 * G)
                loss[c, j, k] = (_gradient(study, flow, option, rough) * cell_length[c]
                                 + study.local_k_per_km * cell_length[c] / 1000 * h)
                head[c, j, k] = h
                velocity[c, j, k] = v
    return _Arrays(loss, head, velocity)


def _admissible(study: Study, edges: np.ndarray, arrays: _Arrays) -> np.ndarray:
    route = study.route
    pipe_at = np.interp(edges, route.chainage_m, np.asarray(route.ground_m) - route.cover_m)
    lowest = np.minimum(pipe_at[:-1], pipe_at[1:])
    static = study.source.top_water_level_m - lowest + study.surge_allowance_m
    allowable = np.array([o.allowable_head_m for o in study.catalogue])
    ok = static[:, None] <= allowable[None, :] + 1e-9
    rules = study.rules
    for k, scenario in enumerate(study.scenarios):
        if scenario.velocity_limits:
            v = arrays.velocity[:, :, k]
            ok &= (v >= rules.velocity_min_m_s - 1e-12) & (v <= rules.velocity_max_m_s + 1e-12)
    return ok


def _node_terms(study: Study, edges: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Point-loss K and minimum pressure [m] at every cell edge."""
    k_at = np.zeros(len(edges))
    for fitting in study.fittings:
        k_at[int(np.argmin(np.abs(edges - fitting.chainage_m)))] += fitting.k
    minimum = np.full(len(edges), study.min_pressure_m)
    overrides: dict[int, float] = {}  # an offtake's own minimum replaces the route's
    for offtake in study.offtakes:
        if offtake.min_pressure_m is not None:
            i = int(np.argmin(np.abs(edges - offtake.chainage_m)))
            overrides[i] = max(overrides.get(i, -math.inf), offtake.min_pressure_m)
    for i, limit in overrides.items():
        minimum[i] = limit
    return k_at, minimum


def solve_grid(study: Study, cells: int = 4, time_limit_s: float = 60.0) -> GridDesign | None:
    """The cheapest design of the grid model, or None when it has none."""
    edges, section = _cell_edges(study, cells)
    arrays = _arrays(study, edges, section)
    ok = _admissible(study, edges, arrays)
    n_cells, n_options, _n_scenarios = arrays.loss.shape
    k_at, minimum = _node_terms(study, edges)
    pipe_at = np.interp(edges, study.route.chainage_m,
                        np.asarray(study.route.ground_m) - study.route.cover_m)
    n_y = n_cells * n_options
    n_z = n_cells - 1
    n = n_y + n_z

    def y(c: int, j: int) -> int:
        return c * n_options + j

    factor = np.array([study.costs.factor(study.route.zones[s]) for s in section])
    cost = np.array([o.cost_per_m for o in study.catalogue])
    chainage = np.asarray(study.route.chainage_m, dtype=float)
    pipe = np.asarray(study.route.ground_m, dtype=float) - study.route.cover_m
    dx = np.diff(chainage)
    slope = np.sqrt(dx ** 2 + np.diff(pipe) ** 2) if study.route.slope_length else dx
    cell_length = slope[section] * np.diff(edges) / dx[section]
    objective = np.zeros(n)
    objective[:n_y] = (cell_length[:, None] * factor[:, None] * cost[None, :]).ravel()
    objective[n_y:] = study.costs.change_cost
    rows: list[tuple[dict[int, float], float, float]] = []
    for c in range(n_cells):  # one option per cell
        rows.append(({y(c, j): 1.0 for j in range(n_options)}, 1.0, 1.0))
    _change_rows(study, rows, y, n_cells, n_options, n_y)
    _energy_rows(study, rows, y, arrays, k_at, minimum, pipe_at)
    matrix = lil_matrix((len(rows), n))
    lower, upper = np.empty(len(rows)), np.empty(len(rows))
    for r, (coefficients, lo, hi) in enumerate(rows):
        for column, value in coefficients.items():
            matrix[r, column] += value
        lower[r], upper[r] = lo, hi
    upper_bounds = np.ones(n)
    upper_bounds[:n_y] = ok.ravel().astype(float)
    result = milp(objective, integrality=np.ones(n),
                  bounds=Bounds(np.zeros(n), upper_bounds),
                  constraints=LinearConstraint(matrix.tocsr(), lower, upper),
                  options={"time_limit": time_limit_s, "mip_rel_gap": 1e-7})
    if result.x is None:
        return None
    choice = result.x[:n_y].reshape(n_cells, n_options).argmax(axis=1)
    return GridDesign(_design(study, edges, choice), float(result.fun), str(result.message))


def _change_rows(study: Study, rows: list, y, n_cells: int, n_options: int, n_y: int) -> None:
    diameters = [o.internal_diameter_mm for o in study.catalogue]
    for b in range(n_cells - 1):  # z_b >= y[b, j] - y[b + 1, j]
        for j in range(n_options):
            rows.append(({n_y + b: 1.0, y(b, j): -1.0, y(b + 1, j): 1.0}, 0.0, math.inf))
        if study.rules.sizes_non_increasing:
            coefficients = {y(b, j): diameters[j] for j in range(n_options)}
            for j in range(n_options):
                coefficients[y(b + 1, j)] = coefficients.get(y(b + 1, j), 0.0) - diameters[j]
            rows.append((coefficients, 0.0, math.inf))
    if study.rules.max_changes is not None:
        rows.append(({n_y + b: 1.0 for b in range(n_cells - 1)}, 0.0,
                     float(study.rules.max_changes)))


def _energy_rows(study: Study, rows: list, y, arrays: _Arrays, k_at: np.ndarray,
                 minimum: np.ndarray, pipe_at: np.ndarray) -> None:
    """Pressure on both sides of every cell edge, and the outlet head, per scenario."""
    n_cells, n_options, _ = arrays.loss.shape
    for k, scenario in enumerate(study.scenarios):
        head = arrays.head[:, :, k]
        drop: dict[int, float] = {}  # source level minus energy, as coefficients

        def add(terms: dict[int, float], c: int, values: np.ndarray, sign: float = 1.0
                ) -> dict[int, float]:
            out = dict(terms)
            for j in range(n_options):
                out[y(c, j)] = out.get(y(c, j), 0.0) + sign * values[j]
            return out

        source = scenario.source_level_m
        for c in range(n_cells):
            start_k = k_at[c] + (study.source.entrance_k if c == 0 else 0.0)
            drop = add(drop, c, start_k * head[c])
            # downstream side of edge c: source - drop - head(c) - pipe >= minimum
            rows.append((add({key: -v for key, v in drop.items()}, c, head[c], -1.0),
                         minimum[c] + pipe_at[c] - source, math.inf))
            drop = add(drop, c, arrays.loss[c, :, k])
            # upstream side of edge c + 1
            rows.append((add({key: -v for key, v in drop.items()}, c, head[c], -1.0),
                         minimum[c + 1] + pipe_at[c + 1] - source, math.inf))
        last = n_cells - 1
        end = add(drop, last, k_at[-1] * head[last])
        rows.append((add({key: -v for key, v in end.items()}, last, head[last], -1.0),
                     minimum[-1] + pipe_at[-1] - source, math.inf))
        outlet = add(end, last, study.outlet.exit_k * head[last])
        rows.append(({key: -v for key, v in outlet.items()},
                     study.outlet.required_head_m - source, math.inf))


def _design(study: Study, edges: np.ndarray, choice: np.ndarray) -> Design:
    options = list(study.catalogue)
    pieces: list[Piece] = []
    start = 0
    for c in range(1, len(choice) + 1):
        if c == len(choice) or choice[c] != choice[start]:
            pieces.append(Piece(float(edges[start]), float(edges[c]), options[choice[start]]))
            start = c
    return Design(tuple(pieces))
