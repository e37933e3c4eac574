"""Stage: the dynamic programme over pieces (:mod:`optimiser.milp.pumps.piece_programme`)
when the rules allow two changes or more: a bound of the model with the rules, and its
cheapest chains of pieces offered as designs (each judged by the check).

It runs when every piece must be longer than any section (so a section holds at most
one change, as the programme assumes). With three changes or more allowed it first
runs over designs of at most two changes (much faster), whose best design then prunes
the full run (labels that cannot beat it). The scenario that sets the installed power is
taken from the best design so far; if the programme's own design is set by another,
it runs once more with that one (each run is a valid bound; the larger counts).
"""

from __future__ import annotations

import dataclasses
import itertools
import time

import numpy as np

from optimiser.milp.built_model import LENGTH_MARGIN_M
from optimiser.milp.data import ProblemData
from optimiser.milp.outcome import Stage
from optimiser.milp.pump_columns import head_upper_m, pump_costs
from optimiser.milp.pumps.designs import consider, with_stretch_raised
from optimiser.milp.pumps.piece_programme import PieceResult, run_programme
from optimiser.milp.pumps.piece_tables import piece_tables, scenario_weights
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.search.state import SearchState
from optimiser.model import Design, Piece
from optimiser.model.status import Status

__all__ = ["applies", "chain_designs", "piece_bound", "run_piece_programme"]

NAME = StageKind.PUMP_PIECES.label


def applies(data: ProblemData) -> bool:
    """A pumped main whose rules allow two changes or more and whose pieces must each be
    longer than every section."""
    study = data.study
    rules = study.rules
    if study.pump is None or rules.max_changes is None or rules.max_changes < 2:
        return False
    shortest = min(rules.min_piece_length_m, study.route.total_chainage_m)
    return bool(shortest - LENGTH_MARGIN_M > float(data.chainage_length_m.max()))


def class_scenario(data: ProblemData) -> int:
    """The scenario with the most friction over the route (its losses judge the classes)."""
    admissible = data.admissible[None]
    return int(np.argmax(np.where(admissible, data.section_loss_m, 0.0).sum(axis=(1, 2))))


def station_scenario(data: ProblemData, options: np.ndarray) -> int:
    """The scenario whose power is the largest for the design laying ``options`` (n,)."""
    costs = pump_costs(data.study)
    loss = data.section_loss_m[:, np.arange(data.n_sections), options].sum(axis=1)
    need = data.study.outlet.required_head_m - data.source_level_m
    return int(np.argmax(costs.kw_per_m * np.maximum(need + loss, 0.0)))


def piece_bound(data: ProblemData, ceiling: float, station: int,
                deadline: float = np.inf, changes: int | None = None) -> PieceResult:
    """One run of the programme with ``station`` setting the installed power; with
    ``changes`` below the rules' limit, over designs with at most that many changes
    (designs only: no bound of the study then)."""
    study = data.study
    shortest = min(study.rules.min_piece_length_m, study.route.total_chainage_m)
    tables = piece_tables(data, head_upper_m(data), scenario_weights(data, station),
                          class_scenario(data), shortest)
    if changes is not None and changes < tables.max_changes:
        tables = dataclasses.replace(tables, max_changes=changes)
    return run_programme(tables, ceiling, deadline=deadline)


def chain_options(data: ProblemData, chain: list[tuple[int, int]]) -> np.ndarray:
    """(n,) option per section of a chain, each shared section given to the piece
    downstream of it."""
    options = np.empty(data.n_sections, dtype=np.int64)
    begin = 0
    for option, start in chain:  # the next piece overwrites the shared section
        options[begin:start] = option
        begin = start - 1
    return options


def chain_designs(data: ProblemData, chain: list[tuple[int, int]]) -> list[Design]:
    """Designs of a chain: each change at either node of its shared section."""
    catalogue = data.study.catalogue
    chainage = data.node_chainage_m
    end = float(chainage[-1])
    designs = []
    places = [(start - 1, start) for _, start in chain[:-1]]
    for picked in itertools.product(*places):
        cuts = [0.0, *(float(chainage[i]) for i in picked), end]
        if any(b <= a for a, b in itertools.pairwise(cuts)):
            continue
        pieces = tuple(Piece(a, b, catalogue[option]) for (option, _), a, b
                       in zip(chain, cuts[:-1], cuts[1:], strict=True))
        designs.append(Design(pieces).merged())
    return designs


def run_piece_programme(state: SearchState) -> None:
    """The stage (module docstring); nothing unless :func:`applies`."""
    data = state.data
    if not applies(data):
        return
    begun = time.perf_counter()
    if data.study.rules.max_changes > 2:  # a good first design: it prunes the full run
        _fewer_changes(state, data)
    seen: set[int] = set()
    station = class_scenario(data) if state.best is None else _design_station(state)
    made, status, bound = 0, Status.OPTIMAL, None
    while station not in seen and not state.clock.nearly_out():
        seen.add(station)
        ceiling = np.inf if state.best is None else state.best.cost
        result = piece_bound(data, ceiling, station, _deadline(state))
        made += result.labels_made
        if result.bound is not None:
            bound = result.bound if bound is None else max(bound, result.bound)
            state.raise_bound(result.bound)
        for chain in result.chains:
            if _offer(state, data, chain):
                break
        if result.bound is None:
            status = Status.NO_SOLUTION
            break
        if not result.chains or state.proven():
            break
        station = station_scenario(data, chain_options(data, result.chains[0]))
    if bound is None:  # the clock stopped it, or left it no time to start
        status = Status.NO_SOLUTION
    best = None if state.best is None else state.best.cost
    note = f"{made:,} labels" + ("" if bound is not None else "; out of time, no bound")
    state.stages.append(Stage(StageKind.PUMP_PIECES, NAME, status, best, bound,
                              time.perf_counter() - begun, 0, 0, 0, note))


SHARE = 0.9
"""Of the time left, what one run of the programme may take (the later stages keep the
rest when it runs out)."""


def _deadline(state: SearchState) -> float:
    return time.perf_counter() + max(state.clock.left() - 1.0, 0.0) * SHARE


def _fewer_changes(state: SearchState, data: ProblemData) -> None:
    """Designs of the programme over at most two changes (fast; no bound)."""
    station = class_scenario(data) if state.best is None else _design_station(state)
    ceiling = np.inf if state.best is None else state.best.cost
    result = piece_bound(data, ceiling, station, _deadline(state), changes=2)
    for chain in result.chains:
        _offer(state, data, chain)


def _design_station(state: SearchState) -> int:
    """The scenario setting the installed power of the best design so far."""
    assert state.best is not None
    station = state.best.check.station
    assert station is not None
    powers = [station.power_kw.get(s.name, 0.0) for s in state.study.scenarios]
    return int(np.argmax(powers))


def _offer(state: SearchState, data: ProblemData, chain: list[tuple[int, int]]) -> bool:
    """Judge the designs of a chain (a failing one again with its classes raised) until
    one proves the bound; True then. Each takes a check or several: the clock is asked
    before each."""
    for design in chain_designs(data, chain):
        if state.clock.out():
            return False
        result = consider(state, design, NAME, must_pass=False)
        if not result.ok:
            raised = with_stretch_raised(state.study, design)
            if raised is not None:
                consider(state, raised, NAME + ", classes raised", must_pass=False)
        if state.proven():
            return True
    return False
