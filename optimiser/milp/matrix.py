"""A linear (mixed-integer) programme held as plain arrays: columns, rows, coefficients.

The formulation writes its model here instead of into a modelling library's expression
objects: a 10,000-section route has about a million coefficients, and building them as
Python objects one by one took longer than solving the programme. Rows are collected as
(row, column, value) triplets and turned into one compressed sparse row matrix at the
end (repeated columns in a row are summed), which HiGHS takes in one call and which
HiGHS writes as an MPS file for CBC (:mod:`optimiser.milp.solvers`).

Every row is ``lower <= sum(value * x[column]) <= upper``; an :class:`Affine` expression
carries a constant that is moved to the bounds when the row is added.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass, field

import numpy as np
import scipy.sparse

INF = math.inf

Term = tuple[int, float]


@dataclass
class Affine:
    """``sum(value * x[column] for column, value in terms) + constant``."""

    terms: list[Term] = field(default_factory=list)
    constant: float = 0.0

    def __add__(self, other: Affine) -> Affine:
        return Affine(self.terms + other.terms, self.constant + other.constant)

    def __sub__(self, other: Affine) -> Affine:
        return Affine(self.terms + [(c, -v) for c, v in other.terms],
                      self.constant - other.constant)

    def scaled(self, factor: float) -> Affine:
        return Affine([(c, factor * v) for c, v in self.terms], factor * self.constant)

    def add_in_place(self, other: Affine, factor: float = 1.0) -> None:
        self.terms.extend((c, factor * v) for c, v in other.terms)
        self.constant += factor * other.constant


def var(column: int, value: float = 1.0) -> Affine:
    """The expression ``value * x[column]``."""
    return Affine([(column, value)])


@dataclass
class LinearModel:
    """Columns with bounds, costs and integrality; rows as coefficient triplets."""

    lower: list[float] = field(default_factory=list)
    upper: list[float] = field(default_factory=list)
    cost: list[float] = field(default_factory=list)
    integer: list[bool] = field(default_factory=list)
    row_lower: list[float] = field(default_factory=list)
    row_upper: list[float] = field(default_factory=list)
    _row: list[int] = field(default_factory=list)
    _column: list[int] = field(default_factory=list)
    _value: list[float] = field(default_factory=list)

    @property
    def n_columns(self) -> int:
        return len(self.lower)

    @property
    def n_rows(self) -> int:
        return len(self.row_lower)

    @property
    def n_integer(self) -> int:
        return sum(self.integer)

    def add_column(self, lower: float = 0.0, upper: float = INF, cost: float = 0.0,
                   integer: bool = False) -> int:
        self.lower.append(float(lower))
        self.upper.append(float(upper))
        self.cost.append(float(cost))
        self.integer.append(bool(integer))
        return len(self.lower) - 1

    def add_row(self, terms: Iterable[Term], lower: float = -INF, upper: float = INF) -> int:
        row = len(self.row_lower)
        for column, value in terms:
            self._row.append(row)
            self._column.append(column)
            self._value.append(value)
        self.row_lower.append(float(lower))
        self.row_upper.append(float(upper))
        return row

    def at_least(self, expr: Affine, rhs: float) -> int:
        """Row ``expr >= rhs``."""
        return self.add_row(expr.terms, rhs - expr.constant, INF)

    def at_most(self, expr: Affine, rhs: float) -> int:
        """Row ``expr <= rhs``."""
        return self.add_row(expr.terms, -INF, rhs - expr.constant)

    def equal(self, expr: Affine, rhs: float) -> int:
        """Row ``expr == rhs``."""
        return self.add_row(expr.terms, rhs - expr.constant, rhs - expr.constant)

    def add_cost(self, terms: Iterable[Term]) -> None:
        for column, value in terms:
            self.cost[column] += value

    def csr(self) -> scipy.sparse.csr_matrix:
        """The coefficient matrix (repeated entries summed, exact zeros dropped)."""
        matrix = scipy.sparse.csr_matrix(
            (np.asarray(self._value, dtype=float),
             (np.asarray(self._row, dtype=np.int64), np.asarray(self._column, dtype=np.int64))),
            shape=(self.n_rows, self.n_columns))
        matrix.sum_duplicates()
        matrix.eliminate_zeros()
        return matrix

    def objective(self, values: np.ndarray) -> float:
        return float(np.dot(np.asarray(self.cost), values))
