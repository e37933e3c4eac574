"""The split-pipe programme, with the rules as mixed-integer constraints.

The model is written as arrays (:mod:`optimiser.milp.matrix`) and solved by HiGHS or CBC
(:mod:`optimiser.milp.solvers`).

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

Left out because another option does at least as well (see
:func:`optimiser.milp.data.dominated_options`, applied by the optimiser before any
model is built): options dominated wherever they are admissible. Replacing each such
option by its dominator keeps every design of this model a design of it, at no more
cost, so the optimum is the same.

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

Reach models (:mod:`optimiser.milp.reduce`) use the same code on merged sections:
``free_order`` reaches replace the staircases by binaries that pick the first and the
last piece among the options used (any order, no check point inside), with an
indicator that counts an A-B-A arrangement as two changes, and ``chainage_per_share_m``
rounds a share's chainage up for the minimum piece length; both make the reach model a
relaxation of this one.

Rules in the integer programme: ``y`` is binary in every section; staircases ``CF``
(first piece) and ``CL`` (last piece) are exact given ``y`` (``y <= CF``, increments of
``CF`` only where ``y = 1``); a use indicator set to 1 over a zero length ("spurious")
can only overstate the velocity head at a section end, and leaves the change count, the
piece lengths and the size order of the merged design correct.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from optimiser.milp.data import ProblemData
from optimiser.milp.matrix import Affine, LinearModel, Term, var

MARGIN_M = 1e-5
"""Safety margin [m] (0.01 mm) on every pressure and on the outlet head."""
LENGTH_MARGIN_M = 1e-3
"""Safety margin [m] on the minimum piece length."""

WarmStart = dict[tuple[str, int, int], float]
"""Values of ``x`` and ``y`` by (kind, section, option), from a design (a warm start)."""


def rules_active(data: ProblemData) -> bool:
    """True if any rule of contract section 1 [rules]/[costs] constrains the design."""
    study = data.study
    rules = study.rules
    return bool(rules.min_piece_length_m > 0 or rules.max_changes is not None
                or rules.sizes_non_increasing or study.costs.change_cost > 0)


@dataclass
class Formulation:
    """A built model and the columns of its decision variables."""

    model: LinearModel
    data: ProblemData
    allowed: np.ndarray
    with_rules: bool
    relaxed: bool
    x: dict[tuple[int, int], int] = field(default_factory=dict)
    y: dict[tuple[int, int], int] = field(default_factory=dict)
    picks: dict[tuple[str, int, int], int] = field(default_factory=dict)
    """First ("first") and last ("last") piece indicators of free-order reaches."""
    extra_changes: dict[int, int] = field(default_factory=dict)
    """Indicators of a free-order reach laid A B A (one change more than its uses), by
    reach."""
    objective_offset: float = 0.0
    """Constant to add to the solver's objective and bound (the -1 of changes)."""
    tiebreak_max: float = 0.0
    """Largest value the tie-break term can take (to turn the objective into a bound)."""
    n_binaries: int = 0
    values: np.ndarray | None = None
    """Column values of the last solution (set by the solver)."""
    pressure_rows: list[tuple[int, str, int, int]] = field(default_factory=list)
    """(row, side, scenario, index) of every pressure and outlet row: side "down"
    (downstream side of node index), "up" (upstream side of node index), "inside"
    (a boundary inside section index) or "outlet" (index = n)."""
    row_duals: np.ndarray | None = None
    """Row duals of the last solution of a linear programme (HiGHS only), else None."""
    column_duals: np.ndarray | None = None
    """Reduced costs of the last solution of a linear programme (HiGHS only)."""

    def fractions(self) -> np.ndarray:
        """Solved fractions x[s, j] as an (n, m) array (clipped to [0, 1])."""
        out = np.zeros((self.data.n_sections, self.data.n_options))
        if self.values is None:
            return out
        for (s, j), column in self.x.items():
            out[s, j] = min(max(float(self.values[column]), 0.0), 1.0)
        return out

    def arrangement(self, s: int, share: np.ndarray) -> list[tuple[int, float]]:
        """(option, share) pairs of section (or reach) s in the order the solution lays
        them: the section order, or for a free-order reach its chosen first piece, the
        others in the section order, then its chosen last piece."""
        order = [j for j in self.data.order if share[j] > 0]
        if self.values is None or ("first", s, order[0]) not in self.picks:
            return [(j, float(share[j])) for j in order]
        values = self.values

        def chosen(end: str) -> int:
            return max(order, key=lambda j: values[self.picks[end, s, j]])

        first, last = chosen("first"), chosen("last")
        middle = [(j, float(share[j])) for j in order if j not in (first, last)]
        if last != first:
            return [(first, float(share[first])), *middle, (last, float(share[last]))]
        # Laid A B A: the model does not say how A's share splits between its parts;
        # A goes first (the check and the rules judge the result, and a design that
        # misses them is re-optimised on the full model).
        return [(first, float(share[first])), *middle]

    def warm_columns(self, warm: WarmStart) -> tuple[np.ndarray, np.ndarray]:
        """Column indices and values of a warm start (entries the model lacks dropped)."""
        columns: list[int] = []
        values: list[float] = []
        for (kind, s, j), value in warm.items():
            if kind in ("first", "last"):
                column = self.picks.get((kind, s, j))
            else:
                column = (self.x if kind == "x" else self.y).get((s, j))
            if column is not None:
                columns.append(column)
                values.append(value)
        return np.array(columns, dtype=np.int32), np.array(values, dtype=float)


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
    model = LinearModel()
    form = Formulation(model, data, mask, with_rules, relaxed)
    integer = not relaxed
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

    free = np.zeros(n, dtype=bool) if data.free_order is None else data.free_order
    # Fractions, use binaries, first/last staircases.
    first_frac: list[dict[int, Affine]] = [{} for _ in range(n)]
    last_frac: list[dict[int, Affine]] = [{} for _ in range(n)]
    cl_cols: list[list[int]] = [[] for _ in range(n)]
    span = max(n - 1, 1)
    for s in range(n):
        order = orders[s]
        if not order:
            raise ValueError(f"section {s} has no admissible option")
        xs = []
        for j in order:
            cost = float(data.section_cost[s, j])
            if tiebreak > 0:
                weight = tiebreak * data.chainage_length_m[s] * (1.0 - s / span)
                form.tiebreak_max += weight * (m - 1)
                cost += weight * data.rank[j]
            column = model.add_column(0.0, 1.0, cost)
            form.x[s, j] = column
            xs.append(column)
        model.equal(Affine([(c, 1.0) for c in xs]), 1.0)
        if not (need_first[s] or need_last[s]):
            continue
        ys = []
        for j, xc in zip(order, xs, strict=True):
            yc = model.add_column(0.0, 1.0, integer=integer)
            form.y[s, j] = yc
            ys.append(yc)
            model.add_row([(xc, 1.0), (yc, -1.0)], upper=0.0)
        count = len(order)
        if with_rules and free[s]:
            # A merged reach with no check point inside: its options may be laid in any
            # order, so the first and the last piece are chosen freely among those used.
            ends: list[dict[int, Affine]] = []
            for end in ("first", "last"):
                picks = [model.add_column(0.0, 1.0, integer=integer) for _ in order]
                form.picks.update({(end, s, j): c for j, c in zip(order, picks, strict=True)})
                model.equal(Affine([(c, 1.0) for c in picks]), 1.0)
                for pick, yc in zip(picks, ys, strict=True):
                    model.add_row([(pick, 1.0), (yc, -1.0)], upper=0.0)
                ends.append({j: var(c) for j, c in zip(order, picks, strict=True)})
            first_frac[s], last_frac[s] = ends
            if count > 1:
                # The same option first and last with another in between (A B A) has
                # one change more than the uses count: an indicator adds it.
                # both[a] >= first[a] + last[a] - 1 ("a is first and last"), and for
                # every b: again >= sum of both[a] over a != b, + y[b] - 1. Exact at
                # integer picks (the cost pushes both[] to its lower bound), 2 rows per
                # option, and at least as tight as the rows
                # again >= first[a] + last[a] + y[b] - 2 for every pair a != b.
                again = model.add_column(0.0, 1.0, integer=integer)
                form.extra_changes[s] = again
                both = [model.add_column(0.0, 1.0) for _ in order]
                for j, column in zip(order, both, strict=True):
                    model.add_row([(column, 1.0), (form.picks["first", s, j], -1.0),
                                   (form.picks["last", s, j], -1.0)], lower=-1.0)
                for b, yc in enumerate(ys):
                    others = [(column, 1.0) for a, column in enumerate(both) if a != b]
                    model.add_row([*others, (yc, 1.0), (again, -1.0)], upper=1.0)
            continue
        if need_first[s]:
            cf = [model.add_column(1.0 if t == count - 1 else 0.0, 1.0) for t in range(count)]
            for t in range(count):
                previous: list[Term] = [(cf[t - 1], -1.0)] if t > 0 else []
                # increment of CF only where the option is used; CF covers every use
                model.add_row([(cf[t], 1.0), *previous, (ys[t], -1.0)], upper=0.0)
                model.add_row([(ys[t], 1.0), (cf[t], -1.0)], upper=0.0)
                if t > 0:
                    model.add_row([(cf[t], 1.0), (cf[t - 1], -1.0)], lower=0.0)
                first_frac[s][order[t]] = Affine([(cf[t], 1.0), *previous])
        if need_last[s]:
            cl = [model.add_column(1.0 if t == 0 else 0.0, 1.0) for t in range(count)]
            cl_cols[s] = cl
            for t in range(count):
                following: list[Term] = [(cl[t + 1], -1.0)] if t + 1 < count else []
                model.add_row([(cl[t], 1.0), *following, (ys[t], -1.0)], upper=0.0)
                model.add_row([(ys[t], 1.0), (cl[t], -1.0)], upper=0.0)
                if t + 1 < count:
                    model.add_row([(cl[t], 1.0), (cl[t + 1], -1.0)], lower=0.0)
                last_frac[s][order[t]] = Affine([(cl[t], 1.0), *following])

    def head_of(k: int, s: int, fractions: dict[int, Affine]) -> Affine:
        expr = Affine()
        for j, frac in fractions.items():
            expr.add_in_place(frac, float(heads[k, s, j]))
        return expr

    # Energy. The running energy is a list of terms plus a constant; a column e[k, s]
    # replaces it where a constraint needs it (see need_end), which keeps rows short.
    need_end = np.zeros(n, dtype=bool)
    need_end[n - 1] = True
    for s in range(n - 1):
        need_end[s] = (not data.screened_up[s + 1] or not data.screened_down[s + 1]
                       or need_interior[s + 1] or k_node[s + 1] > 0)
    margin = MARGIN_M
    route_min = study.min_pressure_m
    for k in scenarios:
        running = Affine([], float(data.source_level_m[k]))
        for s in range(n):
            order = orders[s]
            k_start = k_node[s] + (entrance_k if s == 0 else 0.0)
            head_first = head_of(k, s, last_frac[s]) if last_frac[s] else None
            if k_start > 0:
                assert head_first is not None
                running.add_in_place(head_first, -float(k_start))
            if not data.screened_down[s] or need_interior[s]:
                start = Affine(list(running.terms), running.constant)
                if not data.screened_down[s]:
                    assert head_first is not None
                    row = model.at_least(start - head_first, float(
                        pipe[s] + data.node_min_pressure_m[s] + margin))
                    form.pressure_rows.append((row, "down", k, s))
                if need_interior[s]:
                    drop = pipe[s + 1] - pipe[s]
                    cumulative: list[Term] = []
                    cl = cl_cols[s]
                    for t, j in enumerate(order):
                        row = model.at_least(
                            start + Affine([*cumulative, (cl[t], -float(heads[k, s, j]))]),
                            float(pipe[s] + route_min + margin))
                        form.pressure_rows.append((row, "inside", k, s))
                        cumulative.append((form.x[s, j],
                                           -float(data.section_loss_m[k, s, j] + drop)))
            running.terms.extend((form.x[s, j], -float(data.section_loss_m[k, s, j]))
                                 for j in order)
            if need_end[s]:
                column = model.add_column(-np.inf, np.inf)
                model.equal(var(column) - running, 0.0)
                running = var(column)
            if not data.screened_up[s + 1]:
                row = model.at_least(running - head_of(k, s, last_frac[s]), float(
                    pipe[s + 1] + data.node_min_pressure_m[s + 1] + margin))
                form.pressure_rows.append((row, "up", k, s + 1))
        last = n - 1
        head_last = head_of(k, last, last_frac[last]) if last_frac[last] else None
        outlet = Affine(list(running.terms), running.constant)
        if exit_k + k_node[n] > 0:
            assert head_last is not None
            outlet.add_in_place(head_last, -float(exit_k + k_node[n]))
        row = model.at_least(outlet, float(study.outlet.required_head_m + margin))
        form.pressure_rows.append((row, "outlet", k, n))
        if not data.screened_down[n] and k_node[n] > 0:
            assert head_last is not None
            row = model.at_least(running - head_last.scaled(float(k_node[n] + 1.0)),
                                 float(pipe[n] + data.node_min_pressure_m[n] + margin))
            form.pressure_rows.append((row, "down", k, n))

    change_terms: list[Term] = []
    if with_rules:
        _add_rules(form, orders, first_frac, last_frac, change_terms)
    # changes = uses - continuations - 1: the constant stays outside the solver's
    # objective and is added back on reading.
    if study.costs.change_cost:
        model.add_cost((c, v * study.costs.change_cost) for c, v in change_terms)
    form.objective_offset = -study.costs.change_cost if change_terms else 0.0
    form.n_binaries = 0 if relaxed else len(form.y)
    return form


def _add_rules(form: Formulation, orders: list[list[int]],
               first_frac: list[dict[int, Affine]], last_frac: list[dict[int, Affine]],
               change_terms: list[Term]) -> None:
    """Merged-design rules: changes, change cost, minimum piece length, sizes downstream.

    ``cont[s, j]`` (node s between sections s-1 and s) is at most "j is last in s-1" and
    "j is first in s": the piece of j carries on across the node. Merged pieces =
    uses - continuations, changes = pieces - 1. ``acc[s, j]`` is the chainage of the
    open piece of j at the end of section s, capped at the minimum length L: a piece
    that closes in s (used, not carried into s+1) must reach L with its length in s plus
    what it carried in.
    """
    data = form.data
    model = form.model
    study = data.study
    rules = study.rules
    n = data.n_sections
    total = float(data.node_chainage_m[-1] - data.node_chainage_m[0])
    min_length = min(rules.min_piece_length_m, total)
    if 0 < min_length < total:
        min_length = min(min_length + LENGTH_MARGIN_M, total)
    cont: dict[tuple[int, int], int] = {}
    for s in range(1, n):
        for j in orders[s]:
            if j in last_frac[s - 1]:
                column = model.add_column(0.0, 1.0)
                cont[s, j] = column
                model.at_most(var(column) - last_frac[s - 1][j], 0.0)
                model.at_most(var(column) - first_frac[s][j], 0.0)
    change_terms.extend((column, 1.0) for column in form.y.values())
    change_terms.extend((column, -1.0) for column in cont.values())
    change_terms.extend((column, 1.0) for column in form.extra_changes.values())
    if rules.max_changes is not None:
        model.add_row(change_terms, upper=float(rules.max_changes + 1))
    if rules.sizes_non_increasing:
        diameter = study.catalogue.internal_diameter_mm
        for s in range(1, n):
            expr = Affine()
            for j, frac in last_frac[s - 1].items():
                expr.add_in_place(frac, float(diameter[j]))
            for j, frac in first_frac[s].items():
                expr.add_in_place(frac, -float(diameter[j]))
            model.at_least(expr, 0.0)
    if min_length > 0:
        acc: dict[tuple[int, int], int] = {}
        for s in range(n):
            length = float(data.chainage_length_m[s] if data.chainage_per_share_m is None
                           else data.chainage_per_share_m[s])
            for j in orders[s]:
                inflow = None
                if (s, j) in cont:
                    inflow = model.add_column(0.0, min_length)
                    model.add_row([(inflow, 1.0), (acc[s - 1, j], -1.0)], upper=0.0)
                    model.add_row([(inflow, 1.0), (cont[s, j], -min_length)], upper=0.0)
                own: list[Term] = [(form.x[s, j], length)]
                if inflow is not None:
                    own.append((inflow, 1.0))
                if s + 1 < n:
                    column = model.add_column(0.0, min_length)
                    acc[s, j] = column
                    model.add_row([(column, 1.0)] + [(c, -v) for c, v in own], upper=0.0)
                closing: list[Term] = [(form.y[s, j], -min_length)]
                if (s + 1, j) in cont:
                    closing.append((cont[s + 1, j], min_length))
                model.add_row(own + closing, lower=0.0)
