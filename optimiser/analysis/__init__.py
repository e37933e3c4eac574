"""Analysis of a given design: the hydraulics of contract section 5 applied to a study."""

from optimiser.analysis.check import CheckResult, ScenarioResult, Violation, check_design

__all__ = ["CheckResult", "ScenarioResult", "Violation", "check_design"]
