"""Rows of the rules on the merged design: changes, change cost, minimum piece length,
sizes downstream.

Part of :mod:`optimiser.milp.formulation`. ``cont[s, j]`` (node s between sections s-1
and s) is at most "j is last in s-1" and "j is first in s": the piece of j carries on
across the node. Merged pieces = uses - continuations, changes = pieces - 1.
``acc[s, j]`` is the chainage of the open piece of j at the end of section s, capped at
the minimum length L: a piece that closes in s (used, not carried into s+1) must reach L
with its length in s plus what it carried in.
"""

from __future__ import annotations

from optimiser.milp.built_model import LENGTH_MARGIN_M, Formulation
from optimiser.milp.columns import SectionColumns
from optimiser.milp.matrix import Affine, Term, var

Continuations = dict[tuple[int, int], int]


def add_rule_rows(form: Formulation, columns: SectionColumns) -> list[Term]:
    """Add the rows of the rules; return the terms of the change count (plus 1)."""
    rules = form.data.study.rules
    cont = _continuations(form, columns)
    change_terms: list[Term] = [(column, 1.0) for column in form.y.values()]
    change_terms.extend((column, -1.0) for column in cont.values())
    change_terms.extend((column, 1.0) for column in form.extra_changes.values())
    if rules.max_changes is not None:
        form.model.add_row(change_terms, upper=float(rules.max_changes + 1))
    if rules.sizes_non_increasing:
        _sizes_rows(form, columns)
    min_length = _min_length_m(form)
    if min_length > 0:
        _min_length_rows(form, columns, cont, min_length)
    return change_terms


def _continuations(form: Formulation, columns: SectionColumns) -> Continuations:
    """``cont[s, j]`` <= last-in-(s-1) and <= first-in-s, for options used on both sides."""
    model = form.model
    cont: Continuations = {}
    for s in range(1, form.data.n_sections):
        for j in columns.orders[s]:
            if j in columns.last_frac[s - 1]:
                column = model.add_column(0.0, 1.0)
                cont[s, j] = column
                model.at_most(var(column) - columns.last_frac[s - 1][j], 0.0)
                model.at_most(var(column) - columns.first_frac[s][j], 0.0)
    return cont


def _sizes_rows(form: Formulation, columns: SectionColumns) -> None:
    """Internal diameter of the last piece of s-1 at least that of the first of s."""
    diameter = form.data.study.catalogue.internal_diameter_mm
    for s in range(1, form.data.n_sections):
        expr = Affine()
        for j, frac in columns.last_frac[s - 1].items():
            expr.add_in_place(frac, float(diameter[j]))
        for j, frac in columns.first_frac[s].items():
            expr.add_in_place(frac, -float(diameter[j]))
        form.model.at_least(expr, 0.0)


def _min_length_m(form: Formulation) -> float:
    """The minimum piece length [m] with its margin, at most the route's chainage."""
    data = form.data
    total = float(data.node_chainage_m[-1] - data.node_chainage_m[0])
    min_length = min(data.study.rules.min_piece_length_m, total)
    if 0 < min_length < total:
        min_length = min(min_length + LENGTH_MARGIN_M, total)
    return min_length


def _min_length_rows(form: Formulation, columns: SectionColumns, cont: Continuations,
                     min_length: float) -> None:
    """Accumulators of open pieces and the closing rows of the minimum piece length."""
    data = form.data
    model = form.model
    n = data.n_sections
    acc: dict[tuple[int, int], int] = {}
    for s in range(n):
        length = float(data.chainage_length_m[s] if data.chainage_per_share_m is None
                       else data.chainage_per_share_m[s])
        for j in columns.orders[s]:
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
