"""Stage: options dominated wherever they are admissible leave every model (presolve).

Takes the search state; replaces its problem description by one without those options
(exact: the options left hold a design at least as cheap, see
:func:`optimiser.milp.presolve.dominated_options`) and records the stage.
"""

from __future__ import annotations

import time

import numpy as np

from optimiser.milp.outcome import Stage
from optimiser.milp.presolve import dominated_options, without_options
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.search.state import SearchState
from optimiser.model.status import Status


def run_dominance(state: SearchState) -> None:
    """Set aside the dominated options of ``state.data`` and record the stage."""
    begun = time.perf_counter()
    dominated = dominated_options(state.data)
    state.data = without_options(state.data, dominated)
    catalogue = state.study.catalogue
    names = ", ".join(catalogue[int(j)].label for j in np.flatnonzero(dominated))
    message = f"{int(dominated.sum())} set aside" + (f": {names}" if names else "")
    state.stages.append(Stage(StageKind.DOMINANCE, StageKind.DOMINANCE.label, Status.DONE,
                              None, None, time.perf_counter() - begun, 0, 0, 0, message))
