"""The state a search carries from stage to stage, and the services every stage uses.

:class:`SearchState` holds the problem (the study and its immutable
:class:`~optimiser.milp.data.ProblemData`, replaced, never changed, by presolve), the
settings and the clock, the incumbent design with its check, the best bound, the LP
relaxation's results, the check points in the models, the record of every stage and the
measured cost of building models. Its methods are the only way a stage offers a design
(:meth:`SearchState.consider`: checked by :func:`optimiser.analysis.check_design` and the
rules), raises the bound, or solves and records a model.

The time limit binds the whole run, nested runs included: a solver call
(:meth:`SearchState.run_solver`) or a run started inside a run takes its limit from
:meth:`Clock.limit` (a share of the time left, never more than is left), loops of short
steps ask :meth:`Clock.out` between steps, and a stage that cannot start in the time
left is skipped and recorded. The final check of the returned design comes on top.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field

import numpy as np

from optimiser.analysis import CheckResult, check_design
from optimiser.milp.data import ProblemData
from optimiser.milp.extract import rule_problems
from optimiser.milp.formulation import Formulation, WarmStart, build
from optimiser.milp.outcome import DesignOutcome, SolverError, Stage, VerificationError
from optimiser.milp.reaches import ActivePoints
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.solvers import SolveReport, relative_gap, solve
from optimiser.model import Design, Study
from optimiser.model.status import Status

GAP_ROUNDING = 1e-9
"""Slack on the relative gap target for rounding only (1e-9 of the cost)."""
LEAST_STEP_S = 0.5
"""A step given a share of the time left still gets this much, if it is left."""
RESTRICTED_GAP = 1e-4
"""Relative gap of restricted models (they only supply designs; solve them tightly, or
a loose target would stop them at designs worse than their start)."""


@dataclass(frozen=True)
class Settings:
    """How the run was asked to solve."""

    solver_name: str
    time_limit_s: float
    mip_gap: float
    msg: bool = False

    @property
    def gap_target(self) -> float:
        """The gap a proof must reach: a solver that stops at exactly the target gap
        leaves it equal up to the rounding of the objective it prints (CBC: about ten
        digits)."""
        return self.mip_gap + GAP_ROUNDING


@dataclass(frozen=True)
class Clock:
    """Start and deadline of the run, on :func:`time.perf_counter`."""

    started: float
    deadline: float

    def left(self) -> float:
        """Seconds to the deadline (negative once past it)."""
        return self.deadline - time.perf_counter()

    def nearly_out(self) -> bool:
        """Less than half a second left: start nothing new."""
        return time.perf_counter() > self.deadline - 0.5

    def out(self) -> bool:
        """The deadline has passed: a loop of short steps (checks, small solves) stops
        here, each step being bounded by its own limit."""
        return time.perf_counter() >= self.deadline

    def limit(self, share: float = 1.0, least_s: float = LEAST_STEP_S) -> float:
        """Seconds a step starting now may take: ``share`` of the time left, at least
        ``least_s`` when that much is left, never more than is left (0 once past the
        deadline): a step that takes its limit from here cannot carry the run past
        its deadline."""
        left = max(self.left(), 0.0)
        return min(max(share * left, least_s), left)

    def within(self, share: float = 1.0, least_s: float = LEAST_STEP_S) -> Clock:
        """A clock for a step starting now with :meth:`limit` seconds."""
        now = time.perf_counter()
        return Clock(now, now + self.limit(share, least_s))


@dataclass(frozen=True)
class Candidate:
    """A design that passed the check and the rules, with where it came from."""

    design: Design
    check: CheckResult
    cost: float
    source: str


@dataclass(frozen=True)
class LpRelaxation:
    """The last round of the LP relaxation (rules relaxed): its model on the reaches of
    that round (first fine section of each reach in ``first``), its report, and its
    solution as fractions of the fine sections."""

    form: Formulation
    report: SolveReport
    first: np.ndarray
    fractions: np.ndarray

    @property
    def used(self) -> np.ndarray:
        """(n, m) options the LP laid in each section."""
        return self.fractions > 1e-6


@dataclass
class SearchState:
    """What the search knows so far (see the module docstring)."""

    study: Study
    data: ProblemData
    settings: Settings
    clock: Clock
    with_rules: bool
    stages: list[Stage] = field(default_factory=list)
    best: Candidate | None = None
    bound: float = -math.inf
    lp_bound: float | None = None
    proofs: bool = True
    """False where the models restrict the designs the check accepts (classes under
    pumping by wave speed on a line whose flow falls, :func:`optimiser.milp.pump_columns.
    pumping_limits_exact`): their bounds and "infeasible" prove nothing, so none is
    taken and the run can only end ``feasible`` or without a design."""
    lp: LpRelaxation | None = None
    active: ActivePoints | None = None
    """Check points in the reach models (grown by row generation)."""
    unfinished: list[Design] = field(default_factory=list)
    """Designs of the reach model not yet re-optimised on the full model."""
    full_report: SolveReport | None = None
    build_rate: dict[bool, float] = field(default_factory=dict)
    """Seconds of model building per (section, option) pair, measured separately for
    models with and without the rules (the rules add variables per pair)."""

    @property
    def width_m(self) -> float:
        """Chainage around a section whose LP options a restricted model keeps."""
        median = float(np.median(self.data.chainage_length_m))
        return max(2.0 * self.study.rules.min_piece_length_m, 3.0 * median)

    @property
    def reach_m(self) -> float:
        """Chainage around a section whose design options a restricted model keeps."""
        return max(self.width_m, 0.02 * self.study.route.total_chainage_m)

    def consider(self, design: Design, source: str, must_pass: bool) -> CheckResult:
        """Check ``design``; keep it if it passes and the rules hold and it is cheaper.
        ``must_pass``: a failure is a bug (:class:`VerificationError`)."""
        result = check_design(self.study, design, capacity=False)
        problems = rule_problems(self.study, design)
        if not result.ok or problems:
            if must_pass:
                details = [v.message or v.kind for v in result.violations[:5]] + problems[:5]
                raise VerificationError(
                    f"the design from '{source}' fails the check (a bug in the "
                    f"formulation): {'; '.join(details)}")
            return result
        best = self.best
        if best is None or result.total_cost < best.cost - 1e-9 * abs(best.cost):
            self.best = Candidate(design, result, result.total_cost, source)
        return result

    def best_gap(self) -> float:
        """Relative gap of the best design to the bound (infinite without a design)."""
        if self.best is None:
            return math.inf
        return relative_gap(self.best.cost, self.bound) or 0.0

    def proven(self) -> bool:
        """The best design is within the gap target of the bound."""
        return self.proofs and self.best is not None \
            and self.best_gap() <= self.settings.gap_target

    def raise_bound(self, value: float | None) -> None:
        """Take a relaxation's bound (only relaxations may call this)."""
        if value is not None and math.isfinite(value) and self.proofs:
            self.bound = max(self.bound, value)

    def note_build_rate(self, with_rules: bool, seconds: float, pairs: int) -> None:
        self.build_rate[with_rules] = max(self.build_rate.get(with_rules, 0.0),
                                          seconds / max(pairs, 1))

    def expected_build_s(self, pairs: int) -> float:
        """Seconds a model of the fine sections with ``pairs`` pairs should take to
        build (only the LP built so far: the rules add about 4x the work per pair)."""
        if self.with_rules in self.build_rate:
            rate = self.build_rate[self.with_rules]
        else:
            rate = self.build_rate.get(False, 0.0) * (4.0 if self.with_rules else 1.0)
        return rate * pairs

    def timed_build(self, mask: np.ndarray | None) -> tuple[Formulation, float]:
        """Build a model of the fine sections (``mask``: allowed options, None: all),
        with the rules if the study has any; note the build rate."""
        begun = time.perf_counter()
        form = build(self.data, allowed=mask, with_rules=self.with_rules)
        seconds = time.perf_counter() - begun
        allowed = self.data.admissible if mask is None else self.data.admissible & mask
        self.note_build_rate(self.with_rules, seconds, int(allowed.sum()))
        return form, seconds

    def run_solver(self, kind: StageKind, name: str, form: Formulation,
                   warm: WarmStart | None, share: float, build_seconds: float,
                   stage_gap: float | None = None) -> SolveReport:
        """Solve ``form`` with ``share`` of the time left (at least half a second, never
        past the deadline: :meth:`Clock.limit`) and record the stage."""
        settings = self.settings
        report = solve(form, settings.solver_name,
                       time_limit_s=self.clock.limit(share),
                       mip_gap=settings.mip_gap if stage_gap is None else stage_gap,
                       warm_start=warm, msg=settings.msg)
        self.stages.append(Stage(kind, name, report.status, report.objective, report.bound,
                                 report.seconds, form.model.n_columns, form.model.n_rows,
                                 form.n_binaries, report.message, build_seconds))
        return report

    def outcome(self, status: Status, **values) -> DesignOutcome:
        """The run's result, with its settings, time and stages."""
        settings = self.settings
        return DesignOutcome(status=status,
                             solve_time_s=time.perf_counter() - self.clock.started,
                             solver_name=settings.solver_name, mip_gap=settings.mip_gap,
                             time_limit_s=settings.time_limit_s, rules_on=self.with_rules,
                             stages=list(self.stages), **values)

    def infeasible(self, diagnosis: list[str]) -> DesignOutcome:
        """The result of a run that proved no design exists (a model that restricts the
        designs proves nothing: :class:`SolverError`)."""
        if not self.proofs:
            raise SolverError("no design found; the pumped main's classes under pumping "
                              "take each option's surge at its largest velocity on the "
                              "line, which may leave out designs the check accepts, so "
                              "this is not a proof that none exists")
        return self.outcome(Status.INFEASIBLE, design=None, check=None, total_cost=None,
                            lower_bound=None, gap=None, lp_bound=self.lp_bound,
                            diagnosis=diagnosis)
