"""The search for the cheapest design, as a pipeline of stages.

:func:`optimiser.milp.optimise_design` runs it top to bottom; each stage is one module
with one entry point that takes the :class:`~optimiser.milp.search.state.SearchState`
and says what it gives:

- :mod:`.dominance`: presolve, dominated options set aside;
- :mod:`.lp_relaxation`: the LP relaxation with row generation (the LP bound);
- :mod:`.first_designs`: the LP's design and the cheapest uniform design;
- :mod:`.repair_starts`: the rules repair and the covering design (rules on);
- :mod:`.restricted`: a model of the fine sections restricted to some options;
- :mod:`.reach_model` (with :mod:`.reach_heuristics`): the reach model with the rules;
- :mod:`.polish`: a relaxation's design made a design of the full model;
- :mod:`.priced_stage`: the priced dynamic programme;
- :mod:`.neighbourhood`: the large-neighbourhood search around the best design;
- :mod:`.full_model`: the full model;
- :mod:`.plan`: the plan of stages and the driver that runs it.

Stages are told apart by :class:`~optimiser.milp.search.kinds.StageKind`, never by the
text shown to the user. Nothing is imported here, so that importing one stage does not
import them all.
"""
