"""The split-pipe programme in pulp, with the rules as mixed-integer constraints.

Model (what "cheapest" is proven over)
--------------------------------------
A design gives each survey section ``s`` fractions ``x[s, j] >= 0`` (summing to 1) of its
chainage to catalogue options ``j``; inside a section the pieces are laid in descending
internal diameter (the *section order*), so boundaries sit at the start of the section
plus the cumulative fractions times its chainage length. Cost and head loss are linear
in ``x`` because each section's flow is known (Karmeli, Gadish & Meyers 1968). The
model admits an option in a section only if its pressure class takes the static head at
the section's lowest pipe level (plus the surge allowance) and, in every scenario with
velocity limits, its velocity lies in the window.

Exact, in every scenario:

- friction (Darcy-Weisbach/Colebrook-White or Hazen-Williams, computed once per
  section and option by the same code as the check) and the per-km allowance, both
  linear in pipe length;
- exit and last-node fitting losses with the velocity head of the last piece:
  binaries ``y[s, j]`` (option j is used in s) drive a staircase per section,
  ``CL[s, t]`` = "an option at position >= t of the section order is used", which picks
  out the last piece (the smallest pipe of the section) exactly;
- pressure at the upstream side of every survey node, and at every piece boundary
  inside a section, with the velocity head of the pipe on that side: inside a section
  the boundary after the first t positions has energy and pipe level linear in ``x``
  and the downstream-side velocity head is ``h[t] * CL[s, t]``, which is the tighter
  side because velocity head grows along the section order;
- the outlet head after the exit loss;
- the rules on the merged design (adjacent identical options joined): ``max_changes``,
  ``change_cost`` per change, ``min_piece_length_m`` (chainage, carried across sections
  by an accumulator capped at the minimum) and ``sizes_downstream = "non-increasing"``.

Left out because they provably cannot bind (see :func:`optimiser.milp.data._screen`):
pressure constraints at points whose pipe is so far below the lowest energy any feasible
design can have there that no velocity head can bring them to their minimum.

Conservative (may exclude a design the check would pass, never the reverse):

- at the start of a section (entrance loss, a fitting's loss, the downstream side of a
  node) the velocity head is that of the section's smallest pipe, i.e. of its last
  piece; exact when the section holds one option, an overestimate when it is split
  (its first piece is its largest). An exact first-piece indicator would let the
  optimiser lay millimetre slivers of a larger pipe after every fitting to shave the
  loss, which the formulas allow but nobody would build;
- admissibility of an option is decided for the whole survey section at its lowest
  pipe level, so a class change never falls strictly inside a section;
- within a section the pieces follow the section order (descending internal diameter),
  so an increase of size downstream happens only at a survey node;
- inside a section, boundary points are held to the route's ``min_pressure_m`` even
  where a boundary falls on a survey node whose offtake has a lower minimum of its own;
- every pressure, the outlet head and the minimum piece length carry a small safety
  margin (``MARGIN_M``, ``LENGTH_MARGIN_M``) so that solver tolerances and rounding of
  the returned chainages never make the verified design fail the check.

The returned design is therefore the cheapest, within the reported gap, of all designs
that follow the section order, take classes per survey section and are judged with the
conservative velocity heads above; it passes the check, which judges it exactly. When
the run stops on the time limit the status is ``feasible`` and the gap says how far from
proven it is.

Rules in the integer programme: ``y`` is binary in every section; staircases ``CF``
(first piece) and ``CL`` (last piece) are exact given ``y`` (``y <= CF``, increments of
``CF`` only where ``y = 1``); a use indicator set to 1 over a zero length ("spurious")
can only overstate the velocity head at a section end, and leaves the change count, the
piece lengths and the size order of the merged design correct.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pulp

from optimiser.milp.data import ProblemData

MARGIN_M = 1e-5
"""Safety margin [m] (0.01 mm) on every pressure and on the outlet head."""
LENGTH_MARGIN_M = 1e-3
"""Safety margin [m] on the minimum piece length."""


def rules_active(data: ProblemData) -> bool:
    """True if any rule of contract section 1 [rules]/[costs] constrains the design."""
    study = data.study
    rules = study.rules
    return bool(rules.min_piece_length_m > 0 or rules.max_changes is not None
                or rules.sizes_non_increasing or study.costs.change_cost > 0)


@dataclass
class Formulation:
    """A built pulp problem and handles on its decision variables."""

    problem: pulp.LpProblem
    data: ProblemData
    allowed: np.ndarray
    with_rules: bool
    relaxed: bool
    x: dict[tuple[int, int], pulp.LpVariable] = field(default_factory=dict)
    y: dict[tuple[int, int], pulp.LpVariable] = field(default_factory=dict)
    objective_offset: float = 0.0
    """Constant to add to the solver's objective and bound (the -1 of changes)."""
    tiebreak_max: float = 0.0
    """Largest value the tie-break term can take (to turn the objective into a bound)."""
    n_binaries: int = 0

    def fractions(self) -> np.ndarray:
        """Solved fractions x[s, j] as an (n, m) array (clipped to [0, 1])."""
        out = np.zeros((self.data.n_sections, self.data.n_options))
        for (s, j), var in self.x.items():
            value = var.varValue
            out[s, j] = 0.0 if value is None else min(max(value, 0.0), 1.0)
        return out

    def used(self) -> dict[str, float]:
        """Values of the binaries y by name (for a warm start of a larger model)."""
        return {var.name: (var.varValue or 0.0) for var in self.y.values()}


def _expr(terms: list[tuple[pulp.LpVariable, float]], constant: float = 0.0
          ) -> pulp.LpAffineExpression:
    """An affine expression; repeated variables are summed (pulp would keep the last)."""
    coefficients: dict[pulp.LpVariable, float] = {}
    for var, coefficient in terms:
        coefficients[var] = coefficients.get(var, 0.0) + coefficient
    return pulp.LpAffineExpression(list(coefficients.items()), constant=constant)


def build(data: ProblemData, *, allowed: np.ndarray | None = None, with_rules: bool = True,
          relaxed: bool = False, tiebreak: float = 0.0) -> Formulation:
    """Build the model.

    ``allowed`` (n, m) restricts options further than admissibility (a reduced model
    whose designs are all designs of the full model). ``with_rules=False`` drops the
    rules (the relaxation whose value is the reported LP bound, with ``relaxed=True``).
    ``relaxed=True`` makes the binaries continuous. ``tiebreak > 0`` adds a tiny cost
    that prefers larger diameters upstream; it only breaks ties between designs of equal
    cost (the LP is highly degenerate) and is accounted for in ``tiebreak_max``.
    """
    study = data.study
    n, m = data.n_sections, data.n_options
    mask = data.admissible if allowed is None else data.admissible & allowed
    form = Formulation(pulp.LpProblem("pipe_design", pulp.LpMinimize), data, mask,
                       with_rules, relaxed)
    problem = form.problem
    category = pulp.LpContinuous if relaxed else pulp.LpBinary
    orders = [data.section_order(s, mask) for s in range(n)]
    scenarios = range(data.n_scenarios)
    heads = data.velocity_head_m
    pipe = data.node_pipe_level_m
    k_node = data.node_point_k
    entrance_k = study.source.entrance_k
    exit_k = study.outlet.exit_k

    # Which sections need first/last-piece indicators (exact velocity heads).
    need_first = np.zeros(n, dtype=bool)  # first-piece staircase: the rules only
    need_last = np.zeros(n, dtype=bool)
    need_interior = np.zeros(n, dtype=bool)
    for s in range(n):
        # The velocity head at the start of a section (after the entrance or a fitting,
        # downstream side of a node) is taken as that of its smallest pipe: the CL
        # staircase serves both ends.
        need_last[s] = (not data.screened_up[s + 1] or k_node[s] > 0
                        or not data.screened_down[s] or (s == 0 and entrance_k > 0))
        need_interior[s] = not data.screened_interior[s] and len(orders[s]) > 1
    need_last[n - 1] |= (exit_k + k_node[n] > 0) or not data.screened_down[n]
    if with_rules:
        need_first[:] = True
        need_last[:] = True
    need_last |= need_interior

    def add(expr: pulp.LpAffineExpression, sense: int, rhs: float, name: str) -> None:
        problem.addConstraint(pulp.LpConstraint(expr, sense, rhs=rhs, name=name))

    # Fractions, use binaries, first/last staircases.
    first_frac: list[dict[int, pulp.LpAffineExpression]] = [{} for _ in range(n)]
    last_frac: list[dict[int, pulp.LpAffineExpression]] = [{} for _ in range(n)]
    cl_vars: list[list[pulp.LpVariable]] = [[] for _ in range(n)]
    objective: list[tuple[pulp.LpVariable, float]] = []
    span = max(n - 1, 1)
    for s in range(n):
        order = orders[s]
        if not order:
            raise ValueError(f"section {s} has no admissible option")
        xs = []
        for j in order:
            var = problem.add_variable(f"x_{s}_{j}", 0.0, 1.0)
            form.x[s, j] = var
            xs.append(var)
            cost = float(data.section_cost[s, j])
            if tiebreak > 0:
                weight = tiebreak * data.chainage_length_m[s] * (1.0 - s / span) \
                    * data.rank[j]
                form.tiebreak_max += tiebreak * data.chainage_length_m[s] * (1.0 - s / span) \
                    * (m - 1)
                cost += weight
            objective.append((var, cost))
        add(_expr([(v, 1.0) for v in xs]), pulp.LpConstraintEQ, 1.0, f"sum_{s}")
        if not (need_first[s] or need_last[s]):
            continue
        ys = []
        for j, xv in zip(order, xs, strict=True):
            yv = problem.add_variable(f"y_{s}_{j}", 0.0, 1.0, cat=category)
            form.y[s, j] = yv
            ys.append(yv)
            add(_expr([(xv, 1.0), (yv, -1.0)]), pulp.LpConstraintLE, 0.0, f"xy_{s}_{j}")
        count = len(order)
        if need_first[s]:
            cf = [problem.add_variable(f"cf_{s}_{t}", 0.0, 1.0) for t in range(count)]
            cf[-1].lowBound = 1.0
            for t in range(count):
                previous = [(cf[t - 1], -1.0)] if t > 0 else []
                # increment of CF only where the option is used; CF covers every use
                add(_expr([(cf[t], 1.0), *previous, (ys[t], -1.0)]), pulp.LpConstraintLE,
                    0.0, f"cfu_{s}_{t}")
                add(_expr([(ys[t], 1.0), (cf[t], -1.0)]), pulp.LpConstraintLE, 0.0,
                    f"cfy_{s}_{t}")
                if t > 0:
                    add(_expr([(cf[t], 1.0), (cf[t - 1], -1.0)]), pulp.LpConstraintGE, 0.0,
                        f"cfm_{s}_{t}")
                first_frac[s][order[t]] = _expr([(cf[t], 1.0), *previous])
        if need_last[s]:
            cl = [problem.add_variable(f"cl_{s}_{t}", 0.0, 1.0) for t in range(count)]
            cl[0].lowBound = 1.0
            cl_vars[s] = cl
            for t in range(count):
                following = [(cl[t + 1], -1.0)] if t + 1 < count else []
                add(_expr([(cl[t], 1.0), *following, (ys[t], -1.0)]), pulp.LpConstraintLE,
                    0.0, f"clu_{s}_{t}")
                add(_expr([(ys[t], 1.0), (cl[t], -1.0)]), pulp.LpConstraintLE, 0.0,
                    f"cly_{s}_{t}")
                if t + 1 < count:
                    add(_expr([(cl[t], 1.0), (cl[t + 1], -1.0)]), pulp.LpConstraintGE, 0.0,
                        f"clm_{s}_{t}")
                last_frac[s][order[t]] = _expr([(cl[t], 1.0), *following])

    def head_of(k: int, s: int, fractions: dict[int, pulp.LpAffineExpression]
                ) -> pulp.LpAffineExpression:
        expr = pulp.LpAffineExpression()
        for j, frac in fractions.items():
            expr.addInPlace(frac * float(heads[k, s, j]))
        return expr

    # Energy. E_end[k][s] is an expression: a variable where a constraint needs it,
    # else the running sum from the last such variable (keeps rows short).
    need_end = np.zeros(n, dtype=bool)
    need_end[n - 1] = True
    for s in range(n - 1):
        need_end[s] = (not data.screened_up[s + 1] or not data.screened_down[s + 1]
                       or need_interior[s + 1] or k_node[s + 1] > 0)
    margin = MARGIN_M
    route_min = study.min_pressure_m
    for k in scenarios:
        # Running energy as a list of terms plus a constant; turned into an expression
        # only where a constraint needs it (then it is short, see need_end).
        terms: list[tuple[pulp.LpVariable, float]] = []
        constant = float(data.source_level_m[k])
        for s in range(n):
            order = orders[s]
            k_start = k_node[s] + (entrance_k if s == 0 else 0.0)
            head_first = head_of(k, s, last_frac[s]) if last_frac[s] else None
            if k_start > 0:
                assert head_first is not None
                terms.extend((v, -float(k_start) * c) for v, c in head_first.items())
            if not data.screened_down[s] or need_interior[s]:
                start = _expr(terms, constant)
                if not data.screened_down[s]:
                    assert head_first is not None
                    add(start - head_first, pulp.LpConstraintGE,
                        float(pipe[s] + data.node_min_pressure_m[s] + margin), f"pd_{k}_{s}")
                if need_interior[s]:
                    drop = pipe[s + 1] - pipe[s]
                    cumulative: list[tuple[pulp.LpVariable, float]] = []
                    cl = cl_vars[s]
                    for t, j in enumerate(order):
                        expr = start + _expr(cumulative)
                        expr.addInPlace(_expr([(cl[t], -float(heads[k, s, j]))]))
                        add(expr, pulp.LpConstraintGE, float(pipe[s] + route_min + margin),
                            f"pi_{k}_{s}_{t}")
                        cumulative.append((form.x[s, j],
                                           -float(data.section_loss_m[k, s, j] + drop)))
            terms.extend((form.x[s, j], -float(data.section_loss_m[k, s, j])) for j in order)
            if need_end[s]:
                var = problem.add_variable(f"e_{k}_{s}")
                add(_expr([(var, 1.0)]) - _expr(terms, constant), pulp.LpConstraintEQ, 0.0,
                    f"e_{k}_{s}")
                terms = [(var, 1.0)]
                constant = 0.0
            if not data.screened_up[s + 1]:
                add(_expr(terms, constant) - head_of(k, s, last_frac[s]), pulp.LpConstraintGE,
                    float(pipe[s + 1] + data.node_min_pressure_m[s + 1] + margin),
                    f"pu_{k}_{s + 1}")
        last = n - 1
        running = _expr(terms, constant)
        head_last = head_of(k, last, last_frac[last]) if last_frac[last] else None
        outlet = running.copy()
        if exit_k + k_node[n] > 0:
            assert head_last is not None
            outlet.addInPlace(head_last * (-float(exit_k + k_node[n])))
        add(outlet, pulp.LpConstraintGE, float(study.outlet.required_head_m + margin),
            f"outlet_{k}")
        if not data.screened_down[n] and k_node[n] > 0:
            assert head_last is not None
            add(running - head_last * float(k_node[n] + 1.0), pulp.LpConstraintGE,
                float(pipe[n] + data.node_min_pressure_m[n] + margin), f"pd_{k}_{n}")

    change_terms: list[tuple[pulp.LpVariable, float]] = []
    if with_rules:
        _add_rules(form, orders, first_frac, last_frac, change_terms, add)
    # changes = uses - continuations - 1: the constant stays outside the solver's
    # objective (solvers disagree on objective constants) and is added back on reading.
    problem.setObjective(_expr(objective + [(v, c * study.costs.change_cost)
                                            for v, c in change_terms]))
    form.objective_offset = -study.costs.change_cost if change_terms else 0.0
    form.n_binaries = 0 if relaxed else len(form.y)
    return form


def _add_rules(form: Formulation, orders: list[list[int]],
               first_frac: list[dict[int, pulp.LpAffineExpression]],
               last_frac: list[dict[int, pulp.LpAffineExpression]],
               change_terms: list[tuple[pulp.LpVariable, float]], add) -> None:
    """Merged-design rules: changes, change cost, minimum piece length, sizes downstream.

    ``cont[s, j]`` (node s between sections s-1 and s) is at most "j is last in s-1" and
    "j is first in s": the piece of j carries on across the node. Merged pieces =
    uses - continuations, changes = pieces - 1. ``acc[s, j]`` is the chainage of the
    open piece of j at the end of section s, capped at the minimum length L: a piece
    that closes in s (used, not carried into s+1) must reach L with its length in s plus
    what it carried in.
    """
    data = form.data
    problem = form.problem
    study = data.study
    rules = study.rules
    n = data.n_sections
    total = float(data.node_chainage_m[-1] - data.node_chainage_m[0])
    min_length = min(rules.min_piece_length_m, total)
    if 0 < min_length < total:
        min_length = min(min_length + LENGTH_MARGIN_M, total)
    cont: dict[tuple[int, int], pulp.LpVariable] = {}
    for s in range(1, n):
        for j in orders[s]:
            if j in last_frac[s - 1]:
                var = problem.add_variable(f"cont_{s}_{j}", 0.0, 1.0)
                cont[s, j] = var
                add(_expr([(var, 1.0)]) - last_frac[s - 1][j], pulp.LpConstraintLE, 0.0,
                    f"contl_{s}_{j}")
                add(_expr([(var, 1.0)]) - first_frac[s][j], pulp.LpConstraintLE, 0.0,
                    f"contf_{s}_{j}")
    for var in form.y.values():
        change_terms.append((var, 1.0))
    for var in cont.values():
        change_terms.append((var, -1.0))
    if rules.max_changes is not None:
        add(_expr(change_terms), pulp.LpConstraintLE, float(rules.max_changes + 1),
            "max_changes")
    if rules.sizes_non_increasing:
        diameter = np.array([o.internal_diameter_mm for o in study.catalogue])
        for s in range(1, n):
            expr = pulp.LpAffineExpression()
            for j, frac in last_frac[s - 1].items():
                expr.addInPlace(frac * float(diameter[j]))
            for j, frac in first_frac[s].items():
                expr.addInPlace(frac * float(-diameter[j]))
            add(expr, pulp.LpConstraintGE, 0.0, f"nonincr_{s}")
    if min_length > 0:
        acc: dict[tuple[int, int], pulp.LpVariable] = {}
        for s in range(n):
            length = float(data.chainage_length_m[s])
            for j in orders[s]:
                inflow = None
                if (s, j) in cont:
                    inflow = problem.add_variable(f"inc_{s}_{j}", 0.0, min_length)
                    add(_expr([(inflow, 1.0), (acc[s - 1, j], -1.0)]), pulp.LpConstraintLE,
                        0.0, f"inca_{s}_{j}")
                    add(_expr([(inflow, 1.0), (cont[s, j], -min_length)]),
                        pulp.LpConstraintLE, 0.0, f"incc_{s}_{j}")
                own = [(form.x[s, j], length)] + ([(inflow, 1.0)] if inflow is not None else [])
                if s + 1 < n:
                    var = problem.add_variable(f"acc_{s}_{j}", 0.0, min_length)
                    acc[s, j] = var
                    add(_expr([(var, 1.0)] + [(v, -c) for v, c in own]),
                        pulp.LpConstraintLE, 0.0, f"acc_{s}_{j}")
                closing = [(form.y[s, j], -min_length)]
                if (s + 1, j) in cont:
                    closing.append((cont[s + 1, j], min_length))
                add(_expr(own + closing), pulp.LpConstraintGE, 0.0, f"minlen_{s}_{j}")
