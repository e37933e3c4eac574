"""The public entry points of ``from optimiser import check_design, optimise_design``.

A study made in code is checked field by field as it is built (the model's
``__post_init__``, :mod:`optimiser.model.validation`). What only the whole study can
tell, a branch or a tank off its line or a pump choosing new tanks with none to fill
(:func:`optimiser.model.study.whole_study_problems`), is checked here, once per call:
the optimiser itself builds parts of a study in steps that pass through such states, so
the check cannot sit in the dataclass. Internal code calls
:func:`optimiser.analysis.check_design` and :func:`optimiser.milp.optimise_design`
directly.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from optimiser.model.study import whole_study_problems
from optimiser.model.validation import refuse

if TYPE_CHECKING:
    from optimiser.analysis.check import CheckResult
    from optimiser.milp.outcome import DesignOutcome
    from optimiser.model import Design, Study


def check_design(study: Study, design: Design, **options: Any) -> CheckResult:
    """:func:`optimiser.analysis.check_design`, after refusing what the whole study
    cannot be (ValueError naming each problem)."""
    from optimiser.analysis import check_design as check

    refuse(f"Study {study.title!r}", whole_study_problems(study))
    return check(study, design, **options)


def optimise_design(study: Study, **options: Any) -> DesignOutcome:
    """:func:`optimiser.milp.optimise_design`, after the same refusal as
    :func:`check_design`."""
    from optimiser.milp import optimise_design as optimise

    refuse(f"Study {study.title!r}", whole_study_problems(study))
    return optimise(study, **options)
