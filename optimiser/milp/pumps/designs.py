"""Designs of a pumped main: judged by the check at their least station heads and priced
at their life-cycle cost; first designs that obey every rule; classes raised over the
stretch where the pressure breaks them."""

from __future__ import annotations

import dataclasses

import numpy as np

from optimiser.analysis import CheckResult, check_design
from optimiser.milp.extract import rule_problems
from optimiser.milp.outcome import VerificationError
from optimiser.milp.search.state import Candidate, SearchState
from optimiser.model import Design, Piece, Study

__all__ = ["consider", "uniform_designs", "with_stretch_raised"]


def consider(state: SearchState, design: Design, source: str, must_pass: bool
             ) -> CheckResult:
    """Check ``design``; keep it if it passes and the rules hold and its life-cycle
    cost is the least so far. ``must_pass``: a failure is a bug."""
    result = check_design(state.study, design, capacity=False)
    problems = rule_problems(state.study, design)
    if not result.ok or problems:
        if must_pass:
            details = [v.message or v.kind for v in result.violations[:5]] + problems[:5]
            raise VerificationError(f"the design from '{source}' fails the check (a bug "
                                    f"in the formulation): {'; '.join(details)}")
        return result
    cost = result.life_cycle_cost
    assert cost is not None
    best = state.best
    if best is None or cost < best.cost - 1e-9 * abs(best.cost):
        state.best = Candidate(design, result, cost, source)
    return result


def with_stretch_raised(study: Study, design: Design) -> Design | None:
    """``design`` with the stretch of each piece from its start to the last point where
    its class does not take the pressure (pumping or static, plus its surge) laid in the
    next class of its material and size (merged with the piece before it where that is
    the same option), until the check passes; None if it cannot. On a rising main the
    pressure falls downstream, so this moves a class change downstream instead of
    raising a whole piece."""
    for _ in range(8):
        result = check_design(study, design, capacity=False)
        if result.ok:
            return design
        if any(v.kind != "max_pressure" for v in result.violations):
            return None
        last = _last_breaking_m(result)
        pieces: list[Piece] = []
        for index, piece in enumerate(design.pieces):
            stop = last.get(index)
            if stop is None:
                pieces.append(piece)
                continue
            higher = _next_class(study, piece)
            if higher is None:
                return None
            stop = min(stop + 1.0, piece.to_m)  # a metre past it: points lie between
            pieces.append(dataclasses.replace(piece, to_m=stop, option=higher))
            if stop < piece.to_m:
                pieces.append(dataclasses.replace(piece, from_m=stop))
        design = Design(tuple(pieces)).merged()
    return None


def _last_breaking_m(result: CheckResult) -> dict[int, float]:
    """By piece: the last chainage where the pressure head (pumping in any scenario, or
    static) plus the piece's surge is above what its class takes."""
    table = result.pieces
    limit = np.minimum(table["allowable_head_m"].to_numpy(),
                       table["allowable_surge_head_m"].to_numpy()
                       - table["surge_head_m"].to_numpy())
    last: dict[int, float] = {}
    for scenario in result.scenarios:
        points = scenario.points
        piece = points["piece"].to_numpy().astype(int)
        head = np.maximum(points["pressure_m"].to_numpy(),
                          points["static_pressure_m"].to_numpy())
        bad = head > limit[piece] - 1e-6
        for index, chainage in zip(piece[bad].tolist(),
                                   points["chainage_m"].to_numpy()[bad].tolist(),
                                   strict=True):
            last[index] = max(last.get(index, -np.inf), chainage)
    return last


def _next_class(study: Study, piece: Piece):
    """The next stronger class of the piece's material and size (None if none)."""
    option = piece.option
    higher = [o for o in study.catalogue if o.material == option.material
              and o.dn_mm == option.dn_mm and o.allowable_head_m > option.allowable_head_m]
    return min(higher, key=lambda o: o.allowable_head_m) if higher else None


def uniform_designs(state: SearchState) -> None:
    """First designs that obey every rule: each option laid over the whole route, and
    the weakest class of each material and size with the stretches whose class the
    pressure breaks raised (a class change moved to where the pressure allows it).
    Each design takes a check or several: the clock is asked before each, and what is
    found when it runs out is kept."""
    study = state.study
    end = float(study.route.chainage_m[-1])
    weakest: dict[tuple[str, float], object] = {}
    for option in study.catalogue:
        key = (option.material, option.dn_mm)
        if key not in weakest or option.allowable_head_m < weakest[key].allowable_head_m:
            weakest[key] = option
        if state.clock.out():
            return
        consider(state, Design((Piece(0.0, end, option),)), "uniform design",
                 must_pass=False)
    for option in weakest.values():
        if state.clock.out():
            return
        raised = with_stretch_raised(study, Design((Piece(0.0, end, option),)))
        if raised is not None:
            consider(state, raised, "uniform design, classes raised", must_pass=False)
