""""Optimal" is the cheapest design the check accepts, and the bound is a bound for all.

Seeded random falling routes (``random_routes.py``, invented data; classes cross inside
survey sections) designed by the optimiser and by an independent grid MILP
(``independent_grid.py``: written from the contract, solved by ``scipy.optimize.milp``
(HiGHS through SciPy), friction from the ``fluids`` package's Colebrook (Colebrook, C.F.
1939); reference libraries used only here). The independent design, once the check
(contract section 5) accepts it, is a design the optimiser must match: its cost may not
be lower than the optimiser's, and the optimiser's ``lower_bound`` may not be above it.
Seed 15 without rules is the route where the independent design widens before the
outlet (a size increase inside a section, saving exit loss), which the section order
alone cannot lay; more of these figures in ``benchmarks/exactness.py``.
"""

from __future__ import annotations

import pytest
from independent_grid import solve_grid
from random_routes import write_random_study

from optimiser import load_study
from optimiser.analysis import check_design
from optimiser.milp import optimise_design

TOLERANCE = 1e-6
"""Relative: the optimiser runs at a gap of 1e-6 (random_routes.py)."""

CASES = [*((seed, False) for seed in (10, 11, 12, 13, 14, 15, 18, 19, 20, 21)),
         *((seed, True) for seed in (0, 1, 2, 3, 4, 6, 8, 9, 10, 11))]
"""Seeds whose routes have a design on the grid (on some others none exists at all)."""


@pytest.mark.parametrize(("seed", "rules"), CASES)
def test_never_dearer_than_an_accepted_independent_design(tmp_path, seed, rules):
    study = load_study(write_random_study(tmp_path, seed, rules))
    outcome = optimise_design(study)
    grid = solve_grid(study, cells=4)
    assert grid is not None
    judged = check_design(study, grid.design, capacity=False)
    assert judged.ok  # on these seeds the independent design is one the check accepts
    assert outcome.design is not None  # an accepted design exists: never "infeasible"
    assert outcome.total_cost <= judged.total_cost * (1 + TOLERANCE)
    assert outcome.lower_bound <= judged.total_cost * (1 + TOLERANCE)
    assert outcome.lower_bound <= outcome.total_cost
