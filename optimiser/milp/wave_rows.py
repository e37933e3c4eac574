"""Rows that keep a piece from spanning a conflict window (surge by wave speed).

Part of :mod:`optimiser.milp.formulation` (and of each line of the tree's model). A
conflict (f, c, j) of :func:`optimiser.milp.wave_classes.wave_conflicts` says no piece
of j may run from section f into section c: the check would judge the sections it
reaches in c with the surge of j's velocity in f (contract section 10). A piece of j
runs across node t (between sections t-1 and t) exactly when j is the last piece of
t-1 and the first of t, so

    w[t, j] >= last[t-1, j] + first[t, j] - 1,   sum over t = f+1..c of w[t, j] <= c - f - 1

(``first``/``last`` the exact staircases of the section order, or the picks of a
free-order section). A merged reach r strictly inside a window (pieces in any order,
:mod:`optimiser.milp.reaches`; a window's first section ends a reach and its last
starts one) adds ``u[r, j] >= first[r, j] + last[r, j] - 1 - (uses of other options in
r)`` to the sum and 1 to its right-hand side: j runs through r only alone. A design
whose piece of j covers f..c has every w and u = 1 and is cut off; every other design
keeps one at 0 where the piece breaks: the rows cut off only designs the check rejects,
so a model with them stays a relaxation where it was one.

The staircases read the use binaries y, which could be set to 1 over a zero length and
so fake a break. In the sections of a window a used option is therefore at least
``BREAK_PIECE_M`` long (y <= x * chainage / ``BREAK_PIECE_M``): a model then only
leaves out designs with a piece shorter than that inside a window, the same 1 mm the
model keeps on every minimum piece length (``LENGTH_MARGIN_M``).
"""

from __future__ import annotations

import numpy as np

from optimiser.milp.built_model import Formulation
from optimiser.milp.matrix import Affine, var
from optimiser.milp.wave_classes import window_sections

BREAK_PIECE_M = 1e-3
"""Least length [m of chainage] of a piece inside a conflict window (module docstring)."""


def continuation(form: Formulation, columns, t: int, j: int) -> int:
    """Column ``w[t, j]`` >= last[t-1, j] + first[t, j] - 1: the piece of j runs across
    node t (one per node and option, shared by the rows that need it)."""
    if (t, j) not in form.runs:
        column = form.model.add_column(0.0, 1.0)
        form.runs[t, j] = column
        form.model.at_least(var(column) - columns.last_frac[t - 1][j]
                            - columns.first_frac[t][j], -1.0)
    return form.runs[t, j]


def add_wave_rows(form: Formulation, columns) -> int:
    """Write the rows of every conflict of ``form.data`` whose option is allowed over its
    whole window (elsewhere a piece cannot span it anyway); return how many."""
    data = form.data
    conflicts = data.wave_conflicts
    if conflicts is None or not len(conflicts):
        return 0
    model = form.model
    free = np.zeros(data.n_sections, dtype=bool) if data.free_order is None \
        else data.free_order
    count = 0
    for f, c, j in conflicts.tolist():
        if any(j not in columns.last_frac[t] or j not in columns.first_frac[t + 1]
               for t in range(f, c)):
            continue
        terms = [(continuation(form, columns, t, j), 1.0) for t in range(f + 1, c + 1)]
        terms += [(_alone(form, columns, r, j), 1.0) for r in range(f + 1, c) if free[r]]
        model.add_row(terms, upper=float(len(terms) - 1))
        count += 1
    return count


def _alone(form: Formulation, columns, r: int, j: int) -> int:
    """Column ``u[r, j]`` >= first[r, j] + last[r, j] - 1 - (uses of other options): a
    merged reach r (pieces in any order) that j runs through, first, last and alone
    (with another option between, j's run breaks inside the reach)."""
    key = (-1 - r, j)  # merged reaches: keys apart from the nodes' in ``form.runs``
    if key not in form.runs:
        column = form.model.add_column(0.0, 1.0)
        form.runs[key] = column
        others = [(form.y[r, k], 1.0) for k in columns.orders[r] if k != j]
        form.model.at_least(var(column) - columns.first_frac[r][j] - columns.last_frac[r][j]
                            + Affine(others), -1.0)
    return form.runs[key]


def add_break_rows(form: Formulation, columns) -> None:
    """In every section of a conflict window or where a piece may carry surge, a used
    option is at least ``BREAK_PIECE_M`` long (module docstring)."""
    data = form.data
    short = window_sections(data.wave_conflicts, data.n_sections)
    if data.surge_carry is not None and not form.any_order:
        short |= data.surge_carry.any(axis=1)
    model = form.model
    for s in np.flatnonzero(short).tolist():
        chainage = float(data.chainage_length_m[s])
        for j in columns.orders[s]:
            if (s, j) in form.y and chainage > BREAK_PIECE_M:
                model.add_row([(form.y[s, j], BREAK_PIECE_M), (form.x[s, j], -chainage)],
                              upper=0.0)
