"""``optimise_design``: the cheapest verified design, and why it is cheapest.

Sequence (each step keeps what the last one proved):

1. Diagnosis without a solver (:mod:`optimiser.milp.diagnose`); a finding ends the run
   as ``infeasible``.
2. The LP relaxation with the rules relaxed and the velocity-head binaries continuous,
   by row generation on the reach model (:mod:`optimiser.milp.reduce`): pressure rows
   only at the deepest point of each run of points a previous round's design violated
   and, once one violates nothing, at the points it came within ``NEAR_M`` of
   violating; quiet sections merged. Every round is a relaxation, so its value (less
   the largest value of a tie-break term, see below) is a valid ``lp_bound``. The LP is
   highly degenerate (many arrangements of the same lengths cost the same), so its
   objective carries a tie-break of relative size about 1e-7 that prefers larger
   diameters upstream.
3. The LP solution as a design: if it passes the check and the rules and costs within
   the gap of the bound, it is optimal and no integer programme is needed.
4. Otherwise mixed-integer programmes, each warm-started from the best design so far:
   options restricted to those the LP used near each section; with rules, those a
   greedy rules repair of the LP design (:mod:`optimiser.milp.repair`) uses nearby;
   then the reach model with the rules, a relaxation of the full model whose bound
   raises the lower bound and whose design is checked (rows added where it came
   close), with the options no design cheaper than the best so far can use left out
   (reduced-cost fixing on the LP, :mod:`optimiser.milp.fixing`); when the best
   design is still far above the bound, small reach models (options the reach
   model's LP relaxation or the best design uses, and the sizes next to them) look
   for designs first; then a large-neighbourhood search around the best design, the options the
   LP used anywhere, and the full model. A stage too large to build and solve in the
   time left is skipped (recorded in ``stages``). Designs of restricted models are
   designs of the full model, so they are valid incumbents; only bounds of relaxations
   (the LP, the reach model, the full model) are reported as bounds.

Every design returned has passed :func:`optimiser.analysis.check_design` (the code of
``optimiser check``) and the rules; a design from an integer programme that fails them
is a bug and raises :class:`VerificationError`.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field

import numpy as np

from optimiser.analysis import CheckResult, check_design
from optimiser.milp.data import ProblemData, dominated_options, prepare, rescreen
from optimiser.milp.diagnose import diagnose, diagnose_after
from optimiser.milp.extract import (
    design_from_choice,
    design_from_fractions,
    rule_problems,
    section_use,
)
from optimiser.milp.fixing import allowed_below
from optimiser.milp.formulation import Formulation, WarmStart, build, rules_active
from optimiser.milp.priced import priced_search, prices_from_lp
from optimiser.milp.reduce import (
    ActivePoints,
    design_from_reaches,
    merge,
    reach_use,
    refine,
    with_active,
)
from optimiser.milp.repair import covering_choice, design_mask, repair
from optimiser.milp.solvers import SOLVERS, SolveReport, relative_gap, solve
from optimiser.milp.uniform import UniformDesign, cheapest_uniform, uniform_feasible
from optimiser.model import Design, Piece, Study

TIEBREAK_RELATIVE = 1e-7
MAX_ROW_ROUNDS = 12
NEAR_M = 0.3
"""Once a round's design violates nothing, row generation adds every check point whose
pressure came within this of its minimum [m]."""
VIOLATION_M = 1e-6
"""A pressure below its minimum by more than this [m] counts as violated."""


class SolverError(RuntimeError):
    """The solver failed, or stopped without a design (exit code 3)."""


class VerificationError(RuntimeError):
    """A design from the integer programme failed the check or the rules: a bug."""


@dataclass(frozen=True)
class BindingPoint:
    """Least pressure margin of a scenario, and its outlet margin."""

    scenario: str
    chainage_m: float
    label: str
    pressure_m: float
    min_pressure_m: float
    margin_m: float
    outlet_margin_m: float


@dataclass
class Stage:
    """One solve of the sequence, for the record."""

    name: str
    status: str
    objective: float | None
    bound: float | None
    seconds: float
    variables: int
    constraints: int
    binaries: int
    message: str = ""
    build_seconds: float = 0.0

    def as_dict(self) -> dict:
        return dict(self.__dict__)


@dataclass
class DesignOutcome:
    status: str
    """``optimal`` (proven within the gap), ``feasible`` (stopped by the time limit with a
    design) or ``infeasible``."""
    design: Design | None
    check: CheckResult | None
    total_cost: float | None
    lower_bound: float | None
    gap: float | None
    lp_bound: float | None
    solve_time_s: float
    solver_name: str
    mip_gap: float
    time_limit_s: float
    diagnosis: list[str] = field(default_factory=list)
    uniform: UniformDesign | None = None
    binding: list[BindingPoint] = field(default_factory=list)
    stages: list[Stage] = field(default_factory=list)
    rules_on: bool = False

    @property
    def verified(self) -> bool:
        return self.check is not None and self.check.ok and self.design is not None \
            and not rule_problems(self.check.study, self.design)

    @property
    def uniform_saving(self) -> float | None:
        if self.uniform is None or self.total_cost is None:
            return None
        return self.uniform.cost - self.total_cost


@dataclass
class _Candidate:
    design: Design
    check: CheckResult
    cost: float
    source: str


def _tiebreak_scale(data: ProblemData) -> float:
    n = data.n_sections
    span = max(n - 1, 1)
    weight = float((data.chainage_length_m * (1.0 - np.arange(n) / span)).sum()
                   * max(data.n_options - 1, 1))
    cheapest = float(np.where(data.admissible, data.section_cost, np.inf).min(axis=1).sum())
    if not math.isfinite(cheapest) or cheapest <= 0 or weight <= 0:
        return 0.0
    return TIEBREAK_RELATIVE * cheapest / weight


def _size(form: Formulation) -> tuple[int, int]:
    return form.model.n_columns, form.model.n_rows


def _near_points(data: ProblemData, result: CheckResult) -> ActivePoints:
    """Check points (not screened out) to add to the model after ``result``.

    While the design violates some pressure, only the deepest point of each run of
    violated points (per scenario) is added: on a long ridge the whole run is usually
    cleared once its deepest point is, and every point added splits a reach, so adding
    them all makes the integer programmes far larger than they need be. Once nothing is
    violated, every point within NEAR_M of its minimum is added. A node adds both its
    sides, a point inside a section adds the inside of that section and its end nodes.
    """
    wanted = ActivePoints.none(data)
    chainage = data.node_chainage_m
    margins = [(scenario.points["chainage_m"].to_numpy(),
                (scenario.points["pressure_m"] - scenario.points["min_pressure_m"]).to_numpy())
               for scenario in result.scenarios]
    violated = any((margin < -VIOLATION_M).any() for _, margin in margins)
    for along, margin in margins:
        if violated:
            bad = margin < -VIOLATION_M
            edges = np.flatnonzero(np.diff(np.concatenate([[0], bad.astype(int), [0]])))
            deepest = [a + int(np.argmin(margin[a:b])) for a, b in zip(edges[::2],
                                                                      edges[1::2], strict=True)]
            close = along[deepest]
        else:
            close = along[margin < NEAR_M]
        if not len(close):
            continue
        index = np.clip(np.searchsorted(chainage, close), 0, data.n_sections)
        on_node = np.abs(chainage[index] - close) <= 1e-6
        nodes = index[on_node]
        wanted.up[nodes] = True
        wanted.down[nodes] = True
        inside = np.clip(index[~on_node] - 1, 0, data.n_sections - 1)
        wanted.interior[inside] = True
        wanted.down[inside] = True
        wanted.up[inside + 1] = True
    return ActivePoints(wanted.up & ~data.screened_up, wanted.down & ~data.screened_down,
                        wanted.interior & ~data.screened_interior)


def _window_mask(data: ProblemData, used: np.ndarray, width_m: float) -> np.ndarray:
    """Options used by the LP in any section overlapping [start - w, end + w]."""
    chainage = data.node_chainage_m
    lo = np.searchsorted(chainage, chainage[:-1] - width_m, side="right") - 1
    hi = np.searchsorted(chainage, chainage[1:] + width_m, side="left")
    lo = np.clip(lo, 0, data.n_sections)
    hi = np.clip(hi, 0, data.n_sections)
    cumulative = np.vstack([np.zeros((1, data.n_options), dtype=int),
                            np.cumsum(used, axis=0)])
    return (cumulative[hi] - cumulative[lo]) > 0


NEIGHBOURHOOD = "MILP, neighbourhood of the best design"
REACH_MODEL = "MILP, reach model with the rules"
POLISH = "MILP, options of the reach model's design nearby"
FINE_FIRST = 2.0
"""A restricted model of the fine sections runs before the reach model with the rules
only if it has at most this many times the reach model's (reach, option) pairs."""
HEURISTIC_GAP = 0.005
"""Small reach models look for designs first when the best design is further than this
(relative) above the bound: the whole reach model then spends its root node on cuts
before it finds designs."""
REACH_RELAXED = "LP, reach model with the rules (binaries relaxed)"
REACH_NEARBY = "MILP, reach model, options its LP or the best design uses"
PRICED = "dynamic programme with the rules at pressure prices"
PRICED_NEARBY = "MILP, options of the priced designs nearby"
DOMINATED = "options dominated wherever they are admissible"
COVERING = "rules-abiding design covering the LP's head losses"
COVERING_NEARBY = "MILP, sizes near the covering design"
PRICED_SHARE = 0.1
"""Share of the time left that the priced dynamic programme may take."""
PRICED_OFFERS = 3
"""Cheapest designs of the priced search that go through the check."""
RESTRICTED_GAP = 1e-4
GAP_ROUNDING = 1e-9
"""Slack on the relative gap target for rounding only (1e-9 of the cost)."""


def _widened(data: ProblemData, base: np.ndarray, radius: int) -> np.ndarray:
    """``base`` (n, m) with, in each section, the admissible options within ``radius``
    places of a chosen one in the section's size order."""
    mask = base & data.admissible
    if radius <= 0:
        return mask
    out = mask.copy()
    for s in range(data.n_sections):
        order = data.order[data.admissible[s, data.order]]
        chosen = mask[s, order]
        grown = chosen.copy()
        for shift in range(1, radius + 1):
            grown[shift:] |= chosen[:-shift]
            grown[:-shift] |= chosen[shift:]
        out[s, order] = grown
    return out


def _neighbour_mask(data: ProblemData, design: Design, width_m: float, radius: int
                    ) -> np.ndarray:
    """Options the design uses near each section, and those within ``radius`` places of
    them in the section's size order."""
    return _widened(data, design_mask(data, design, width_m), radius)


def _global_mask(data: ProblemData, used: np.ndarray) -> np.ndarray:
    """Options used anywhere by the LP, with their neighbours in the size order."""
    chosen = used.any(axis=0)
    ranks = data.rank[chosen]
    wanted = set(ranks.tolist()) | set((ranks - 1).tolist()) | set((ranks + 1).tolist())
    mask = np.isin(data.rank, list(wanted))
    return np.broadcast_to(mask, used.shape).copy()


def optimise_design(study: Study, *, solver_name: str | None = None,
                    time_limit_s: float | None = None, mip_gap: float | None = None,
                    msg: bool = False) -> DesignOutcome:
    """The cheapest design of ``study`` that passes the check and the rules.

    ``solver_name`` ("highs" or "cbc"), ``time_limit_s`` (whole run) and ``mip_gap``
    (relative) default to the study's [solver] table. Raises :class:`SolverError` when
    the solver fails or stops without a design, :class:`VerificationError` on a bug.
    """
    started = time.perf_counter()
    solver_name = (solver_name or study.solver.name).lower()
    if solver_name not in SOLVERS:
        raise ValueError(f"unknown solver {solver_name!r}; use one of {', '.join(SOLVERS)}")
    time_limit_s = float(study.solver.time_limit_s if time_limit_s is None else time_limit_s)
    mip_gap = float(study.solver.mip_gap if mip_gap is None else mip_gap)
    deadline = started + time_limit_s
    # A solver that stops at exactly the target gap leaves it equal up to the rounding
    # of the objective it prints (CBC: about ten digits).
    gap_target = mip_gap + GAP_ROUNDING
    data = prepare(study)
    with_rules = rules_active(data)

    def outcome(status: str, **values) -> DesignOutcome:
        return DesignOutcome(status=status, solve_time_s=time.perf_counter() - started,
                             solver_name=solver_name, mip_gap=mip_gap,
                             time_limit_s=time_limit_s, rules_on=with_rules, **values)

    findings = diagnose(data)
    if findings:
        return outcome("infeasible", design=None, check=None, total_cost=None,
                       lower_bound=None, gap=None, lp_bound=None, diagnosis=findings)

    stages: list[Stage] = []
    # Options dominated wherever they are admissible leave every model (exact: the
    # options left hold a design at least as cheap; see dominated_options).
    begun = time.perf_counter()
    dominated = dominated_options(data)
    if dominated.any():
        data.admissible[:, dominated] = False
        rescreen(data)
    names = ", ".join(study.catalogue[int(j)].label for j in np.flatnonzero(dominated))
    stages.append(Stage(DOMINATED, "done", None, None, time.perf_counter() - begun, 0, 0, 0,
                        f"{int(dominated.sum())} set aside" + (f": {names}" if names else "")))

    # Seconds of model building per (section, option) pair, measured separately for
    # models with and without the rules (the rules add variables per pair).
    build_rate: dict[bool, float] = {}

    def timed_build(mask: np.ndarray | None, **options) -> tuple[Formulation, float]:
        begun = time.perf_counter()
        form = build(data, allowed=mask, **options)
        seconds = time.perf_counter() - begun
        pairs = int((data.admissible if mask is None else data.admissible & mask).sum())
        rules = bool(options.get("with_rules"))
        build_rate[rules] = max(build_rate.get(rules, 0.0), seconds / max(pairs, 1))
        return form, seconds

    def run(name: str, form: Formulation, warm: WarmStart | None, share: float,
            build_seconds: float, stage_gap: float | None = None) -> SolveReport:
        remaining = deadline - time.perf_counter()
        report = solve(form, solver_name, time_limit_s=max(remaining * share, 0.5),
                       mip_gap=mip_gap if stage_gap is None else stage_gap,
                       warm_start=warm, msg=msg)
        variables, constraints = _size(form)
        stages.append(Stage(name, report.status, report.objective, report.bound,
                            report.seconds, variables, constraints, form.n_binaries,
                            report.message, build_seconds))
        return report

    # 2. LP relaxation (rules relaxed) with the tie-break, by row generation on the
    # reach model: pressure rows only where a previous round's design came close.
    active = ActivePoints.none(data)
    lp_report: SolveReport | None = None
    lp_first = np.arange(data.n_sections)  # first fine section of each reach of the LP
    fractions = np.zeros((data.n_sections, data.n_options))
    for round_number in range(1, MAX_ROW_ROUNDS + 1):
        begun = time.perf_counter()
        reaches = merge(with_active(data, active))
        lp = build(reaches.data, with_rules=False, relaxed=True,
                   tiebreak=_tiebreak_scale(reaches.data))
        lp_build = time.perf_counter() - begun
        pairs = int(reaches.data.admissible.sum())
        build_rate[False] = max(build_rate.get(False, 0.0), lp_build / max(pairs, 1))
        lp_report = run(f"LP relaxation (rules relaxed), round {round_number}: "
                        f"{reaches.n_reaches} reaches, {active.count()} pressure points",
                        lp, None, 1.0, lp_build)
        lp_first = reaches.first
        if not lp_report.has_solution:
            break
        fractions = refine(data, reaches, lp.fractions())
        wanted = _near_points(data, check_design(
            study, design_from_fractions(data, fractions), capacity=False))
        grown = active.union(wanted)
        if grown.count() == active.count() or time.perf_counter() > deadline - 0.5:
            break
        active = grown
    assert lp_report is not None
    if lp_report.status == "infeasible":
        return outcome("infeasible", design=None, check=None, total_cost=None,
                       lower_bound=None, gap=None, lp_bound=None, stages=stages,
                       diagnosis=diagnose_after(data, rules_relaxed_feasible=False))
    if not lp_report.has_solution or lp_report.objective is None:
        raise SolverError(f"the LP relaxation did not solve ({lp_report.status}: "
                          f"{lp_report.message})")
    lp_bound = lp_report.objective - lp.tiebreak_max
    bound = lp_bound
    if with_rules and study.costs.change_cost > 0 and not uniform_feasible(data).any():
        bound += study.costs.change_cost  # every feasible design has a change
    used = fractions > 1e-6

    best: _Candidate | None = None

    def consider(design: Design, source: str, must_pass: bool) -> CheckResult:
        """Check ``design``; keep it if it passes and the rules hold and it is cheaper."""
        nonlocal best
        result = check_design(study, design, capacity=False)
        problems = rule_problems(study, design)
        if not result.ok or problems:
            if must_pass:
                details = [v.message or v.kind for v in result.violations[:5]] + problems[:5]
                raise VerificationError(
                    f"the design from '{source}' fails the check (a bug in the "
                    f"formulation): {'; '.join(details)}")
            return result
        if best is None or result.total_cost < best.cost - 1e-9 * abs(best.cost):
            best = _Candidate(design, result, result.total_cost, source)
        return result

    def best_gap() -> float:
        if best is None:
            return math.inf
        return relative_gap(best.cost, bound) or 0.0

    def proven() -> bool:
        return best is not None and (relative_gap(best.cost, bound) or 0.0) <= gap_target

    # 3. The LP's own design.
    consider(design_from_fractions(data, fractions), "LP relaxation", must_pass=False)
    # The cheapest uniform design (reported anyway) is a design of every model with the
    # rules: a first incumbent when the LP's design breaks them.
    uniform = cheapest_uniform(data)
    if uniform is not None:
        end = study.route.total_chainage_m
        consider(Design((Piece(0.0, end, uniform.option),)), "cheapest uniform design",
                 must_pass=False)

    def priced_stage() -> np.ndarray | None:
        """Designs that obey the rules by construction: a dynamic programme over whole
        sections at pressure prices, moved by subgradient steps from the LP's duals
        (CBC gives none: HiGHS solves the same LP once more for them). Returns the
        options its rounds laid (for a restricted model), None if it could not run."""
        begun = time.perf_counter()
        if lp.row_duals is None:
            solve(lp, "highs", time_limit_s=max(deadline - begun, 0.5), mip_gap=mip_gap)
        prices = prices_from_lp(data, lp_first, lp)
        if prices is None:
            return None
        budget = min(deadline, begun + PRICED_SHARE * (deadline - begun))
        found, record = priced_search(data, prices, deadline=budget,
                                      upper_bound=best.cost if best else None)
        for _, choice in found[:PRICED_OFFERS]:
            consider(design_from_choice(data, choice), PRICED, must_pass=False)
        stages.append(Stage(
            PRICED, "feasible" if found else "no_solution",
            found[0][0] if found else None, None, time.perf_counter() - begun, 0, 0, 0,
            f"{record.rounds} price rounds, {record.offered} designs clear every node"))
        return record.used

    # The reach model with the rules. It is a relaxation of the full model (pressure
    # rows only where designs came close, reaches laid in any order, chainage of a
    # share rounded up), so its bound is a valid bound; its design, once the check has
    # passed it at every point and the rules hold, is a design of the full model.
    unfinished: list[Design] = []

    def fixed(reaches) -> np.ndarray | None:
        """Options of each reach that a design cheaper than the best so far may use
        (reduced-cost fixing on the LP; a reach keeps an option if any of its sections
        does); None: no fixing."""
        if best is None:
            return None
        fine_ok = allowed_below(data, lp_first, lp, lp_report.objective, best.cost)
        if fine_ok is None:
            return None
        allowed = np.logical_or.reduceat(fine_ok, reaches.first, axis=0)
        if not (allowed & reaches.data.admissible).any(axis=1).all():
            return None  # only by solver noise: keep the model whole
        return allowed

    def polish(design: Design, source: str) -> None:
        """Check a design; if it misses a pressure or a rule (a relaxation's design),
        re-optimise the full model restricted to the options it uses nearby."""
        result = consider(design, source, must_pass=False)
        if result.ok and not rule_problems(study, design):
            return
        begun = time.perf_counter()
        form = build(data, allowed=design_mask(data, design, reach_m), with_rules=True)
        report = run(POLISH, form, section_use(data, best.design) if best else None, 0.3,
                     time.perf_counter() - begun, min(mip_gap, RESTRICTED_GAP))
        if report.has_solution:
            consider(design_from_fractions(data, form.fractions()), POLISH, must_pass=True)

    def reach_heuristics(reaches, allowed: np.ndarray | None) -> None:
        """Designs from small reach models, before the whole reach model: its LP
        relaxation (a valid bound), then the reach model restricted to the options that
        relaxation or the best design uses and the sizes next to them
        (relaxation-induced neighbourhood search, Danna, Rothberg & Le Pape 2005), once
        more around a better design, then with the sizes within two places. Each design
        is checked and, if it misses, polished on the full model."""
        nonlocal bound
        begun = time.perf_counter()
        relaxed = build(reaches.data, with_rules=True, allowed=allowed, relaxed=True)
        report = run(REACH_RELAXED, relaxed, None, 1.0, time.perf_counter() - begun)
        if not report.has_solution or relaxed.values is None:
            return
        if report.objective is not None:
            bound = max(bound, report.objective)
        if proven():
            return
        chosen = np.zeros_like(reaches.data.admissible)
        for (r, j), column in relaxed.y.items():
            chosen[r, j] = relaxed.values[column] > 1e-6
        tried: list[np.ndarray] = []
        for radius in (1, 1, 2):
            if proven() or time.perf_counter() > deadline - 0.5:
                return
            near = chosen.copy()
            if best is not None:
                for (kind, r, j), value in reach_use(data, reaches, best.design).items():
                    if kind == "x" and value > 1e-9:
                        near[r, j] = True
            mask = _widened(reaches.data, near, radius)
            if any(np.array_equal(mask, old) for old in tried):
                continue  # the same model again: nothing new to find
            tried.append(mask)
            begun = time.perf_counter()
            small = build(reaches.data, with_rules=True, allowed=mask)
            report = run(f"{REACH_NEARBY} (size radius {radius})", small,
                         reach_use(data, reaches, best.design) if best else None, 0.15,
                         time.perf_counter() - begun)
            if report.has_solution:
                polish(design_from_reaches(data, reaches, small), REACH_NEARBY)

    def reach_rounds(share: float) -> DesignOutcome | None:
        nonlocal active, bound
        for round_number in range(1, MAX_ROW_ROUNDS + 1):
            if time.perf_counter() > deadline - 0.5:
                return None
            begun = time.perf_counter()
            reaches = merge(with_active(data, active))
            allowed = fixed(reaches)
            warm = reach_use(data, reaches, best.design) if best is not None else None
            if round_number == 1 and best_gap() > max(2.0 * mip_gap, HEURISTIC_GAP):
                reach_heuristics(reaches, allowed)
                if proven():
                    return None
                warm = reach_use(data, reaches, best.design) if best is not None else None
                allowed = fixed(reaches)  # with the better design, more goes
                begun = time.perf_counter()
            form = build(reaches.data, with_rules=True, allowed=allowed)
            report = run(f"{REACH_MODEL}, round {round_number}: {reaches.n_reaches} "
                         f"reaches, {active.count()} pressure points",
                         form, warm, share, time.perf_counter() - begun)
            if report.status == "infeasible" and allowed is not None:
                # Fixing can only leave out options of designs dearer than the best, so
                # this is solver noise: solve the whole reach model instead.
                begun = time.perf_counter()
                form = build(reaches.data, with_rules=True)
                report = run(f"{REACH_MODEL}, round {round_number} without fixing", form,
                             warm, share, time.perf_counter() - begun)
            if report.status == "infeasible":
                if best is not None:
                    raise VerificationError(
                        "the reach model is reported infeasible although a verified "
                        f"design from '{best.source}' exists (a bug)")
                return outcome("infeasible", design=None, check=None, total_cost=None,
                               lower_bound=None, gap=None, lp_bound=lp_bound, stages=stages,
                               diagnosis=diagnose_after(data, rules_relaxed_feasible=True))
            if report.bound is not None and math.isfinite(report.bound):
                bound = max(bound, report.bound)
            if not report.has_solution:
                return None
            design = design_from_reaches(data, reaches, form)
            result = consider(design, REACH_MODEL, must_pass=False)
            if best is None or best.design is not design:
                unfinished.append(design)  # polished on the full model below
            grown = active.union(_near_points(data, result))
            if proven() or grown.count() == active.count():
                return None
            active = grown
        return None

    # 4. Integer programmes of growing size.
    full_report: SolveReport | None = None
    if not proven():
        median = float(np.median(data.chainage_length_m))
        width = max(2.0 * study.rules.min_piece_length_m, 3.0 * median)
        levels: list[tuple[str, np.ndarray | None, float]] = [
            ("MILP, options the LP used nearby", _window_mask(data, used, width), 0.3)]
        if with_rules:
            repaired = repair(data, design_from_fractions(data, fractions))
            if repaired is not None:
                consider(repaired, "rules repair", must_pass=False)
                reach = max(width, 0.02 * study.route.total_chainage_m)
                levels.append(("MILP, options of the rules-repaired design nearby",
                               design_mask(data, repaired, reach), 0.3))
            covering = covering_choice(data, fractions)
            if covering is not None:
                covering_design = design_from_choice(data, covering)
                consider(covering_design, COVERING, must_pass=False)
                if repaired is None:
                    reach = max(width, 0.02 * study.route.total_chainage_m)
                    levels.append((COVERING_NEARBY, _neighbour_mask(
                        data, covering_design, reach, 1), 0.3))
            # Restricted models of the fine sections go before the reach model only while
            # they are small beside it (on long routes they cost more than the reach
            # model, which finds their designs and proves them as well).
            reach_pairs = int(lp.data.admissible.sum())
            small = [level for level in levels
                     if int((data.admissible & level[1]).sum()) <= FINE_FIRST * reach_pairs]
            large = [level for level in levels if not any(level is kept for kept in small)]
            levels = [*small, (REACH_MODEL, None, 0.8), *large]
            levels.append(("MILP, options the LP used anywhere and their neighbours",
                           _global_mask(data, used), 0.4))
        levels.append(("MILP, full model", None, 0.85))  # leave time to verify
        # Large-neighbourhood search with the rules on: small models around the best
        # design so far, widened in size while they stop improving. Each is a
        # restriction of the full model, so its designs are valid incumbents.
        neighbourhood = {"radius": 1, "left": 25 if with_rules else 0, "cost": math.inf}
        reach_m = max(width, 0.02 * study.route.total_chainage_m)
        starts_search = {REACH_MODEL, PRICED_NEARBY}

        def queue_search(name: str) -> None:
            searching = name in starts_search or name.startswith(NEIGHBOURHOOD)
            if searching and best is not None and neighbourhood["left"] > 0:
                if best.cost >= neighbourhood["cost"] - 1e-9 * abs(best.cost):
                    neighbourhood["radius"] += 1  # no gain: look further in size
                neighbourhood["cost"] = best.cost
                if neighbourhood["radius"] <= 3:
                    neighbourhood["left"] -= 1
                    radius = neighbourhood["radius"]
                    levels.insert(0, (f"{NEIGHBOURHOOD} (size radius {radius})",
                                      _neighbour_mask(data, best.design, reach_m, radius),
                                      0.15))
        while levels:
            name, mask, share = levels.pop(0)
            if time.perf_counter() > deadline - 0.5 and best is not None:
                break
            if name == REACH_MODEL:
                finished = reach_rounds(share)
                if finished is not None:
                    return finished
                if proven():
                    break
                # Not proven: a reach design that misses the rules or a pressure by a
                # little (the reach model relaxes them) is re-optimised around it on
                # the full model; then the priced dynamic programme, a different route
                # to designs; then the neighbourhood search around the best.
                front: list[tuple[str, np.ndarray | None, float]] = []
                if unfinished:
                    front.append((POLISH, design_mask(data, unfinished[-1], reach_m), 0.3))
                front.append((PRICED, None, 0.0))
                levels[0:0] = front
                continue
            if name == PRICED:
                priced_used = priced_stage()
                if priced_used is not None:
                    levels.insert(0, (PRICED_NEARBY, _window_mask(data, priced_used, width),
                                      0.3))
                else:
                    queue_search(REACH_MODEL)
                continue
            if mask is not None and (data.admissible & ~mask).sum() == 0:
                continue  # the reduced model would be the full model
            pairs = int((data.admissible if mask is None else data.admissible & mask).sum())
            if with_rules in build_rate:
                rate = build_rate[with_rules]
            else:  # only the LP built so far: rules add about 4x the work per pair
                rate = build_rate.get(False, 0.0) * (4.0 if with_rules else 1.0)
            if best is not None and rate * pairs > 0.5 * (deadline - time.perf_counter()):
                stages.append(Stage(name, "skipped", None, None, 0.0, 0, 0, 0,
                                    "too large to build and solve in the time left"))
                continue
            form, seconds = timed_build(mask, with_rules=with_rules)
            warm = section_use(data, best.design) if best is not None else None
            # A restricted model only supplies designs: solve it tightly (it is small),
            # or a loose target gap would stop it at designs worse than its start.
            report = run(name, form, warm, share, seconds,
                         None if mask is None else min(mip_gap, RESTRICTED_GAP))
            if report.has_solution:
                consider(design_from_fractions(data, form.fractions()), name, must_pass=True)
            if mask is None:
                full_report = report
                if report.status == "infeasible":
                    if best is not None:
                        raise VerificationError(
                            "the full model is reported infeasible although a verified "
                            f"design from '{best.source}' exists (a bug)")
                    return outcome(
                        "infeasible", design=None, check=None, total_cost=None,
                        lower_bound=None, gap=None, lp_bound=lp_bound, stages=stages,
                        diagnosis=diagnose_after(data, rules_relaxed_feasible=True))
                if report.bound is not None and math.isfinite(report.bound):
                    bound = max(bound, report.bound)
            if proven():
                break
            queue_search(name)

    if best is None:
        last = stages[-1] if stages else None
        raise SolverError("no design found within the time limit "
                          f"({time_limit_s:g} s; last solver status: "
                          f"{last.status if last else 'none'})")
    final = check_design(study, best.design)
    if not final.ok:
        raise VerificationError("the returned design fails the final check (a bug)")
    # A valid bound cannot exceed the cost of a design the model admits; a solver's
    # reported dual bound can, within its feasibility tolerances. Cap it there.
    bound = min(bound, best.cost)
    gap = relative_gap(best.cost, bound)
    status = "optimal" if gap is not None and gap <= gap_target else "feasible"
    if full_report is not None and full_report.status == "optimal" and \
            best.cost <= (full_report.objective or math.inf) + 1e-9 * abs(best.cost):
        status = "optimal"  # the solver's own proof (its gap is measured as it defines it)
    binding = []
    for scenario in final.scenarios:
        least = scenario.least_pressure_margin
        binding.append(BindingPoint(
            scenario.name, float(least["chainage_m"]), str(least["label"]),
            float(least["pressure_m"]), float(least["min_pressure_m"]),
            float(least["pressure_m"] - least["min_pressure_m"]),
            float(scenario.outlet_margin_m)))
    return outcome(status, design=best.design, check=final, total_cost=best.cost,
                   lower_bound=bound, gap=gap, lp_bound=lp_bound,
                   uniform=uniform, binding=binding, stages=stages)
