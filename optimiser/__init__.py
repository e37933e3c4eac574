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

__all__ = ["CheckResult", "InputError", "__version__", "check_design", "load_design",
           "load_study", "optimise_design"]

# Imported on first use, so that ``optimiser --help`` and other light commands do not pay
# for pandas, scipy and pint (the check and the loaders), nor for pulp and HiGHS (the
# optimiser).
_LAZY = {
    "CheckResult": "optimiser.analysis",
    "check_design": "optimiser.api",  # the analysis' own, after a whole-study check
    "InputError": "optimiser.io",
    "load_design": "optimiser.io",
    "load_study": "optimiser.io",
    "optimise_design": "optimiser.api",  # the optimiser's own, after the same check
}


def __getattr__(name: str):
    if name in _LAZY:
        import importlib

        return getattr(importlib.import_module(_LAZY[name]), name)
    raise AttributeError(f"module 'optimiser' has no attribute {name!r}")
