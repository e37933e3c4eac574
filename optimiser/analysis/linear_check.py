"""The linear check: the check of a fixed design in linear form, for fast repeated runs.

For a given design every segment belongs to a *group*: same pipe option and same set of
offtakes downstream, hence the same flow and friction gradient in any scenario. The
energy at every check point is then linear in the groups' gradients J_g and velocity
heads h_g (Bernoulli with losses, as in :mod:`optimiser.hydraulics.gradeline`, whose
functions build the matrices below from unit losses, so the two cannot disagree):

    E_p = H - sum_g ( A_pg J_g + B_pg h_g )

where A_pg is the pipe length of group g upstream of point p, and B_pg collects the
local-loss coefficients upstream of p that act on group g's velocity head (per-km
allowance times length/1000, entrance, fittings). The pressure head is
E_p - h_g(p) - z_p and the outlet energy E_end - (K_final + K_exit) h_g(last).
Evaluating S samples costs one (S x G) friction evaluation and two (S x G) x (G x P)
products, instead of S full checks; the result is identical to the check's (tested).

Speed: the pressure margins of all points less the source level come from one product
[X | 1] [-M ; c], with X = [J | h] (S x 2G), M = [A | B + E]^T (2G x P), E putting a 1
on each point's own velocity head, and c = -(z + minimum pressure). The capacity search
works on an *active set* of points: those that were the least margin at some full
evaluation. Each sample's bracket is then checked at its lower end against every point;
where a point outside the set is lower, it joins the set and the sample is searched
again. Since the full margin is never above the active set's and both fall with flow,
an accepted bracket holds the same root as a search over every point would.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from optimiser.analysis.flows import (
    carried_flow_m3_s,
    gradient_with_roughness,
    node_point_k,
    offtakes_downstream,
)
from optimiser.analysis.grid import design_grid
from optimiser.analysis.limits import CHECK_TOLERANCE, node_min_pressure_m
from optimiser.hydraulics.gradeline import (
    energy_line_m,
    outlet_energy_m,
    section_loss_m,
    start_point_loss_m,
)
from optimiser.hydraulics.local_losses import velocity_head_m, velocity_m_s
from optimiser.model import Design, Study

_BLOCK_ELEMENTS = 1 << 22  # samples x points per product (32 MiB of float64)
_SAME_MARGIN_M = CHECK_TOLERANCE


@dataclass
class LinearCheck:
    """The linear check of one design: its matrices (see the module docstring)."""

    study: Study
    group_option: list  # PipeOption of each group
    group_offtake_mask: np.ndarray  # (G, n_offtakes) bool: offtakes carried by group
    length_matrix: np.ndarray  # A: (P, G)
    loss_matrix: np.ndarray  # B: (P, G)
    point_group: np.ndarray  # (P,) group whose velocity head sets the HGL at the point
    point_level_m: np.ndarray  # (P,) pipe level
    point_min_pressure_m: np.ndarray  # (P,)
    point_chainage_m: np.ndarray  # (P,)
    outlet_length: np.ndarray  # (G,) A row of the outlet (all pipe)
    outlet_loss: np.ndarray  # (G,) B row of the outlet, with final fitting and exit
    offtake_flow_m3_s: np.ndarray  # (n_offtakes,)
    margin_matrix: np.ndarray = field(init=False)  # [-M ; c]: (2G + 1, P), see the docstring
    group_diameter_m: np.ndarray = field(init=False)
    group_hazen_williams_c: np.ndarray = field(init=False)

    def __post_init__(self) -> None:
        own_head = np.zeros_like(self.loss_matrix)
        own_head[np.arange(len(self.point_group)), self.point_group] = 1.0
        constant = -(self.point_level_m + self.point_min_pressure_m)
        self.margin_matrix = np.ascontiguousarray(np.vstack([
            -np.hstack([self.length_matrix, self.loss_matrix + own_head]).T, constant]))
        self.group_diameter_m = np.array([o.internal_diameter_m for o in self.group_option])
        self.group_hazen_williams_c = np.array(
            [np.nan if o.hazen_williams_c is None else o.hazen_williams_c
             for o in self.group_option])

    @property
    def n_groups(self) -> int:
        return len(self.group_option)

    @property
    def group_materials(self) -> list[str]:
        return [o.material for o in self.group_option]

    def group_flows_m3_s(self, outlet_flow_m3_s: np.ndarray, offtake_factor: float
                         ) -> np.ndarray:
        """(S, G) flows for outlet flows of shape (S,)."""
        return carried_flow_m3_s(np.asarray(outlet_flow_m3_s, dtype=float)[:, None],
                                 offtake_factor, self.group_offtake_mask,
                                 self.offtake_flow_m3_s)

    def _gradients(self, flows: np.ndarray, roughness_mm: np.ndarray
                   ) -> tuple[np.ndarray, np.ndarray]:
        diameter = self.group_diameter_m
        gradient = gradient_with_roughness(self.study, flows, diameter, roughness_mm,
                                           self.group_hazen_williams_c)
        head = velocity_head_m(velocity_m_s(flows, diameter))
        return gradient, head

    def _state(self, outlet_flow_m3_s: np.ndarray, offtake_factor: float,
               roughness_mm: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Gradients J and velocity heads h of every group, each (S, G)."""
        flows = self.group_flows_m3_s(outlet_flow_m3_s, offtake_factor)
        return self._gradients(flows, np.broadcast_to(roughness_mm, flows.shape))

    def _outlet_margin(self, gradient: np.ndarray, head: np.ndarray, source: np.ndarray
                       ) -> np.ndarray:
        return source - gradient @ self.outlet_length - head @ self.outlet_loss \
            - self.study.outlet.required_head_m

    def _pressure_margin(self, gradient: np.ndarray, head: np.ndarray, source: np.ndarray,
                         points: np.ndarray | None = None
                         ) -> tuple[np.ndarray, np.ndarray]:
        """Least pressure margin (S,) [m] over ``points`` (all if None), and the index
        (into all points) where it occurs."""
        # [J | h | 1] @ [-M ; c]: margins less the source level in one product.
        state = np.hstack([gradient, head, np.ones((gradient.shape[0], 1))])
        matrix = self.margin_matrix if points is None else self.margin_matrix[:, points]
        count = state.shape[0]
        least = np.empty(count)
        where = np.empty(count, dtype=int)
        block = max(1, _BLOCK_ELEMENTS // max(matrix.shape[1], 1))
        for start in range(0, count, block):
            stop = min(start + block, count)
            margin = state[start:stop] @ matrix
            index = margin.argmin(axis=1)
            least[start:stop] = margin[np.arange(stop - start), index]
            where[start:stop] = index
        if points is not None:
            where = points[where]
        return source + least, where

    def margins(self, outlet_flow_m3_s: np.ndarray, offtake_factor: float,
                source_level_m: np.ndarray, roughness_mm: np.ndarray,
                outlet_only: bool = False) -> tuple[np.ndarray, np.ndarray]:
        """Outlet margin (S,) and least pressure margin (S,) [m].

        ``roughness_mm`` is (S, G) (or broadcastable); ``source_level_m`` is (S,).
        With ``outlet_only`` the pressure margin is returned as +inf.
        """
        gradient, head = self._state(outlet_flow_m3_s, offtake_factor, roughness_mm)
        source = np.asarray(source_level_m, dtype=float)
        outlet = self._outlet_margin(gradient, head, source)
        if outlet_only:
            return outlet, np.full(outlet.shape, np.inf)
        return outlet, self._pressure_margin(gradient, head, source)[0]

    def capacity_m3_s(self, offtake_factor: float, source_level_m: np.ndarray,
                      roughness_mm: np.ndarray, outlet_only: bool = False,
                      tolerance_m3_s: float = 1e-9) -> np.ndarray:
        """Largest outlet flow (S,) with every margin >= 0, by a vectorised bracketing
        search (doubling, then the Illinois variant of regula falsi; Dowell, M. &
        Jarratt, P. (1971), A modified regula falsi method for computing the root of an
        equation, BIT 11) over an active set of points checked against all of them (see
        the module docstring). NaN where even zero outlet flow fails."""
        source = np.asarray(source_level_m, dtype=float)
        count = source.shape[0]
        roughness = np.broadcast_to(np.asarray(roughness_mm, dtype=float),
                                    (count, self.n_groups))

        def full(q: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
            """Least of all margins (S,) at flows q, and the point of the least pressure."""
            gradient, head = self._state(q, offtake_factor, roughness)
            outlet = self._outlet_margin(gradient, head, source)
            if outlet_only:
                return outlet, np.zeros(count, dtype=int)
            pressure, where = self._pressure_margin(gradient, head, source)
            return np.minimum(outlet, pressure), where

        at_zero, where_zero = full(np.zeros(count))
        dead = at_zero < 0.0
        # Seed the active set with the least points at no flow and at the first step.
        active = np.unique(np.concatenate([where_zero, full(np.full(count, 0.01))[1]]))
        result = np.full(count, np.nan)
        pending = np.flatnonzero(~dead)
        while pending.size:
            points = active

            def margin(q: np.ndarray, rows: np.ndarray = pending,
                       points: np.ndarray = points) -> np.ndarray:
                gradient, head = self._state(q, offtake_factor, roughness[rows])
                outlet = self._outlet_margin(gradient, head, source[rows])
                if outlet_only:
                    return outlet
                return np.minimum(outlet, self._pressure_margin(gradient, head, source[rows],
                                                                points)[0])

            low = bracketed_root(margin, pending.size, tolerance_m3_s)
            if outlet_only:
                result[pending] = low
                break
            # The lower end must hold against every point, not only the active ones.
            gradient, head = self._state(low, offtake_factor, roughness[pending])
            every, where = self._pressure_margin(gradient, head, source[pending])
            subset = self._pressure_margin(gradient, head, source[pending], points)[0]
            accepted = every >= subset - _SAME_MARGIN_M
            result[pending[accepted]] = low[accepted]
            active = np.union1d(active, where[~accepted])
            pending = pending[~accepted]
        return result


def bracketed_root(margin, count: int, tolerance_m3_s: float) -> np.ndarray:
    """Largest q >= 0 with ``margin(q) >= 0`` for each of ``count`` decreasing functions
    evaluated together (``margin(0) >= 0`` is given): doubling from 0.01 m^3/s, then the
    Illinois variant of regula falsi to ``tolerance_m3_s``."""
    low = np.zeros(count)
    f_low = margin(low)
    high = np.full(count, 0.01)
    f_high = margin(high)
    for _ in range(60):
        grow = f_high >= 0.0
        if not grow.any():
            break
        low = np.where(grow, high, low)
        f_low = np.where(grow, f_high, f_low)
        high = np.where(grow, high * 2.0, high)
        f_high = margin(high)
    side = np.zeros(count, dtype=int)
    for _ in range(200):
        active = high - low > tolerance_m3_s
        if not active.any():
            break
        guess = np.where(active, (low * f_high - high * f_low) / (f_high - f_low), low)
        guess = np.clip(guess, low, high)
        f_guess = margin(guess)
        positive = f_guess >= 0.0
        # Illinois step: halve the stale end's value when the same end is kept twice.
        f_high = np.where(active & positive & (side == 1), f_high / 2.0, f_high)
        f_low = np.where(active & ~positive & (side == -1), f_low / 2.0, f_low)
        low = np.where(active & positive, guess, low)
        f_low = np.where(active & positive, f_guess, f_low)
        high = np.where(active & ~positive, guess, high)
        f_high = np.where(active & ~positive, f_guess, f_high)
        side = np.where(active, np.where(positive, 1, -1), side)
        # Converged in value: stop that sample.
        done = np.abs(f_guess) < 1e-10
        low = np.where(active & done, guess, low)
        high = np.where(active & done, guess, high)
    return low


def _groups(design: Design, segment_piece: np.ndarray, carried: np.ndarray
            ) -> tuple[list, np.ndarray, np.ndarray]:
    """Options of the groups, their offtake masks (G, n_offtakes) and each segment's
    group: a group is one option carrying one set of offtakes."""
    keys: dict[tuple, int] = {}
    segment_group = np.empty(len(segment_piece), dtype=int)
    options = []
    masks = []
    for i, piece in enumerate(segment_piece.tolist()):
        option = design.pieces[piece].option
        key = (option.key, tuple(carried[i].tolist()))
        if key not in keys:
            keys[key] = len(options)
            options.append(option)
            masks.append(carried[i])
        segment_group[i] = keys[key]
    mask = np.array(masks, dtype=bool).reshape(len(options), carried.shape[1])
    return options, mask, segment_group


def linear_check(study: Study, design: Design) -> LinearCheck:
    """Build the linear check of ``design`` (see the module docstring).

    The matrices come from the energy line itself: with a unit gradient (or a unit
    velocity head) in one group and none elsewhere, the energy lost down to each point
    is that group's column of A (or B).
    """
    if study.is_scheme:
        # Its matrices follow one chain from the source; a tree needs a path per branch.
        raise ValueError("the linear check covers a single route, not a branched scheme "
                         f"('{study.title}' has {len(study.branches)} branches)")
    grid = design_grid(study, design)
    n = len(grid.segment_length_m)
    options, masks, segment_group = _groups(design, grid.segment_piece,
                                            offtakes_downstream(study, grid.start_m))
    groups = len(options)
    unit = np.zeros((n, groups))
    unit[np.arange(n), segment_group] = 1.0
    length = grid.segment_length_m[:, None]
    node_k = node_point_k(study, grid.node_chainage_m)
    start_a, end_a = energy_line_m(0.0, np.zeros((n, groups)),
                                   section_loss_m(length, unit, study.local_k_per_km, 0.0))
    start_b, end_b = energy_line_m(
        0.0, start_point_loss_m(node_k, study.source.entrance_k, unit),
        section_loss_m(length, 0.0, study.local_k_per_km, unit))
    after_fitting, outlet = outlet_energy_m(end_b[-1], unit[-1], node_k[-1],
                                            study.outlet.exit_k)
    limits = node_min_pressure_m(study, grid.node_chainage_m)
    last = segment_group[-1]
    node_of_point = np.concatenate([np.arange(n), np.arange(1, n + 1), [n]])
    return LinearCheck(
        study=study, group_option=options, group_offtake_mask=masks,
        length_matrix=-np.vstack([start_a, end_a, end_a[-1:]]),
        loss_matrix=-np.vstack([start_b, end_b, after_fitting[None, :]]),
        point_group=np.concatenate([segment_group, segment_group, [last]]),
        point_level_m=grid.node_pipe_level_m[node_of_point],
        point_min_pressure_m=limits[node_of_point],
        point_chainage_m=grid.node_chainage_m[node_of_point],
        outlet_length=-end_a[-1], outlet_loss=-outlet,
        offtake_flow_m3_s=np.array([o.flow_m3_s for o in study.offtakes], dtype=float))
