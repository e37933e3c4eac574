"""Studies of many designs: trade-off curves, re-optimised sensitivity, robust designs.

This is the orchestration layer above the optimiser: it builds variants of a study
(:mod:`variants`), runs the optimiser over them serially, on local processes or on a
Dask cluster with identical results (:mod:`runner`), and tabulates the answers.
"""
