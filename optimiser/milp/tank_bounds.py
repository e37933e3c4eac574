"""Lower bounds on the pipes of a reach between two tanks, for every pair of tank nodes.

With the tanks fixed, the route falls apart into gravity mains between consecutive tanks
(contract section 8: a tank restarts the energy line and the static line at its water
level). For the reach from node a (the source, or a tank at a) to node b (a tank, or
the outlet) a relaxation of its pipe problem is

    min  sum_s c_s(x_s)
    s.t. E_i = E0_a - K_start h_a(x_a) - sum_{a <= s < i} loss_s(x_s)
         E_i - h_{i-1}(x_{i-1}) >= r_i               (a < i < b)
         E_b - K_end h_{b-1}(x_{b-1}) >= R_b

with x_s one option per section among those admissible under the static line WL_a
(whole sections; the rules and fitting losses left out), E0_a the tank's water level
(or the source level) with its outlet (entrance) loss K_start, r_i = pipe level +
minimum pressure, R_b the water level of the tank at b (or the outlet's required head)
with its inlet (exit) loss K_end, h the velocity head of the option laid. In the model
the last piece of a section is its smallest pipe, so its velocity head is at least that
of any option laid there: this is a relaxation of the model.

Its Lagrangian with multipliers mu_i >= 0 on the energy rows is, with
lambda_s = mu_{s+1} + ... + mu_b (any non-increasing, non-negative sequence):

    L(a, b) = sum_{s=a}^{b-1} [ min_j (c_sj + lambda_s loss_sj + mu_{s+1} h_sj)
                                + lambda_s (r_{s+1} - r_s) ]
              + lambda_{b-1} (R_b - r_b) - lambda_a (E0_a - r_a)

where the first section's minimum also carries lambda_a K_start h_aj and the last
section's carries lambda_{b-1} K_end h_{b-1,j} instead of its mu term; summed over the
scenarios (one lambda per scenario; the option is shared). It is a lower bound for every
such lambda (weak duality; Geoffrion 1974, "Lagrangean relaxation for integer
programming", Math. Prog. Study 2). A *profile* is one lambda over the whole route,
non-increasing and non-negative, so the same profile bounds every pair at once; with the
duals of a reach's own LP (:mod:`optimiser.milp.tank_reach_lp`) it gives that reach's LP
value exactly. The minima depend on a only through the static line, whose class limits
fall into a few bands (one per distinct allowable head), so a profile costs tables of
(sections x bands) minima and one cumulative sum per start node. With surge by wave
speed (contract section 10) a class limit depends on the section (its velocities) and
on a (the slow-closure length L runs from the tank at a to the route's end), so a band
is instead each distinct set of options usable in a section from some start
(:func:`wave_bands`): the class test at the start's static line and L, with the
section's own largest velocity (at most the piece's, so a relaxation).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from optimiser.analysis.limits import CHECK_TOLERANCE, class_holds
from optimiser.analysis.surge import surge_head_m, wave_speeds_m_s
from optimiser.milp.data import ProblemData
from optimiser.model import SurgeMethod

TOLERANCE_M = 1e-7
"""An option counts as admissible under a static line this much above its limit (so
rounding never makes the bound stricter than the model)."""


@dataclass(frozen=True)
class ReachRelaxation:
    """The arrays of the relaxation above, on the nodes of the optimiser's route."""

    cost: np.ndarray
    """(n, m) cost of the whole section in option j."""
    loss_m: np.ndarray
    """(K, n, m) head lost along the section in option j [m]."""
    head_m: np.ndarray
    """(K, n, m) velocity head of option j in section s [m]."""
    usable: np.ndarray
    """(n, m, bands) option j admissible in section s when the static line falls in
    band c (band q: only options that need no new tank)."""
    margins_m: np.ndarray
    """(q,) distinct allowable static heads above a section's lowest pipe level [m]."""
    lowest_m: np.ndarray
    """(n,) lowest pipe level of each section [m]."""
    need_m: np.ndarray
    """(K, n+1) pipe level + minimum pressure at node i [m] (r, before the velocity
    head of the pipe arriving)."""
    end_need_m: np.ndarray
    """(K, n+1) the level the energy arriving at node i must reach, less ``end_k`` times
    the velocity head of the pipe arriving, if a reach ends there [m] (R: the tank's
    water level or the outlet's required head; nan where no reach ends)."""
    end_k: np.ndarray
    """(n+1,) the inlet or exit loss coefficient at the end of a reach."""
    start_m: np.ndarray
    """(K, n+1) the energy leaving node i before its outlet loss, if a reach starts
    there [m] (E0: the tank's water level or the source level)."""
    start_k: np.ndarray
    """(n+1,) the outlet or entrance loss coefficient at the start of a reach."""
    static_m: np.ndarray
    """(n+1,) the static line below a reach starting at node i [m] (nan: none may)."""
    starts: np.ndarray
    """(n+1,) a reach may start at node i (the source, a tank or a site)."""
    fixed: np.ndarray
    """(n+1,) the study's own tank stands at node i (every reach stops there)."""
    new: np.ndarray
    """(n+1,) node i is a site where ``design`` may add a tank."""
    band_of: np.ndarray | None = None
    """(n+1, n) the band of a reach starting at node a over section s (surge by wave
    speed: :func:`wave_bands`); None: by ``margins_m``."""


def relaxation(data: ProblemData) -> ReachRelaxation:
    """The relaxation of every reach of ``data`` (which has tanks)."""
    tanks = data.tanks
    assert tanks is not None
    study = data.study
    n = data.n_sections
    pipe = data.node_pipe_level_m
    need = np.repeat((pipe + data.node_min_pressure_m)[None], data.n_scenarios, axis=0)
    level = tanks.level_m
    end = np.where(tanks.at_node[None, :], level[None, :], np.nan).repeat(data.n_scenarios, 0)
    end[:, 0] = np.nan
    end[:, n] = study.outlet.required_head_m
    end_k = np.full(n + 1, tanks.inlet_k)
    end_k[n] = study.outlet.exit_k
    start = np.where(tanks.at_node[None, :], level[None, :], np.nan).repeat(data.n_scenarios, 0)
    start[:, 0] = data.source_level_m
    start[:, n] = np.nan
    start_k = np.full(n + 1, tanks.outlet_k)
    start_k[0] = study.source.entrance_k
    static = level.copy()
    static[0] = study.source.top_water_level_m
    starts = tanks.at_node.copy()
    starts[0], starts[n] = True, False
    band_of = None
    if study.surge.method is SurgeMethod.JOUKOWSKY:
        margins = np.zeros(0)
        usable, band_of = wave_bands(data, static, starts)
    else:
        margin = study.catalogue.allowable_head_m - study.surge_allowance_m
        margins = np.unique(margin)
        rank = np.searchsorted(margins, margin)
        bands = np.arange(len(margins) + 1)
        usable = data.admissible[:, :, None] & (
            ~tanks.conditional[:, :, None] | (rank[None, :, None] >= bands[None, None, :]))
    return ReachRelaxation(data.section_cost, data.section_loss_m, data.velocity_head_m,
                           usable, margins, np.minimum(pipe[:-1], pipe[1:]), need, end,
                           end_k, start, start_k, static, starts, tanks.fixed.copy(),
                           tanks.candidate.copy(), band_of)


def wave_bands(data: ProblemData, static_m: np.ndarray, starts: np.ndarray
               ) -> tuple[np.ndarray, np.ndarray]:
    """Surge by wave speed: (n, m, bands) the options usable in section s in each band,
    and (n+1, n) the band of a reach from start a over section s. Option j is usable
    from a if admissible and its class takes the static head of a's static line over
    the section's lowest pipe level, and that head plus its surge (the section's own
    largest velocity, L from a to the route's end) within its surge limit."""
    study = data.study
    tanks = data.tanks
    assert tanks is not None and tanks.node_reflection_m is not None
    catalogue = study.catalogue
    pipe = data.node_pipe_level_m
    lowest = np.minimum(pipe[:-1], pipe[1:])
    fastest = data.velocity_m_s.max(axis=0)
    wave = wave_speeds_m_s(study, catalogue)
    first = np.flatnonzero(starts)
    n = data.n_sections
    band_of = np.zeros((n + 1, n), dtype=np.int32)
    found: list[np.ndarray] = []
    for s in range(n):
        a = first[first <= s]
        head = (static_m[a] - lowest[s])[:, None]
        surge = surge_head_m(study, wave[None, :], fastest[s][None, :],
                             length_m=tanks.node_reflection_m[a][:, None])
        ok = data.admissible[s][None, :] & class_holds(
            head, catalogue.allowable_head_m[None, :], CHECK_TOLERANCE) & class_holds(
            head + surge, catalogue.surge_limit_head_m[None, :], CHECK_TOLERANCE)
        patterns, which = np.unique(ok, axis=0, return_inverse=True)
        band_of[a, s] = which.ravel()
        found.append(patterns)
    usable = np.zeros((n, len(catalogue), max(len(p) for p in found)), dtype=bool)
    for s, patterns in enumerate(found):
        usable[s, :, :len(patterns)] = patterns.T
    return usable, band_of


@dataclass(frozen=True)
class PairFrame:
    """Every reach (start node a, span of o + 1 sections) that can be feasible, as
    (starts x width) tables; what does not depend on a profile."""

    first: np.ndarray
    """(A,) the start nodes."""
    section: np.ndarray
    """(A, W) section a + o (clipped to the last section)."""
    band: np.ndarray
    """(A, W) band of the static line of a over that section."""
    valid: np.ndarray
    """(A, W) the reach from a to a + o + 1 ends at a tank node or the outlet, passes no
    tank of the study's own, and no pressure or end it needs is above the energy leaving a."""

    @property
    def last(self) -> np.ndarray:
        """(A, W) the end node of each reach."""
        return self.first[:, None] + np.arange(1, self.section.shape[1] + 1)[None, :]


def pair_frame(relax: ReachRelaxation) -> PairFrame:
    """The reaches worth bounding: they span at most as far as some option takes the
    static line of their start, and end before the next tank of the study's own."""
    n = len(relax.lowest_m)
    first = np.flatnonzero(relax.starts)
    usable_any = relax.usable.any(axis=1)  # (n, bands)
    width = 1
    for a in first.tolist():
        band = reach_bands(relax, a, np.arange(a, n))
        bad = np.flatnonzero(~usable_any[np.arange(a, n), band])
        width = max(width, n - a if not len(bad) else int(bad[0]))
    offsets = np.arange(width)[None, :]
    section = np.minimum(first[:, None] + offsets, n - 1)
    inside = first[:, None] + offsets < n
    band = _bands_table(relax, first, section)
    last = first[:, None] + offsets + 1
    ends = relax.new | relax.fixed
    ends[n] = True
    valid = inside & ends[np.minimum(last, n)]
    # no tank of the study's own strictly inside a reach
    fixed_count = np.concatenate([[0], np.cumsum(relax.fixed)])  # fixed nodes below i
    inner = fixed_count[np.minimum(last, n)] - fixed_count[first + 1][:, None]
    valid &= inner == 0
    valid &= _energy_reaches(relax, first, last)
    return PairFrame(first, section, band, valid)


def reach_bands(relax: ReachRelaxation, a: int, sections: np.ndarray) -> np.ndarray:
    """Band of the static line of start a over ``sections``: how many distinct margins
    the static head there exceeds (their classes need a lower static line)."""
    if relax.band_of is not None:
        return relax.band_of[a, sections]
    head = relax.static_m[a] - relax.lowest_m[sections] - TOLERANCE_M
    return np.searchsorted(relax.margins_m, head, side="left")


def _bands_table(relax: ReachRelaxation, first: np.ndarray, section: np.ndarray
                 ) -> np.ndarray:
    if relax.band_of is not None:
        return relax.band_of[first[:, None], section]
    head = relax.static_m[first][:, None] - relax.lowest_m[section] - TOLERANCE_M
    return np.searchsorted(relax.margins_m, head, side="left")


def _energy_reaches(relax: ReachRelaxation, first: np.ndarray, last: np.ndarray
                    ) -> np.ndarray:
    """(A, W) in every scenario the energy leaving a is at least every pressure's need
    inside the reach and the need at its end (energy only falls along a pipe)."""
    n = len(relax.lowest_m)
    ok = np.ones(last.shape, dtype=bool)
    end = np.minimum(last, n)
    for k in range(relax.need_m.shape[0]):
        need = relax.need_m[k]
        inner = np.full(last.shape, -np.inf)  # highest need at nodes a+1 .. b-1
        inner[:, 1:] = np.maximum.accumulate(need[np.minimum(last[:, :-1], n)], axis=1)
        top = relax.start_m[k, first][:, None]
        ok &= (inner <= top) & (np.nan_to_num(relax.end_need_m[k, end], nan=np.inf) <= top)
    return ok


def pair_bounds(relax: ReachRelaxation, frame: PairFrame, profile: np.ndarray) -> np.ndarray:
    """(A, W) the Lagrangian bound L(a, b) of every reach at ``profile`` ((K, n), made
    non-increasing and non-negative); inf where a reach cannot be feasible.

    A section's term is its cheapest option at the prices, with the velocity head of
    that option in the rows it enters: the pressure at its end node (mu = lambda_s -
    lambda_{s+1}), the outlet loss where the reach starts, the inlet or exit loss where
    it ends. Valid for the model, whose last piece in a section is its smallest pipe (so
    its velocity head is at least that of any option laid there)."""
    lam = np.minimum.accumulate(np.maximum(profile, 0.0), axis=1)
    n = len(relax.lowest_m)
    tables = _tables(relax, lam)  # first, middle, last, only: (n, bands) each
    width = frame.section.shape[1]
    beyond = frame.first[:, None] + np.arange(width)[None, :] >= n
    middle = tables[1][frame.section, frame.band]
    middle[:, 0] = tables[0][frame.first, frame.band[:, 0]]
    middle[beyond] = np.inf
    sums = np.cumsum(middle, axis=1)
    closing = tables[2][frame.section, frame.band]
    bounds = np.empty_like(sums)
    bounds[:, 0] = tables[3][frame.first, frame.band[:, 0]]
    bounds[:, 1:] = sums[:, :-1] + closing[:, 1:]
    first = frame.first
    opening = (lam[:, first] * (relax.start_m[:, first] - relax.need_m[:, first])).sum(axis=0)
    bounds -= opening[:, None]
    return np.where(frame.valid & ~beyond, bounds, np.inf)


def _tables(relax: ReachRelaxation, lam: np.ndarray) -> list[np.ndarray]:
    """(n, bands) least term of section s at the prices ``lam`` when it is the first
    of a reach, in the middle, the last, or the only section."""
    n = lam.shape[1]
    after = np.concatenate([lam[:, 1:], np.zeros((lam.shape[0], 1))], axis=1)
    base = relax.cost + np.einsum("kn,knm->nm", lam, relax.loss_m)
    base += (lam * np.diff(relax.need_m, axis=1)).sum(axis=0)[:, None]
    pressure = np.einsum("kn,knm->nm", lam - after, relax.head_m)
    k_start = relax.start_k[:n]
    opening = np.einsum("kn,knm->nm", lam * k_start[None, :], relax.head_m)
    end_gap = np.nan_to_num(relax.end_need_m[:, 1:] - relax.need_m[:, 1:], nan=0.0)
    closing = np.einsum("kn,knm->nm", lam * relax.end_k[None, 1:], relax.head_m)
    closing += (lam * end_gap).sum(axis=0)[:, None]
    terms = (base + opening + pressure, base + pressure, base + closing,
             base + opening + closing)
    bands = range(relax.usable.shape[2])
    return [np.stack([np.where(relax.usable[:, :, c], term, np.inf).min(axis=1)
                      for c in bands], axis=1) for term in terms]
