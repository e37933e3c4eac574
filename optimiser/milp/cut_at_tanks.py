"""Break-pressure tanks of a branched scheme's own in ``design``: the scheme cut at a tank.

A tank restarts the energy line and the static line at its water level (contract
section 8). Cut the tree at one: everything below it (the rest of its line and every
branch leaving that line below the tank, with their branches) sees neither the pipes
above nor the source, only the tank's level; everything above sees the part below only
through the flow that passes the tank. So the scheme is two studies whose costs add:

- above: the line ends at the tank, which is its delivery point (required head the
  water level, exit loss the tank's ``inlet_k``), delivering in each scenario the flow
  that passes the tank; the branches below the tank are left out;
- below: the rest of the line is the trunk of a scheme of its own, its source the tank
  (level and top water level its water level, entrance loss ``outlet_k``), with the
  branches that leave it below the tank.

Each part is designed by :func:`optimiser.milp.optimise_design` (a part with more tanks
is cut again) and the designs are joined; the check judges the joined design as one
study. The rules apply per line (section 7); the cut line's ``max_changes`` is shared
by its two parts: both are first designed with the whole budget (a relaxation, so the
sum of their bounds bounds the scheme); if the joined line has too many changes, the
part below and then the part above are designed again with what the other left (those
designs are offered, the bound stays the relaxation's).

New tanks chosen by ``design`` (``[break_pressure_tanks] cost``) are chosen in each
part (the part below keeps the marked sites below the tank, its trunk's chainages from
the tank); ``max_count`` is shared like ``max_changes``: each part first may add up to
``max_count`` (a relaxation), and if the two together add more, each part is designed
again within what the other left.
"""

from __future__ import annotations

import dataclasses
import time
from collections.abc import Callable

import numpy as np

from optimiser.analysis.flows import line_flows_m3_s
from optimiser.io.errors import InputError
from optimiser.milp.joined import (
    bound_sum,
    infeasible_outcome,
    joined_outcome,
    named_stages,
    objective_of,
    with_whole_lengths,
)
from optimiser.milp.outcome import DesignOutcome
from optimiser.milp.search.state import Settings
from optimiser.model import (
    TRUNK,
    BreakPressureTank,
    Design,
    Outlet,
    Piece,
    Source,
    Study,
)
from optimiser.model.lines import Line, line_of, study_lines
from optimiser.model.status import Status

Plain = Callable[..., DesignOutcome]


def below_branches(study: Study, line: str, chainage_m: float) -> set[str]:
    """Names of the branches below ``chainage_m`` of ``line``: those leaving it further
    down, and every branch below them."""
    found = {b.name for b in study.branches if b.parent == line and b.at_chainage_m > chainage_m}
    grown = True
    while grown:
        more = {b.name for b in study.branches if b.parent in found} - found
        found |= more
        grown = bool(more)
    return found


def through_flows_m3_s(study: Study, line: Line, node: int) -> list[float]:
    """Flow passing the tank at ``node`` of ``line`` in each scenario [m^3/s]: that of
    the pipe just above it."""
    chainage = line.route.chainage_m
    start = 0.5 * (chainage[node - 1] + chainage[node])
    return [float(line_flows_m3_s(study, s, line, np.array([start]))[0])
            for s in study.scenarios]


def part_above(study: Study, tank: BreakPressureTank, line: Line, node: int,
               gone: set[str]) -> Study:
    """The scheme above ``tank``: ``line`` ends at it, delivering the flow it passes."""
    c = tank.chainage_m
    flows = through_flows_m3_s(study, line, node)
    inlet = Outlet(tank.water_level_m, study.tank_rules.inlet_k)
    kept = dict(route=line.route.between(0, node),
                offtakes=tuple(o for o in line.offtakes if o.chainage_m < c),
                fittings=tuple(f for f in line.fittings if f.chainage_m < c - 1e-6))
    if line.is_trunk:
        scenarios = tuple(dataclasses.replace(s, outlet_flow_m3_s=q, branch_flows_m3_s=tuple(
            (n, f) for n, f in s.branch_flows_m3_s if n not in gone))
            for s, q in zip(study.scenarios, flows, strict=True))
        changed = dataclasses.replace(study, outlet=inlet, scenarios=scenarios, **kept)
        branches = study.branches
    else:
        scenarios = tuple(dataclasses.replace(s, branch_flows_m3_s=(*(
            (n, f) for n, f in s.branch_flows_m3_s if n != line.name and n not in gone),
            (line.name, q))) for s, q in zip(study.scenarios, flows, strict=True))
        changed = dataclasses.replace(study, scenarios=scenarios)
        branches = tuple(dataclasses.replace(
            b, required_head_m=inlet.required_head_m, exit_k=inlet.exit_k,
            flow_m3_s=max(flows), **kept) if b.name == line.name else b
            for b in study.branches)
    tanks = tuple(t for t in study.tanks if t is not tank and t.branch not in gone
                  and not (t.branch == line.name and t.chainage_m > c))
    # a pump's rising main (above its first tanks) gets no new tank (section 9); a part
    # above with tanks left is cut again, and the parts below those get theirs
    rules = study.tank_rules if study.pump is None or tanks else \
        dataclasses.replace(study.tank_rules, cost=None)
    return dataclasses.replace(changed, branches=tuple(b for b in branches if b.name not in gone),
                               tanks=tanks, tank_rules=rules)


def part_below(study: Study, tank: BreakPressureTank, line: Line, node: int,
               gone: set[str]) -> Study:
    """The scheme below ``tank``: the rest of ``line`` as the trunk, fed by the tank."""
    c, level = tank.chainage_m, tank.water_level_m
    scenarios = tuple(dataclasses.replace(
        s, outlet_flow_m3_s=line.delivery_flow_m3_s(s), source_level_m=level,
        branch_flows_m3_s=tuple((n, f) for n, f in s.branch_flows_m3_s if n in gone))
        for s in study.scenarios)
    branches = tuple(dataclasses.replace(b, parent=TRUNK, at_chainage_m=b.at_chainage_m - c)
                     if b.parent == line.name else b
                     for b in study.branches if b.name in gone)
    tanks = tuple(dataclasses.replace(t, branch=TRUNK, chainage_m=t.chainage_m - c)
                  if t.branch == line.name else t for t in study.tanks
                  if t.branch in gone or (t.branch == line.name and t.chainage_m > c))
    return dataclasses.replace(
        study, route=line.route.between(node, line.route.n_sections),
        source=Source(level, level, study.tank_rules.outlet_k),
        tank_rules=_marked_below(study, line.name, c, gone),
        outlet=Outlet(line.required_head_m, line.exit_k), min_pressure_m=line.min_pressure_m,
        local_k_per_km=line.local_k_per_km, scenarios=scenarios, branches=branches,
        tanks=tanks, pump=None, upstream_pipe_length_m=0.0,
        offtakes=tuple(dataclasses.replace(o, chainage_m=o.chainage_m - c)
                       for o in line.offtakes if o.chainage_m > c),
        fittings=tuple(dataclasses.replace(f, chainage_m=f.chainage_m - c)
                       for f in line.fittings if f.chainage_m >= c - 1e-6))


def _marked_below(study: Study, name: str, chainage_m: float, gone: set[str]):
    """The marked sites of the part below a tank at ``chainage_m`` of line ``name``:
    that line's below the tank become the trunk's (chainages from the tank), the
    branches below keep theirs."""
    rules = study.tank_rules
    own = rules.marked_chainages_m if name == TRUNK else tuple(
        c for n, c in rules.marked_on_branches if n == name)
    return dataclasses.replace(
        rules, marked_chainages_m=tuple(c - chainage_m for c in own if c > chainage_m),
        marked_on_branches=tuple((n, c) for n, c in rules.marked_on_branches if n in gone))


def cut(study: Study) -> tuple[Study, Study, BreakPressureTank]:
    """The scheme cut at its first tank (lines in the study's order): above, below."""
    order = {line.name: i for i, line in enumerate(study_lines(study))}
    tank = min(study.tanks, key=lambda t: (order[t.branch], t.chainage_m))
    line = line_of(study, tank.branch)
    node = int(np.argmin(np.abs(line.route.chainage_m - tank.chainage_m)))
    gone = below_branches(study, line.name, tank.chainage_m)
    return (part_above(study, tank, line, node, gone),
            part_below(study, tank, line, node, gone), tank)


def joined_design(study: Study, above: Design, below: Design, tank: BreakPressureTank
                  ) -> Design:
    """The two parts' designs as one design of ``study`` (lines in the study's order):
    the part below's trunk is the rest of the tank's line, its new tanks too."""
    c = tank.chainage_m
    end = line_of(study, tank.branch).route.total_chainage_m
    moved = [Piece(p.from_m + c, p.to_m + c, p.option, tank.branch) if p.branch == TRUNK
             else p for p in below.pieces]
    last = max((i for i, p in enumerate(below.pieces) if p.branch == TRUNK), default=None)
    if last is not None:  # end exactly at the line's end, whatever the rounding of c
        moved[last] = dataclasses.replace(moved[last], to_m=end)
    order = {line.name: i for i, line in enumerate(study_lines(study))}
    pieces = sorted([*above.pieces, *moved], key=lambda p: (order[p.branch], p.from_m))
    tanks = tuple(dataclasses.replace(t, chainage_m=t.chainage_m + c, branch=tank.branch)
                  if t.branch == TRUNK else t for t in below.tanks)
    return Design(tuple(pieces), (*above.tanks, *tanks)).merged()


def optimise_scheme_with_tanks(study: Study, settings: Settings, started: float,
                               plain: Plain) -> DesignOutcome:
    """The cheapest design of a scheme with break-pressure tanks of its own (``plain``
    is :func:`optimiser.milp.optimise_design`)."""
    above, below, tank = cut(study)
    above, below = with_whole_lengths(study, above, below, tank,
                                      "break-pressure tanks in a branched scheme")
    deadline = started + settings.time_limit_s
    run = _Runner(settings, deadline, plain)
    first = (run(above, 0.5), run(below, 1.0))
    where = f"tank at {tank.chainage_m:g} m of {tank.branch!r}"
    stages = named_stages(f"above the {where}", first[0]) + \
        named_stages(f"below the {where} (chainages from the tank)", first[1])
    below_name = "" if tank.branch == TRUNK else \
        f"; there 'main' is the rest of {tank.branch!r}"
    for outcome, side in zip(first, (f"above the {where}", f"below the {where} (chainages "
                                     f"from the tank{below_name})"), strict=True):
        if outcome.status == Status.INFEASIBLE:
            return infeasible_outcome(settings, started, stages, side, outcome)
    design = _best_joined(study, above, below, tank, first, run, stages)
    if design is None:
        raise InputError(f"{study.path or 'the study file'}: no design of the lines above and "
                         f"below the {where} together meets max_changes = "
                         f"{study.rules.max_changes} and [break_pressure_tanks] max_count = "
                         f"{study.tank_rules.max_count} (each part alone does); raise them")
    return joined_outcome(study, settings, started, stages, design, bound_sum(first),
                          bound_sum(first, lp=True), first[0].rules_on or first[1].rules_on)


class _Runner:
    """Designs a part with a share of the time left."""

    def __init__(self, settings: Settings, deadline: float, plain: Plain) -> None:
        self.settings, self.deadline, self.plain = settings, deadline, plain

    def __call__(self, part: Study, share: float) -> DesignOutcome:
        left = max((self.deadline - time.perf_counter()) * share, 1.0)
        return self.plain(part, solver_name=self.settings.solver_name,
                          mip_gap=self.settings.mip_gap, time_limit_s=left)


def _best_joined(study: Study, above: Study, below: Study, tank: BreakPressureTank,
                 first: tuple[DesignOutcome, DesignOutcome], run: _Runner,
                 stages: list) -> Design | None:
    """The joined design if it meets the rules and ``max_count``; else the cheaper of
    the part below and the part above designed again within what the other part left
    (changes on the cut line, new tanks)."""
    assert first[0].design is not None and first[1].design is not None
    design = joined_design(study, first[0].design, first[1].design, tank)
    if _objective(study, design) is not None:
        return design
    offers = []
    for part, index in ((below, 1), (above, 0)):
        limited = _within_left(study, part, tank, first[1 - index].design, index == 1)
        if limited is None:
            continue
        again = run(limited, 0.5)
        stages += named_stages(f"{'below' if index else 'above'} the tank again, within "
                               "what the other part left", again)
        if again.design is None:
            continue
        pair = [first[0].design, first[1].design]
        pair[index] = again.design
        offers.append(joined_design(study, pair[0], pair[1], tank))
    priced = [(cost, d) for d in offers if (cost := _objective(study, d)) is not None]
    return min(priced, key=lambda item: item[0])[1] if priced else None


def _objective(study: Study, design: Design) -> float | None:
    """The joined design's objective if it meets the rules and at most ``max_count``
    new tanks (None: it does not)."""
    most = study.tank_rules.max_count
    if most is not None and sum(1 for t in design.tanks if t.new) > most:
        return None
    return objective_of(study, design)


def _within_left(study: Study, part: Study, tank: BreakPressureTank, other: Design,
                 is_below: bool) -> Study | None:
    """``part`` allowed only the changes on the cut line (a change at the tank counts)
    and the new tanks that ``other``, the other part's design, leaves; None when
    nothing is left."""
    rules, tank_rules = part.rules, part.tank_rules
    if study.rules.max_changes is not None:
        # the cut line in ``other``: the tank's line above, the trunk of the part below
        used = len(other.merged().on(tank.branch if is_below else TRUNK).pieces)
        left = study.rules.max_changes - (used - 1) - 1
        if left < 0:
            return None
        rules = dataclasses.replace(rules, max_changes=left)
    if study.tank_rules.max_count is not None and study.tank_rules.cost is not None:
        left = study.tank_rules.max_count - sum(1 for t in other.tanks if t.new)
        if left < 0:
            return None
        tank_rules = dataclasses.replace(tank_rules, max_count=left)
    return dataclasses.replace(part, rules=rules, tank_rules=tank_rules)
