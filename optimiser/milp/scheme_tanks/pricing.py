"""A set of new tanks priced: the scheme designed with those tanks fixed.

With the tanks fixed, the scheme is one with those tanks as its own, and its design is
the cut at its tanks (:mod:`optimiser.milp.cut_at_tanks`: the parts above and below each
tank designed apart, joined, checked whole). That run's bound bounds every design with
exactly these tanks; adding the tanks' cost gives the set's total and its bound.

:class:`Prices` keeps every set priced and states the bound over every choice of
tanks: each set not priced (or priced without a bound) is bounded by the relaxation of
:mod:`~.relaxation` plus its count x the cost of a tank (no bound at all, ``inf``, for
fewer tanks than any design needs, :mod:`~.count`), so the bound is the least of the
priced sets' bounds and, for the smallest count of which some set is left, the
relaxation plus that count x cost (exact by enumeration when every set is priced).
"""

from __future__ import annotations

import math
import time
from collections import Counter
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from optimiser.io.errors import InputError
from optimiser.milp.outcome import DesignOutcome, SolverError, Stage
from optimiser.milp.scheme_tanks.count import covers
from optimiser.milp.scheme_tanks.memo import PartMemo
from optimiser.milp.scheme_tanks.placement import Choice
from optimiser.milp.scheme_tanks.sites import Site, new_tanks, with_new_tanks
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.search.state import Clock, Settings
from optimiser.model import Design, Study
from optimiser.model.status import Status

Plain = Callable[..., DesignOutcome]


@dataclass(frozen=True)
class Priced:
    """A set of tanks priced: the run's status, its design with the tanks, the total
    cost (pipes and new tanks) and a bound on every design with exactly these tanks
    (``inf``: proven to have none; ``-inf``: unknown)."""

    choice: Choice
    status: Status
    design: Design | None
    cost: float | None
    bound: float


def describe(choice: Choice) -> str:
    """The tanks of a set, for the stage records."""
    if not choice:
        return "no new tank"
    return ", ".join(f"{s.line!r} {s.chainage_m:g} m" for s in sorted(choice))


@dataclass
class Prices:
    """Every set priced so far, the run's stages, and the bound over every choice."""

    study: Study
    settings: Settings
    clock: Clock
    plain: Plain
    sites: list[Site]
    relaxed_m: float
    """The relaxation's bound (pipes only, any tanks)."""
    fewest: float = 0.0
    """The fewest new tanks any design needs (:mod:`~.count`)."""
    lines_m: float = -math.inf
    """A bound on every design, tanks included (:mod:`~.lines_bound`)."""
    priced: dict[Choice, Priced] = field(default_factory=dict)
    stages: list[Stage] = field(default_factory=list)
    memo: PartMemo | None = None
    """Each part of the cut at tanks designed once (made on first use)."""

    @property
    def tank_cost(self) -> float:
        return float(self.study.tank_rules.cost or 0.0)

    @property
    def most(self) -> int:
        """The most tanks a set may have."""
        count = self.study.tank_rules.max_count
        return len(self.sites) if count is None else min(count, len(self.sites))

    @property
    def best(self) -> Priced | None:
        found = [p for p in self.priced.values() if p.cost is not None]
        return min(found, key=lambda p: (p.cost, len(p.choice))) if found else None

    def floor(self, count: int) -> float:
        """The relaxation's bound for a set of ``count`` tanks, or the lines' bound if
        higher (``inf`` below the fewest any design needs)."""
        if count < self.fewest:
            return math.inf
        return max(self.relaxed_m + count * self.tank_cost, self.lines_m)

    def worth(self, choice: Choice) -> bool:
        """``choice`` may beat the best set priced (by the relaxation)."""
        best = self.best
        return best is None or best.cost is None or \
            self.floor(len(choice)) < best.cost * (1.0 - self.settings.gap_target)

    def bound(self) -> float:
        """A lower bound on every design with any tanks (module docstring)."""
        values = [max(p.bound, self.floor(len(p.choice))) for p in self.priced.values()]
        done = Counter(len(choice) for choice, p in self.priced.items()
                       if math.isfinite(p.bound) or p.bound == math.inf)
        first = self.most + 1 if self.fewest > self.most else math.ceil(self.fewest)
        for count in range(first, self.most + 1):
            if done[count] < math.comb(len(self.sites), count):
                values.append(self.floor(count))
                break
        return min(values) if values else math.inf

    def price(self, choice: Choice, share: float) -> Priced:
        """Design the scheme with ``choice`` fixed, with ``share`` of the time left."""
        if choice in self.priced:
            return self.priced[choice]
        if not covers(self.study, list(choice)):
            return self.proven_none(choice, "some reach has no class under these tanks' "
                                    "static line")
        begun = time.perf_counter()
        limit = max(self.clock.left() * share, 1.0)
        extra = len(choice) * self.tank_cost
        try:
            # a set that leaves a reach with no class makes the scheme's diagnosis
            # multiply 0 by inf there (its finding is right; the warning is noise)
            if self.memo is None:
                self.memo = PartMemo(self.plain)
            with np.errstate(invalid="ignore"):
                outcome = self.memo(with_new_tanks(self.study, choice),
                                     solver_name=self.settings.solver_name,
                                     mip_gap=self.settings.mip_gap, time_limit_s=limit)
        except (InputError, SolverError) as error:
            priced = Priced(choice, Status.FEASIBLE, None, None, -math.inf)
            self._record(priced, time.perf_counter() - begun, str(error))
            return priced
        if outcome.status == Status.INFEASIBLE or outcome.design is None:
            priced = Priced(choice, outcome.status, None, None, math.inf if
                            outcome.status == Status.INFEASIBLE else -math.inf)
        else:
            assert outcome.total_cost is not None
            bound = -math.inf if outcome.lower_bound is None else outcome.lower_bound + extra
            priced = Priced(choice, outcome.status, Design(outcome.design.pieces,
                                                           new_tanks(choice)),
                            outcome.total_cost + extra, bound)
        self._record(priced, time.perf_counter() - begun, f"{len(outcome.stages)} stages")
        return priced

    def proven_none(self, choice: Choice, why: str) -> Priced:
        """Record ``choice`` as proven to have no design (``why``), without a run."""
        priced = Priced(choice, Status.INFEASIBLE, None, None, math.inf)
        self._record(priced, 0.0, why)
        return priced

    def _record(self, priced: Priced, seconds: float, message: str) -> None:
        self.priced[priced.choice] = priced
        kind = StageKind.SCHEME_TANK_SETS
        bound = priced.bound if math.isfinite(priced.bound) else None
        self.stages.append(Stage(kind, f"{kind.label}: {describe(priced.choice)}",
                                 priced.status, priced.cost, bound, seconds, 0, 0, 0,
                                 message))
