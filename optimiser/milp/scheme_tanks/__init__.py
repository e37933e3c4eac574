"""New break-pressure tanks chosen by ``design`` on a branched scheme (contract section 8):
sites, the relaxation that bounds every choice, the sets priced with their tanks fixed,
and the plan (:mod:`~.search`)."""

from optimiser.milp.scheme_tanks.search import optimise_scheme_new_tanks

__all__ = ["optimise_scheme_new_tanks"]
