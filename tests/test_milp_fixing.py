"""Reduced-cost fixing: the least window integral, and that fixing keeps the optimum.

Sources of the checks:

* the least integral of a piecewise-constant density over a window of given length is
  checked against a direct scan of window starts on a fine grid (plain numerical
  quadrature, the independent answer);
* reduced-cost fixing never removes an option of a design cheaper than the incumbent
  (Nemhauser & Wolsey (1988), Integer and Combinatorial Optimization, section II.5.1):
  the proven optimum with and without it must agree, and every option of the proven
  design must survive fixing at its own cost.

All data are invented.
"""

from __future__ import annotations

import numpy as np
import pytest
from test_milp_priced import undulating_rules_study

import optimiser.milp.search.reach_model as reach_model_stage
from optimiser.milp import optimise_design, prepare
from optimiser.milp.fixing import allowed_below, window_minimum
from optimiser.milp.formulation import build
from optimiser.milp.reaches import ActivePoints, merge, with_active
from optimiser.milp.solvers import solve


def scanned_minimum(density, chainage, window, s, steps=4001):
    """Least window integral over a fine grid of window starts, each integral summed
    exactly as density x overlap section by section."""
    total = chainage[-1] - chainage[0]
    if window >= total:
        starts = np.array([chainage[0]])
        window = total
    else:
        starts = np.linspace(chainage[0], chainage[-1] - window, steps)
    lo, hi = chainage[s], chainage[s + 1]
    starts = starts[(starts < hi) & (starts + window > lo)]
    overlap = np.clip(np.minimum(starts[:, None] + window, chainage[None, 1:])
                      - np.maximum(starts[:, None], chainage[None, :-1]), 0.0, None)
    return (overlap @ density).min(axis=0), (chainage[-1] - window) / (steps - 1)


@pytest.mark.parametrize("seed", range(3))
def test_window_minimum_matches_a_scan(seed):
    rng = np.random.default_rng(seed)
    n = 12
    chainage = np.concatenate([[0.0], np.cumsum(rng.uniform(20.0, 120.0, n))])
    density = rng.uniform(0.0, 5.0, (n, 2))
    density[rng.random((n, 2)) < 0.3] = 0.0
    for window in (35.0, 150.0, 400.0, 5000.0):
        ours = window_minimum(density, chainage, window)
        for s in range(n):
            scanned, step = scanned_minimum(density, chainage, window, s)
            # the exact minimum is at most the scan's, and at most one grid step of
            # the densest section below it
            assert (ours[s] <= scanned + 1e-9).all()
            assert (ours[s] >= scanned - 2.0 * step * density.max() - 1e-9).all()


@pytest.fixture(scope="module")
def study(tmp_path_factory):
    return undulating_rules_study(tmp_path_factory.mktemp("fixing"))


def test_fixing_keeps_the_options_of_the_optimum(study):
    outcome = optimise_design(study, time_limit_s=60.0, mip_gap=1e-6)
    assert outcome.status == "optimal"
    data = prepare(study)
    reaches = merge(with_active(data, ActivePoints.none(data)))
    lp = build(reaches.data, with_rules=False, relaxed=True)
    report = solve(lp, "highs", time_limit_s=30.0, mip_gap=1e-6)
    allowed = allowed_below(data, reaches.first, lp, report.objective, outcome.total_cost)
    assert allowed is not None
    chainage = data.node_chainage_m
    catalogue = study.catalogue
    for piece in outcome.design.pieces:
        j = catalogue.index_of(piece.option)
        inside = (chainage[1:] > piece.from_m + 1e-6) & (chainage[:-1] < piece.to_m - 1e-6)
        assert allowed[inside, j].all()
    # and it removes something (the comparison below means something)
    assert (data.admissible & ~allowed).any()


def test_fixing_does_not_change_the_optimum(study, monkeypatch):
    fixed = optimise_design(study, time_limit_s=60.0, mip_gap=1e-6)
    monkeypatch.setattr(reach_model_stage, "allowed_below", lambda *args: None)
    whole = optimise_design(study, time_limit_s=60.0, mip_gap=1e-6)
    assert fixed.status == whole.status == "optimal"
    assert fixed.total_cost == pytest.approx(whole.total_cost, rel=1e-5)
