"""The optimiser on a branched scheme (contract section 7): one model for the whole tree.

Each line of the scheme (the trunk or a branch, :mod:`optimiser.model.lines`) is seen as
a route of version 1 (:mod:`optimiser.milp.tree.line_study`), gets the problem data,
columns, pressure rows and rule rows of a single route, and the lines are joined by
their energy at the junctions (:mod:`optimiser.milp.tree.model`). The run is
:mod:`optimiser.milp.tree.optimise`. Kept free of imports here so the modules of
:mod:`optimiser.milp` may import its leaves without a circle.
"""
