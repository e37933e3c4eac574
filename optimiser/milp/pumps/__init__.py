"""The stages of the pumped-main search (contract section 9); the plan that runs them
is :mod:`optimiser.milp.pump_search`."""
