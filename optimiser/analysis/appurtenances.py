"""Where a main needs air valves and washouts, from its pipe profile and pressures.

Common practice (no single source; e.g. AWWA Manual M51, Air-Release, Air/Vacuum and
Combination Air Valves, and most water-authority design guides): an air valve at every
local high point of the pipe and wherever the hydraulic grade line comes close to the
pipe (little pressure margin, where air comes out of solution and where a vacuum first
forms when the main drains); a washout (scour) at every local low point.

Survey jitter makes many tiny bumps. A turning point is only kept when the profile moves
away from it by more than ``tolerance_m`` on both sides before turning again (a
hysteresis, or "zig-zag", filter), so noise below the tolerance never creates a valve.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from optimiser.analysis.check import CheckResult
from optimiser.model import TRUNK
from optimiser.model.lines import Line, study_lines


@dataclass(frozen=True)
class Appurtenance:
    kind: str  # "air valve" or "washout"
    chainage_m: float
    pipe_level_m: float
    ground_m: float
    reason: str
    label: str = ""
    branch: str = TRUNK

    def as_dict(self) -> dict:
        return {"kind": self.kind, "branch": self.branch, "chainage_m": self.chainage_m,
                "pipe_level_m": self.pipe_level_m, "ground_m": self.ground_m,
                "reason": self.reason, "label": self.label}


def turning_points(level_m: np.ndarray, tolerance_m: float) -> tuple[list[int], list[int]]:
    """Indices of local high and low points whose relief exceeds ``tolerance_m``.

    The ends of the profile are never turning points (they are the source and the
    outlet). A plateau reports its first point.
    """
    level = np.asarray(level_m, dtype=float)
    highs: list[int] = []
    lows: list[int] = []
    high = low = 0
    trend: str | None = None
    for i in range(1, len(level)):
        z = level[i]
        if trend is None:
            if z > level[high]:
                high = i
            if z < level[low]:
                low = i
            if z - level[low] > tolerance_m:
                if low > 0:
                    lows.append(low)
                trend, high = "up", i
            elif level[high] - z > tolerance_m:
                if high > 0:
                    highs.append(high)
                trend, low = "down", i
        elif trend == "up":
            if z > level[high]:
                high = i
            elif level[high] - z > tolerance_m:
                highs.append(high)
                trend, low = "down", i
        else:
            if z < level[low]:
                low = i
            elif z - level[low] > tolerance_m:
                lows.append(low)
                trend, high = "up", i
    return highs, lows


def schedule(result: CheckResult, *, tolerance_m: float = 1.0,
             margin_threshold_m: float = 3.0) -> list[Appurtenance]:
    """Air valves and washouts for a checked design, line by line (the trunk, then each
    branch of a scheme), sorted by chainage on each.

    Air valves: local high points of the pipe profile, and the highest point of every
    stretch where the pressure margin (pressure head minus its minimum) falls below
    ``margin_threshold_m`` in any scenario. Washouts: local low points.
    """
    items: list[Appurtenance] = []
    for line in study_lines(result.study):
        found = _line_schedule(result, line, tolerance_m, margin_threshold_m)
        items += sorted(found, key=lambda a: (a.chainage_m, a.kind))
    return items


def _line_schedule(result: CheckResult, line: Line, tolerance_m: float,
                   margin_threshold_m: float) -> list[Appurtenance]:
    """The appurtenances of one line: its own profile and its own check points."""
    route = line.route
    chainage = route.chainage_m
    level = route.pipe_level_m
    ground = route.ground_m
    highs, lows = turning_points(level, tolerance_m)
    items: dict[tuple[str, float], Appurtenance] = {}
    for i in highs:
        items[("air valve", float(chainage[i]))] = Appurtenance(
            "air valve", float(chainage[i]), float(level[i]), float(ground[i]),
            "local high point", route.labels[i], line.name)
    for i in lows:
        items[("washout", float(chainage[i]))] = Appurtenance(
            "washout", float(chainage[i]), float(level[i]), float(ground[i]),
            "local low point", route.labels[i], line.name)
    for scenario in result.scenarios:
        points = scenario.points
        if result.study.is_scheme:
            points = points[points["branch"] == line.name]
        low_margin = (points["pressure_m"] - points["min_pressure_m"]).to_numpy() < \
            margin_threshold_m
        # Contiguous runs of low margin: one valve at the run's highest pipe level.
        edges = np.flatnonzero(np.diff(np.concatenate([[0], low_margin.astype(int), [0]])))
        for start, stop in zip(edges[0::2], edges[1::2], strict=True):
            run = points.iloc[start:stop]
            # The source and the outlet (a branch's tee and its end) are not places for
            # a line valve.
            run = run[(run["chainage_m"] > 0.0) & (run["chainage_m"] < chainage[-1])]
            if run.empty:
                continue
            top = run.loc[run["pipe_level_m"].idxmax()]
            at = float(top["chainage_m"])
            if any(k == "air valve" and abs(c - at) <= 1e-6 for k, c in items):
                continue
            margin = float((run["pressure_m"] - run["min_pressure_m"]).min())
            items[("air valve", at)] = Appurtenance(
                "air valve", at, float(top["pipe_level_m"]), float(top["ground_m"]),
                f"pressure margin {margin:.1f} m < {margin_threshold_m:g} m in "
                f"'{scenario.name}'", str(top["label"]), line.name)
    return list(items.values())
