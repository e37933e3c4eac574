"""Design of a pumped scheme (contract sections 7 and 9): not available in this version.

A station at the source whose head reaches branches (a branch leaves the trunk above its
first break-pressure tank, or the scheme has no tank) lifts every line it reaches by the
same head; ``optimiser check`` judges such a design (the least head per scenario,
:mod:`optimiser.analysis.pumping`). The tree's models (:mod:`optimiser.milp.tree`) do
not yet carry the station-head columns, the energy objective and the classes under
pumping on every line, so ``design`` refuses such a study with a clear message rather
than return a design priced without its energy.
"""

from __future__ import annotations

from optimiser.analysis.static_line import pump_reaches_branches, pumped_lines
from optimiser.io.errors import InputError
from optimiser.model import Study


def refuse_pumped_scheme(study: Study) -> None:
    """Raise :class:`InputError` when ``study``'s station head reaches a branch."""
    if not pump_reaches_branches(study):
        return
    where = study.path or "the study file"
    names = ", ".join(f"'{line.name}'" for line in pumped_lines(study)[1:])
    raise InputError(
        f"{where}: [pump] with branches its head reaches ({names} leave above the "
        "trunk's first break-pressure tank): design of a pumped scheme is not available "
        "in this version; check a design of it with `optimiser check` (the least station "
        "head per scenario), or give the tank the rising main fills as a "
        "[[break_pressure_tank]] on the trunk above every junction")
