"""Break-pressure tanks chosen by ``design`` (contract section 8).

The enumeration compares the design's cost with the best of every subset of the sites:
the pipes optimised with exactly those tanks fixed, plus the price of the tanks
(common practice, no source: the definition of the cheapest choice). Every design of
both passes the check with its tanks. Routes and prices are invented test data.
"""

from __future__ import annotations

import itertools
import json

import numpy as np
import pytest
from builders import DELETE

from optimiser.analysis import check_design
from optimiser.cli import app
from optimiser.io import load_study
from optimiser.milp import optimise_design
from optimiser.model import Status

CATALOGUE = [
    (m, dn, idm, pn, head, 0.02, 150, cost, "invented test data")
    for dn, base in ((150, 20.0), (200, 31.0))
    for m, idm, pn, head, cost in (("PE", dn * 0.9, "PN10", 102.0, base),
                                   ("PE", dn * 0.86, "PN16", 163.0, 1.4 * base),
                                   ("PE", dn * 0.82, "PN25", 255.0, 2.0 * base))]
TANK_COST = 12000.0


def _profile(seed: int, n: int) -> list[tuple]:
    rng = np.random.default_rng(seed)
    chainage = np.linspace(0.0, 6000.0, n + 1)
    ground = 600.0 - 340.0 * chainage / 6000.0 + rng.normal(0.0, 6.0, n + 1)
    ground[0] = 600.0
    return [(float(c), float(g), "", "") for c, g in zip(chainage, ground, strict=True)]


def _study(make_study, seed: int, n: int, **extra):
    profile = _profile(seed, n)
    study = {
        "water": {"kinematic_viscosity_m2_s": 1.14e-6},
        "source": {"level_m": 603.0, "top_water_level_m": 604.0},
        "outlet": {"required_head_m": profile[-1][1] + 5.0},
        "route": {"fitting": DELETE, "min_pressure_m": 2.0},
        "offtake": DELETE,
        "scenario": [{"name": "peak", "flow": "18 L/s"}],
        "solver": {"mip_gap": 1e-9, "time_limit_s": 120},
        **extra,
    }
    return load_study(make_study(study=study, profile=profile, catalogue=CATALOGUE).study)


@pytest.mark.slow
@pytest.mark.parametrize(("seed", "n", "most", "change_cost"),
                         [(3, 6, 3, 0.0), (11, 6, 3, 0.0), (5, 10, 2, 0.0), (5, 8, 2, 800.0)])
def test_design_equals_the_best_subset_of_sites(make_study, seed, n, most, change_cost):
    """Nine sites on the longest route, so rows over runs of more than four sites (the
    running sums of the tank binaries) are exercised, not only the short ones; one
    route pays for each change of option (across tanks too)."""
    rules = {"cost": TANK_COST, "height_m": 3.0, "max_count": most}
    costs = {"costs": {"change_cost": change_cost}} if change_cost else {}
    outcome = optimise_design(_study(make_study, seed, n, break_pressure_tanks=rules,
                                     **costs))
    assert outcome.status == Status.OPTIMAL and outcome.verified
    sites = [c for c, *_ in _profile(seed, n)[1:-1]]
    best = np.inf
    for size in range(0, most + 1):
        for subset in itertools.combinations(sites, size):
            tanks = [{"chainage_m": c} for c in subset]
            fixed = _study(make_study, seed, n, break_pressure_tank=tanks or DELETE,
                           break_pressure_tanks={"height_m": 3.0}, **costs)
            try:
                result = optimise_design(fixed)
            except Exception as error:  # no design within the time limit is a failure
                raise AssertionError(f"tanks at {subset}: {error}") from error
            if result.status == Status.INFEASIBLE:
                continue
            assert result.verified and check_design(fixed, result.design).ok
            best = min(best, result.total_cost + TANK_COST * size)
    assert outcome.total_cost == pytest.approx(best, rel=1e-7)
    chosen = [t.chainage_m for t in outcome.design.tanks]
    assert set(chosen) <= set(sites) and len(chosen) <= most


def test_design_writes_tanks_and_check_reads_them(make_study, runner, tmp_path):
    rules = {"cost": TANK_COST, "height_m": 3.0}
    study = _study(make_study, 5, 6, break_pressure_tanks=rules)
    out = tmp_path / "out"
    result = runner.invoke(app, ["design", str(study.path), "--out", str(out)])
    assert result.exit_code == 0, result.output
    assert "Break-pressure tanks" in result.output
    assert "Without new tanks: no design meets every limit" in result.output
    table = (out / "break_pressure_tanks.csv").read_text().splitlines()
    assert table[0] == "branch,chainage_m,water_level_m,new,cost,label" and len(table) > 1
    payload = json.loads((out / "result.json").read_text())
    rows = payload["break_pressure_tanks"]
    assert rows and set(rows[0]) >= {"branch", "chainage_m", "water_level_m", "new", "cost",
                                     "label"}
    assert all(r["new"] and r["cost"] == TANK_COST for r in rows)
    assert payload["tank_cost_total"] == pytest.approx(TANK_COST * len(rows))
    assert payload["no_new_tank_status"] == "infeasible"
    design = out / "design.csv"
    ok = runner.invoke(app, ["check", str(study.path), "--design", str(design), "--tanks",
                             str(out / "break_pressure_tanks.csv")])
    assert ok.exit_code == 0, ok.output
    # Without its tanks the same pipes take the source's static head: classes fail.
    bare = runner.invoke(app, ["check", str(study.path), "--design", str(design)])
    assert bare.exit_code == 1 and "above the class" in bare.output


def test_tank_on_a_line_the_study_lacks_is_refused(make_study, runner):
    tank = [{"chainage_m": 1000.0, "branch": "east"}]
    profile = _profile(5, 6)
    files = make_study(study={"break_pressure_tank": tank, "offtake": DELETE,
                              "route": {"fitting": DELETE}}, profile=profile,
                       catalogue=CATALOGUE)
    result = runner.invoke(app, ["check", str(files.study), "--design", str(files.design)])
    assert result.exit_code == 2 and "no such line" in result.output


def test_bad_tank_file_is_refused(make_study, runner, tmp_path):
    study = _study(make_study, 5, 6)
    bad = tmp_path / "tanks.csv"
    bad.write_text("branch,chainage_m,water_level_m,new,cost,label\nmain,0,500,true,1,\n")
    files_design = study.path.parent / "design.csv"
    files_design.write_text("from_m,to_m,material,dn_mm,pressure_class\n"
                            "0,6000,PE,200,PN25\n")
    result = runner.invoke(app, ["check", str(study.path), "--design", str(files_design),
                                 "--tanks", str(bad)])
    assert result.exit_code == 2 and "strictly inside the route" in result.output


def test_diagnosis_says_where_a_tank_would_help(make_study):
    """Without tanks the route's 340 m fall exceeds the highest class (255 m): the
    diagnosis names a water level and a span for a tank. By hand: the reach's lowest
    pipe level plus 255 m (no surge allowance) bounds the tank's level (common
    practice, no source)."""
    study = _study(make_study, 5, 6)
    outcome = optimise_design(study)
    assert outcome.status == Status.INFEASIBLE
    text = " ".join(outcome.diagnosis)
    assert "A break-pressure tank with its water at most" in text
    lowest = float(study.route.pipe_level_m.min())
    level = float(text.split("water at most ")[1].split(" m")[0])
    assert lowest < level <= lowest + 255.0 + 0.05
