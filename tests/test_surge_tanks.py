"""Surge by wave speed with break-pressure tanks (contract sections 8 and 10).

The slow-closure length L of a pipe runs from the free surface upstream of it (the
source, or the last break-pressure tank above it) to the end of its branch.

Check values:
- hand calculation of Joukowsky's a V / g and of 2 L V / (g T) for a closure slower
  than 2 L / a (Joukowsky 1898 and Michaud 1878, as given in Wylie, E.B. & Streeter,
  V.L. (1993), Fluid Transients in Systems, ch. 1; the formulas from memory), with
  g = 9.80665 m/s^2 (standard gravity, CGPM 1901);
- enumeration of every subset of sites, each designed with its tanks fixed, for new
  tanks chosen by ``design`` (common practice, no source: the definition of the
  cheapest choice of tanks);
- for a study designed in parts at a tank, the check's surge heads of the whole study
  on the joined design (the independent check, itself tested by hand above).

All routes, catalogues and prices are invented test data.
"""

from __future__ import annotations

import dataclasses
import itertools
import math

import numpy as np
import pytest
from builders import CATALOGUE_COLUMNS, DELETE, csv_text, toml_text
from test_tanks_design import _profile  # the same invented falling route

from optimiser import load_design, load_study
from optimiser.analysis import check_design
from optimiser.milp import optimise_design
from optimiser.milp.cut_at_tanks import cut
from optimiser.milp.joined import with_whole_lengths
from optimiser.model import Design, Piece, Status

G = 9.80665
WAVE_SPEED = 300.0


def _joukowsky(velocity: float) -> float:
    return WAVE_SPEED * velocity / G


def _michaud(length: float, velocity: float, closure: float) -> float:
    return 2.0 * length * velocity / (G * closure)


# ------------------------------------------------------------ hand-worked check


def _hand_study(folder, closure_s: float, limit: float | None = None):
    """3 km route (lengths by chainage), source 200 m, a tank at 1,000 m (water 185 m),
    20 L/s in one PE option of 150 mm bore, a = 300 m/s."""
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "profile.csv").write_text(csv_text(
        [(0.0, 200.0), (1000.0, 190.0), (3000.0, 150.0)], ("chainage_m", "ground_m")),
        encoding="utf-8")
    (folder / "catalogue.csv").write_text(csv_text(
        [dict(zip(CATALOGUE_COLUMNS, ("PE", 160, 150.0, "PN16", 160.0, 0.01, 140, 30.0,
                                      "invented"), strict=True),
              wave_speed_m_s=WAVE_SPEED, allowable_surge_head_m=200.0)], CATALOGUE_COLUMNS),
        encoding="utf-8")
    surge = {"method": "joukowsky", "closure_time_s": closure_s}
    if limit is not None:
        surge["min_transient_pressure_m"] = limit
    study = {"title": "Invented route with a tank", "currency": "USD",
             "water": {"temperature_c": 15.0},
             "source": {"level_m": 200.0, "entrance_k": 0.0},
             "outlet": {"required_head_m": 150.0, "exit_k": 0.0},
             "route": {"profile": "profile.csv", "length": "chainage", "min_pressure_m": 0.0,
                       "cover_m": 1.0},
             "break_pressure_tank": [{"chainage_m": 1000.0, "water_level_m": 185.0}],
             "break_pressure_tanks": {"inlet_k": 0.0, "outlet_k": 0.0},
             "scenario": [{"name": "peak", "flow": "20 L/s"}],
             "catalogue": {"file": "catalogue.csv", "friction": "hazen-williams"},
             "surge": surge}
    (folder / "study.toml").write_text(toml_text(study), encoding="utf-8")
    return load_study(folder / "study.toml")


def _design(folder, study, pieces):
    path = folder / "design.csv"
    path.write_text(csv_text([(a, b, "PE", 160, "PN16") for a, b in pieces],
                             ("from_m", "to_m", "material", "dn_mm", "pressure_class")),
                    encoding="utf-8")
    return load_design(path, study)


VELOCITY = 0.020 / (math.pi * 0.075 ** 2)


@pytest.mark.parametrize(("closure", "above", "below"), [
    # Sudden: a V / g on both sides.
    (0.0, _joukowsky(VELOCITY), _joukowsky(VELOCITY)),
    # 15 s: above the tank L = 3,000 m, 2 L / a = 20 s > T, so a V / g; below it
    # L = 2,000 m from the tank, 2 L / a = 13.3 s < T, so 2 L V / (g T).
    (15.0, _joukowsky(VELOCITY), _michaud(2000.0, VELOCITY, 15.0)),
    # 60 s: slow on both sides, L = 3,000 m and 2,000 m.
    (60.0, _michaud(3000.0, VELOCITY, 60.0), _michaud(2000.0, VELOCITY, 60.0)),
])
def test_surge_length_restarts_at_a_tank(tmp_path, closure, above, below):
    study = _hand_study(tmp_path, closure)
    result = check_design(study, _design(tmp_path, study, [(0.0, 1000.0), (1000.0, 3000.0)]))
    assert result.pieces["surge_head_m"].tolist() == pytest.approx([above, below], rel=1e-9)


def test_piece_through_a_tank_is_judged_on_each_side(tmp_path):
    # One piece from 0 to 3,000 m through the tank, T = 15 s. Static heads (section 8):
    # above the tank 200 - 189 = 11 m at 1,000 m, below it 185 - 149 = 36 m at the
    # outlet (pipe levels with 1 m of cover). The class test takes the worse side:
    # static + surge = max(11 + a V / g, 36 + 2 L V / (g T)) against the surge limit.
    study = _hand_study(tmp_path, 15.0, limit=-5.0)
    result = check_design(study, _design(tmp_path, study, [(0.0, 3000.0)]))
    row = result.pieces.iloc[0]
    up, down = _joukowsky(VELOCITY), _michaud(2000.0, VELOCITY, 15.0)
    assert row["static_head_m"] == pytest.approx(36.0, abs=1e-9)
    assert row["static_head_m"] + row["surge_head_m"] == pytest.approx(
        max(11.0 + up, 36.0 + down), rel=1e-9)
    # The down-surge limit takes each point's own side: the upstream side of the tank
    # node and every point above it a V / g, the rest 2 L V / (g T).
    points = result.scenarios[0].points
    above = (points["chainage_m"] < 1000.0 - 1e-9) | (
        (np.abs(points["chainage_m"] - 1000.0) < 1e-9) & (points["side"] == "upstream"))
    assert points.loc[above, "surge_head_m"].to_numpy() == pytest.approx(up, rel=1e-9)
    assert points.loc[~above, "surge_head_m"].to_numpy() == pytest.approx(down, rel=1e-9)
    assert len(points[above]) >= 2 and len(points[~above]) >= 2


# ------------------------------------------------ new tanks chosen by design


TANK_COST = 12000.0


def _catalogue() -> list[dict]:
    rows = []
    for dn, base in ((150, 20.0), (200, 31.0)):
        for pn, bore, head, cost in (("PN10", 0.9, 102.0, 1.0), ("PN16", 0.86, 163.0, 1.4),
                                     ("PN25", 0.82, 255.0, 2.0)):
            rows.append(dict(zip(CATALOGUE_COLUMNS, ("PE", dn, dn * bore, pn, head, 0.02, 150,
                                                     cost * base, "invented"), strict=True),
                             wave_speed_m_s=WAVE_SPEED, allowable_surge_head_m=1.25 * head))
    return rows


def _route_study(make_study, seed: int, n: int, closure: float, **extra):
    profile = _profile(seed, n)
    study = {"water": {"kinematic_viscosity_m2_s": 1.14e-6},
             "source": {"level_m": 603.0, "top_water_level_m": 604.0},
             "outlet": {"required_head_m": profile[-1][1] + 5.0},
             "route": {"fitting": DELETE, "min_pressure_m": 2.0}, "offtake": DELETE,
             "scenario": [{"name": "peak", "flow": "18 L/s"}],
             "solver": {"mip_gap": 1e-9, "time_limit_s": 120},
             "surge": {"method": "joukowsky", "closure_time_s": closure}, **extra}
    return load_study(make_study(study=study, profile=profile, catalogue=_catalogue()).study)


@pytest.mark.slow
@pytest.mark.parametrize(("seed", "n", "most", "closure"),
                         [(3, 6, 3, 30.0), (5, 8, 2, 0.0), (11, 6, 2, 200.0)])
def test_new_tanks_by_wave_speed_equal_the_best_subset_of_sites(make_study, seed, n, most,
                                                                closure):
    """The surge of a pipe below a tank falls with L (slow closure) as its static head
    does, so where the tanks stand changes which classes fit on both counts."""
    rules = {"cost": TANK_COST, "height_m": 3.0, "max_count": most}
    study = _route_study(make_study, seed, n, closure, break_pressure_tanks=rules)
    outcome = optimise_design(study)
    assert outcome.status == Status.OPTIMAL and outcome.verified
    assert check_design(study, outcome.design).ok
    best = np.inf
    for size in range(most + 1):
        for subset in itertools.combinations([c for c, *_ in _profile(seed, n)[1:-1]], size):
            fixed = _route_study(make_study, seed, n, closure,
                                 break_pressure_tank=[{"chainage_m": c} for c in subset]
                                 or DELETE, break_pressure_tanks={"height_m": 3.0})
            result = optimise_design(fixed)
            if result.status == Status.INFEASIBLE:
                continue
            assert result.verified and check_design(fixed, result.design).ok
            best = min(best, result.total_cost + TANK_COST * size)
    assert np.isfinite(best)
    assert outcome.total_cost == pytest.approx(best, rel=1e-6)
    assert outcome.lower_bound <= best * (1 + 1e-9)


def test_new_tanks_by_wave_speed_meet_the_down_surge_limit(make_study):
    study = _route_study(make_study, 3, 6, 30.0, break_pressure_tanks={
        "cost": TANK_COST, "height_m": 3.0, "max_count": 3},
        surge={"min_transient_pressure_m": 1.0})
    outcome = optimise_design(study)
    assert outcome.verified and outcome.design.tanks
    points = outcome.check.scenarios[0].points
    assert (points["transient_pressure_m"] >= 1.0 - 1e-9).all()


def test_new_tanks_by_wave_speed_load_on_a_branched_scheme(make_study):
    # Once refused; designed now (tests/test_scheme_surge_tanks.py checks the designs).
    study = {"surge": {"method": "joukowsky"},
             "break_pressure_tanks": {"cost": TANK_COST},
             "branch": [{"name": "east", "from": "main", "at_chainage_m": 1600.0,
                         "profile": "east.csv", "flow": "5 L/s", "required_head_m": 120.0}]}
    files = make_study(study=study, catalogue=[
        {**row, "wave_speed_m_s": WAVE_SPEED} for row in _catalogue()])
    (files.folder / "east.csv").write_text(csv_text([(0.0, 160.0), (500.0, 150.0)],
                                                  ("chainage_m", "ground_m")), encoding="utf-8")
    study = load_study(files.study)
    assert study.tank_rules.cost == TANK_COST and study.surge.method.value == "joukowsky"


# ------------------------------------------- slow closure, parts cut at a tank


def _scheme(folder, closure: float, tank_at: float = 1000.0, water: float = 242.0):
    """Trunk 3 km from a source at 300 m through its own tank (at 1,000 m, water 242 m)
    to an outlet; branch "b" leaves it at 2,000 m."""
    folder.mkdir(parents=True, exist_ok=True)
    profiles = {"trunk.csv": [(0.0, 300.0), (500.0, 270.0), (1000.0, 240.0), (2000.0, 205.0),
                              (2500.0, 177.5), (3000.0, 150.0)],
                "b.csv": [(0.0, 205.0), (1000.0, 160.0)]}
    for name, rows in profiles.items():
        (folder / name).write_text(csv_text(rows, ("chainage_m", "ground_m")), encoding="utf-8")
    (folder / "catalogue.csv").write_text(csv_text(_catalogue(), CATALOGUE_COLUMNS),
                                          encoding="utf-8")
    study = {"title": "Invented scheme with a tank on its trunk", "currency": "USD",
             "water": {"temperature_c": 15.0},
             "source": {"level_m": 300.0, "entrance_k": 0.0},
             "outlet": {"required_head_m": 160.0, "exit_k": 0.0},
             "route": {"profile": "trunk.csv", "length": "chainage", "min_pressure_m": 0.0,
                       "cover_m": 1.0},
             "branch": [{"name": "b", "from": "main", "at_chainage_m": 2000.0,
                         "profile": "b.csv", "flow": "6 L/s", "required_head_m": 170.0,
                         "exit_k": 0.0, "junction_k": 0.0}],
             "break_pressure_tank": [{"chainage_m": tank_at, "water_level_m": water}],
             "break_pressure_tanks": {"inlet_k": 0.0, "outlet_k": 0.0},
             "scenario": [{"name": "peak", "flow": "14 L/s"}],
             "catalogue": {"file": "catalogue.csv", "friction": "hazen-williams"},
             "surge": {"method": "joukowsky", "closure_time_s": closure}}
    (folder / "study.toml").write_text(toml_text(study), encoding="utf-8")
    return load_study(folder / "study.toml")


def _clipped(design: Design, branch: str, low: float, high: float, to: str = "main"
             ) -> list[Piece]:
    """The pieces of ``branch`` between chainages ``low`` and ``high``, cut there and
    moved to start at ``low``, on line ``to``."""
    return [Piece(max(p.from_m, low) - low, min(p.to_m, high) - low, p.option, to)
            for p in design.pieces if p.branch == branch and p.to_m > low + 1e-9
            and p.from_m < high - 1e-9]


def _point_surges(result, shift: float = 0.0, line: str = "main") -> dict:
    """Surge head of every check point by (branch, chainage + shift on ``line``, side)."""
    points = result.scenarios[0].points
    return {(b, round(c + (shift if b == line else 0.0), 6), side): surge
            for b, c, side, surge in zip(points["branch"], points["chainage_m"],
                                         points["side"], points["surge_head_m"], strict=True)}


def test_slow_closure_with_a_schemes_tank_sees_the_whole_length(tmp_path):
    # T = 60 s is above 2 L / a (20 s for the trunk's 3 km), so every surge is
    # 2 L V / (g T) and depends on L: the part above the tank must take L to the trunk's
    # end (3 km), not to the tank (1 km); the part below, L from the tank.
    study = _scheme(tmp_path, 60.0)
    outcome = optimise_design(study)
    assert outcome.verified and outcome.status == Status.OPTIMAL
    whole = _point_surges(check_design(study, outcome.design))
    above, below, tank = cut(study)
    above, below = with_whole_lengths(study, above, below, tank, "a test")
    upper = Design(tuple(_clipped(outcome.design, "main", 0.0, 1000.0)))
    part = _point_surges(check_design(above, upper))
    part.pop(("main", 1000.0, ""))  # the part's outlet: the tank's arriving side
    assert len(part) >= 2
    for (branch, chainage, side), value in part.items():
        assert whole[branch, chainage, side] == pytest.approx(value, rel=1e-9)
    assert whole["main", 1000.0, "upstream"] == pytest.approx(
        check_design(above, upper).scenarios[0].points["surge_head_m"].iloc[-1], rel=1e-9)
    # The length beyond the tank matters: without it the part above sees a third of L.
    short = _point_surges(check_design(dataclasses.replace(above, pipe_length_beyond_m=()),
                                       upper))
    assert all(short[key] == pytest.approx(value / 3.0, rel=1e-9)
               for key, value in part.items())
    # Below the tank: L from the tank to the end of each line.
    lower = Design(tuple(_clipped(outcome.design, "main", 1000.0, 3000.0)
                         + _clipped(outcome.design, "b", 0.0, 1000.0, "b")))
    for (branch, chainage, side), value in _point_surges(
            check_design(below, lower), 1000.0).items():
        if (branch, chainage) != ("main", 1000.0):
            assert whole[branch, chainage, side] == pytest.approx(value, rel=1e-9)


def test_slow_closure_above_a_tank_with_branches(tmp_path):
    # The part above a tank at 2,500 m keeps branch "b": each line's view carries its
    # own length past its end, so the part is designed with the whole study's L; the
    # joined design passes the whole study's check, and costs no more than with a
    # sudden closure (a V / g is never below 2 L V / (g T) when T > 2 L / a; Wylie &
    # Streeter, from memory).
    import dataclasses

    from optimiser.model import SurgeMethod, SurgeSettings

    study = _scheme(tmp_path, 60.0, tank_at=2500.0, water=180.0)
    slow = optimise_design(study)
    sudden = optimise_design(dataclasses.replace(
        study, surge=SurgeSettings(SurgeMethod.JOUKOWSKY, 0.0)))
    assert slow.design is not None and slow.verified
    if sudden.design is not None:
        assert slow.total_cost <= sudden.total_cost * (1 + 1e-6)

def _rising_main(folder, closure: float):
    """A 1 km rising main from a sump at 100 m to its own tank (water 131 m), then 2 km
    by gravity to an outlet at 60 m; PVC with a = 300 m/s."""
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "profile.csv").write_text(csv_text(
        [(0.0, 100.0), (1000.0, 130.0), (3000.0, 60.0)], ("chainage_m", "ground_m")),
        encoding="utf-8")
    rows = [dict(zip(CATALOGUE_COLUMNS, ("PVC", dn, float(dn), "PN100", 100.0, 0.01, 140,
                                         cost, "invented"), strict=True),
                 wave_speed_m_s=WAVE_SPEED)
            for dn, cost in ((150, 40.0), (200, 55.0), (250, 75.0))]
    (folder / "catalogue.csv").write_text(csv_text(rows, CATALOGUE_COLUMNS), encoding="utf-8")
    study = {"title": "Invented rising main to a tank", "currency": "USD",
             "water": {"temperature_c": 15.0},
             "source": {"level_m": 100.0, "entrance_k": 0.0},
             "outlet": {"required_head_m": 80.0, "exit_k": 0.0},
             "route": {"profile": "profile.csv", "length": "chainage", "min_pressure_m": 0.0},
             "break_pressure_tank": [{"chainage_m": 1000.0, "water_level_m": 131.0}],
             "break_pressure_tanks": {"inlet_k": 0.0, "outlet_k": 0.0},
             "scenario": [{"name": "duty", "flow": "40 L/s", "hours_per_year": 3000.0}],
             "catalogue": {"file": "catalogue.csv", "friction": "hazen-williams"},
             "pump": {"efficiency": 0.7, "energy_price": 0.15, "life_years": 30,
                      "discount_rate": 0.05},
             "surge": {"method": "joukowsky", "closure_time_s": closure}}
    (folder / "study.toml").write_text(toml_text(study), encoding="utf-8")
    return load_study(folder / "study.toml")


def test_slow_closure_with_a_pump_and_its_tank(tmp_path):
    # T = 60 s > 2 L / a = 20 s: above the tank L = 3 km (sump to outlet), below it
    # L = 2 km (tank to outlet); each point's surge is 2 L V / (g T), V its piece's
    # largest velocity.
    study = _rising_main(tmp_path, 60.0)
    outcome = optimise_design(study)
    assert outcome.verified
    check = check_design(study, outcome.design)
    velocity = check.pieces["max_velocity_m_s"].to_numpy()
    points = check.scenarios[0].points
    for row in points.itertuples():
        above = row.chainage_m < 1000.0 - 1e-9 or (abs(row.chainage_m - 1000.0) < 1e-9
                                                   and row.side == "upstream")
        expected = _michaud(3000.0 if above else 2000.0, velocity[row.piece], 60.0)
        assert row.surge_head_m == pytest.approx(expected, rel=1e-9)
