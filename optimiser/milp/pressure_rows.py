"""Rows of the model along the energy line: pressure at every check point, outlet head.

Part of :mod:`optimiser.milp.formulation` (whose docstring states what is exact and
what is conservative). Per scenario the energy runs down the route from the source
level: point losses (entrance, fittings) with the velocity head of the section's last
piece, friction and the per-km allowance linear in the fractions, and the exit loss at
the outlet. The running energy is a list of terms plus a constant; a free column
``e[k, s]`` replaces it where a row needs it, which keeps rows short.
"""

from __future__ import annotations

import numpy as np

from optimiser.milp.built_model import MARGIN_M, Formulation
from optimiser.milp.carried_surge import add_carried_surge
from optimiser.milp.columns import SectionColumns
from optimiser.milp.matrix import Affine, Term, var
from optimiser.milp.tank_rows import restart_at_tank


def add_pressure_rows(form: Formulation, columns: SectionColumns,
                      start_m: list[Affine] | None = None,
                      taps: tuple[int, ...] = ()) -> dict[tuple[int, int], Affine]:
    """Add the pressure rows of every scenario, and the outlet rows, to ``form``.

    ``start_m`` (one per scenario): the energy at chainage 0 before the start loss
    (default the source level; a branch of a scheme starts from its junction's energy,
    :mod:`optimiser.milp.tree.model`). ``taps``: nodes whose upstream-side energy (before
    a fitting there) is returned, by (scenario, node), each a single column.
    """
    data = form.data
    n = data.n_sections
    k_node = data.node_point_k
    need_end = np.zeros(n, dtype=bool)
    need_end[n - 1] = True
    for s in range(n - 1):
        need_end[s] = (not data.screened_up[s + 1] or not data.screened_down[s + 1]
                       or columns.need_interior[s + 1] or k_node[s + 1] > 0
                       or s + 1 in taps)
    tapped: dict[tuple[int, int], Affine] = {}
    tanks = data.tanks
    if tanks is not None:  # the energy arriving at a tank is a column of its own
        need_end[:-1] |= tanks.at_node[1:-1]
    form.carried = add_carried_surge(form, columns)
    for k in range(data.n_scenarios):
        # With a pump the energy starts at the source level + the station head; a branch
        # of a scheme starts from its parent's energy at the junction.
        pump = [(form.pump_heads[k], 1.0)] if form.pump_heads else []
        running = Affine(pump, float(data.source_level_m[k])) if start_m is None \
            else Affine(list(start_m[k].terms), start_m[k].constant)
        for s in range(n):
            if tanks is not None and s > 0 and tanks.at_node[s]:
                running = restart_at_tank(form, k, s, running)  # milp/tank_rows.py
            running = _section_rows(form, columns, k, s, running, bool(need_end[s]))
            if s + 1 in taps:
                tapped[k, s + 1] = Affine(list(running.terms), running.constant)
        _outlet_rows(form, columns, k, running)
    return tapped


def _head_of(form: Formulation, k: int, s: int, fractions: dict[int, Affine],
             surge: np.ndarray | None = None) -> Affine:
    """Velocity head of the piece the indicators ``fractions`` pick, scenario k (plus
    its surge head from ``surge`` (n, m), for a down-surge row)."""
    expr = Affine()
    for j, frac in fractions.items():
        extra = 0.0 if surge is None else float(surge[s, j])
        expr.add_in_place(frac, float(form.data.velocity_head_m[k, s, j]) + extra)
    return expr


def _surges(form: Formulation) -> np.ndarray | None:
    """(n, m) surge heads of the down-surge rows (None: the study has no such limit):
    each option's own in each section; by wave speed a piece that runs on from a larger
    flow adds the surge it carries (:mod:`optimiser.milp.carried_surge`, exact at a
    section's ends), except in the any-order relaxation (a lower bound of the check's)."""
    return form.data.surge_own_m


def _carried(form: Formulation, s: int, at_end: bool) -> Affine:
    """Extra surge head the first (or, ``at_end``, the last) piece of s carries."""
    carried = form.carried
    if carried is None:
        return Affine()
    found = carried.end[s] if at_end else carried.start[s]
    return Affine(list(found.terms), found.constant)


def _transient_row(form: Formulation, energy: Affine, deduct: Affine, level_m: float,
                   side: str, k: int, index: int) -> None:
    """Down-surge row (contract section 10): energy - (velocity + surge head) - pipe
    level >= min_transient_pressure_m."""
    limit = form.data.study.surge.min_transient_pressure_m
    row = form.model.at_least(energy - deduct, float(level_m + limit + MARGIN_M))
    form.pressure_rows.append((row, side, k, index))


def _section_rows(form: Formulation, columns: SectionColumns, k: int, s: int,
                  running: Affine, need_end: bool) -> Affine:
    """Rows of section s in scenario k; returns the running energy at its end."""
    data = form.data
    model = form.model
    pipe = data.node_pipe_level_m
    order = columns.orders[s]
    last_frac = columns.last_frac[s]
    k_start = data.node_point_k[s] + (data.study.source.entrance_k if s == 0 else 0.0)
    # The start of a section takes the velocity head of its smallest pipe (its last
    # piece in the section order), or with pieces in any order that of its first piece.
    start_frac = columns.first_frac[s] if form.any_order else last_frac
    head_first = _head_of(form, k, s, start_frac) if start_frac else None
    if k_start > 0:
        assert head_first is not None
        running.add_in_place(head_first, -float(k_start))
    if not data.screened_down[s] or columns.need_interior[s]:
        start = Affine(list(running.terms), running.constant)
        if not data.screened_down[s]:
            assert head_first is not None
            row = model.at_least(start - head_first, float(
                pipe[s] + data.node_min_pressure_m[s] + MARGIN_M))
            form.pressure_rows.append((row, "down", k, s))
            _start_transient_row(form, columns, k, s, start, head_first)
        if columns.need_interior[s]:
            _boundary_rows(form, columns, k, s, start)
    if form.any_order and (not data.screened_down[s] or not data.screened_interior[s]):
        _any_order_rows(form, k, s, start=running, at_start=True)
    running.terms.extend((form.x[s, j], -float(data.section_loss_m[k, s, j])) for j in order)
    if need_end:
        column = model.add_column(-np.inf, np.inf)
        model.equal(var(column) - running, 0.0)
        running = var(column)
    if form.any_order and (not data.screened_up[s + 1] or not data.screened_interior[s]):
        _any_order_rows(form, k, s, start=running, at_start=False)
    if not data.screened_up[s + 1]:
        row = model.at_least(running - _head_of(form, k, s, last_frac), float(
            pipe[s + 1] + data.node_min_pressure_m[s + 1] + MARGIN_M))
        form.pressure_rows.append((row, "up", k, s + 1))
        surge = _surges(form)
        if surge is not None:
            _transient_row(form, running, _head_of(form, k, s, last_frac, surge)
                           + _carried(form, s, at_end=True), pipe[s + 1], "up", k, s + 1)
    return running


def _start_transient_row(form: Formulation, columns: SectionColumns, k: int, s: int,
                         start: Affine, head_first: Affine) -> None:
    """Down-surge row at the start of section s: the first piece's velocity head (any
    order) or the smallest pipe's (as the pressure row), plus the first piece's surge
    (the first-piece staircase or pick)."""
    surge = _surges(form)
    if surge is None:
        return
    if form.any_order:
        deduct = _head_of(form, k, s, columns.first_frac[s], surge)
    else:
        deduct = Affine(list(head_first.terms), head_first.constant)
        for j, frac in columns.first_frac[s].items():
            deduct.add_in_place(frac, float(surge[s, j]))
        deduct.add_in_place(_carried(form, s, at_end=False))
    _transient_row(form, start, deduct, form.data.node_pipe_level_m[s], "down", k, s)


def _boundary_rows(form: Formulation, columns: SectionColumns, k: int, s: int,
                   start: Affine) -> None:
    """Pressure at every piece boundary inside section s (downstream side: the velocity
    head of the pipe after the boundary, ``h[t] * CL[s, t]``), held to the route's
    minimum pressure."""
    data = form.data
    pipe = data.node_pipe_level_m
    drop = pipe[s + 1] - pipe[s]
    cumulative: list[Term] = []
    cl = columns.cl_cols[s]
    surge = _surges(form)
    deduct = -np.inf  # velocity + surge head, largest up to position t (either side)
    for t, j in enumerate(columns.orders[s]):
        row = form.model.at_least(
            start + Affine([*cumulative, (cl[t], -float(data.velocity_head_m[k, s, j]))]),
            float(pipe[s] + data.study.min_pressure_m + MARGIN_M))
        form.pressure_rows.append((row, "inside", k, s))
        if surge is not None:
            deduct = max(deduct, float(data.velocity_head_m[k, s, j] + surge[s, j]))
            _transient_row(form, start + Affine(list(cumulative)),
                           Affine([(cl[t], deduct)]) + _carried(form, s, at_end=False),
                           pipe[s], "inside", k, s)
        cumulative.append((form.x[s, j], -float(data.section_loss_m[k, s, j] + drop)))


def _outlet_rows(form: Formulation, columns: SectionColumns, k: int,
                 running: Affine) -> None:
    """Outlet head after the exit loss and, with a fitting at the last node, the
    pressure just downstream of it."""
    data = form.data
    study = data.study
    n = data.n_sections
    k_last = data.node_point_k[n]
    last = n - 1
    head_last = _head_of(form, k, last, columns.last_frac[last]) \
        if columns.last_frac[last] else None
    outlet = Affine(list(running.terms), running.constant)
    if study.outlet.exit_k + k_last > 0:
        assert head_last is not None
        outlet.add_in_place(head_last, -float(study.outlet.exit_k + k_last))
    row = form.model.at_least(outlet, float(study.outlet.required_head_m + MARGIN_M))
    form.pressure_rows.append((row, "outlet", k, n))
    if not data.screened_down[n] and k_last > 0:
        assert head_last is not None
        row = form.model.at_least(running - head_last.scaled(float(k_last + 1.0)), float(
            data.node_pipe_level_m[n] + data.node_min_pressure_m[n] + MARGIN_M))
        form.pressure_rows.append((row, "down", k, n))
        surge = _surges(form)
        if surge is not None:
            deduct = head_last.scaled(float(k_last))
            deduct.add_in_place(_head_of(form, k, last, columns.last_frac[last], surge), 1.0)
            deduct.add_in_place(_carried(form, last, at_end=True))
            _transient_row(form, running, deduct, data.node_pipe_level_m[n], "down", k, n)


def _any_order_rows(form: Formulation, k: int, s: int, start: Affine, at_start: bool) -> None:
    """Pressure where each option used in section s first starts (``at_start``) or
    last ends, in any arrangement (the any-order relaxation).

    Let c be where the first piece of option j starts; pieces laid before it lose
    ``loss_u`` per whole section and the pipe falls ``-drop`` per whole section, so
    energy - pipe level at c is at most its value at the start plus the sum over options
    u other than j of ``max(0, -drop - loss_u) x[s, u]``; the check holds the downstream side of c
    (velocity head of j) to the minimum. Likewise at the end of j's last piece, with
    ``max(0, loss_u + drop)``. With ``y[s, j] = 0`` the row is implied by the one at the
    section's end. Valid for every arrangement, so the relaxation stays one; it stops
    the relaxation from hiding a small pipe's velocity head behind a piece of no length.
    """
    data = form.data
    pipe = data.node_pipe_level_m
    drop = float(pipe[s + 1] - pipe[s])
    loss = data.section_loss_m[k, s]
    node = s if at_start else s + 1
    minimum = min(float(data.node_min_pressure_m[node]), float(data.study.min_pressure_m))
    slack = {u: (form.x[s, u], max(0.0, (-drop - float(loss[u])) if at_start
                                   else (float(loss[u]) + drop)))
             for u in form.data.order if (s, u) in form.x}
    for j in form.data.order:
        if (s, j) not in form.y:
            continue
        # only other options lie before j's first piece (after its last)
        terms = [(c, v) for u, (c, v) in slack.items() if v > 0 and u != j]
        terms.append((form.y[s, j], -float(data.velocity_head_m[k, s, j])))
        row = form.model.at_least(start + Affine(terms), float(pipe[node] + minimum + MARGIN_M))
        form.pressure_rows.append((row, "inside", k, s))
