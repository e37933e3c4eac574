"""The surge a piece carries down from where it starts (the down-surge rows by wave speed).

Part of :mod:`optimiser.milp.formulation`. With ``[surge] method = "joukowsky"`` and
``min_transient_pressure_m`` the check deducts at every point the surge of the piece
there: a V / g, or 2 L V / (g T) for a slow closure (contract section 10; Wylie, E.B. &
Streeter, V.L. (1993), Fluid Transients in Systems, ch. 1), V the largest velocity
anywhere in the piece. Along a line the flow never grows downstream, so V is that of
the piece's first section: a piece that runs on past an offtake carries the surge of the
larger flow above it. For a fixed section the surge is linear in V (slope a / g, or
2 L / (g T)), so the model writes it as the section's own surge plus ``slope * X``,
with ``X[s, j] >= 0`` the velocity j's piece brings into section s above its own:

    X[s, j] >= v[s-1, j] + X[s-1, j] - v[s, j] - M (1 - w[s, j])

(``w`` the piece runs across node s, :func:`optimiser.milp.wave_rows.continuation`; M
the largest velocity of j on the line). Only the first piece of a section can carry
(it is the one that runs across the node), so the start of a section deducts the sum
of ``slope * X`` over the options, and its end ``slope * Xend`` with ``Xend[s, j] >=
X[s, j] - M (1 - last[s, j])``. The solver keeps every X at its least, which is exactly
the carried velocity: the down-surge rows at section ends are exact. Inside a section
the carried surge is deducted at every boundary (conservative, as the rows there are).
"""

from __future__ import annotations

from dataclasses import dataclass

from optimiser.milp.built_model import Formulation
from optimiser.milp.matrix import Affine, var
from optimiser.milp.wave_rows import continuation


@dataclass
class CarriedSurge:
    """Extra surge head [m] of the first (``start``) and last (``end``) piece of every
    section, as expressions of the model."""

    start: list[Affine]
    end: list[Affine]


def add_carried_surge(form: Formulation, columns) -> CarriedSurge | None:
    """The carried surge of every section of ``form`` (module docstring); None where
    the model takes none (no carry possible, or the any-order relaxation, which takes
    each section's own surge)."""
    data = form.data
    if data.surge_carry is None or data.surge_slope is None or form.any_order \
            or not data.surge_carry.any():
        return None
    n = data.n_sections
    model = form.model
    fastest = data.velocity_m_s.max(axis=0)
    start = [Affine() for _ in range(n)]
    end = [Affine() for _ in range(n)]
    carried: dict[tuple[int, int], int] = {}
    for s in range(1, n):
        for j in columns.orders[s]:
            if not data.surge_carry[s, j] or j not in columns.last_frac[s - 1] \
                    or j not in columns.first_frac[s]:
                continue
            big = float(fastest[:, j].max())
            column = model.add_column(0.0, big)
            row = var(column) - var(continuation(form, columns, s, j)).scaled(big)
            if (s - 1, j) in carried:
                row = row - var(carried[s - 1, j])
            model.at_least(row, float(fastest[s - 1, j] - fastest[s, j]) - big)
            carried[s, j] = column
            ending = model.add_column(0.0, big)
            model.at_least(var(ending) - var(column) - columns.last_frac[s][j].scaled(big),
                           -big)
            slope = float(data.surge_slope[s, j])
            start[s].add_in_place(var(column), slope)
            end[s].add_in_place(var(ending), slope)
    return CarriedSurge(start, end)
