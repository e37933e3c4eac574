"""Where a break-pressure tank would make a reach's static head fit a class (for the
diagnosis of :mod:`optimiser.milp.diagnose`).

A tank restarts the static line at its water level (contract section 8). A reach whose
lowest pipe level is z fits the catalogue's highest class H (with the surge allowance A)
below a tank whose water level is at most z + H - A. A tank stands on the ground with
its water ``[break_pressure_tanks] height_m`` above it, so any point upstream of the reach
where ground + height is at most that level will do; the span from the first such point
down to the reach's start is named.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from optimiser.milp.data import ProblemData


def tank_hint(data: ProblemData, first: int, last: int,
              label: Callable[[float], str]) -> str:
    """One sentence: the span of chainage where a tank would let a class take the
    static head of sections ``first`` to ``last`` (empty when no such span exists)."""
    study = data.study
    allowable = study.catalogue.allowable_head_m
    if not allowable.size:
        return ""
    pipe = data.node_pipe_level_m
    lowest = float(min(pipe[first:last + 2]))
    level = lowest + float(allowable.max()) - study.surge_allowance_m
    height = study.tank_rules.height_m
    ground = pipe + study.route.cover_m
    chainage = data.node_chainage_m
    fits = np.flatnonzero(ground[1:first + 1] + height <= level) + 1
    if not len(fits):
        return ""
    start = float(chainage[fits[0]])
    end = float(chainage[first])
    how = ("" if study.tank_rules.cost is not None else
           " ([break_pressure_tanks] cost lets design choose where)")
    return (f" A break-pressure tank with its water at most {level:.1f} m, between "
            f"{label(start)} and {label(end)}, would bring this reach within the "
            f"highest class{how}.")
