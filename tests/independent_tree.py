"""An independent linear programme of a branched scheme, to judge the optimiser from outside.

Written from the contract (sections 5 and 7 of the study format, ``docs/file-formats.md``)
and nothing of ``optimiser.milp`` or ``optimiser.analysis``: the flows of every line by
continuity (a line carries its delivery, its offtakes downstream and the inflow of every
branch leaving it downstream), friction from the ``fluids`` package (Colebrook, C.F.
1939, ``fluids.friction.Colebrook``; a reference library used only in tests) or the SI
Hazen-Williams formula, and ``scipy.optimize.linprog`` as the solver.

Variables: the share of each survey section's chainage laid in each option. Cost and
friction (with the per-km allowance) are linear in them (Karmeli, Gadish & Meyers 1968).
It is a relaxation of the design problem, so its optimum is a lower bound:

- the rules are relaxed (no piece count, length or order);
- every point loss (entrance, junction, fitting, exit) and every velocity head in a
  pressure row takes the smallest velocity head of the options admissible there;
- pressure is held only at the survey nodes (both sides);
- a class whose limit is crossed inside a section is held exactly per metre: the pipe
  level is linear along the section, so the parts where each class holds all share the
  section's higher end, and the options whose part is at most a share ``a`` may together
  take at most ``a`` of it.

On a scheme with no local losses and every pressure point far above the pipe (the trees
of ``random_trees.py``), it is the exact optimum without the rules.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from fluids.friction import Colebrook
from scipy.optimize import linprog

from optimiser.model import Design, Study

G = 9.80665  # standard gravity [m/s^2], contract section 5
TRUNK = "main"


@dataclass
class _Line:
    name: str
    parent: str | None
    at_m: float
    chainage: np.ndarray
    pipe: np.ndarray
    slope: np.ndarray
    zone_factor: np.ndarray
    offtakes: tuple
    fittings: tuple
    min_pressure_m: float
    k_per_km: float
    start_k: float
    exit_k: float
    required_m: float
    flow_m3_s: float | None


def _lines(study: Study) -> list[_Line]:
    def make(name, parent, at, route, offtakes, fittings, minimum, k_km, start_k, exit_k,
             required, flow):
        chainage = np.asarray(route.chainage_m, dtype=float)
        pipe = np.asarray(route.ground_m, dtype=float) - route.cover_m
        dx = np.diff(chainage)
        slope = np.sqrt(dx ** 2 + np.diff(pipe) ** 2) if route.slope_length else dx
        zones = np.array([study.costs.zone_factor.get(z, 1.0) if z else 1.0
                          for z in route.zones])
        return _Line(name, parent, at, chainage, pipe, slope, zones, offtakes, fittings,
                     minimum, k_km, start_k, exit_k, required, flow)

    lines = [make(TRUNK, None, 0.0, study.route, study.offtakes, study.fittings,
                  study.min_pressure_m, study.local_k_per_km, study.source.entrance_k,
                  study.outlet.exit_k, study.outlet.required_head_m, None)]
    for b in study.branches:
        lines.append(make(b.name, b.parent, b.at_chainage_m, b.route, b.offtakes, b.fittings,
                          b.min_pressure_m, b.local_k_per_km, b.junction_k, b.exit_k,
                          b.required_head_m, b.flow_m3_s))
    return lines


def _delivery(line: _Line, scenario) -> float:
    if line.flow_m3_s is None:
        return scenario.outlet_flow_m3_s
    return scenario.branch_flow_m3_s(line.name, line.flow_m3_s)


def _inflow_below(lines: list[_Line], line: _Line, scenario, start_m: float) -> float:
    """Flow in the pipe of ``line`` starting at ``start_m`` (continuity)."""
    flow = _delivery(line, scenario)
    flow += scenario.offtake_factor * sum(o.flow_m3_s for o in line.offtakes
                                          if o.chainage_m > start_m + 1e-6)
    for child in lines:
        if child.parent == line.name and child.at_m > start_m + 1e-6:
            flow += _inflow_below(lines, child, scenario, -1.0)
    return flow


def _gradient(study: Study, flow: float, option, scenario) -> float:
    d = option.internal_diameter_m
    if study.friction.value == "hazen-williams":
        return (study.hazen_williams_coefficient * flow ** 1.852
                / (option.hazen_williams_c ** 1.852 * d ** 4.8704))
    rough = float(scenario.effective_roughness_mm(np.array([option.roughness_mm]))[0])
    velocity = flow / (math.pi * d * d / 4)
    reynolds = velocity * d / study.kinematic_viscosity_m2_s
    factor = 64 / reynolds if reynolds < 2000 else Colebrook(reynolds, rough / 1000 / d)
    return factor / d * velocity ** 2 / (2 * G)


@dataclass
class _Sections:
    """Per line: (K, n, m) loss over the whole section and velocity head; (n, m) share
    of the section where the class holds (0: not admissible) and cost."""

    loss: np.ndarray
    head: np.ndarray
    share: np.ndarray
    cost: np.ndarray


def _sections(study: Study, lines: list[_Line], line: _Line) -> _Sections:
    options = list(study.catalogue)
    n, m, k_count = len(line.slope), len(options), len(study.scenarios)
    loss, head = np.zeros((k_count, n, m)), np.zeros((k_count, n, m))
    ok = np.ones((n, m), dtype=bool)
    rules = study.rules
    for k, scenario in enumerate(study.scenarios):
        for s in range(n):
            flow = _inflow_below(lines, line, scenario, line.chainage[s])
            for j, option in enumerate(options):
                v = flow / (math.pi * option.internal_diameter_m ** 2 / 4)
                h = v * v / (2 * G)
                head[k, s, j] = h
                loss[k, s, j] = line.slope[s] * (_gradient(study, flow, option, scenario)
                                                 + line.k_per_km / 1000 * h)
                if scenario.velocity_limits and not (
                        rules.velocity_min_m_s - 1e-12 <= v <= rules.velocity_max_m_s + 1e-12):
                    ok[s, j] = False
    share = np.zeros((n, m))
    top = study.source.top_water_level_m + study.surge_allowance_m
    for s in range(n):
        p0, p1 = line.pipe[s], line.pipe[s + 1]
        for j, option in enumerate(options):
            level = top - option.allowable_head_m  # the class holds where pipe >= level
            if min(p0, p1) >= level - 1e-9:
                share[s, j] = 1.0
            elif max(p0, p1) > level:
                share[s, j] = (max(p0, p1) - level) / abs(p1 - p0)
    share = np.where(ok, share, 0.0)
    price = np.array([o.cost_per_m for o in options])
    cost = (line.slope * line.zone_factor)[:, None] * price[None, :]
    return _Sections(loss, head, share, cost)


class _Program:
    """Rows and columns of the linear programme (dense: the trees are small)."""

    def __init__(self) -> None:
        self.columns: list[tuple[str, int, int]] = []
        self.cost: list[float] = []
        self.upper: list[float] = []
        self.rows: list[tuple[dict[int, float], float]] = []  # sum >= rhs
        self.equal: list[tuple[dict[int, float], float]] = []

    def solve(self) -> tuple[float, np.ndarray] | None:
        n = len(self.columns)

        def dense(rows):
            a = np.zeros((len(rows), n))
            for r, (terms, _) in enumerate(rows):
                for c, v in terms.items():
                    a[r, c] += v
            return a, np.array([rhs for _, rhs in rows])

        a_ge, b_ge = dense(self.rows)
        a_eq, b_eq = dense(self.equal)
        result = linprog(np.array(self.cost), A_ub=-a_ge if len(self.rows) else None,
                         b_ub=-b_ge if len(self.rows) else None, A_eq=a_eq, b_eq=b_eq,
                         bounds=list(zip([0.0] * n, self.upper, strict=True)),
                         method="highs")
        if result.status != 0:
            return None
        return float(result.fun), result.x


def _line_rows(program: _Program, study: Study, line: _Line, data: _Sections,
               start: list[tuple[float, dict[int, float]]]) -> dict[int, list]:
    """Columns and rows of one line fed with ``start`` (energy expression per scenario);
    returns the upstream-side energy at every node, per scenario."""
    n, m = data.share.shape
    cols: dict[tuple[int, int], int] = {}
    for s in range(n):
        for j in range(m):
            if data.share[s, j] > 0:
                cols[s, j] = len(program.columns)
                program.columns.append((line.name, s, j))
                program.cost.append(float(data.cost[s, j]))
                program.upper.append(float(data.share[s, j]))
        program.equal.append(({cols[s, j]: 1.0 for j in range(m) if (s, j) in cols}, 1.0))
        for level in sorted({data.share[s, j] for j in range(m) if (s, j) in cols}):
            if level < 1.0:
                program.rows.append(({cols[s, j]: -1.0 for j in range(m) if (s, j) in cols
                                      and data.share[s, j] <= level}, -level))
    k_at = np.zeros(n + 1)
    for fitting in line.fittings:
        k_at[int(np.argmin(np.abs(line.chainage - fitting.chainage_m)))] += fitting.k
    minimum = np.full(n + 1, line.min_pressure_m)
    for offtake in line.offtakes:
        if offtake.min_pressure_m is not None:
            minimum[int(np.argmin(np.abs(line.chainage - offtake.chainage_m)))] = \
                offtake.min_pressure_m
    energies: dict[int, list] = {}
    for k in range(len(study.scenarios)):
        least = np.array([min((data.head[k, s, j] for j in range(m) if (s, j) in cols),
                              default=0.0) for s in range(n)])
        constant, terms = start[k][0], dict(start[k][1])
        energies.setdefault(0, []).append((constant, dict(terms)))
        for i in range(n + 1):
            if i > 0:
                energies.setdefault(i, []).append((constant, dict(terms)))
                program.rows.append((terms, line.pipe[i] + minimum[i] + least[i - 1]
                                     - constant))
            if i == n:
                program.rows.append((terms, line.required_m + (line.exit_k + k_at[n])
                                     * least[n - 1] - constant))
                break
            constant -= (k_at[i] + (line.start_k if i == 0 else 0.0)) * least[i]
            program.rows.append((dict(terms), line.pipe[i] + minimum[i] + least[i] - constant))
            terms = dict(terms)
            for j in range(m):
                if (i, j) in cols:
                    terms[cols[i, j]] = terms.get(cols[i, j], 0.0) - data.loss[k, i, j]
    return energies


def tree_lower_bound(study: Study) -> float | None:
    """The least cost of the relaxation (rules relaxed) of the whole scheme; None if
    infeasible."""
    lines = _lines(study)
    program = _Program()
    starts = {TRUNK: [(s.source_level_m, {}) for s in study.scenarios]}
    for line in lines:
        energies = _line_rows(program, study, line, _sections(study, lines, line),
                              starts[line.name])
        for child in lines:
            if child.parent == line.name:
                node = int(np.argmin(np.abs(line.chainage - child.at_m)))
                starts[child.name] = energies[node]
    solved = program.solve()
    return None if solved is None else solved[0]


def line_lower_bound(study: Study, name: str, junction_energy_m: list[float],
                     needs_m: dict[str, list[float]]) -> float | None:
    """Least cost of line ``name`` alone (rules relaxed) fed with ``junction_energy_m``
    per scenario, with the energy at each child's junction at least ``needs_m[child]``."""
    lines = _lines(study)
    line = next(x for x in lines if x.name == name)
    program = _Program()
    energies = _line_rows(program, study, line, _sections(study, lines, line),
                          [(e, {}) for e in junction_energy_m])
    for child in lines:
        if child.parent == name:
            node = int(np.argmin(np.abs(line.chainage - child.at_m)))
            for k, (constant, terms) in enumerate(energies[node]):
                program.rows.append((terms, needs_m[child.name][k] - constant))
    solved = program.solve()
    return None if solved is None else solved[0]


def design_line_energies(study: Study, design: Design) -> dict[str, np.ndarray]:
    """(K, n+1) upstream-side energy at every node of every line of ``design``, from the
    contract's energy line (exact velocity heads of the pieces), and the (K,) margin of
    its delivery (energy after the exit loss minus the required head) as column n+1."""
    lines = _lines(study)
    options = list(study.catalogue)
    out: dict[str, np.ndarray] = {}
    starts = {TRUNK: np.array([s.source_level_m for s in study.scenarios])}
    for line in lines:
        pieces = [p for p in design.pieces if p.branch == line.name]
        n = len(line.slope)
        result = np.zeros((len(study.scenarios), n + 2))
        k_at = np.zeros(n + 1)
        for fitting in line.fittings:
            k_at[int(np.argmin(np.abs(line.chainage - fitting.chainage_m)))] += fitting.k
        for k, scenario in enumerate(study.scenarios):
            energy = starts[line.name][k]
            for s in range(n):
                flow = _inflow_below(lines, line, scenario, line.chainage[s])
                a, b = line.chainage[s], line.chainage[s + 1]
                result[k, s] = energy
                inside = [p for p in pieces if p.to_m > a + 1e-9 and p.from_m < b - 1e-9]
                head = [(flow / (math.pi * p.option.internal_diameter_m ** 2 / 4)) ** 2 / (2 * G)
                        for p in inside]
                energy -= (k_at[s] + (line.start_k if s == 0 else 0.0)) * head[0]
                for p, h in zip(inside, head, strict=True):
                    length = (min(p.to_m, b) - max(p.from_m, a)) / (b - a) * line.slope[s]
                    j = options.index(p.option)
                    energy -= length * (_gradient(study, flow, options[j], scenario)
                                        + line.k_per_km / 1000 * h)
                last_head = head[-1]
            result[k, n] = energy
            result[k, n + 1] = energy - (line.exit_k + k_at[n]) * last_head - line.required_m
        out[line.name] = result
        for child in lines:
            if child.parent == line.name:
                node = int(np.argmin(np.abs(line.chainage - child.at_m)))
                starts[child.name] = result[:, node]
    return out


def subtree_margin_m(study: Study, energies: dict[str, np.ndarray], name: str) -> np.ndarray:
    """(K,) least delivery margin over line ``name`` and every line below it."""
    margin = energies[name][:, -1].copy()
    for b in study.branches:
        if b.parent == name:
            margin = np.minimum(margin, subtree_margin_m(study, energies, b.name))
    return margin
