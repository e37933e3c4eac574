"""Least-cost sizing of gravity water mains.

Public API for notebooks and scripts::

    from optimiser import load_study, load_design, check_design
    study = load_study("studies/demo-gravity-main/study.toml")
    result = check_design(study, load_design("studies/demo-gravity-main/design.csv", study))
    result.ok, result.violations, result.scenarios[0].points

Layers (data flows one way): ``io`` (files) -> ``model`` -> ``hydraulics`` / ``analysis``
/ ``milp`` -> ``reports`` -> ``cli``.
"""

__version__ = "0.1.0"

from optimiser.analysis import CheckResult, check_design
from optimiser.io import InputError, load_design, load_study

__all__ = ["CheckResult", "InputError", "__version__", "check_design", "load_design",
           "load_study", "optimise_design"]


def __getattr__(name: str):
    # optimise_design is imported on first use: it brings in pulp and HiGHS, which the
    # check and the loaders do not need.
    if name == "optimise_design":
        from optimiser.milp import optimise_design

        return optimise_design
    raise AttributeError(f"module 'optimiser' has no attribute {name!r}")
