"""Sections split where a pressure class stops being admissible (contract section 5:
static head at a piece's lowest point plus surge ≤ allowable head)."""

from __future__ import annotations

import numpy as np
import pytest

from optimiser import load_study
from optimiser.milp.class_limits import (
    crossing_chainages_m,
    limit_levels_m,
    split_at_class_limits,
)


@pytest.fixture
def falling_study(make_study):
    # One 1,000 m section falling 100 m; the default catalogue's classes cross it.
    files = make_study(profile=[(0.0, 200.0, "intake", ""), (1000.0, 100.0, "", "rock"),
                                (1500.0, 98.0, "tank", "")],
                       study={"offtake": [], "route": {"fitting": []},
                              "source": {"level_m": 201.0, "top_water_level_m": 203.0},
                              "outlet": {"required_head_m": 120.0},
                              "catalogue": {"file": "catalogue.csv",
                                            "surge_allowance_m": 5.0}})
    return load_study(files.study)


def test_crossing_is_where_static_head_plus_surge_meets_the_allowable_head(falling_study):
    study = falling_study
    levels = limit_levels_m(study)
    found = crossing_chainages_m(study.route, levels)
    # By hand (common practice, no source: the pipe level is linear between survey
    # points): pipe level p(c) = 199 - 0.1 c on the first section; the option with
    # allowable head A stops being admissible where 203 - p + 5 = A (static head plus
    # the surge allowance) and, for the static head alone, where 203 - p = A.
    expected = sorted({(a - shift) / 0.1 for a in study.catalogue.allowable_head_m
                       for shift in (9.0, 4.0) if 0.0 < (a - shift) / 0.1 < 1000.0})
    assert len(expected) > 0  # the case means something
    np.testing.assert_allclose(found, expected, rtol=0, atol=1e-9)


def test_split_keeps_lengths_zones_and_ground(falling_study):
    study = falling_study
    split = split_at_class_limits(study)
    assert split.route.n_sections > study.route.n_sections
    # Slope lengths add up exactly: the pipe is straight between survey points.
    assert split.route.length_m.sum() == pytest.approx(study.route.length_m.sum(), rel=1e-12)
    new = ~np.isin(split.route.chainage_m, study.route.chainage_m)
    np.testing.assert_allclose(split.route.ground_m[new],
                               study.route.ground_at(split.route.chainage_m[new]))
    # Every part of the first section keeps its zone; the last section keeps "rock".
    assert split.route.zones[-1] == "rock"
    assert all(zone == study.route.zones[0] for zone in split.route.zones[:-1])
    # At every new node one option's class limit is met exactly.
    levels = limit_levels_m(study)[0]
    pipe = split.route.pipe_level_m[new]
    assert np.min(np.abs(pipe[:, None] - levels[None, :]), axis=1).max() < 1e-9


def test_no_crossing_no_change(make_study):
    files = make_study(profile=[(0.0, 200.0, "", ""), (1000.0, 199.0, "", "")],
                       study={"offtake": [], "route": {"fitting": []},
                              "outlet": {"required_head_m": 195.0}})
    study = load_study(files.study)
    assert split_at_class_limits(study) is study
