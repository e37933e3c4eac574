"""New break-pressure tanks chosen by ``design`` on a branched scheme (contract sections 7
and 8).

Check values: the cheapest over an enumeration of every fixed set of sites, each set
written as ``[[break_pressure_tank]]`` tables of a study of its own (loaded by the
loader, designed with its tanks fixed; that design is itself tested against an
independent scipy programme in tests/test_scheme_tanks.py), plus the set's count x the
tank cost (contract section 8: ``total_cost`` includes cost x new tanks). A bound must
never be above that optimum; every design must pass the check. All study data are
invented: a scheme falling about 200 m, more than the highest class of its invented
catalogue takes (tests/random_trees.py), so it has no design without tanks.
"""

from __future__ import annotations

import dataclasses
import itertools
import math
import random
import tomllib

import pytest
from builders import design_tanks_then_check, toml_text
from random_trees import catalogue_text
from typer.testing import CliRunner

from optimiser import load_study
from optimiser.analysis import check_design
from optimiser.cli import app
from optimiser.milp import optimise_design
from optimiser.milp.scheme_tanks import search
from optimiser.milp.scheme_tanks.count import fewest_tanks
from optimiser.milp.scheme_tanks.lines_bound import lines_bound
from optimiser.milp.scheme_tanks.pricing import Priced, Prices
from optimiser.milp.scheme_tanks.relaxation import relaxed_bound
from optimiser.milp.scheme_tanks.sites import Site, scheme_sites
from optimiser.milp.search.state import Clock, Settings
from optimiser.model.status import Status

TANK_COST = 3000.0
TRUNK = [(0.0, 495.0), (500.0, 470.0), (1000.0, 430.0), (1500.0, 400.0), (2000.0, 360.0),
         (2500.0, 330.0), (3000.0, 300.0)]
BRANCH = [(0.0, 430.0), (500.0, 390.0), (1000.0, 350.0), (1500.0, 310.0), (2000.0, 280.0)]
MARKED = {"main": (1500.0, 2000.0), "b": (500.0,)}
"""The marked sites (three: eight sets of sites)."""


def _profile(rows, marked) -> str:
    lines = ["chainage_m,ground_m,tank_site"]
    lines += [f"{c},{g},{'yes' if c in marked else ''}" for c, g in rows]
    return "\n".join(lines) + "\n"


def _write(folder, *, marked=MARKED, own=(), cost=TANK_COST, tanks_extra=None,
           rules=None):
    """Trunk 3 km from a source at 500 m (6 L/s to 330 m); branch "b" leaves it at
    1,000 m and falls to 280 m (4 L/s to 300 m). ``own``: (line, chainage) of tanks of
    the study's own; ``cost`` None: no new tank."""
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "trunk.csv").write_text(_profile(TRUNK, marked.get("main", ())), "utf-8")
    (folder / "b.csv").write_text(_profile(BRANCH, marked.get("b", ())), "utf-8")
    (folder / "catalogue.csv").write_text(catalogue_text((90, 110, 125, 160, 200)), "utf-8")
    tanks = {"height_m": 5.0} | ({} if cost is None else {"cost": cost, "sites": "marked"})
    study = {"title": "Invented falling scheme", "currency": "USD",
             "source": {"level_m": 500.0},
             "outlet": {"required_head_m": 330.0},
             "route": {"profile": "trunk.csv", "min_pressure_m": 2.0},
             "branch": [{"name": "b", "at_chainage_m": 1000.0, "profile": "b.csv",
                         "flow": "4 L/s", "required_head_m": 300.0}],
             "scenario": [{"name": "peak", "flow": "6 L/s"}],
             "catalogue": {"file": "catalogue.csv"},
             "break_pressure_tanks": tanks | (tanks_extra or {})}
    if own:
        study["break_pressure_tank"] = [{"branch": b, "chainage_m": c} for b, c in own]
    if rules:
        study["rules"] = rules
    (folder / "study.toml").write_text(toml_text(study), encoding="utf-8")
    return folder / "study.toml"


def _sites(marked=MARKED) -> list[tuple[str, float]]:
    return [(line, c) for line, chainages in marked.items() for c in chainages]


def _enumerated(tmp_path, own=(), marked=MARKED, most=None, rules=None) -> float:
    """The cheapest over every fixed set of sites: each set as the study's own tanks,
    designed with them fixed, plus its count x cost."""
    best = float("inf")
    sites = _sites(marked)
    for count in range(len(sites) + 1 if most is None else most + 1):
        for index, chosen in enumerate(itertools.combinations(sites, count)):
            path = _write(tmp_path / f"set-{count}-{index}", own=(*own, *chosen), cost=None,
                          rules=rules)
            outcome = optimise_design(load_study(path), mip_gap=1e-7)
            if outcome.design is not None:
                assert outcome.status.value == "optimal"
                best = min(best, outcome.total_cost + count * TANK_COST)
    return best


@pytest.mark.parametrize("lines_apart", [True, False])
def test_design_equals_the_cheapest_fixed_set_of_sites(tmp_path, monkeypatch, lines_apart):
    # With the bound of the lines apart (which closes the gap at once here) and without
    # it (the proof then comes from pricing every set that could be cheaper).
    if not lines_apart:
        monkeypatch.setattr(search, "lines_bound", lambda *args: (-math.inf, []))
    study = load_study(_write(tmp_path / "study"))
    outcome = optimise_design(study, mip_gap=1e-7)
    expected = _enumerated(tmp_path)
    assert outcome.verified and outcome.status.value == "optimal"
    assert outcome.total_cost == pytest.approx(expected, rel=1e-6)
    assert outcome.lower_bound <= expected * (1 + 1e-9)
    # no design exists without new tanks: the design got them, priced in total_cost
    assert outcome.no_new_tank_status.value == "infeasible"
    new = [t for t in outcome.design.tanks if t.new]
    assert len(new) >= 2 and {t.branch for t in new} == {"main", "b"}
    check = check_design(study, outcome.design)
    assert check.ok and check.tank_cost_total == pytest.approx(len(new) * TANK_COST)


def test_relaxation_and_fewest_tanks_are_never_above_any_fixed_set(tmp_path):
    # The bound for every choice of tanks (no tank's energy, classes against the lowest
    # static line) must be at most the pipe cost of each fixed set's design, and the
    # fewest tanks any design needs at most the count of each set that has one.
    study = load_study(_write(tmp_path / "study"))
    sites = scheme_sites(study)
    assert sorted((s.line, s.chainage_m) for s in sites) == sorted(_sites())
    relaxed = relaxed_bound(study, sites, Settings("highs", 30.0, 1e-7), Clock(0.0, 1e12))
    assert not relaxed.diagnosis
    counts = []
    for count in range(len(sites) + 1):
        for index, chosen in enumerate(itertools.combinations(_sites(), count)):
            path = _write(tmp_path / f"set-{count}-{index}", own=chosen, cost=None)
            outcome = optimise_design(load_study(path), mip_gap=1e-7)
            if outcome.design is not None:
                counts.append(count)
                assert relaxed.bound <= outcome.total_cost * (1 + 1e-9)
    # here the static head alone needs a tank on the trunk and one on the branch
    assert fewest_tanks(study, sites) == min(counts) == 2


def test_bound_of_the_lines_apart_is_never_above_the_enumerated_optimum(tmp_path):
    # Each line alone as a route with its own new tanks, fed at the source's level
    # under the lowest static line: the sum must bound every design with any tanks.
    study = load_study(_write(tmp_path / "study"))
    sites = scheme_sites(study)
    bound, stages = lines_bound(study, sites, Settings("highs", 60.0, 1e-7),
                                Clock(0.0, 1e12), optimise_design)
    assert len(stages) == 2 and bound > 0.0
    assert bound <= _enumerated(tmp_path) * (1 + 1e-9)


def test_placement_and_moves_never_claim_more_than_they_prove(tmp_path, monkeypatch):
    # Without enumeration (forced off): sets placed by rule and moved; the design passes
    # the check, costs no less than the enumerated optimum, and the bound stays below it.
    monkeypatch.setattr(search, "ENUMERATE_MAX", 0)
    study = load_study(_write(tmp_path / "study"))
    outcome = optimise_design(study, mip_gap=1e-7)
    expected = _enumerated(tmp_path)
    assert outcome.verified
    assert outcome.total_cost >= expected * (1 - 1e-9)
    assert outcome.lower_bound <= expected * (1 + 1e-9)
    if outcome.status.value == "optimal":
        assert outcome.total_cost <= outcome.lower_bound * (1 + 1e-6)


@pytest.mark.parametrize(("own_m", "marked"), [
    (2000.0, {"main": (1500.0,), "b": (500.0, 1000.0)}),
    (1200.0, {"main": (1500.0, 2500.0), "b": (500.0,)}),
])
def test_with_a_tank_of_the_study_and_at_most_one_new(tmp_path, own_m, marked):
    # The scheme's own tank on the trunk cuts it; new tanks are chosen in each part
    # (below 1,200 m the trunk's marked sites are counted from the tank), at most one in
    # all (max_count shared by the parts).
    own = (("main", own_m),)
    path = _write(tmp_path / "study", own=own, marked=marked, tanks_extra={"max_count": 1})
    outcome = optimise_design(load_study(path), mip_gap=1e-7)
    expected = _enumerated(tmp_path, own=own, marked=marked, most=1)
    assert outcome.verified
    assert sum(1 for t in outcome.design.tanks if t.new) <= 1
    assert outcome.total_cost == pytest.approx(expected, rel=1e-6)
    assert outcome.lower_bound <= expected * (1 + 1e-9)


def test_cli_writes_the_tanks_with_their_branch_and_check_takes_them(tmp_path):
    study_path = _write(tmp_path / "study")
    out = tmp_path / "out"
    _, data = design_tanks_then_check(study_path, out, TANK_COST)
    assert all(t["new"] for t in data["break_pressure_tanks"])
    # without the tanks the same pipes fail (the static head passes every class)
    bare = CliRunner().invoke(app, ["check", str(study_path), "--design",
                                    str(out / "design.csv")])
    assert bare.exit_code == 1


def test_a_marked_site_at_a_junction_is_refused(tmp_path):
    # Contract section 8: a tank may not stand at a junction.
    path = _write(tmp_path / "study", marked={"main": (1000.0, 1500.0), "b": (500.0,)})
    result = CliRunner().invoke(app, ["design", str(path), "--out", str(tmp_path / "out")])
    text = " ".join(result.output.split())
    assert result.exit_code == 2 and "trunk.csv" in text and "line 4" in text
    assert "a junction" in text
    assert "Traceback" not in text and not (tmp_path / "out").exists()


def test_bad_marks_and_surge_by_wave_speed_are_refused(tmp_path):
    path = _write(tmp_path / "study")
    (path.parent / "b.csv").write_text(
        (path.parent / "b.csv").read_text("utf-8").replace("500.0,390.0,yes", "500.0,390.0,maybe"),
        "utf-8")
    result = CliRunner().invoke(app, ["design", str(path), "--out", str(tmp_path / "out")])
    text = " ".join(result.output.split())
    assert result.exit_code == 2 and "b.csv" in text and "'maybe'" in text
    surge = _write(tmp_path / "surge")
    surge.write_text(surge.read_text("utf-8") + '\n[surge]\nmethod = "joukowsky"\n', "utf-8")
    result = CliRunner().invoke(app, ["design", str(surge), "--out", str(tmp_path / "o2")])
    text = " ".join(result.output.split())
    assert result.exit_code == 2 and "joukowsky" in text and "Traceback" not in text


@pytest.fixture(scope="module")
def small_study(tmp_path_factory):
    return load_study(_write(tmp_path_factory.mktemp("scheme") / "study"))


@pytest.mark.parametrize("seed", range(20))
def test_bound_over_every_choice_equals_the_least_over_every_set(seed, small_study):
    # Prices.bound stands for the least, over every set of at most max_count sites, of
    # that set's bound: its own run's (if priced with one), never below the relaxation
    # plus its count x cost, infinite below the fewest tanks needed. Checked here by
    # listing every set (common practice, no source: a minimum over a finite family).
    rng = random.Random(seed)
    sites = [Site("main", float(100 * i), 400.0 - i) for i in range(1, rng.randint(2, 6))]
    rules = dataclasses.replace(small_study.tank_rules, max_count=rng.choice([None, 1, 2, 3]))
    prices = Prices(dataclasses.replace(small_study, tank_rules=rules),
                    Settings("highs", 1.0, 1e-4), Clock(0.0, 1.0), optimise_design, sites,
                    relaxed_m=rng.uniform(1e4, 2e4), fewest=rng.choice([0, 1, 2]))
    every = [frozenset(c) for k in range(prices.most + 1)
             for c in itertools.combinations(sites, k)]
    for choice in every:
        if rng.random() < 0.6:
            bound = rng.choice([math.inf, -math.inf, rng.uniform(1e4, 4e4)])
            prices.priced[choice] = Priced(choice, Status.FEASIBLE, None, None, bound)
    listed = [max(prices.floor(len(choice)), prices.priced[choice].bound
                  if choice in prices.priced else -math.inf) for choice in every]
    assert prices.bound() == min(listed)


def _two_forms(folder):
    """The same invented scheme as [[branch]] tables and as the compact form (nodes and
    links): sites at every point, at most two new tanks."""
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "catalogue.csv").write_text(catalogue_text((90, 110, 125, 160, 200)), "utf-8")
    common = {"title": "Invented falling scheme, two forms", "currency": "USD",
              "source": {"level_m": 500.0}, "catalogue": {"file": "catalogue.csv"},
              "break_pressure_tanks": {"cost": TANK_COST, "height_m": 5.0, "max_count": 2}}
    (folder / "nodes.csv").write_text(
        "name,ground_m,demand,required_head_m\nsrc,495,,\nn1,430,,\nn2,400,,\nn3,360,,\n"
        "end,300,6 L/s,330\nb1,390,,\nb2,350,,\nbend,280,4 L/s,300\n", "utf-8")
    (folder / "links.csv").write_text(
        "from,to,length_m\nsrc,n1,1000\nn1,n2,500\nn2,n3,500\nn3,end,1000\n"
        "n1,b1,500\nb1,b2,500\nb2,bend,1000\n", "utf-8")
    network = common | {"route": {"min_pressure_m": 2.0},
                        "network": {"nodes": "nodes.csv", "links": "links.csv",
                                    "source": "src"},
                        "scenario": [{"name": "peak"}]}
    (folder / "network.toml").write_text(toml_text(network), "utf-8")
    (folder / "trunk.csv").write_text(
        "chainage_m,ground_m\n0,495\n1000,430\n1500,400\n2000,360\n3000,300\n", "utf-8")
    (folder / "b.csv").write_text("chainage_m,ground_m\n0,430\n500,390\n1000,350\n2000,280\n",
                                  "utf-8")
    tables = common | {"route": {"profile": "trunk.csv", "min_pressure_m": 2.0},
                       "outlet": {"required_head_m": 330.0, "exit_k": 1.0},
                       "branch": [{"name": "bend", "at_chainage_m": 1000.0, "profile": "b.csv",
                                   "flow": "4 L/s", "required_head_m": 300.0}],
                       "scenario": [{"name": "peak", "flow": "6 L/s"}]}
    (folder / "tables.toml").write_text(toml_text(tables), "utf-8")
    return folder / "tables.toml", folder / "network.toml"


def test_both_forms_of_a_scheme_get_the_same_tanks(tmp_path):
    tables, network = _two_forms(tmp_path)
    outcomes = [optimise_design(load_study(path), mip_gap=1e-7) for path in (tables, network)]
    for outcome in outcomes:
        assert outcome.verified and outcome.status.value == "optimal"
    assert outcomes[0].total_cost == pytest.approx(outcomes[1].total_cost, rel=1e-9)
    assert [(t.branch, t.chainage_m) for t in outcomes[0].design.tanks] == \
        [(t.branch, t.chainage_m) for t in outcomes[1].design.tanks]
    # marked sites with no node marked in the compact form: refused plainly
    network.write_text(network.read_text("utf-8").replace(
        "max_count = 2", 'max_count = 2\nsites = "marked"'), "utf-8")
    result = CliRunner().invoke(app, ["design", str(network), "--out", str(tmp_path / "o")])
    text = " ".join(result.output.split())
    assert result.exit_code == 2 and "network.toml" in text and "[network]" in text


def test_a_part_is_known_again_by_its_fields_only(small_study):
    # Two studies with equal fields have one digest; any field changed gives another
    # (common practice, no source: a memo keyed on every input).
    from optimiser.milp.scheme_tanks.memo import fingerprint

    same = dataclasses.replace(small_study, tanks=tuple(small_study.tanks))
    assert fingerprint(same) == fingerprint(small_study)
    moved = dataclasses.replace(small_study, source=dataclasses.replace(
        small_study.source, level_m=small_study.source.level_m - 0.001))
    assert fingerprint(moved) != fingerprint(small_study)
    ground = small_study.route.ground_m.copy()
    ground[2] += 0.001
    changed = dataclasses.replace(small_study, route=dataclasses.replace(
        small_study.route, ground_m=ground))
    assert fingerprint(changed) != fingerprint(small_study)


def test_a_pump_to_its_tank_then_a_scheme_gets_new_tanks_below_only(tmp_path):
    # Contract section 9 with section 8: the station fills the study's tank at 500 m;
    # new tanks go below it only (never on the rising main), on the trunk and the branch.
    path = _write(tmp_path / "study", own=(("main", 500.0),),
                  marked={"main": (1500.0, 2000.0), "b": (500.0,)})
    text = path.read_text("utf-8").replace("level_m = 500.0", "level_m = 480.0")
    text = text.replace('chainage_m = 500.0\n', 'chainage_m = 500.0\nwater_level_m = 498.0\n')
    path.write_text(text + "\n[pump]\nefficiency = 0.7\nenergy_price = 0.15\n"
                    "max_head_m = 100.0\n", "utf-8")
    trunk = path.parent / "trunk.csv"
    trunk.write_text(trunk.read_text("utf-8").replace("0.0,495.0,", "0.0,470.0,")
                     .replace("500.0,470.0,", "500.0,493.0,"), "utf-8")
    outcome = optimise_design(load_study(path), mip_gap=1e-7)
    assert outcome.verified and outcome.status.value == "optimal"
    new = [t for t in outcome.design.tanks if t.new]
    assert new and all(t.branch == "b" or t.chainage_m > 500.0 for t in new)


def test_a_site_below_the_energy_needed_under_it_is_never_used(tmp_path):
    # A tank's water level caps the energy below it (contract section 8: the energy
    # leaving is the level less the outlet loss); at 2,500 m of the trunk the level
    # (330 + 5 m) is below the outlet's required 340 m, so no design can have a tank
    # there: the site is left out, and a tank fixed there leaves no design.
    marked = {"main": (1500.0, 2500.0), "b": (500.0,)}
    path = _write(tmp_path / "study", marked=marked)
    path.write_text(path.read_text("utf-8").replace("required_head_m = 330.0",
                                                    "required_head_m = 340.0"), "utf-8")
    sites = scheme_sites(load_study(path))
    assert sorted((s.line, s.chainage_m) for s in sites) == [("b", 500.0), ("main", 1500.0)]
    fixed = _write(tmp_path / "fixed", marked=marked, cost=None,
                   own=(("main", 1500.0), ("main", 2500.0), ("b", 500.0)))
    fixed.write_text(fixed.read_text("utf-8").replace("required_head_m = 330.0",
                                                      "required_head_m = 340.0"), "utf-8")
    assert optimise_design(load_study(fixed)).status.value == "infeasible"


def test_marks_on_a_branch_alone_and_marks_nowhere(tmp_path):
    # Contract section 8: in a scheme the marked rows may lie on any line's profile, so
    # a trunk profile without the column (or without a mark) is fine when a branch has
    # one; with no mark on any profile the study is refused, naming the column.
    only_branch = {"b": (500.0,)}
    path = _write(tmp_path / "branch", marked=only_branch)
    trunk = path.parent / "trunk.csv"
    trunk.write_text("\n".join(line.rsplit(",", 1)[0] for line in
                               trunk.read_text("utf-8").splitlines()) + "\n", "utf-8")
    # Loaded; with the one site on the branch the trunk's fall (200 m) still breaks every
    # class, so no design exists, as the enumeration of both sets says too.
    outcome = optimise_design(load_study(path), mip_gap=1e-7)
    assert outcome.status.value == "infeasible" and outcome.design is None
    assert _enumerated(tmp_path / "sets", marked=only_branch) == float("inf")
    nowhere = _write(tmp_path / "nowhere", marked={})
    result = CliRunner().invoke(app, ["design", str(nowhere), "--out", str(tmp_path / "o")])
    text = " ".join(result.output.split())
    assert result.exit_code == 2 and "tank_site" in text and "Traceback" not in text
    assert not (tmp_path / "o").exists()


def test_two_branches_leaving_one_node_both_get_the_static_line(tmp_path):
    # Before: the count of tanks kept one branch per junction node and raised KeyError
    # for the other. Judge: the independent check (contract sections 7 and 8).
    path = _write(tmp_path / "study")
    table = tomllib.loads(path.read_text(encoding="utf-8"))
    table["branch"].append({"name": "c", "at_chainage_m": 1000.0, "profile": "b.csv",
                            "flow": "2 L/s", "required_head_m": 300.0})
    path.write_text(toml_text(table), encoding="utf-8")
    study = load_study(path)
    outcome = optimise_design(study, mip_gap=1e-4)
    assert outcome.verified and outcome.design is not None
    assert outcome.lower_bound <= outcome.total_cost * (1 + 1e-9)
    assert check_design(study, outcome.design).ok
