"""A built model and the columns of its decision variables (:class:`Formulation`).

The record every part of :mod:`optimiser.milp.formulation` writes into, and every
solver, presolve step and stage reads: the arrays of the model
(:mod:`optimiser.milp.matrix`), the columns of the fractions ``x``, the use binaries
``y`` and the free-order picks, and after a solve the column values and duals.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from optimiser.milp.data import ProblemData
from optimiser.milp.matrix import LinearModel

MARGIN_M = 1e-5
"""Safety margin [m] (0.01 mm) on every pressure and on the outlet head."""
LENGTH_MARGIN_M = 1e-3
"""Safety margin [m] on the minimum piece length."""

WarmStart = dict[tuple[str, int, int], float]
"""Values of ``x`` and ``y`` by (kind, section, option), from a design (a warm start)."""


@dataclass
class Formulation:
    """A built model and the columns of its decision variables."""

    model: LinearModel
    data: ProblemData
    allowed: np.ndarray
    with_rules: bool
    relaxed: bool
    any_order: bool = False
    """Pieces in any order inside every section (the relaxation of every arrangement the
    check accepts, :func:`optimiser.milp.formulation.build`)."""
    least_piece_m: float = 0.0
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
    tank_columns: dict[int, int] = field(default_factory=dict)
    """Binaries of the new break-pressure tanks ``design`` may add, by node
    (:mod:`optimiser.milp.tank_rows`)."""
    pump_heads: list[int] = field(default_factory=list)
    """Columns of the station head per scenario (contract section 9; empty without a
    pump, :mod:`optimiser.milp.pump_columns`)."""
    pump_head_cap_m: np.ndarray | None = None
    """Upper bounds of the station heads known before the build (from a design in
    hand: no cheaper design needs more), or None."""
    carried: Any = None
    """The surge pieces carry from larger flows above, per section (surge by wave speed
    with a down-surge limit, :class:`optimiser.milp.carried_surge.CarriedSurge`)."""
    runs: dict[tuple[int, int], int] = field(default_factory=dict)
    """Columns ``w[t, j]``: the piece of option j runs across node t (surge by wave
    speed, :func:`optimiser.milp.wave_rows.continuation`)."""
    pump_indicators: list[int] = field(default_factory=list)
    """Binaries of the classes under pumping pressure (one per section and class level
    the pumping pressure could exceed)."""

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
        if self.any_order and middle:  # its energies count A at both ends: lay it so
            half = 0.5 * float(share[first])
            return [(first, half), *middle, (first, half)]
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
            elif kind == "tank":
                column = self.tank_columns.get(s)
            else:
                column = (self.x if kind == "x" else self.y).get((s, j))
            if column is not None:
                columns.append(column)
                values.append(value)
        return np.array(columns, dtype=np.int32), np.array(values, dtype=float)
