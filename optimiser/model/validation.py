"""What the model refuses when a study is built from Python rather than read by the loader.

The loader (:mod:`optimiser.io.study_file`) reports every problem of a study file as a
located :class:`~optimiser.io.InputError`. A study built or changed in code
(``dataclasses.replace(study, surge=...)``) skips it, and some combinations then give
``nan`` heads, an "infeasible" diagnosis or a traceback deep in the optimiser instead of
a clear refusal. The dataclasses of the model check themselves when they are made (each in
its own module, with these helpers: this module imports no other of the model) and raise
:class:`ValueError` naming the field and what to give instead. Only the gaps
that would give a wrong or meaningless answer are closed here; the loader keeps its
fuller, located checks (ranges, units, files).

The checks return one message per problem (empty when the object is sound); they run
on every ``dataclasses.replace``, so they stay cheap (one pass over the options and
scenarios).
"""

from __future__ import annotations

import math

import numpy as np


def refuse(what: str, problems: list[str]) -> None:
    """Raise ValueError listing ``problems`` of ``what`` (nothing when there are none)."""
    if problems:
        raise ValueError(f"{what}: " + "; ".join(problems))


def is_finite(value: float) -> bool:
    """A real number, not nan nor infinite."""
    return isinstance(value, int | float | np.floating | np.integer) and math.isfinite(value)


def at_least(name: str, value: float | None, low: float, strict: bool = False) -> list[str]:
    """``value`` finite and >= ``low`` (> when ``strict``); None passes."""
    if value is None:
        return []
    if not is_finite(value) or value < low or (strict and value == low):
        sign = ">" if strict else ">="
        return [f"{name} must be a finite number {sign} {low:g}, got {value}"]
    return []


def finite(name: str, value: float) -> list[str]:
    """``value`` a finite number."""
    return [] if is_finite(value) else [f"{name} must be a finite number, got {value}"]
