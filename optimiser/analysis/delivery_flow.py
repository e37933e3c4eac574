"""The uncontrolled flow of every delivery point of a scheme at once (contract section 8,
``outlets``).

The uncontrolled flow of a delivery point is the delivery flow q at which its energy
after the exit loss equals its required head, every other flow of the scenario
unchanged. Raising that one delivery flow from q0 to q adds q - q0 to every pipe on the
path from the source down to the delivery point (the segments of each line above the
junction of the next line, then the whole delivering line) and to no other pipe, so the
rest of the tree does not enter. Along the path, by Bernoulli's equation with losses
(Streeter, V.L. & Wylie, E.B. (1985), Fluid Mechanics, ch. 3; the equations of
:mod:`optimiser.hydraulics.gradeline`, a branch starting from its parent's energy
arriving at the junction, contract section 7):

    E_out(q) = H - sum_i [K_i h_i + L_i (J_i + K'_i / 1000 h_i)] - (K_end + K_exit) h_n
    h_i = V_i^2 / (2 g),   V_i = (Q_i - q0 + q) / (pi d_i^2 / 4)

with H [m] the scenario's source level, or the water level of the last break-pressure
tank on the path, where the energy restarts (contract section 8); K_i [-] the point loss
at the start of pipe i (fittings at its node, plus the entrance, junction or tank outlet
K where a line or a reach starts); L_i [m], J_i [m/m] by the study's friction method
(:func:`optimiser.analysis.flows.gradient_with_roughness`), K'_i [1/km] the line's
allowance; K_end the fitting at the delivery node. E_out falls as q grows (head loss
rises with flow, :mod:`optimiser.hydraulics.friction`), so the root of
E_out(q) - required head is bracketed from q = 0 up and found for every delivery point
of a scenario at once by Chandrupatla's bracketing method (Chandrupatla, T.R. (1997), A
new hybrid quadratic/bisection algorithm for finding the zero of a nonlinear function
without using derivatives, Adv. Eng. Software 28(3); ``scipy.optimize.elementwise``) to
machine precision. Like the rest of the check it reads only the study and the design.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
from scipy.optimize import elementwise

from optimiser.analysis.design_hydraulics import DesignHydraulics, ScenarioArrays
from optimiser.analysis.flows import gradient_with_roughness
from optimiser.hydraulics.gradeline import section_loss_m
from optimiser.hydraulics.local_losses import velocity_head_m, velocity_m_s
from optimiser.model import Scenario, Study
from optimiser.model.lines import Line

_DOUBLINGS = 60
"""Bracket search: the flow doubles at most this often before the margin is taken as
never running out (an infinite uncontrolled flow)."""


@dataclass(frozen=True)
class Span:
    """Segments ``first:stop`` of line ``line`` on the path to a delivery point; the
    point loss at ``first`` adds ``entry_k`` (entrance, junction or tank outlet)."""

    line: str
    first: int
    stop: int
    entry_k: float


@dataclass(frozen=True)
class PathStart:
    """Where the energy of a path starts: the source (``tank_level_m`` None) or the water
    level of the last break-pressure tank on the path."""

    spans: tuple[Span, ...]
    tank_level_m: float | None


def _junction_node(part: DesignHydraulics, chainage_m: float) -> int:
    """Grid node of a junction on ``part``'s line: the path takes the segments above it
    (the energy arriving there, before a fitting of the parent's, as the check does)."""
    return int(np.argmin(np.abs(part.grid.node_chainage_m - chainage_m)))


def path_of(parts: Mapping[str, DesignHydraulics], lines: Mapping[str, Line],
            name: str, outlet_k: float) -> PathStart:
    """The spans of the path from the source (or the last tank above) to the end of line
    ``name``, in flow order."""
    spans: list[Span] = []
    line: Line | None = lines[name]
    stop = len(parts[name].grid.segment_length_m)
    while line is not None:
        part = parts[line.name]
        above = [i for i, node in enumerate(part.tanks.node.tolist()) if node < stop]
        if above:  # the energy restarts at the last tank above: nothing higher counts
            index = above[-1]
            first = int(part.tanks.node[index])
            entry = line.start_k if first == 0 else outlet_k
            spans.append(Span(line.name, first, stop, entry))
            return PathStart(tuple(reversed(spans)), float(part.tanks.level_m[index]))
        spans.append(Span(line.name, 0, stop, line.start_k))
        if line.parent is None:
            break
        stop = _junction_node(parts[line.parent], line.at_chainage_m)
        line = lines[line.parent]
    return PathStart(tuple(reversed(spans)), None)


@dataclass(frozen=True)
class DeliveryPaths:
    """The paths of several delivery points in one scenario, their pipes end to end:
    path p holds pipes ``offsets[p]:offsets[p + 1]``."""

    offsets: np.ndarray
    length_m: np.ndarray
    diameter_m: np.ndarray
    roughness_mm: np.ndarray
    """Roughness of the scenario [mm] (its factor or replacement applied)."""
    hazen_williams_c: np.ndarray
    local_k_per_km: np.ndarray
    point_k: np.ndarray
    other_flow_m3_s: np.ndarray
    """Flow of each pipe less the delivery flow of its path's delivery point [m^3/s]."""
    head_m: np.ndarray
    """Energy where each path starts [m]."""
    end_k: np.ndarray
    """Fitting K at the delivery node plus the exit K [-], on each path's last pipe."""
    required_head_m: np.ndarray
    delivery_flow_m3_s: np.ndarray


def delivery_paths(parts: Mapping[str, DesignHydraulics], lines: Mapping[str, Line],
                   starts: Mapping[str, PathStart], scenario: Scenario,
                   arrays: Mapping[str, ScenarioArrays]) -> DeliveryPaths:
    """Gather the pipes of the path of every line in ``starts`` in ``scenario``, whose
    hydraulics at the scenario's flows are ``arrays``."""
    columns: dict[str, list[np.ndarray]] = {key: [] for key in (
        "length", "diameter", "roughness", "c", "allowance", "point", "other")}
    head, end_k, required, delivery = [], [], [], []
    for name, start in starts.items():
        line, part = lines[name], parts[name]
        flow = line.delivery_flow_m3_s(scenario)
        for span in start.spans:
            own, rows = parts[span.line], slice(span.first, span.stop)
            point = own.node_point_k[rows].copy()
            point[0] += span.entry_k
            columns["length"].append(own.grid.segment_length_m[rows])
            columns["diameter"].append(own.diameter_m[rows])
            columns["roughness"].append(scenario.effective_roughness_mm(own.roughness_mm[rows]))
            columns["c"].append(own.hazen_williams_c[rows])
            columns["allowance"].append(np.full(span.stop - span.first,
                                                lines[span.line].local_k_per_km))
            columns["point"].append(point)
            columns["other"].append(arrays[span.line].flow_m3_s[rows] - flow)
        head.append(scenario.source_level_m if start.tank_level_m is None
                    else start.tank_level_m)
        end_k.append(part.node_point_k[-1] + line.exit_k)
        required.append(line.required_head_m)
        delivery.append(flow)
    return DeliveryPaths(_path_offsets(starts), *(np.concatenate(columns[key]) for key in (
        "length", "diameter", "roughness", "c", "allowance", "point", "other")),
        np.array(head), np.array(end_k), np.array(required), np.array(delivery))


def _path_offsets(starts: Mapping[str, PathStart]) -> np.ndarray:
    sizes = [sum(span.stop - span.first for span in start.spans) for start in starts.values()]
    return np.concatenate([[0], np.cumsum(sizes)]).astype(int)


def outlet_margins_m(study: Study, paths: DeliveryPaths, flow_m3_s: np.ndarray,
                     which: np.ndarray) -> np.ndarray:
    """Margin at the delivery point of several paths at once.

    Parameters
    ----------
    study : Study
        For its friction method (:func:`optimiser.analysis.flows.gradient_with_roughness`).
    paths : DeliveryPaths
        The paths of one scenario (:func:`delivery_paths`).
    flow_m3_s : array_like, shape (k,)
        Trial delivery flow q [m^3/s] of each path in ``which``.
    which : array_like of int, shape (k,)
        Indices of the paths.

    Returns
    -------
    numpy.ndarray, shape (k,)
        E_out(q) - required head [m] (the module docstring's equation: Bernoulli with
        losses, Streeter & Wylie 1985, ch. 3); positive while the delivery point has
        head to spare.
    """
    which = np.asarray(which).astype(int).reshape(-1)
    flow = np.asarray(flow_m3_s, dtype=float).reshape(-1)
    first, stop = paths.offsets[which], paths.offsets[which + 1]
    sizes = stop - first
    owner = np.repeat(np.arange(len(which)), sizes)
    ends = np.cumsum(sizes)
    pipes = np.arange(ends[-1]) - np.repeat(ends - sizes, sizes) + np.repeat(first, sizes)
    q = paths.other_flow_m3_s[pipes] + flow[owner]
    diameter = paths.diameter_m[pipes]
    head = velocity_head_m(velocity_m_s(q, diameter))
    gradient = gradient_with_roughness(study, q, diameter, paths.roughness_mm[pipes],
                                       paths.hazen_williams_c[pipes])
    loss = paths.point_k[pipes] * head + section_loss_m(
        paths.length_m[pipes], gradient, paths.local_k_per_km[pipes], head)
    lost = np.bincount(owner, weights=loss, minlength=len(which))
    return (paths.head_m[which] - lost - paths.end_k[which] * head[ends - 1]
            - paths.required_head_m[which])


def uncontrolled_flows_m3_s(study: Study, paths: DeliveryPaths) -> list[float | None]:
    """The uncontrolled flow of every path's delivery point.

    Parameters
    ----------
    study : Study
        The study (its friction method).
    paths : DeliveryPaths
        The paths of one scenario (:func:`delivery_paths`).

    Returns
    -------
    list of float or None
        Per path, the delivery flow q [m^3/s] at which E_out(q) equals the required head:
        bracketed from q = 0 up (a first guess from a loss growing with q^2, then
        doublings), then Chandrupatla's method (Chandrupatla 1997) to machine precision.
        None where even no delivery meets the required head, inf where no flow up to
        2^60 times the first guess runs it short, nan where the root search did not
        converge (the caller then asks the general search).
    """
    count = len(paths.head_m)
    which = np.arange(count)

    def margin(q: np.ndarray, index: np.ndarray) -> np.ndarray:
        return outlet_margins_m(study, paths, q, index)
    at_zero = margin(np.zeros(count), which)
    low = np.zeros(count)
    high = np.maximum(paths.delivery_flow_m3_s, 1e-3)
    at_high = margin(high, which)
    at_low = at_zero.copy()
    # A first guess from a head loss growing with the square of the flow, as the
    # general search does; the bracket is verified below.
    held = at_high >= 0.0
    low[held], at_low[held] = high[held], at_high[held]
    falls = held & (at_zero > at_high)
    guess = high * 1.2 * np.sqrt(np.where(falls, at_zero, 1.0)
                                 / np.where(falls, at_zero - at_high, 1.0))
    high = np.where(falls, np.maximum(guess, 2 * high), np.where(held, 2 * high, high))
    open_ = held & (at_zero >= 0.0)
    for _ in range(_DOUBLINGS):
        if not open_.any():
            break
        index = np.flatnonzero(open_)
        at = margin(high[index], index)
        short = at < 0.0
        at_high[index] = at
        grows = index[~short]
        low[grows], at_low[grows] = high[grows], at[~short]
        high[grows] *= 2.0
        open_[index[short]] = False
    return _roots(margin, low, high, at_zero, at_low, open_)


def _roots(margin, low: np.ndarray, high: np.ndarray, at_zero: np.ndarray,
           at_low: np.ndarray, never_short: np.ndarray) -> list[float | None]:
    """Roots inside the brackets [low, high] (margin(low) >= 0 > margin(high))."""
    result = np.where(at_low == 0.0, low, np.nan)
    search = np.flatnonzero((at_zero >= 0.0) & ~never_short & (at_low > 0.0))
    if len(search):
        found = elementwise.find_root(margin, (low[search], high[search]),
                                      args=(search,))
        result[search] = np.where(found.status == 0, found.x, np.nan)
    result[never_short] = np.inf
    return [None if zero < 0.0 else float(root)
            for zero, root in zip(at_zero.tolist(), result.tolist(), strict=True)]


def path_starts(parts: Mapping[str, DesignHydraulics], lines: Sequence[Line],
                outlet_k: float) -> dict[str, PathStart]:
    """The path of every line's delivery point (``outlet_k``: the tanks' outlet K)."""
    by_name = {line.name: line for line in lines}
    return {line.name: path_of(parts, by_name, line.name, outlet_k) for line in lines}
