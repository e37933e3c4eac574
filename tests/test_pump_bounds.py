"""Bounds of the pumped-main search: each relaxation against the model it relaxes.

Source of the check: the definition of a relaxation (its optimum is never above the
optimum of the model it relaxes; Nemhauser & Wolsey 1988, Integer and Combinatorial
Optimization, ch. II.3), with the model of the fine sections solved to a tight gap by
HiGHS, a general-purpose solver. Random mains are invented data (``pump_reference.py``).
"""

from __future__ import annotations

import pytest
from pump_reference import random_main, write_main

from optimiser import load_study
from optimiser.milp.class_limits import split_at_class_limits
from optimiser.milp.data import prepare
from optimiser.milp.formulation import build
from optimiser.milp.pump_columns import head_upper_m
from optimiser.milp.pump_search import static_study
from optimiser.milp.pumps.class_rows import add_class_rows, reach_levels
from optimiser.milp.pumps.two_pieces import enumeration, pair_bounds
from optimiser.milp.reaches import ActivePoints, merge, with_active
from optimiser.milp.solvers import solve


def _write(folder, main, study_dict):
    """Write a random main with a changed study table (as ``write_main`` does)."""
    from builders import csv_text, toml_text

    folder.mkdir(parents=True, exist_ok=True)
    ground = main.pipe_level_m + 1.0
    (folder / "profile.csv").write_text(csv_text(
        [(float(c), float(g)) for c, g in zip(main.chainage_m, ground, strict=True)],
        ("chainage_m", "ground_m")), encoding="utf-8")
    (folder / "catalogue.csv").write_text(csv_text(main.catalogue, tuple(main.catalogue[0])),
                                          encoding="utf-8")
    (folder / "study.toml").write_text(toml_text(study_dict), encoding="utf-8")
    return folder / "study.toml"


@pytest.mark.parametrize("seed", [3, 6, 8, 11])
def test_two_piece_bound_never_above_the_full_model(tmp_path, seed):
    """With at most one change, the closed-form bound of every pair and place of change
    never exceeds the optimum of the full model of the fine sections (the definition of
    a relaxation), solved by HiGHS to a tight gap."""
    main, study_dict = random_main(seed, classes=True, rules=True, mip_gap=1e-9)
    study_dict["rules"]["max_changes"] = 1
    path = _write(tmp_path, main, study_dict)
    study = load_study(path)
    data = prepare(split_at_class_limits(static_study(study)))
    rules = study.rules
    found = pair_bounds(enumeration(data, head_upper_m(data)), study.costs.change_cost,
                        min(rules.min_piece_length_m, study.route.total_chainage_m),
                        rules.sizes_non_increasing, True)
    full = solve(build(data, with_rules=True), "highs", time_limit_s=60, mip_gap=1e-9)
    assert full.status == "optimal"
    assert found.bound <= full.objective * (1 + 1e-9) + 1e-6


@pytest.mark.parametrize("seed", [2, 5])
def test_reach_model_with_relaxed_class_rows_is_a_relaxation(tmp_path, seed):
    """The reach model with relaxed class rows never costs more than the full model of
    the fine sections (the definition of a relaxation)."""
    _, path = write_main(tmp_path / "m", seed, classes=True, rules=False)
    data = prepare(split_at_class_limits(static_study(load_study(path))))
    fine = build(data, with_rules=False, relaxed=True)
    reaches = merge(with_active(data, ActivePoints.none(data)))
    coarse = build(reaches.data, with_rules=False, relaxed=True)
    add_class_rows(coarse, reach_levels(data, reaches.first, reaches.last))
    full = solve(fine, "highs", time_limit_s=30, mip_gap=1e-9)
    relaxed = solve(coarse, "highs", time_limit_s=30, mip_gap=1e-9)
    assert relaxed.objective <= full.objective * (1 + 1e-9)
