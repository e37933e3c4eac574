"""Sections grouped into reaches: quiet survey sections merged, a smaller equivalent model.

A long route has thousands of survey sections, but pressure can bind at only a few of
its points. Where a run of consecutive sections has no check point in the model (none
at its inner nodes, none inside, and none at its ends that would need the velocity head
of its pipes), the same flows, the same admissible options and the same zone factor,
the split-pipe programme only sees the total slope length of each option laid in it:
cost and head loss are both linear in slope length with the same coefficient in every
section of the run (Karmeli, Gadish & Meyers 1968). Merging the run into one *reach*
with the summed lengths, costs and losses is then exact: every design of the fine model
maps to one of the reach model with the same cost and the same energy at every point
the model checks, and back (lay the reach's options in the section order, by slope
length).

Which points are "in the model" is the caller's choice (``active``): all points that
are not screened out (the full model), or only those a previous solution came close to
violating (row generation; the model is then a relaxation, its value a valid bound,
and the check judges every point of the design it yields); :func:`points_near` picks the
points a checked design says should join the model next.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from optimiser.analysis import CheckResult
from optimiser.milp.data import ProblemData
from optimiser.milp.extract import SLIVER_M
from optimiser.milp.formulation import Formulation
from optimiser.model import Design, Piece

MAX_ROW_ROUNDS = 12
"""Rounds of row generation at most (LP relaxation, reach model with the rules)."""
NEAR_M = 0.3
"""Once a round's design violates nothing, row generation adds every check point whose
pressure came within this of its minimum [m]."""
VIOLATION_M = 1e-6
"""A pressure below its minimum by more than this [m] counts as violated."""


@dataclass(frozen=True)
class ActivePoints:
    """Check points kept in a model: upstream and downstream sides of every node (n+1)
    and the inside of every section (n). A point screened out by
    :func:`optimiser.milp.data.screened` is never in the model."""

    up: np.ndarray
    down: np.ndarray
    interior: np.ndarray

    @classmethod
    def none(cls, data: ProblemData) -> ActivePoints:
        n = data.n_sections
        return cls(np.zeros(n + 1, dtype=bool), np.zeros(n + 1, dtype=bool),
                   np.zeros(n, dtype=bool))

    @classmethod
    def every(cls, data: ProblemData) -> ActivePoints:
        n = data.n_sections
        return cls(np.ones(n + 1, dtype=bool), np.ones(n + 1, dtype=bool),
                   np.ones(n, dtype=bool))

    def union(self, other: ActivePoints) -> ActivePoints:
        return ActivePoints(self.up | other.up, self.down | other.down,
                            self.interior | other.interior)

    def count(self) -> int:
        return int(self.up.sum() + self.down.sum() + self.interior.sum())


@dataclass(frozen=True)
class Reaches:
    """The merged model's data and, for each reach, its first and last fine section."""

    data: ProblemData
    first: np.ndarray  # (R,)
    last: np.ndarray  # (R,)

    @property
    def n_reaches(self) -> int:
        return len(self.first)


def with_active(data: ProblemData, active: ActivePoints) -> ProblemData:
    """``data`` with every point outside ``active`` marked as screened out."""
    return dataclasses.replace(
        data, screened_up=data.screened_up | ~active.up,
        screened_down=data.screened_down | ~active.down,
        screened_interior=data.screened_interior | ~active.interior)


def quiet(data: ProblemData) -> np.ndarray:
    """(n,) sections with no check point of the model at their ends or inside, and no
    point loss at their start (so no velocity head enters the model there)."""
    study = data.study
    n = data.n_sections
    k = data.node_point_k
    loud = ~data.screened_up[1:] | ~data.screened_down[:-1] | (k[:-1] > 0) \
        | ~data.screened_interior
    loud[0] |= study.source.entrance_k > 0
    loud[n - 1] |= (study.outlet.exit_k + k[n] > 0) or not data.screened_down[n]
    return ~loud


def merge(data: ProblemData) -> Reaches:
    """Merge runs of quiet sections with identical flows, options and zone factor."""
    n = data.n_sections
    calm = quiet(data)
    joinable = calm[1:] & calm[:-1]
    joinable &= np.all(data.flow_m3_s[:, 1:] == data.flow_m3_s[:, :-1], axis=0)
    joinable &= np.all(data.admissible[1:] == data.admissible[:-1], axis=1)
    joinable &= data.zone_factor[1:] == data.zone_factor[:-1]
    # Surge by wave speed: a reach ends at the first section of every conflict window and
    # starts at its last (its rows need a piece of the reach to touch those sections);
    # sections where a piece may carry surge into the down-surge rows stay whole.
    if data.wave_conflicts is not None and len(data.wave_conflicts):
        joinable[data.wave_conflicts[:, 0]] = False
        joinable[data.wave_conflicts[:, 1] - 1] = False
    if data.surge_carry is not None:
        carry = data.surge_carry.any(axis=1)
        joinable &= ~carry[1:] & ~carry[:-1]
    starts = np.concatenate([[0], np.flatnonzero(~joinable) + 1])
    ends = np.concatenate([starts[1:] - 1, [n - 1]])
    if len(starts) == n:
        return Reaches(data, starts, ends)
    nodes = np.concatenate([starts, [n]])

    def total(values: np.ndarray, axis: int = 0) -> np.ndarray:
        return np.add.reduceat(values, starts, axis=axis)

    merged = dataclasses.replace(
        data, n_sections=len(starts),
        node_chainage_m=data.node_chainage_m[nodes],
        node_pipe_level_m=data.node_pipe_level_m[nodes],
        node_min_pressure_m=data.node_min_pressure_m[nodes],
        node_point_k=data.node_point_k[nodes],
        chainage_length_m=total(data.chainage_length_m),
        length_m=total(data.length_m),
        zone_factor=data.zone_factor[starts],
        section_cost=total(data.section_cost),
        flow_m3_s=data.flow_m3_s[:, starts],
        velocity_m_s=data.velocity_m_s[:, starts],
        velocity_head_m=data.velocity_head_m[:, starts],
        gradient=data.gradient[:, starts],
        section_loss_m=total(data.section_loss_m, axis=1),
        static_demand_m=np.maximum.reduceat(data.static_demand_m, starts),
        class_ok=data.class_ok[starts], velocity_ok=data.velocity_ok[starts],
        admissible=data.admissible[starts],
        screened_up=data.screened_up[nodes], screened_down=data.screened_down[nodes],
        screened_interior=np.logical_and.reduceat(data.screened_interior, starts),
        # Any order inside a merged reach, also with sizes non-increasing (options of
        # equal internal diameter may come in either order): a relaxation either way.
        free_order=ends > starts,
        chainage_per_share_m=total(data.length_m) * np.maximum.reduceat(
            data.chainage_length_m / data.length_m, starts),
        surge_m=None if data.surge_m is None else np.maximum.reduceat(data.surge_m, starts),
        surge_own_m=None if data.surge_own_m is None
        else np.minimum.reduceat(data.surge_own_m, starts),
        wave_conflicts=_reach_conflicts(data.wave_conflicts, starts),
        surge_carry=None if data.surge_carry is None else data.surge_carry[starts],
        surge_slope=None if data.surge_slope is None else data.surge_slope[starts])
    return Reaches(merged, starts, ends)


def _reach_conflicts(conflicts: np.ndarray | None, starts: np.ndarray
                     ) -> np.ndarray | None:
    """Conflict windows by reach (the first and last section of every window end and
    start a reach)."""
    if conflicts is None or not len(conflicts):
        return conflicts
    moved = conflicts.copy()
    moved[:, :2] = np.searchsorted(starts, conflicts[:, :2], side="right") - 1
    return moved


def design_from_reaches(fine: ProblemData, reaches: Reaches, form: Formulation) -> Design:
    """The design of a solved reach model: each reach's options in the order the
    solution lays them (:meth:`Formulation.arrangement`), by slope length, with piece
    boundaries turned into chainage section by section; merged."""
    catalogue = fine.study.catalogue
    fractions = form.fractions()
    chainage = fine.node_chainage_m
    pieces: list[Piece] = []
    for r, (a, b) in enumerate(zip(reaches.first.tolist(), reaches.last.tolist(),
                                   strict=True)):
        share = np.clip(fractions[r], 0.0, None)
        if share.sum() <= 0:
            raise ValueError(f"reach {r}: the solution lays no pipe")
        share = share / share.sum()
        slope = np.concatenate([[0.0], np.cumsum(fine.length_m[a:b + 1])])
        along = chainage[a:b + 2]
        tiny = share * (along[-1] - along[0]) < SLIVER_M
        if tiny.all():
            tiny[int(np.argmax(share))] = False
        share[int(np.argmax(np.where(tiny, -1.0, share)))] += share[tiny].sum()
        share[tiny] = 0.0
        order = [(j, part) for j, part in form.arrangement(r, share) if part > 0]
        stops = np.cumsum([part for _, part in order]) * slope[-1]
        start = float(along[0])
        for index, (j, _) in enumerate(order):
            stop = float(along[-1]) if index == len(order) - 1 else \
                float(np.interp(stops[index], slope, along))
            if stop > start:
                pieces.append(Piece(start, stop, catalogue[j]))
                start = stop
    return Design(tuple(pieces)).merged()


def reach_use(fine: ProblemData, reaches: Reaches, design: Design
              ) -> dict[tuple[str, int, int], float]:
    """Values of the reach model's ``x`` (share of each reach's slope length), ``y`` and
    first/last picks for a design (a warm start)."""
    catalogue = fine.study.catalogue
    chainage = fine.node_chainage_m
    share = np.zeros((fine.n_sections, fine.n_options))  # slope length per fine section
    for piece in design.pieces:
        j = catalogue.index_of(piece.option)
        overlap = np.clip(np.minimum(piece.to_m, chainage[1:])
                          - np.maximum(piece.from_m, chainage[:-1]), 0.0, None)
        share[:, j] += overlap / fine.chainage_length_m * fine.length_m
    values: dict[tuple[str, int, int], float] = {}
    starts = np.array([piece.from_m for piece in design.pieces])
    for r, (a, b) in enumerate(zip(reaches.first.tolist(), reaches.last.tolist(),
                                   strict=True)):
        laid = share[a:b + 1].sum(axis=0) / fine.length_m[a:b + 1].sum()
        for j in np.flatnonzero(laid > 0).tolist():
            values["x", r, j] = float(laid[j])
            values["y", r, j] = 1.0
        for end, at in (("first", chainage[a] + 1e-9), ("last", chainage[b + 1] - 1e-9)):
            piece = min(int(np.searchsorted(starts, at, side="right")) - 1,
                        len(design.pieces) - 1)
            values[end, r, catalogue.index_of(design.pieces[max(piece, 0)].option)] = 1.0
    return values


def refine(fine: ProblemData, reaches: Reaches, fractions: np.ndarray) -> np.ndarray:
    """Fractions of the reach model (share of each reach's slope length) as fractions of
    the fine sections: each reach's options laid in the section order by slope length."""
    out = np.zeros((fine.n_sections, fine.n_options))
    for r, (a, b) in enumerate(zip(reaches.first.tolist(), reaches.last.tolist(),
                                   strict=True)):
        share = np.clip(fractions[r], 0.0, None)
        if a == b:
            out[a] = share
            continue
        order = [j for j in fine.order if share[j] > 0]
        lengths = fine.length_m[a:b + 1]
        edges = np.concatenate([[0.0], np.cumsum(lengths)])
        laid = share[order] / share[order].sum() * edges[-1]
        stops = np.cumsum(laid)
        stops[-1] = edges[-1]
        begins = np.concatenate([[0.0], stops[:-1]])
        overlap = np.clip(np.minimum(stops[None, :], edges[1:, None])
                          - np.maximum(begins[None, :], edges[:-1, None]), 0.0, None)
        out[a:b + 1, order] = overlap / lengths[:, None]
    return out


def points_near(data: ProblemData, result: CheckResult) -> ActivePoints:
    """Check points (not screened out) to add to the model after ``result``.

    While the design violates some pressure, only the deepest point of each run of
    violated points (per scenario) is added: on a long ridge the whole run is usually
    cleared once its deepest point is, and every point added splits a reach, so adding
    them all makes the integer programmes far larger than they need be. Once nothing is
    violated, every point within NEAR_M of its minimum is added. A node adds both its
    sides, a point inside a section adds the inside of that section and its end nodes.
    """
    limit = data.study.surge.min_transient_pressure_m
    margins = [(scenario.points["chainage_m"].to_numpy(), _margin_m(scenario.points, limit))
               for scenario in result.scenarios]
    violated = any((margin < -VIOLATION_M).any() for _, margin in margins)
    wanted = ActivePoints.none(data)
    for along, margin in margins:
        close = _deepest_violations(along, margin) if violated else along[margin < NEAR_M]
        if len(close):
            _mark(data, wanted, close)
    return ActivePoints(wanted.up & ~data.screened_up, wanted.down & ~data.screened_down,
                        wanted.interior & ~data.screened_interior)


def _margin_m(points, limit: float | None) -> np.ndarray:
    """Pressure head above its minimum at every check point, or above the down-surge
    limit after the surge head where that is less."""
    margin = (points["pressure_m"] - points["min_pressure_m"]).to_numpy()
    if limit is not None and "transient_pressure_m" in points:
        margin = np.minimum(margin, points["transient_pressure_m"].to_numpy() - limit)
    return margin


def _deepest_violations(along: np.ndarray, margin: np.ndarray) -> np.ndarray:
    """Chainage of the deepest point of each run of violated points."""
    bad = margin < -VIOLATION_M
    edges = np.flatnonzero(np.diff(np.concatenate([[0], bad.astype(int), [0]])))
    deepest = [a + int(np.argmin(margin[a:b]))
               for a, b in zip(edges[::2], edges[1::2], strict=True)]
    return along[deepest]


def _mark(data: ProblemData, wanted: ActivePoints, close: np.ndarray) -> None:
    """Mark the points at chainages ``close`` in ``wanted`` (its arrays, in place)."""
    chainage = data.node_chainage_m
    index = np.clip(np.searchsorted(chainage, close), 0, data.n_sections)
    on_node = np.abs(chainage[index] - close) <= 1e-6
    nodes = index[on_node]
    wanted.up[nodes] = True
    wanted.down[nodes] = True
    inside = np.clip(index[~on_node] - 1, 0, data.n_sections - 1)
    wanted.interior[inside] = True
    wanted.down[inside] = True
    wanted.up[inside + 1] = True
