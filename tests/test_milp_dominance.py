"""Options set aside as dominated, and the covering design built from the LP.

Sources of the checks:

* dominance (a standard reduction in discrete optimisation, e.g. Nemhauser, G. L. &
  Wolsey, L. A. (1988), Integer and Combinatorial Optimization, Wiley, on dominated
  columns): an option that costs more, loses more head and has a larger velocity head
  than another admissible wherever it is, with nothing between them in size, is never
  needed; the optimum with and without it must agree (both proven by the optimiser
  within a gap of 1e-6, the independent answer being the run that keeps every option);
* a pipe with more head loss cannot be dropped when it is the only one that takes the
  static head somewhere (the pressure-class rule of contract section 5): common
  practice, no source;
* the covering design has, section by section, no more head loss and no larger
  velocity head than the LP design, so by the energy equation (Bernoulli with losses,
  e.g. Streeter & Wylie, Fluid Mechanics) it meets every pressure the LP met: judged by
  ``check_design`` (the code of ``optimiser check``) and the rules.

All data are invented.
"""

from __future__ import annotations

import numpy as np
import pytest
from test_milp_priced import undulating_rules_study
from test_milp_support import write_study

import optimiser.milp.search.dominance as dominance_stage
from optimiser import load_study
from optimiser.analysis import check_design
from optimiser.milp import optimise_design, prepare
from optimiser.milp.extract import design_from_choice, rule_problems
from optimiser.milp.formulation import build
from optimiser.milp.presolve import dominated_options
from optimiser.milp.repair import covering_choice
from optimiser.milp.solvers import solve

# Invented options: (material, DN, ID mm, class, allowable head m, roughness mm, C, cost/m)
MIXED = [
    ("PE", 200, 176.2, "PN10", 102.0, 0.02, 150.0, 42.0),
    ("PE", 200, 176.2, "PN16", 163.2, 0.02, 150.0, 50.0),   # same bore, dearer
    ("PE", 250, 220.4, "PN10", 102.0, 0.02, 150.0, 60.0),
    ("DI", 200, 173.0, "PN25", 254.9, 0.10, 135.0, 70.0),   # smaller, rougher, dearer
    ("DI", 250, 215.0, "PN25", 254.9, 0.10, 135.0, 80.0),
    ("PE", 315, 277.6, "PN10", 102.0, 0.02, 150.0, 90.0),
]


def labels(study, mask):
    return sorted(study.catalogue[int(j)].label for j in np.flatnonzero(mask))


def flat_study(folder, **overrides):
    profile = [(float(c), 100.0 - 0.004 * c) for c in np.linspace(0.0, 3000.0, 16)]
    values = dict(profile=profile, catalogue=MIXED, source_level_m=106.0,
                  required_head_m=80.0, scenarios=[{"name": "peak", "flow": "20 L/s"}])
    values.update(overrides)
    return load_study(write_study(folder, **values))


def test_options_dominated_everywhere_go(tmp_path):
    study = flat_study(tmp_path)
    gone = dominated_options(prepare(study))
    # PE DN200 PN16: same bore as PN10, dearer; DI DN200 PN25: smaller and rougher
    # than PE DN200 PN10 and dearer (nothing left between them once PN16 is gone).
    # DI DN250 PN25 (215 mm, 80/m) is dominated by PE DN250 PN10 (220.4 mm, 60/m).
    assert labels(study, gone) == ["DI DN200 PN25", "DI DN250 PN25", "PE DN200 PN16"]


def test_an_option_needed_somewhere_stays(tmp_path):
    # A valley 200 m deep: neither PN10 (102 m) nor PN16 (163.2 m) takes the static
    # head there, so the PN25 options are the only ones admissible in it and must stay.
    profile = [(float(c), 100.0 - 0.004 * c - (200.0 if 1000.0 < c < 2000.0 else 0.0))
               for c in np.linspace(0.0, 3000.0, 16)]
    study = flat_study(tmp_path, profile=profile)
    data = prepare(study)
    gone = dominated_options(data)
    kept = labels(study, ~gone & data.admissible.any(axis=0))
    assert "DI DN200 PN25" in kept and "DI DN250 PN25" in kept
    assert "PE DN200 PN16" not in kept  # PN10 of the same bore is cheaper wherever it fits
    # every section keeps an option
    assert (data.admissible & ~gone[None, :]).any(axis=1).all()


@pytest.mark.parametrize("seed", range(4))
def test_setting_dominated_options_aside_keeps_the_optimum(tmp_path, monkeypatch, seed):
    rng = np.random.default_rng(seed)
    chainage = np.linspace(0.0, 4000.0, 21)
    ground = 100.0 - 0.01 * chainage + rng.normal(0.0, 2.0, chainage.size)
    ground[(chainage > 1500) & (chainage < 2500)] -= float(rng.uniform(0.0, 50.0))
    profile = [(float(c), round(float(g), 3)) for c, g in zip(chainage, ground, strict=True)]
    study = flat_study(
        tmp_path, profile=profile, required_head_m=float(rng.uniform(40.0, 55.0)),
        scenarios=[{"name": "peak", "flow": f"{rng.uniform(15.0, 30.0):.1f} L/s"}],
        rules={"min_piece_length_m": 400.0, "max_changes": int(rng.integers(1, 4))},
        costs={"change_cost": 300.0})
    assert dominated_options(prepare(study)).any()  # the comparison means something
    pruned = optimise_design(study, time_limit_s=60.0, mip_gap=1e-6)
    monkeypatch.setattr(dominance_stage, "dominated_options",
                        lambda data: np.zeros(data.n_options, dtype=bool))
    kept = optimise_design(study, time_limit_s=60.0, mip_gap=1e-6)
    assert pruned.status == kept.status
    if kept.status == "infeasible":
        return
    assert pruned.status == "optimal"
    assert pruned.total_cost == pytest.approx(kept.total_cost, rel=1e-5)


def test_covering_design_obeys_the_rules_and_passes_the_check(tmp_path):
    study = undulating_rules_study(tmp_path)
    data = prepare(study)
    lp = build(data, with_rules=False, relaxed=True)
    assert solve(lp, "highs", time_limit_s=30.0, mip_gap=1e-6).status == "optimal"
    choice = covering_choice(data, lp.fractions())
    assert choice is not None
    design = design_from_choice(data, choice)
    assert check_design(study, design, capacity=False).ok
    assert rule_problems(study, design) == []
    outcome = optimise_design(study, time_limit_s=60.0, mip_gap=1e-6)
    assert outcome.total_cost <= check_design(study, design).total_cost + 1e-6
