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


def stretched_main(folder, seed: int, changes: int, sections: int = 36):
    """A random rising main of short sections stretched to about 1.5 km rising about
    50 m (invented), with pieces of at least 150 m and at most ``changes`` changes."""
    main, study = random_main(seed, sections=sections, classes=True, rules=True,
                              mip_gap=1e-9)
    chainage = main.chainage_m * 8.0
    rise = np.diff(main.pipe_level_m) * 30.0
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
