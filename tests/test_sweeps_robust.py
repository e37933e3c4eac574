"""The robust design and the re-optimised cost across roughness.

Check values come from the project's independent check (``check_design``, tested against
hand calculations with the ``fluids`` and ``iapws`` references) and from facts of the
trade, named beside each check. The study is invented test data (``builders.py``).
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest

import optimiser
from optimiser.analysis.sensitivity import roughness_sweep
from optimiser.sweeps.robust import robust_design, roughness_runs
from optimiser.sweeps.variants import with_roughness

GAP = 1e-6
RANGE_MM = [0.01, 0.1, 0.3, 0.6]


@pytest.fixture
def study(study_files):
    return optimiser.load_study(study_files.study)


def test_robust_design_passes_check_at_every_roughness_of_its_range(study):
    runs = robust_design(study, RANGE_MM, mip_gap=GAP)
    outcome = runs.robust.outcome
    assert outcome is not None and outcome.verified
    # Every (scenario, roughness) pair entered the programme.
    assert len(runs.robust.study.scenarios) == len(RANGE_MM) * len(study.scenarios)
    design = outcome.design
    # At each listed roughness, and between them: friction loss grows with roughness
    # (Colebrook, C.F. (1939), Turbulent flow in pipes, J. Inst. Civil Eng. 11), so a
    # design that meets the roughest value meets every value below it.
    between = [0.5 * (a + b) for a, b in itertools.pairwise(RANGE_MM)]
    for roughness_mm in RANGE_MM + between:
        result = optimiser.check_design(with_roughness(study, roughness_mm), design,
                                        capacity=False)
        assert result.ok, (roughness_mm, [v.message for v in result.violations])


def test_robust_premium_and_the_roughest_value_binds(study):
    runs = roughness_runs(study, RANGE_MM, robust=True, reoptimise=True, mip_gap=GAP)
    nominal, robust = runs.nominal.cost, runs.robust.cost
    assert nominal is not None and robust is not None
    # The range's top (0.6 mm) is rougher than every catalogue pipe (0.02 and 0.1 mm), so
    # the robust study is the nominal one with stricter limits: it cannot cost less
    # (common practice, no source).
    assert runs.premium == pytest.approx(robust - nominal)
    assert runs.premium >= -GAP * nominal
    assert runs.premium_fraction == pytest.approx(runs.premium / nominal)
    table = runs.reoptimised
    assert table["roughness_mm"].tolist() == RANGE_MM
    # Monotone margins (Colebrook 1939, above): the robust optimum is the optimum at the
    # roughest value, and re-optimised cost cannot fall as roughness grows.
    assert robust == pytest.approx(table["cost"].iloc[-1], rel=3 * GAP)
    costs = table["cost"].to_numpy(dtype=float)
    assert all(b >= a * (1 - 2 * GAP) for a, b in itertools.pairwise(costs))


def test_nominal_design_capacity_falls_as_roughness_grows(study):
    runs = roughness_runs(study, RANGE_MM, reoptimise=False)
    design = runs.nominal.outcome.design
    table = roughness_sweep(study, design, np.array(RANGE_MM))
    # A rougher pipe carries less (Colebrook, C.F. & White, C.M. (1937), The reduction
    # of carrying capacity of pipes with age, J. Inst. Civil Eng. 7(1)).
    for _, part in table.groupby("scenario"):
        assert np.all(np.diff(part["capacity_m3_s"].to_numpy()) < 0)
        assert np.all(np.diff(part["outlet_margin_m"].to_numpy()) < 0)
