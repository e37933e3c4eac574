"""New break-pressure tanks chosen by ``design`` on a branched scheme with surge by wave
speed (contract sections 7, 8 and 10).

Check values:
- hand calculation of Joukowsky's rise a V / g, and of 2 L V / (g T) for a closure
  slower than 2 L / a (Joukowsky 1898 and Michaud 1878, as given in Wylie, E.B. &
  Streeter, V.L. (1993), Fluid Transients in Systems, ch. 1; the formulas from memory),
  with g = 9.80665 m/s^2 (standard gravity, CGPM 1901); L the pipe length from the free
  surface upstream (the source or a tank) to the end of the piece's branch (contract
  section 10), worked by hand on the invented scheme below;
- the cheapest over an enumeration of every fixed set of sites, each set written as
  ``[[break_pressure_tank]]`` tables of a study of its own and designed with its tanks
  fixed, plus the set's count x the tank cost (common practice, no source: the
  definition of the cheapest choice of tanks; contract section 8 for the total);
- the independent check (:func:`optimiser.analysis.check_design`), which judges every
  piece's class with its own surge.

All study data are invented: a scheme falling about 200 m from a source at 500 m, more
than the highest class of its invented catalogue takes, so it has no design without
tanks; pipes of three invented plastic classes with invented wave speeds.
"""

from __future__ import annotations

import itertools
import math

import pytest
from builders import design_tanks_then_check, toml_text
from typer.testing import CliRunner

from optimiser import load_study
from optimiser.analysis import check_design
from optimiser.cli import app
from optimiser.milp import optimise_design
from optimiser.milp.scheme_tanks.count import covers, fewest_tanks
from optimiser.milp.scheme_tanks.lines_bound import lines_bound
from optimiser.milp.scheme_tanks.relaxation import relaxed_bound
from optimiser.milp.scheme_tanks.sites import scheme_sites
from optimiser.milp.scheme_tanks.wave_surge import (
    least_lengths_m,
    static_heads_m,
    upstream_length_m,
)
from optimiser.milp.search.state import Clock, Settings
from optimiser.model.lines import study_lines

G = 9.80665
TANK_COST = 3000.0
SLOW_S = 30.0
"""A closure slower than 2 L / a everywhere here (L <= 3,000 m, a <= 400 m/s: 15 s)."""
TRUNK = [(0.0, 495.0), (500.0, 470.0), (1000.0, 430.0), (1500.0, 400.0), (2000.0, 360.0),
         (2500.0, 330.0), (3000.0, 300.0)]
BRANCH = [(0.0, 430.0), (500.0, 390.0), (1000.0, 350.0), (1500.0, 310.0), (2000.0, 280.0)]
MARKED = {"main": (500.0, 2000.0), "b": (500.0, 1000.0)}
"""Four marked sites: sixteen sets."""
CLASSES = (("PN6", 61.0, 0.95, 1.00, 250.0), ("PN10", 102.0, 0.91, 1.35, 320.0),
           ("PN16", 163.0, 0.86, 1.90, 400.0))
"""Invented classes: name, allowable head [m], bore / DN, price factor, wave speed [m/s]."""


def _catalogue_text() -> str:
    lines = ["material,dn_mm,internal_diameter_mm,pressure_class,allowable_head_m,"
             "roughness_mm,hazen_williams_c,cost_per_m,note,wave_speed_m_s"]
    for dn in (90, 110, 125, 160, 200):
        for name, allowable, bore, factor, wave in CLASSES:
            price = round(0.004 * dn ** 1.6 * factor, 2)
            lines.append(f"plastic,{dn},{dn * bore:.1f},{name},{allowable},0.05,140,"
                         f"{price},invented,{wave}")
    return "\n".join(lines) + "\n"


def _profile(rows, marked) -> str:
    lines = ["chainage_m,ground_m,tank_site"]
    lines += [f"{c},{g},{'yes' if c in marked else ''}" for c, g in rows]
    return "\n".join(lines) + "\n"


def _write(folder, closure_s: float, *, own=(), cost=TANK_COST, marked=MARKED,
           transient_m=None, max_count=None):
    """Trunk 3 km (14 L/s to 330 m), branch "b" leaving it at 1,000 m (2 km, 8 L/s to
    300 m); pipe lengths by chainage; ``own``: (line, chainage) of the study's own
    tanks; ``cost`` None: no new tank; ``transient_m``: the down-surge limit."""
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "trunk.csv").write_text(_profile(TRUNK, marked.get("main", ())), "utf-8")
    (folder / "b.csv").write_text(_profile(BRANCH, marked.get("b", ())), "utf-8")
    (folder / "catalogue.csv").write_text(_catalogue_text(), "utf-8")
    tanks = {"height_m": 5.0} | ({} if cost is None else {"cost": cost, "sites": "marked"})
    if max_count is not None:
        tanks["max_count"] = max_count
    study = {"title": "Invented falling scheme, surge by wave speed", "currency": "USD",
             "source": {"level_m": 500.0},
             "outlet": {"required_head_m": 330.0},
             "route": {"profile": "trunk.csv", "min_pressure_m": 2.0, "length": "chainage"},
             "branch": [{"name": "b", "at_chainage_m": 1000.0, "profile": "b.csv",
                         "flow": "8 L/s", "required_head_m": 300.0}],
             "scenario": [{"name": "peak", "flow": "14 L/s"}],
             "catalogue": {"file": "catalogue.csv"},
             "surge": {"method": "joukowsky", "closure_time_s": closure_s},
             "break_pressure_tanks": tanks}
    if transient_m is not None:
        study["surge"]["min_transient_pressure_m"] = transient_m
    if own:
        study["break_pressure_tank"] = [{"branch": b, "chainage_m": c} for b, c in own]
    (folder / "study.toml").write_text(toml_text(study), encoding="utf-8")
    return folder / "study.toml"


def _sites(marked=MARKED) -> list[tuple[str, float]]:
    return [(line, c) for line, chainages in marked.items() for c in chainages]


class Enumerated:
    """Every fixed set of sites designed with its tanks fixed: pipe cost by set."""

    def __init__(self, folder, closure_s: float, marked=MARKED, transient_m=None,
                 own=()) -> None:
        self.pipes: dict[tuple, float] = {}
        for count in range(len(_sites(marked)) + 1):
            for index, chosen in enumerate(itertools.combinations(_sites(marked), count)):
                path = _write(folder / f"set-{count}-{index}", closure_s, own=(*own, *chosen),
                              cost=None, marked=marked, transient_m=transient_m)
                outcome = optimise_design(load_study(path), mip_gap=1e-7)
                if outcome.design is not None:
                    assert outcome.status.value == "optimal"
                    self.pipes[chosen] = outcome.total_cost

    @property
    def best(self) -> float:
        return min(cost + len(chosen) * TANK_COST for chosen, cost in self.pipes.items())

    @property
    def fewest(self) -> int:
        return min(len(chosen) for chosen in self.pipes)


@pytest.fixture(scope="module")
def enumerated(tmp_path_factory):
    """The enumeration for a sudden and a slow closure (each built once)."""
    found: dict[float, Enumerated] = {}

    def get(closure_s: float) -> Enumerated:
        if closure_s not in found:
            found[closure_s] = Enumerated(tmp_path_factory.mktemp("sets"), closure_s)
        return found[closure_s]
    return get


# ------------------------------------------------------------ hand-worked surge


def _velocity(flow_l_s: float, bore_mm: float) -> float:
    return flow_l_s / 1000.0 / (math.pi / 4.0 * (bore_mm / 1000.0) ** 2)


def test_least_slow_closure_lengths_by_hand(tmp_path):
    # L runs from the free surface upstream to the end of the piece's branch; the least
    # any choice gives a section is from the nearest site above it on its path. Trunk
    # (3,000 m): from the source 3,000 m; below the site at 500 m 2,500 m; below 2,000 m
    # 1,000 m. Branch b (leaves at 1,000 m, 2,000 m long; from the source 3,000 m):
    # below the trunk's site at 500 m 500 + 2,000 = 2,500 m; below its own sites at
    # 500 m and 1,000 m 1,500 m and 1,000 m.
    study = load_study(_write(tmp_path / "s", SLOW_S))
    sites = scheme_sites(study)
    lines = {line.name: line for line in study_lines(study)}
    assert least_lengths_m(study, sites, lines["main"]) == pytest.approx(
        [3000.0, 2500.0, 2500.0, 2500.0, 1000.0, 1000.0])
    assert least_lengths_m(study, sites, lines["b"]) == pytest.approx(
        [2500.0, 1500.0, 1000.0, 1000.0])


@pytest.mark.parametrize(("closure_s", "expected"), [
    # sudden: DN200 PN16 (bore 0.86 x 200 = 172 mm) at 14 L/s: V = 0.014 / (pi/4
    # 0.172^2) = 0.60254 m/s; a V / g = 400 x 0.60254 / 9.80665 = 24.577 m;
    # 163 - 24.577 = 138.42 m
    (0.0, 138.42),
    # slow (30 s > 2 L / a = 12.5 s), L = 2,500 m: 2 x 2500 x 0.60254 / (9.80665 x 30)
    # = 10.240 m; 163 - 10.240 = 152.76 m
    (SLOW_S, 152.76),
])
def test_largest_static_head_a_class_takes_by_hand(tmp_path, closure_s, expected):
    # Trunk section 1,000-1,500 m (14 L/s, least L 2,500 m): the best option is the
    # largest PN16 pipe, the slowest and so the least surge.
    study = load_study(_write(tmp_path / "s", closure_s))
    sites = scheme_sites(study)
    trunk = study_lines(study)[0]
    heads = static_heads_m(study, trunk, least_lengths_m(study, sites, trunk))
    assert heads[2] == pytest.approx(expected, abs=0.01)
    velocity = _velocity(14.0, 172.0)
    surge = 400.0 * velocity / G if closure_s == 0 else \
        2 * 2500.0 * velocity / (G * closure_s)
    assert heads[2] == pytest.approx(163.0 - surge, rel=1e-9)


def test_fewest_tanks_see_the_surge(tmp_path, enumerated):
    # Between 1,500 and 2,000 m the trunk's lowest pipe is 359 m (ground 360, cover 1):
    # static head 141 m below the source (500 m). Sudden: the best class takes 138.42 m
    # (above), so a tank at 500 m (level 475 m: 116 m) is needed as well as one at
    # 2,000 m (the trunk's end lies 201 m below the source) and one on the branch (its
    # end 221 m below the source): three. Slow: 152.76 m > 141 m, two suffice. The
    # static head alone (max class 163 m) would need two in both.
    sudden = load_study(_write(tmp_path / "sudden", 0.0))
    slow = load_study(_write(tmp_path / "slow", SLOW_S))
    assert fewest_tanks(sudden, scheme_sites(sudden)) == 3 == enumerated(0.0).fewest
    assert fewest_tanks(slow, scheme_sites(slow)) == 2 == enumerated(SLOW_S).fewest
    # a set is proven to have no design only where every class fails its exact surge
    # (exact L of the set: the trunk's 1,500-2,000 m from the source, 3,000 m; slow:
    # 2 x 3000 x 0.60254 / (9.80665 x 30) = 12.29 m, 163 - 12.29 = 150.7 m > 141 m)
    for study, holds in ((sudden, False), (slow, True)):
        by_site = {(s.line, s.chainage_m): s for s in scheme_sites(study)}
        assert covers(study, [by_site[("main", 2000.0)], by_site[("b", 500.0)]]) is holds


def test_too_few_tanks_allowed_for_the_surge_is_infeasible_with_the_reason(tmp_path):
    # Sudden: three tanks are needed (above); at most two allowed: no design, and the
    # reason names the surge. The same with a slow closure needs only two.
    sudden = load_study(_write(tmp_path / "sudden", 0.0, max_count=2))
    outcome = optimise_design(sudden, mip_gap=1e-7)
    assert outcome.status.value == "infeasible" and outcome.design is None
    assert "needs at least 3 new break-pressure tanks" in outcome.diagnosis[0]
    assert "surge by wave speed" in outcome.diagnosis[0]
    slow = load_study(_write(tmp_path / "slow", SLOW_S, max_count=2))
    assert fewest_tanks(slow, scheme_sites(slow)) == 2


# ------------------------------------------------------------ design against enumeration


@pytest.mark.parametrize("closure_s", [0.0, SLOW_S])
def test_design_equals_the_cheapest_fixed_set_of_sites(tmp_path, enumerated, closure_s):
    study = load_study(_write(tmp_path / "study", closure_s))
    outcome = optimise_design(study, mip_gap=1e-7)
    expected = enumerated(closure_s).best
    assert outcome.verified and outcome.status.value == "optimal"
    assert outcome.total_cost == pytest.approx(expected, rel=1e-6)
    assert outcome.lower_bound <= expected * (1 + 1e-9)
    assert outcome.no_new_tank_status.value == "infeasible"
    new = [t for t in outcome.design.tanks if t.new]
    assert {t.branch for t in new} == {"main", "b"}
    # the check judges each piece's class with its own surge, independently
    check = check_design(study, outcome.design)
    assert check.ok and check.tank_cost_total == pytest.approx(len(new) * TANK_COST)
    assert check.total_cost == pytest.approx(expected, rel=1e-6)


@pytest.mark.parametrize("closure_s", [0.0, SLOW_S])
def test_bounds_for_any_tanks_are_never_above_any_fixed_set(tmp_path, enumerated,
                                                             closure_s):
    # The relaxation (no tank's energy, lowest static line, least surge) is at most the
    # pipe cost of every set's design; the lines apart at most the best total.
    study = load_study(_write(tmp_path / "study", closure_s))
    sites = scheme_sites(study)
    sets = enumerated(closure_s)
    relaxed = relaxed_bound(study, sites, Settings("highs", 60.0, 1e-7), Clock(0.0, 1e12))
    assert not relaxed.diagnosis and relaxed.bound > 0.0
    assert relaxed.bound <= min(sets.pipes.values()) * (1 + 1e-9)
    bound, stages = lines_bound(study, sites, Settings("highs", 60.0, 1e-7),
                                Clock(0.0, 1e12), optimise_design)
    assert len(stages) == 2 and 0.0 < bound <= sets.best * (1 + 1e-9)


def test_with_a_tank_of_the_study_and_a_slow_closure(tmp_path):
    # The study's own tank at 1,500 m cuts the scheme first; above it the trunk's pipes
    # keep L to the trunk's end (the part carries 1,500 m past the tank), so a new tank
    # at 500 m gives L = 3,000 - 500 = 2,500 m there, as in the whole scheme.
    own = (("main", 1500.0),)
    marked = {"main": (500.0, 2500.0), "b": (1000.0,)}
    sets = Enumerated(tmp_path / "sets", SLOW_S, marked=marked, own=own)
    study = load_study(_write(tmp_path / "study", SLOW_S, own=own, marked=marked))
    outcome = optimise_design(study, mip_gap=1e-7)
    assert outcome.verified and outcome.status.value == "optimal"
    assert outcome.total_cost == pytest.approx(sets.best, rel=1e-6)
    assert outcome.lower_bound <= sets.best * (1 + 1e-9)
    assert check_design(study, outcome.design).ok


def test_relaxation_with_a_down_surge_limit_is_never_above_any_fixed_set(tmp_path):
    # min_transient_pressure_m (contract section 10): pressure head less the surge of
    # the pipe there >= the limit. The relaxation takes the energy of no tank (the
    # highest) and the least surge any choice of tanks allows.
    marked = {"main": (500.0, 2000.0), "b": (1000.0,)}
    sets = Enumerated(tmp_path / "sets", SLOW_S, marked=marked, transient_m=-10.0)
    assert sets.pipes  # some set has a design under the limit
    study = load_study(_write(tmp_path / "study", SLOW_S, marked=marked, transient_m=-10.0))
    relaxed = relaxed_bound(study, scheme_sites(study), Settings("highs", 60.0, 1e-7),
                            Clock(0.0, 1e12))
    assert not relaxed.diagnosis and relaxed.bound > 0.0
    assert relaxed.bound <= min(sets.pipes.values()) * (1 + 1e-9)


def test_slow_closure_bound_of_the_lines_apart_takes_the_least_length(tmp_path):
    # Branch b seen alone as a route: its pipes' L may start at the trunk's site at
    # 500 m, 500 m above its junction, never further (its view carries that 500 m).
    study = load_study(_write(tmp_path / "study", SLOW_S))
    sites = scheme_sites(study)
    lines = {line.name: line for line in study_lines(study)}
    assert upstream_length_m(study, sites, lines["b"]) == pytest.approx(500.0)
    assert upstream_length_m(study, sites, lines["main"]) == pytest.approx(0.0)
    # without the trunk's sites the branch's pipes reach the source: 1,000 m before it
    own = [s for s in sites if s.line == "b"]
    assert upstream_length_m(study, own, lines["b"]) == pytest.approx(1000.0)


# ------------------------------------------------------------ command line


def test_cli_design_writes_the_tanks_and_check_takes_them(tmp_path):
    marked = {"main": (500.0, 2000.0), "b": (500.0,)}
    study_path = _write(tmp_path / "study", SLOW_S, marked=marked)
    out = tmp_path / "out"
    rows, data = design_tanks_then_check(study_path, out, TANK_COST)
    assert all(piece["surge_head_m"] > 0.0 for piece in data["pieces"])
    # a tank is identified by (line, chainage): the trunk's and the branch's at 500 m are
    # two tanks, one row repeated is refused (contract section 8)
    assert {(r["branch"], float(r["chainage_m"])) for r in rows} >= {("main", 500.0),
                                                                     ("b", 500.0)}
    twice = tmp_path / "twice.csv"
    text = (out / "break_pressure_tanks.csv").read_text(encoding="utf-8")
    twice.write_text(text + text.splitlines()[1] + "\n", encoding="utf-8")
    refused = CliRunner().invoke(app, ["check", str(study_path), "--design",
                                       str(out / "design.csv"), "--tanks", str(twice)])
    assert refused.exit_code == 2 and "twice.csv" in " ".join(refused.output.split())
    assert "Traceback" not in refused.output
