"""Columns of the model, section by section: fractions, use binaries, first/last pieces.

Part of :mod:`optimiser.milp.formulation` (whose docstring states the model). Per
section ``s``, in this order: the fractions ``x[s, j]`` of its admissible (and allowed)
options, summing to 1; where a velocity head or the rules need them, the use binaries
``y[s, j] >= x[s, j]`` and either the free-order picks of a merged reach (first and last
piece chosen among the options used, with the A B A indicator) or the staircases ``CF``
(first piece) and ``CL`` (last piece) over the section order. The order of the columns
and rows is part of the model handed to the solver: keep it.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from optimiser.milp.built_model import Formulation
from optimiser.milp.matrix import Affine, Term, var
from optimiser.milp.wave_classes import window_sections


@dataclass
class SectionColumns:
    """What the rows of the model need from the columns of every section."""

    orders: list[list[int]]
    """Admissible and allowed options of each section, in the section order."""
    first_frac: list[dict[int, Affine]]
    """Per section: option -> expression equal to 1 if it is the first piece."""
    last_frac: list[dict[int, Affine]]
    """Per section: option -> expression equal to 1 if it is the last piece."""
    cl_cols: list[list[int]]
    """Per section: the columns of its ``CL`` staircase (empty if none)."""
    need_interior: np.ndarray
    """(n,) sections whose inner piece boundaries carry pressure rows."""


def add_section_columns(form: Formulation, tiebreak: float) -> SectionColumns:
    """Add every section's columns and their linking rows to ``form``."""
    data = form.data
    n = data.n_sections
    orders = [data.section_order(s, form.allowed) for s in range(n)]
    need_first, need_last, need_interior = _needs(form, orders)
    columns = SectionColumns(orders, [{} for _ in range(n)], [{} for _ in range(n)],
                             [[] for _ in range(n)], need_interior)
    free = np.zeros(n, dtype=bool) if data.free_order is None else data.free_order
    # A merged reach inside a conflict window picks its first and last piece even with
    # the rules relaxed: the rows of the window read them (milp/wave_rows.py).
    window = window_sections(data.wave_conflicts, n)
    for s in range(n):
        order = orders[s]
        if not order:
            raise ValueError(f"section {s} has no admissible option")
        xs = _fractions(form, s, order, tiebreak)
        if not (need_first[s] or need_last[s]):
            continue
        ys = _uses(form, s, order, xs)
        if form.any_order or (free[s] and (form.with_rules or window[s])):
            _free_order_picks(form, columns, s, ys)
            continue
        if need_first[s]:
            _first_staircase(form, columns, s, ys)
        if need_last[s]:
            _last_staircase(form, columns, s, ys)
    return columns


def _needs(form: Formulation, orders: list[list[int]]
           ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Sections that need first-piece and last-piece indicators (exact velocity heads),
    and sections with pressure rows at inner piece boundaries."""
    data = form.data
    n = data.n_sections
    k_node = data.node_point_k
    study = data.study
    need_first = np.zeros(n, dtype=bool)  # first-piece staircase: the rules only
    need_last = np.zeros(n, dtype=bool)
    need_interior = np.zeros(n, dtype=bool)
    for s in range(n):
        # The velocity head at the start of a section (after the entrance or a fitting,
        # downstream side of a node) is taken as that of its smallest pipe: the CL
        # staircase serves both ends.
        need_last[s] = (not data.screened_up[s + 1] or k_node[s] > 0
                        or not data.screened_down[s]
                        or (s == 0 and study.source.entrance_k > 0))
        need_interior[s] = not data.screened_interior[s] and len(orders[s]) > 1
    need_last[n - 1] |= (study.outlet.exit_k + k_node[n] > 0) or not data.screened_down[n]
    if form.with_rules:
        need_first[:] = True
        need_last[:] = True
    if form.any_order:  # no row inside a section; the first pick serves its start
        need_interior[:] = False
        need_first |= need_last
    elif data.surge_m is not None:  # down-surge rows take the first piece's surge
        need_first |= need_last | need_interior
    need_last |= need_interior
    # Conflict windows of surge by wave speed read both ends of every section in them.
    window = window_sections(data.wave_conflicts, n)
    if data.surge_carry is not None and not form.any_order:  # carried surge (down-surge)
        window |= data.surge_carry.any(axis=1)
    need_first |= window
    need_last |= window
    return need_first, need_last, need_interior


def _fractions(form: Formulation, s: int, order: list[int], tiebreak: float) -> list[int]:
    """Columns ``x[s, j]`` (cost of the whole section in j, plus the tie-break) and the
    row that they sum to 1."""
    data = form.data
    model = form.model
    span = max(data.n_sections - 1, 1)
    xs = []
    for j in order:
        cost = float(data.section_cost[s, j])
        if tiebreak > 0:
            weight = tiebreak * data.chainage_length_m[s] * (1.0 - s / span)
            form.tiebreak_max += weight * (data.n_options - 1)
            cost += weight * data.rank[j]
        column = model.add_column(0.0, 1.0, cost)
        form.x[s, j] = column
        xs.append(column)
    model.equal(Affine([(c, 1.0) for c in xs]), 1.0)
    return xs


def _uses(form: Formulation, s: int, order: list[int], xs: list[int]) -> list[int]:
    """Use indicators ``y[s, j] >= x[s, j]`` (binary unless relaxed)."""
    ys = []
    for j, xc in zip(order, xs, strict=True):
        yc = form.model.add_column(0.0, 1.0, integer=not form.relaxed)
        form.y[s, j] = yc
        ys.append(yc)
        form.model.add_row([(xc, 1.0), (yc, -1.0)], upper=0.0)
    return ys


def _free_order_picks(form: Formulation, columns: SectionColumns, s: int,
                      ys: list[int]) -> None:
    """A merged reach with no check point inside: its options may be laid in any order,
    so the first and the last piece are chosen freely among those used."""
    model = form.model
    order = columns.orders[s]
    integer = not form.relaxed
    ends: list[dict[int, Affine]] = []
    for end in ("first", "last"):
        picks = [model.add_column(0.0, 1.0, integer=integer) for _ in order]
        form.picks.update({(end, s, j): c for j, c in zip(order, picks, strict=True)})
        model.equal(Affine([(c, 1.0) for c in picks]), 1.0)
        for pick, yc in zip(picks, ys, strict=True):
            model.add_row([(pick, 1.0), (yc, -1.0)], upper=0.0)
        ends.append({j: var(c) for j, c in zip(order, picks, strict=True)})
    columns.first_frac[s], columns.last_frac[s] = ends
    if form.least_piece_m > 0:  # each picked end piece has a length (twice if A...A)
        share = min(0.5, form.least_piece_m / float(form.data.chainage_length_m[s]))
        for j in order:
            model.add_row([(form.x[s, j], 1.0), (form.picks["first", s, j], -share),
                           (form.picks["last", s, j], -share)], lower=0.0)
    if len(order) > 1 and form.with_rules:
        _laid_twice(form, s, order, ys)


def _laid_twice(form: Formulation, s: int, order: list[int], ys: list[int]) -> None:
    """The same option first and last with another in between (A B A) has one change
    more than the uses count: an indicator adds it.

    both[a] >= first[a] + last[a] - 1 ("a is first and last"), and for every b:
    again >= sum of both[a] over a != b, + y[b] - 1. Exact at integer picks (the cost
    pushes both[] to its lower bound), 2 rows per option, and at least as tight as the
    rows again >= first[a] + last[a] + y[b] - 2 for every pair a != b.
    """
    model = form.model
    again = model.add_column(0.0, 1.0, integer=not form.relaxed)
    form.extra_changes[s] = again
    both = [model.add_column(0.0, 1.0) for _ in order]
    for j, column in zip(order, both, strict=True):
        model.add_row([(column, 1.0), (form.picks["first", s, j], -1.0),
                       (form.picks["last", s, j], -1.0)], lower=-1.0)
    for b, yc in enumerate(ys):
        others = [(column, 1.0) for a, column in enumerate(both) if a != b]
        model.add_row([*others, (yc, 1.0), (again, -1.0)], upper=1.0)


def _first_staircase(form: Formulation, columns: SectionColumns, s: int,
                     ys: list[int]) -> None:
    """``CF[s, t]``: an option at position <= t of the section order is used."""
    model = form.model
    order = columns.orders[s]
    count = len(order)
    cf = [model.add_column(1.0 if t == count - 1 else 0.0, 1.0) for t in range(count)]
    for t in range(count):
        previous: list[Term] = [(cf[t - 1], -1.0)] if t > 0 else []
        # increment of CF only where the option is used; CF covers every use
        model.add_row([(cf[t], 1.0), *previous, (ys[t], -1.0)], upper=0.0)
        model.add_row([(ys[t], 1.0), (cf[t], -1.0)], upper=0.0)
        if t > 0:
            model.add_row([(cf[t], 1.0), (cf[t - 1], -1.0)], lower=0.0)
        columns.first_frac[s][order[t]] = Affine([(cf[t], 1.0), *previous])


def _last_staircase(form: Formulation, columns: SectionColumns, s: int,
                    ys: list[int]) -> None:
    """``CL[s, t]``: an option at position >= t of the section order is used."""
    model = form.model
    order = columns.orders[s]
    count = len(order)
    cl = [model.add_column(1.0 if t == 0 else 0.0, 1.0) for t in range(count)]
    columns.cl_cols[s] = cl
    for t in range(count):
        following: list[Term] = [(cl[t + 1], -1.0)] if t + 1 < count else []
        model.add_row([(cl[t], 1.0), *following, (ys[t], -1.0)], upper=0.0)
        model.add_row([(ys[t], 1.0), (cl[t], -1.0)], upper=0.0)
        if t + 1 < count:
            model.add_row([(cl[t], 1.0), (cl[t + 1], -1.0)], lower=0.0)
        columns.last_frac[s][order[t]] = Affine([(cl[t], 1.0), *following])
