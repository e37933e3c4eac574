"""Presolve: options set aside before any model is built, exactly.

Three steps make the models smaller without changing the optimum:

- options dominated wherever they are admissible (this module, applied once after
  :func:`optimiser.milp.data.prepare`, which has already screened out the check points
  no design can bring to their minimum);
- quiet sections merged into reaches (:mod:`optimiser.milp.reaches`; exact for the
  points in the model, a relaxation when points are left out for row generation);
- reduced-cost fixing against the incumbent (:mod:`optimiser.milp.fixing`; exact for
  designs cheaper than the incumbent).

None of them is part of the formulation (:mod:`optimiser.milp.formulation`), which
builds whatever problem description it is given.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from optimiser.milp.data import ProblemData, screened
from optimiser.milp.wave_classes import options_in_conflict


def without_options(data: ProblemData, gone: np.ndarray) -> ProblemData:
    """``data`` with the options of the (m,) mask ``gone`` inadmissible everywhere and
    the check points screened again (fewer options, smaller largest velocity head)."""
    if not gone.any():
        return data
    admissible = data.admissible.copy()
    admissible[:, gone] = False
    return screened(dataclasses.replace(data, admissible=admissible))


def dominated_options(data: ProblemData) -> np.ndarray:
    """Options no cheapest design needs: (m,) mask of options ``a`` such that another
    option ``b`` is admissible in every section where ``a`` is and there costs no more,
    loses no more head and has no larger velocity head in any scenario (so no smaller
    internal diameter), and no other remaining option has an internal diameter between
    theirs (inclusive).

    Replacing every piece of ``a`` by ``b`` in place then keeps each piece where it was
    and its place in the section order (descending internal diameter): pieces of the
    same option that become adjacent merge, so changes only fall and pieces only grow;
    energy nowhere falls and velocity heads nowhere rise, so every pressure and the
    outlet head stay met; sizes stay non-increasing where they were (nothing remains
    between ``a`` and ``b`` in size). So the options left hold a design at least as
    cheap as any design that uses ``a``. This is the exact, rules-safe form of "drop
    options off the lower hull of cost against head loss" (with rules on, an option off
    that hull in one stretch may still be worth carrying on to save a change, so only
    options dominated wherever they are admissible go). Removal is greedy and
    repeated until nothing more goes.
    """
    m = data.n_options
    admissible = data.admissible
    diameter = data.study.catalogue.internal_diameter_mm
    tolerance = 1e-12
    # A replacement with conflict windows (surge by wave speed) could join pieces into
    # one that spans a window: such an option never stands in for another.
    spans = options_in_conflict(data.wave_conflicts, m)
    pairs: list[tuple[int, int]] = []
    for a in range(m):
        where = admissible[:, a]
        if not where.any():
            continue
        for b in range(m):
            if b == a or diameter[b] < diameter[a] or spans[b] \
                    or not admissible[where, b].all():
                continue
            if (data.section_cost[where, b] <= data.section_cost[where, a] + tolerance).all() \
                    and (data.section_loss_m[:, where, b]
                         <= data.section_loss_m[:, where, a] + tolerance).all() \
                    and (data.velocity_head_m[:, where, b]
                         <= data.velocity_head_m[:, where, a] + tolerance).all() \
                    and _surge_no_larger(data, where, a, b, tolerance):
                pairs.append((a, b))
    remaining = admissible.any(axis=0)
    gone = np.zeros(m, dtype=bool)
    changed = True
    while changed:
        changed = False
        for a, b in pairs:
            if gone[a] or not remaining[b]:
                continue
            low, high = diameter[a], diameter[b]
            between = remaining & (diameter >= low) & (diameter <= high)
            between[[a, b]] = False
            if not between.any():
                gone[a] = True
                remaining[a] = False
                changed = True
    return gone


def _surge_no_larger(data: ProblemData, where: np.ndarray, a: int, b: int,
                     tolerance: float) -> bool:
    """With the down-surge limit, b's surge head is nowhere above a's."""
    if data.surge_m is None:
        return True
    return bool((data.surge_m[where, b] <= data.surge_m[where, a] + tolerance).all()
                and (data.surge_own_m[where, b] <= data.surge_own_m[where, a]
                     + tolerance).all())
