"""The dynamic programme over pieces of a rising main (``optimiser.milp.pumps``): its
bound against the model it relaxes, its designs against the check.

Sources of the checks: the definition of a relaxation (its optimum is never above the
optimum of the model it relaxes; Nemhauser & Wolsey 1988, Integer and Combinatorial
Optimization, ch. II.3), with the model of the fine sections solved to a tight gap by
HiGHS, a general-purpose solver; and an enumeration written here of every design of at
most three pieces changing at survey nodes, judged by the model's rules as
docs/method.md states them. Random mains are invented data (``pump_reference.py``),
stretched so that the pressure classes bind under pumping.
"""

from __future__ import annotations

import numpy as np
import pytest
from builders import csv_text, toml_text
from pump_reference import random_main

from optimiser import load_study
from optimiser.analysis import check_design
from optimiser.milp import optimise_design
from optimiser.milp.class_limits import split_at_class_limits
from optimiser.milp.data import prepare
from optimiser.milp.formulation import build
from optimiser.milp.pump_search import static_study
from optimiser.milp.pumps.piece_stage import applies, class_scenario, piece_bound
from optimiser.milp.solvers import solve


def stretched_main(folder, seed: int, changes: int, sections: int = 36,
                   stretch: float = 8.0, steeper: float = 30.0):
    """A random rising main of short sections, its chainage ``stretch`` times and its
    rise ``steeper`` times that drawn (by default about 1.5 km rising about 50 m;
    invented), with pieces of at least 150 m and at most ``changes`` changes."""
    main, study = random_main(seed, sections=sections, classes=True, rules=True,
                              mip_gap=1e-9)
    chainage = main.chainage_m * stretch
    rise = np.diff(main.pipe_level_m) * steeper
    pipe = main.pipe_level_m[0] + np.concatenate([[0.0], np.cumsum(rise)])
    outlet = study["outlet"]
    outlet["required_head_m"] = float(round(pipe[-1] + outlet["required_head_m"]
                                            - main.pipe_level_m[-1], 2))
    study["offtake"] = []
    del study["offtake"]
    study["rules"] = {"min_piece_length_m": 150.0, "max_changes": changes}
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "profile.csv").write_text(csv_text(
        [(float(c), float(p + 1.0)) for c, p in zip(chainage, pipe, strict=True)],
        ("chainage_m", "ground_m")), encoding="utf-8")
    (folder / "catalogue.csv").write_text(
        csv_text(main.catalogue, tuple(main.catalogue[0])), encoding="utf-8")
    (folder / "study.toml").write_text(toml_text(study), encoding="utf-8")
    return load_study(folder / "study.toml")


def fine_data(study):
    return prepare(split_at_class_limits(static_study(study)))


def _full_model_optimum(data) -> float:
    """The model of the fine sections with the rules, solved by HiGHS to a tight gap."""
    full = solve(build(data, with_rules=True), "highs", time_limit_s=120, mip_gap=1e-9)
    assert full.status == "optimal"
    return float(full.objective)


def _best_design_cost(study, data, result) -> float:
    """The least life-cycle cost, by the check, of the designs of the programme's chains
    (each change at either node of its section); every one judged must pass."""
    from optimiser.milp.pumps.piece_stage import chain_designs

    costs = []
    for chain in result.chains:
        for design in chain_designs(data, chain):
            check = check_design(study, design, capacity=False)
            if check.ok:
                costs.append(check.life_cycle_cost)
    assert costs
    return min(costs)


@pytest.mark.parametrize(("seed", "changes"), [(3, 2), (6, 3), (1, 2)])
def test_bound_never_above_the_full_model_and_design_attains_it(tmp_path, seed, changes):
    """The programme's bound is at most the optimum of the model with the rules (a
    relaxation), and a design of its cheapest chains costs no more than that optimum
    (within 1e-6): on these mains the programme is exact."""
    study = stretched_main(tmp_path / "m", seed, changes)
    data = fine_data(study)
    assert applies(data)
    optimum = _full_model_optimum(data)
    result = piece_bound(data, np.inf, class_scenario(data))
    assert result.bound is not None
    assert result.bound <= optimum * (1 + 1e-9) + 1e-6
    design_cost = _best_design_cost(study, data, result)
    assert design_cost <= optimum * (1 + 1e-6)
    assert design_cost >= result.bound * (1 - 1e-9)


def _enumerated_cheapest(study, data) -> float:
    """The least life-cycle cost of every design of at most three pieces changing at
    survey nodes that meets the model's rules as docs/method.md states them: each
    option admissible where laid; in every section and scenario the energy at its start
    (the outlet's need plus the friction and allowance downstream, no point loss) less
    its lowest pipe level within the working limit of its option; pieces of at least the
    minimum length; the station head of each scenario the outlet's need plus the losses;
    the installed power the largest. Written here with numpy, by brute force."""
    from itertools import combinations, pairwise

    from optimiser.milp.pump_columns import option_limits_m, pump_costs

    costs = pump_costs(study)
    n, m = data.n_sections, data.n_options
    limits = option_limits_m(data) - 1e-5
    need = study.outlet.required_head_m - data.source_level_m
    pipe = data.node_pipe_level_m
    lowest = np.minimum(pipe[:-1], pipe[1:])
    chainage = data.node_chainage_m
    shortest = min(study.rules.min_piece_length_m, chainage[-1])
    triples = np.array(np.meshgrid(*[np.arange(m)] * 3, indexing="ij")).reshape(3, -1).T
    best = np.inf
    for cuts in [(), *((c,) for c in range(1, n)), *combinations(range(1, n), 2)]:
        ends = [0, *cuts, n]
        if any(chainage[b] - chainage[a] < shortest - 1e-6 for a, b in pairwise(ends)):
            continue
        pieces = len(ends) - 1
        picks = np.unique(triples[:, :pieces], axis=0)
        if pieces > 1:  # adjacent pieces differ (else it is a design with fewer changes)
            picks = picks[(np.diff(picks, axis=1) != 0).all(axis=1)]
        choice = np.zeros((len(picks), n), dtype=int)
        for p in range(pieces):
            choice[:, ends[p]:ends[p + 1]] = picks[:, p:p + 1]
        sections = np.arange(n)
        ok = data.admissible[sections, choice].all(axis=1)
        loss = data.section_loss_m[:, sections, choice]  # (K, designs, n)
        downstream = np.cumsum(loss[:, :, ::-1], axis=2)[:, :, ::-1]  # from start of s
        head = np.maximum(need[:, None] + downstream[:, :, 0] + 1e-5, 0.0)
        ok &= (downstream.max(axis=0) + study.outlet.required_head_m - lowest
               <= limits[choice] + 1e-9).all(axis=1)
        value = data.section_cost[sections, choice].sum(axis=1) \
            + (costs.energy_value_per_m[:, None] * head).sum(axis=0) \
            + costs.station_cost_per_kw * (costs.kw_per_m[:, None] * head).max(axis=0) \
            + study.costs.change_cost * (pieces - 1)
        if ok.any():
            best = min(best, float(value[ok].min()))
    return best


def test_bound_never_above_enumerated_designs_and_design_as_cheap(tmp_path):
    """On a coarse main (16 sections), the bound is at most the cheapest design of at
    most three pieces enumerated in the test (every such design is one of the model),
    and the programme's design costs no more than it (within 1e-6)."""
    study = stretched_main(tmp_path / "m", 4, 2, sections=16)
    data = fine_data(study)
    assert applies(data)
    cheapest = _enumerated_cheapest(study, data)
    assert np.isfinite(cheapest)
    result = piece_bound(data, np.inf, class_scenario(data))
    assert result.bound is not None
    assert result.bound <= cheapest * (1 + 1e-9)
    assert _best_design_cost(study, data, result) <= cheapest * (1 + 1e-6)


@pytest.mark.parametrize("changes", [2, 3])
def test_design_of_a_long_main_is_proven_and_passes_the_check(tmp_path, changes):
    """The whole search on a main of 400 sections of 3-8 m (about 2.2 km rising about
    60 m) with two or three changes allowed: proven within the gap target by the
    programme's bound, the design passes the check and the rules (common practice, no
    source: a design is only as good as its independent check)."""
    study = stretched_main(tmp_path / "m", 7, changes, sections=400, stretch=1.0,
                           steeper=5.0)
    outcome = optimise_design(study, time_limit_s=60)
    assert outcome.verified and outcome.check is not None and outcome.check.ok
    assert outcome.status == "optimal"
    assert any("dynamic programme over pieces" in stage.name for stage in outcome.stages)
    assert outcome.lower_bound <= outcome.check.life_cycle_cost * (1 + 1e-12)


def test_pieces_shorter_than_a_section_are_left_to_the_other_stages(tmp_path):
    """With a minimum piece length shorter than a section, a section could hold two
    changes, which the programme does not model: it does not run."""
    study = stretched_main(tmp_path / "m", 2, 2)
    rules = study.rules
    import dataclasses

    short = dataclasses.replace(study, rules=dataclasses.replace(rules,
                                                                 min_piece_length_m=10.0))
    assert not applies(fine_data(short))
