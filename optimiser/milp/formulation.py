"""The split-pipe programme, with the rules as mixed-integer constraints.

The model is written as arrays (:mod:`optimiser.milp.matrix`) and solved by HiGHS or CBC
(:mod:`optimiser.milp.solvers`). :func:`build` is the entry point; the parts are
:mod:`optimiser.milp.columns` (fractions, use binaries, first/last-piece indicators),
:mod:`optimiser.milp.pressure_rows` (energy line, pressures, outlet head) and
:mod:`optimiser.milp.rule_rows` (the rules), writing into a
:class:`~optimiser.milp.built_model.Formulation`. What may be left out before a model is
built (screened points, dominated options, merged reaches, fixed options) is presolve
(:mod:`optimiser.milp.presolve`), not the formulation.

Model (what "cheapest" is proven over)
--------------------------------------
A design gives each survey section ``s`` fractions ``x[s, j] >= 0`` (summing to 1) of its
chainage to catalogue options ``j``; inside a section the pieces are laid in descending
internal diameter (the *section order*), so boundaries sit at the start of the section
plus the cumulative fractions times its chainage length. Cost and head loss are linear
in ``x`` because each section's flow is known (Karmeli, Gadish & Meyers 1968). The
model admits an option in a section only if its pressure class takes the static head at
the section's lowest pipe level (plus its surge) and, in every scenario with velocity
limits, its velocity lies in the window. The sections are those of the route split at
every chainage where an option's class limit is crossed
(:func:`optimiser.milp.class_limits.split_at_class_limits`, applied before
:func:`~optimiser.milp.data.prepare`), so this admissibility is exact: on each part an
option's class holds at every metre or at none. The extra nodes carry no fitting and the
route's minimum pressure; pressure along one pipe inside a survey section is linear in
chainage, so they add no constraint the check does not imply.

Exact, in every scenario:

- friction (Darcy-Weisbach/Colebrook-White or Hazen-Williams, computed once per
  section and option by the same code as the check) and the per-km allowance, both
  linear in pipe length;
- exit and last-node fitting losses with the velocity head of the last piece:
  binaries ``y[s, j]`` (option j is used in s) drive a staircase per section,
  ``CL[s, t]`` = "an option at position >= t of the section order is used", which picks
  out the last piece (the smallest pipe of the section) exactly;
- pressure at the upstream side of every survey node, and at every piece boundary
  inside a section, with the velocity head of the pipe on that side: inside a section
  the boundary after the first t positions has energy and pipe level linear in ``x``
  and the downstream-side velocity head is ``h[t] * CL[s, t]``, which is the tighter
  side because velocity head grows along the section order;
- the outlet head after the exit loss;
- pressure classes by wave speed: an option is admissible at its own largest velocity
  in the section (a relaxation: any piece there is at least as fast), and the rows of
  :mod:`optimiser.milp.wave_rows` keep a piece from spanning a window where the
  velocity of its first section would break its class downstream
  (:mod:`optimiser.milp.wave_classes`);
- the rules on the merged design (adjacent identical options joined): ``max_changes``,
  ``change_cost`` per change, ``min_piece_length_m`` (chainage, carried across sections
  by an accumulator capped at the minimum) and ``sizes_downstream = "non-increasing"``.

Left out because they provably cannot bind (see :func:`optimiser.milp.data.screened`):
pressure constraints at points whose pipe is so far below the lowest energy any feasible
design can have there that no velocity head can bring them to their minimum.

Left out because another option does at least as well (see
:func:`optimiser.milp.presolve.dominated_options`, applied by the optimiser before any
model is built): options dominated wherever they are admissible. Replacing each such
option by its dominator keeps every design of this model a design of it, at no more
cost, so the optimum is the same.

Conservative (may exclude a design the check would pass, never the reverse):

- at the start of a section (entrance loss, a fitting's loss, the downstream side of a
  node) the velocity head is that of the section's smallest pipe, i.e. of its last
  piece; exact when the section holds one option, an overestimate when it is split
  (its first piece is its largest). An exact first-piece indicator would let the
  optimiser lay millimetre slivers of a larger pipe after every fitting to shave the
  loss, which the formulas allow but nobody would build;
- within a section the pieces follow the section order (descending internal diameter),
  so an increase of size downstream happens only at a survey node;
- inside a section, boundary points are held to the route's ``min_pressure_m`` even
  where a boundary falls on a survey node whose offtake has a lower minimum of its own;
- with ``[surge] min_transient_pressure_m``, every pressure row has a down-surge twin
  (:mod:`optimiser.milp.pressure_rows`: velocity head plus the pipe's surge head, the
  transient limit instead of the minimum); by wave speed the surge of an option is its
  own in the section plus what a piece carries from a larger flow above
  (:mod:`optimiser.milp.carried_surge`; exact at section ends), inside a section the
  largest of the pieces up to the boundary and the first piece's carried surge;
- by wave speed, inside a conflict window or where a piece may carry surge, every piece
  is at least 1 mm long (:mod:`optimiser.milp.wave_rows`);
- every pressure, the outlet head and the minimum piece length carry a small safety
  margin (``MARGIN_M``, ``LENGTH_MARGIN_M``) so that solver tolerances and rounding of
  the returned chainages never make the verified design fail the check.

Any order (``build(any_order=True)``, run by :mod:`optimiser.milp.search.any_order`):
the first and the last piece of every section are picked freely among the options
used, the start of a section takes the first piece's velocity head, no row is written
inside a section, and the pressure where each option first starts and last ends is held
in any arrangement. With ``least_piece_m`` (each picked end piece at least that long) it
supplies designs the section order excludes (a size increase inside a section), which
the check judges like any other; it supplies no bound (without rows inside sections it
is not a model of designs; with its least length not a relaxation of all of them).

The returned design is therefore the cheapest, within the reported gap, of all designs
that follow the section order, take classes per part of the split route and are judged
with the conservative velocity heads above, or cheaper still (a design of the any-order
model); it passes the check, which judges it exactly. The bound is over the former set:
a design with a size increase inside a section, or a short larger piece after a fitting
(the check judges a point loss with the velocity head of the piece after it, however
short), may cost less than it.

Reach models (:mod:`optimiser.milp.reaches`) use the same code on merged sections:
``free_order`` reaches replace the staircases by binaries that pick the first and the
last piece among the options used (any order, no check point inside), with an
indicator that counts an A-B-A arrangement as two changes, and ``chainage_per_share_m``
rounds a share's chainage up for the minimum piece length; both make the reach model a
relaxation of this one.

Rules in the integer programme: ``y`` is binary in every section; staircases ``CF``
(first piece) and ``CL`` (last piece) are exact given ``y`` (``y <= CF``, increments of
``CF`` only where ``y = 1``); a use indicator set to 1 over a zero length ("spurious")
can only overstate the velocity head at a section end, and leaves the change count, the
piece lengths and the size order of the merged design correct.
"""

from __future__ import annotations

import numpy as np

from optimiser.milp.built_model import (
    LENGTH_MARGIN_M,
    MARGIN_M,
    Formulation,
    WarmStart,
)
from optimiser.milp.columns import add_section_columns
from optimiser.milp.data import ProblemData
from optimiser.milp.matrix import LinearModel, Term
from optimiser.milp.pressure_rows import add_pressure_rows
from optimiser.milp.pump_columns import add_pump_columns
from optimiser.milp.pumps.class_rows import add_pumping_class_rows
from optimiser.milp.rule_rows import add_rule_rows
from optimiser.milp.tank_rows import add_static_rows
from optimiser.milp.wave_rows import add_break_rows, add_wave_rows

__all__ = ["LENGTH_MARGIN_M", "MARGIN_M", "Formulation", "WarmStart", "build",
           "rules_active"]


def rules_active(data: ProblemData) -> bool:
    """True if any rule of contract section 1 [rules]/[costs] constrains the design."""
    study = data.study
    rules = study.rules
    return bool(rules.min_piece_length_m > 0 or rules.max_changes is not None
                or rules.sizes_non_increasing or study.costs.change_cost > 0)


def build(data: ProblemData, *, allowed: np.ndarray | None = None, with_rules: bool = True,
          relaxed: bool = False, tiebreak: float = 0.0, any_order: bool = False,
          least_piece_m: float = 0.0, pump_head_cap_m: np.ndarray | None = None
          ) -> Formulation:
    """Build the model.

    ``allowed`` (n, m) restricts options further than admissibility (a reduced model
    whose designs are all designs of the full model). ``with_rules=False`` drops the
    rules (the relaxation whose value is the reported LP bound, with ``relaxed=True``).
    ``relaxed=True`` makes the binaries continuous. ``tiebreak > 0`` adds a tiny cost
    that prefers larger diameters upstream; it only breaks ties between designs of equal
    cost (the LP is highly degenerate) and is accounted for in ``tiebreak_max``.
    ``any_order=True`` builds the relaxation of every design the check accepts: in every
    section the first and the last piece are picked freely among the options used (the
    start of a section, its point loss and its downstream-side pressure take the first
    piece's velocity head) and no row is written inside a section (see "Any order" in
    the module docstring). ``least_piece_m > 0`` (with ``any_order``) makes a picked
    first or last piece at least that long: no longer a relaxation, a model of designs.
    ``pump_head_cap_m`` (K,) caps the station heads of a pumped main (no design cheaper
    than one in hand needs more; :mod:`optimiser.milp.pump_search`).
    """
    mask = data.admissible if allowed is None else data.admissible & allowed
    form = Formulation(LinearModel(), data, mask, with_rules, relaxed, any_order,
                       least_piece_m, pump_head_cap_m=pump_head_cap_m)
    columns = add_section_columns(form, tiebreak)
    add_pump_columns(form)  # nothing without a pump
    add_pressure_rows(form, columns)
    add_static_rows(form)
    add_pumping_class_rows(form)
    change_terms: list[Term] = add_rule_rows(form, columns) if with_rules else []
    add_wave_rows(form, columns)
    add_break_rows(form, columns)
    # changes = uses - continuations - 1: the constant stays outside the solver's
    # objective and is added back on reading.
    change_cost = data.study.costs.change_cost
    if change_cost:
        form.model.add_cost((c, v * change_cost) for c, v in change_terms)
    form.objective_offset = -change_cost if change_terms else 0.0
    form.n_binaries = 0 if relaxed else len(form.y) + len(form.pump_indicators)
    return form
