"""The parts of a scheme cut at its tanks, each designed once per search.

Pricing sets of tanks that differ in one tank (a move) cuts the scheme into mostly the
same parts (:mod:`optimiser.milp.cut_at_tanks`): the part above a tank and the part
below it are studies of their own, fully given by their fields. :class:`PartMemo` is
the ``plain`` the cut calls for each part: a part met before (the same fields, compared
through :func:`fingerprint`) gets the outcome of its earlier run, whose design is a
design of that part and whose bound bounds it whatever the time it had.
"""

from __future__ import annotations

import dataclasses
import hashlib
import time
from collections.abc import Callable
from enum import Enum
from pathlib import Path
from typing import Any

import numpy as np

from optimiser.milp.cut_at_tanks import optimise_scheme_with_tanks
from optimiser.milp.outcome import DesignOutcome, SolverError
from optimiser.milp.search.state import Clock, Settings
from optimiser.model import Study

LEAST_RUN_S = 0.2
"""A part's run is not started with less time than this left [s]."""


def _feed(digest: Any, value: Any) -> None:
    """Every field of ``value`` into ``digest``, recursively (arrays by their bytes)."""
    if isinstance(value, np.ndarray):
        digest.update(f"a{value.dtype}{value.shape}".encode())
        digest.update(np.ascontiguousarray(value).tobytes())
    elif dataclasses.is_dataclass(value) and not isinstance(value, type):
        digest.update(type(value).__name__.encode())
        for item in dataclasses.fields(value):
            digest.update(item.name.encode())
            _feed(digest, getattr(value, item.name))
    elif isinstance(value, (tuple, list)):
        digest.update(f"t{len(value)}".encode())
        for item in value:
            _feed(digest, item)
    elif isinstance(value, dict):
        digest.update(f"d{len(value)}".encode())
        for key in sorted(value, key=repr):
            _feed(digest, key)
            _feed(digest, value[key])
    elif isinstance(value, (str, int, float, bool, Enum, Path)) or value is None:
        digest.update(f"{type(value).__name__}:{value!r};".encode())
    else:
        raise TypeError(f"cannot fingerprint a {type(value).__name__}")


def fingerprint(study: Study) -> str:
    """A digest of every field of ``study`` (equal studies, equal digests)."""
    digest = hashlib.sha256()
    _feed(digest, study)
    return digest.hexdigest()


def within(design: Callable[..., DesignOutcome], clock: Clock | None
           ) -> Callable[..., DesignOutcome]:
    """``design`` (a ``plain``) with every run's time limit cut to what ``clock`` has
    left; with nothing left it raises :class:`SolverError` instead of starting a run
    (the callers take that as a run that found no design in its time)."""
    if clock is None:
        return design

    def bounded(part: Study, *, solver_name: str, mip_gap: float,
                time_limit_s: float) -> DesignOutcome:
        limit = min(time_limit_s, clock.limit())
        if limit < LEAST_RUN_S:
            raise SolverError("no time left to design this part")
        return design(part, solver_name=solver_name, mip_gap=mip_gap, time_limit_s=limit)

    return bounded


class PartMemo:
    """``plain`` for the cut at tanks: each part designed once (module docstring);
    ``design`` is :func:`optimiser.milp.optimise_design`; with ``clock``, no part's run
    goes past its deadline (:func:`within`)."""

    def __init__(self, design: Callable[..., DesignOutcome], clock: Clock | None = None
                 ) -> None:
        self.design = within(design, clock)
        self.clock = clock
        self.outcomes: dict[str, DesignOutcome] = {}

    def __call__(self, part: Study, *, solver_name: str, mip_gap: float,
                 time_limit_s: float) -> DesignOutcome:
        key = fingerprint(part)
        if key not in self.outcomes:
            if part.is_scheme and part.tanks and part.pump is None:
                if self.clock is not None:
                    time_limit_s = min(time_limit_s, self.clock.limit())
                settings = Settings(solver_name, time_limit_s, mip_gap)
                outcome = optimise_scheme_with_tanks(part, settings, time.perf_counter(), self)
            else:
                outcome = self.design(part, solver_name=solver_name, mip_gap=mip_gap,
                                      time_limit_s=time_limit_s)
            self.outcomes[key] = outcome
        return self.outcomes[key]
