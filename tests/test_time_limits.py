"""A design run honours its time limit: every solver call inside it, in every nested run,
is given at most the time the run has left, loops stop when the clock runs out, and the
run ends with a verified design and an honest status, or with the documented error.

What is checked is the limits the run passes down (read by wrapping the one function
every solver call goes through), never the machine's speed: no assertion depends on how
long anything took, only on what the run asked of the clock before it started a step.
The documented outcomes (docs/file-formats.md, docs/user-guide.md): ``optimal`` within
the gap target, ``feasible`` with a verified design stopped by the time limit, or no
design within the limit (:class:`optimiser.milp.SolverError`, exit code 3). A lower
bound is never above the returned cost (contract, ``lower_bound``).

All studies here are invented (no real place, price or catalogue): a long undulating
gravity main with the rules on, the same falling so far that it needs new
break-pressure tanks, a long pumped rising main (``pump_reference.py``) and a falling
branched scheme that needs new tanks. Each is far too large to prove in the tiny limit
given, which is the point.
"""

from __future__ import annotations

import math
import time
import tomllib
from pathlib import Path

import numpy as np
import pytest
from builders import toml_text
from falling_scheme import write_falling_scheme
from pump_reference import write_main
from random_trees import catalogue_text

from optimiser import load_study
from optimiser.milp import SolverError, optimise_design, solvers
from optimiser.milp.outcome import DesignOutcome
from optimiser.milp.pumps.piece_stage import piece_bound
from optimiser.milp.scheme_tanks.memo import PartMemo, within
from optimiser.milp.search.state import Clock
from optimiser.milp.tank_reaches import design_by_reaches
from optimiser.model.status import Status

SLACK_S = 0.05
"""Tolerance on "at most the time left" for the instants between the clock's reading
inside the run and the wrapper's reading (microseconds in practice)."""


def _route(folder: Path, *, fall_m: float, tanks: bool) -> Path:
    """An invented 60 km main of 1,500 sections, undulating, falling ``fall_m``; rules
    on; with ``tanks`` new break-pressure tanks may stand at every point."""
    rng = np.random.default_rng(11)
    folder.mkdir(parents=True, exist_ok=True)
    chainage = np.linspace(0.0, 60_000.0, 1501)
    x = chainage / chainage[-1]
    ground = 880.0 - fall_m * x + 15.0 * np.sin(2 * np.pi * 7 * x) + rng.normal(0, 0.3, x.size)
    rows = ["chainage_m,ground_m"] + [f"{c:.2f},{g:.3f}" for c, g in zip(chainage, ground,
                                                                        strict=True)]
    (folder / "profile.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    (folder / "catalogue.csv").write_text(catalogue_text(), encoding="utf-8")
    study = {"title": "Invented long main", "currency": "USD",
             "source": {"level_m": 905.0, "top_water_level_m": 906.0},
             "outlet": {"required_head_m": float(ground[-1]) + 15.0},
             "route": {"profile": "profile.csv", "min_pressure_m": 2.0},
             "scenario": [{"name": "peak", "flow": "40 L/s"},
                          {"name": "horizon", "flow": "50 L/s", "roughness_factor": 2.0}],
             "catalogue": {"file": "catalogue.csv"},
             "rules": {"min_piece_length_m": 200.0, "max_changes": 20},
             "costs": {"change_cost": 500.0}}
    if tanks:
        study["break_pressure_tanks"] = {"cost": 20000.0, "height_m": 3.0, "max_count": 6}
    (folder / "study.toml").write_text(toml_text(study), encoding="utf-8")
    return folder / "study.toml"


def _pumped(folder: Path) -> Path:
    """The invented 2,000-section rising main of ``pump_reference.py``, three changes."""
    _, path = write_main(folder, 2026, sections=2000, classes=True, rules=True, mip_gap=1e-4)
    table = tomllib.loads(path.read_text(encoding="utf-8"))
    table["rules"]["max_changes"] = 3
    path.write_text(toml_text(table), encoding="utf-8")
    return path


_scheme = write_falling_scheme


BUILDERS = {
    "long main, rules": lambda folder: _route(folder, fall_m=120.0, tanks=False),
    "long main, new tanks": lambda folder: _route(folder, fall_m=420.0, tanks=True),
    "pumped main, three changes": _pumped,
    "scheme, new tanks": _scheme,
}


class SolverCalls:
    """Every solver call of a run: the time limit given and the time the run had left."""

    def __init__(self, monkeypatch: pytest.MonkeyPatch, deadline: float) -> None:
        self.deadline = deadline
        self.calls: list[tuple[float, float]] = []
        for name in ("_solve_highs", "_solve_cbc"):
            original = getattr(solvers, name)
            monkeypatch.setattr(solvers, name, self._wrapped(original))

    def _wrapped(self, original):
        def call(form, time_limit_s, *args):
            self.calls.append((time_limit_s, self.deadline - time.perf_counter()))
            return original(form, time_limit_s, *args)
        return call


def _judge(outcome: DesignOutcome) -> None:
    """A returned design is verified and its status honest (module docstring)."""
    assert outcome.design is not None and outcome.verified
    # a pumped main's bound and gap are of its life-cycle cost (contract section 9)
    objective = outcome.check.life_cycle_cost or outcome.total_cost
    assert outcome.lower_bound is None or outcome.lower_bound <= objective * (1 + 1e-9)
    if outcome.status == Status.OPTIMAL:
        assert outcome.gap is not None and outcome.gap <= outcome.mip_gap + 1e-9
    else:
        assert outcome.status == Status.FEASIBLE
        assert outcome.gap is None or outcome.gap > outcome.mip_gap


@pytest.mark.parametrize("case", sorted(BUILDERS))
@pytest.mark.parametrize("limit_s", [1.0, 2.0])
def test_every_solver_call_gets_at_most_the_time_left(tmp_path, monkeypatch, case, limit_s):
    study = load_study(BUILDERS[case](tmp_path / "study"))
    begun = time.perf_counter()
    calls = SolverCalls(monkeypatch, begun + limit_s)
    try:
        outcome = optimise_design(study, time_limit_s=limit_s, mip_gap=1e-6)
    except SolverError as error:  # no design within the limit: exit code 3, documented
        assert "time limit" in str(error)
        outcome = None
    wall_s = time.perf_counter() - begun
    for given_s, left_s in calls.calls:
        assert given_s <= max(left_s, solvers.LEAST_LIMIT_S) + SLACK_S, (given_s, left_s)
    if outcome is not None:
        _judge(outcome)
        assert outcome.time_limit_s == limit_s
        assert sum(s.seconds + s.build_seconds for s in outcome.stages) <= wall_s


def test_a_clock_never_gives_more_than_is_left():
    now = time.perf_counter()
    assert Clock(now - 5.0, now - 1.0).limit() == 0.0  # past the deadline
    assert Clock(now - 5.0, now - 1.0).limit(0.5, 1.0) == 0.0
    clock = Clock(now, now + 100.0)
    assert clock.limit(0.3) <= 30.0
    assert clock.limit(0.3) > 29.0
    short = Clock(now, now + 0.3)
    assert short.limit(0.1) <= 0.3  # the half-second floor never passes the deadline
    inner = clock.within(0.5)
    assert inner.deadline <= clock.deadline and inner.started >= now


def test_a_nested_run_is_not_started_past_the_deadline(tmp_path):
    now = time.perf_counter()
    out = Clock(now - 2.0, now - 1.0)
    started: list[float] = []

    def design(part, **options):
        started.append(options["time_limit_s"])
        raise AssertionError("must not run")

    with pytest.raises(SolverError):
        within(design, out)(None, solver_name="highs", mip_gap=1e-4, time_limit_s=5.0)
    with pytest.raises(SolverError):
        PartMemo(design, out)(load_study(_scheme(tmp_path / "scheme")), solver_name="highs",
                              mip_gap=1e-4, time_limit_s=5.0)
    assert started == []


def test_reaches_between_tanks_are_not_started_without_time(tmp_path):
    """With no time given, the design reach by reach stops before its first reach (it
    would otherwise give each reach at least a second)."""
    from optimiser.milp.data import prepare
    from optimiser.milp.tank_data import with_sites_named

    study = load_study(_route(tmp_path / "study", fall_m=420.0, tanks=True))
    data = prepare(with_sites_named(study))
    called: list[float] = []

    def plain(part, **options):
        called.append(options["time_limit_s"])
        raise AssertionError("must not run")

    assert design_by_reaches(data, [300, 700, 1100], 0.0, plain, "highs", 1e-4) is None
    assert called == []


def test_the_programme_over_pieces_stopped_at_once_gives_no_bound(tmp_path):
    """Stopped by its deadline before it made a label, the programme returns its
    one-piece designs (if any) and no bound, instead of failing."""
    from optimiser.milp.class_limits import split_at_class_limits
    from optimiser.milp.data import prepare
    from optimiser.milp.pump_search import static_study

    study = load_study(_pumped(tmp_path / "study"))
    data = prepare(split_at_class_limits(static_study(study)))
    result = piece_bound(data, math.inf, 0, deadline=time.perf_counter() - 1.0)
    assert result.bound is None
    assert all(len(chain) == 1 for chain in result.chains)


def test_closed_forms_stopped_by_the_clock_give_no_bound(tmp_path):
    """The bound of every two-piece design of a pumped main, and the table of reaches laid
    in one option (which raises the tank bounds), are bounds only when complete: past
    their deadline they give none, and the tank bounds stay the Lagrangian ones."""
    from optimiser.milp.class_limits import split_at_class_limits
    from optimiser.milp.data import prepare
    from optimiser.milp.pump_columns import head_upper_m
    from optimiser.milp.pump_search import static_study
    from optimiser.milp.pumps.two_pieces import enumeration, pair_bounds
    from optimiser.milp.tank_bounds import pair_frame, relaxation
    from optimiser.milp.tank_data import with_sites_named
    from optimiser.milp.tank_single import single_option_costs, with_one_change

    past = time.perf_counter() - 1.0
    study = load_study(_pumped(tmp_path / "pumped"))
    data = prepare(split_at_class_limits(static_study(study)))
    found = pair_bounds(enumeration(data, head_upper_m(data)), 0.0, 100.0, False, True,
                        deadline=past)
    assert found.bound is None
    tanks = load_study(_route(tmp_path / "tanks", fall_m=420.0, tanks=True))
    relax = relaxation(prepare(with_sites_named(tanks)))
    frame = pair_frame(relax)
    assert single_option_costs(relax, frame, past) is None
    bounds = np.arange(6.0).reshape(2, 3)
    assert np.array_equal(with_one_change(bounds, None, 500.0), bounds)


def test_a_part_of_a_pumped_main_to_a_tank_is_not_started_without_time():
    """The rising main and the gravity main below its tank are designed one after the
    other; with the run's deadline passed, no part's run is started (each used to get
    at least a second)."""
    from optimiser.milp.pumped_to_tank import _PartRuns
    from optimiser.milp.search.state import Settings

    called: list[float] = []

    def plain(part, **options):
        called.append(options["time_limit_s"])
        raise AssertionError("must not run")

    runs = _PartRuns(None, None, Settings("highs", 5.0, 1e-4), time.perf_counter() - 1.0,
                     plain)
    with pytest.raises(SolverError, match="time limit"):
        runs.get(0, None)
    assert called == []
