"""What each step of the search is (:class:`StageKind`) and the text it shows.

Stages are told apart by their kind; the text (``label``) is only shown to the user and
written to the JSON, with a suffix for the round or the size radius.
"""

from __future__ import annotations

from enum import Enum


class StageKind(Enum):
    """The kinds of step of the search, in the order a run meets them."""

    DOMINANCE = "dominance"
    """Presolve: options dominated wherever they are admissible set aside."""
    LP_RELAXATION = "lp_relaxation"
    """A round of the LP relaxation (rules relaxed) with row generation."""
    LP_NEARBY = "lp_nearby"
    """MILP restricted to the options the LP used near each section."""
    REPAIRED_NEARBY = "repaired_nearby"
    """MILP restricted to the options of the rules-repaired LP design nearby."""
    COVERING_NEARBY = "covering_nearby"
    """MILP restricted to the sizes near the covering design."""
    REACH_RELAXED = "reach_relaxed"
    """LP relaxation of the reach model with the rules (a bound, and options to try)."""
    REACH_NEARBY = "reach_nearby"
    """Small reach model: options its LP or the best design uses, and their neighbours."""
    REACH_MODEL = "reach_model"
    """A round of the reach model with the rules (a relaxation: bound and design)."""
    POLISH = "polish"
    """MILP restricted to the options of a reach model's design nearby."""
    PRICED = "priced"
    """Dynamic programme with the rules at pressure prices (designs, no bound)."""
    PRICED_NEARBY = "priced_nearby"
    """MILP restricted to the options of the priced designs nearby."""
    NEIGHBOURHOOD = "neighbourhood"
    """Large-neighbourhood search: MILP around the best design."""
    LP_ANYWHERE = "lp_anywhere"
    """MILP restricted to the options the LP used anywhere and their neighbours."""
    FULL_MODEL = "full_model"
    """The full model (with the rules if any): bound and design."""
    ANY_ORDER = "any_order"
    """Reach model with the pieces of a section in any order (designs, no bound)."""
    TANK_LP = "tank_lp"
    """LP relaxation of the model with break-pressure tanks (rules relaxed): a bound."""
    NO_NEW_TANKS = "no_new_tanks"
    """The best design without new tanks (the plan without tanks): a first design."""
    TANK_REACHES = "tank_reaches"
    """Tanks placed by rule, each reach by the plan without tanks: a first design."""
    TANK_MODEL_REACHES = "tank_model_reaches"
    """The tanks of the rules-relaxed model, each reach by the plan without tanks."""
    TANK_RULES_RELAXED = "tank_rules_relaxed"
    """MILP with break-pressure tanks, rules relaxed: a bound and its tanks."""
    TANK_FIXED_NEARBY = "tank_fixed_nearby"
    """MILP with the rules, those tanks fixed, options near that design: a design."""
    TANK_MODEL = "tank_model"
    """The full model with the tanks chosen with the pipes: bound and design."""
    TANK_PATHS = "tank_paths"
    """Shortest path over bounds on every reach between tanks: a bound, and its tanks
    designed reach by reach."""
    SCHEME_TANK_SETS = "scheme_tank_sets"
    """A branched scheme designed with a set of new tanks fixed (a design, and a bound
    for that set)."""
    SCHEME_TANK_LINES = "scheme_tank_lines"
    """A line of a scheme alone as a route with its own new tanks: a bound on its cost."""
    PUMP_TWO_PIECES = "pump_two_pieces"
    """Pumped main, at most one change: every pair and place of change bounded in closed
    form (a relaxation: bound), the cheapest node changes (designs)."""
    PUMP_PIECES = "pump_pieces"
    """Pumped main, two changes or more: a dynamic programme over pieces from the outlet
    (a relaxation: bound), its cheapest chains (designs)."""

    @property
    def label(self) -> str:
        """The text shown for a step of this kind (before any round or radius)."""
        return _LABELS[self]


_LABELS = {
    StageKind.DOMINANCE: "options dominated wherever they are admissible",
    StageKind.LP_RELAXATION: "LP relaxation (rules relaxed)",
    StageKind.LP_NEARBY: "MILP, options the LP used nearby",
    StageKind.REPAIRED_NEARBY: "MILP, options of the rules-repaired design nearby",
    StageKind.COVERING_NEARBY: "MILP, sizes near the covering design",
    StageKind.REACH_RELAXED: "LP, reach model with the rules (binaries relaxed)",
    StageKind.REACH_NEARBY: "MILP, reach model, options its LP or the best design uses",
    StageKind.REACH_MODEL: "MILP, reach model with the rules",
    StageKind.POLISH: "MILP, options of the reach model's design nearby",
    StageKind.PRICED: "dynamic programme with the rules at pressure prices",
    StageKind.PRICED_NEARBY: "MILP, options of the priced designs nearby",
    StageKind.NEIGHBOURHOOD: "MILP, neighbourhood of the best design",
    StageKind.LP_ANYWHERE: "MILP, options the LP used anywhere and their neighbours",
    StageKind.FULL_MODEL: "MILP, full model",
    StageKind.ANY_ORDER: "MILP, pieces of a section in any order",
    StageKind.TANK_LP: "LP relaxation with break-pressure tanks (rules relaxed)",
    StageKind.NO_NEW_TANKS: "best design without new tanks",
    StageKind.TANK_REACHES: "tanks placed by rule, each reach designed on its own",
    StageKind.TANK_MODEL_REACHES: "tanks of the rules-relaxed MILP, each reach on its own",
    StageKind.TANK_RULES_RELAXED: "MILP with break-pressure tanks, rules relaxed",
    StageKind.TANK_FIXED_NEARBY: "MILP with the rules, those tanks fixed, options nearby",
    StageKind.TANK_MODEL: "MILP, full model with break-pressure tanks",
    StageKind.TANK_PATHS: "tanks by shortest path over bounds on every reach",
    StageKind.SCHEME_TANK_SETS: "scheme designed with these new tanks fixed",
    StageKind.SCHEME_TANK_LINES: "line alone as a route with new tanks, a bound",
    StageKind.PUMP_TWO_PIECES: "every design of at most two pieces, bounded in closed form",
    StageKind.PUMP_PIECES: "every design of the rules, by a dynamic programme over pieces "
                           "from the outlet",
}
