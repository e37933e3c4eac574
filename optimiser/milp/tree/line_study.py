"""A line of a scheme seen as a single route, for the optimiser's per-line data.

The optimiser's builders of a single route read the route, its fittings, offtakes,
minimum pressure, per-km allowance, start loss and delivery point from a
:class:`~optimiser.model.Study`. :func:`line_study` gives them the line's own (the trunk
or a branch, :class:`~optimiser.model.lines.Line`): the study with that line as its
route, its junction K as the entrance K and its delivery point as the outlet. Flows are
NOT taken from it: a line's flows include the branches below it, so
:func:`optimiser.milp.data.prepare` computes them on the scheme
(:func:`optimiser.analysis.flows.line_flows_m3_s`) and only the rest from this view.
"""

from __future__ import annotations

import dataclasses

from optimiser.analysis.surge import length_above_m
from optimiser.model import TRUNK, Design, Piece, Study
from optimiser.model.lines import Line, study_lines
from optimiser.model.study import Outlet, Source


def line_study(study: Study, line: Line) -> Study:
    """``study`` with ``line`` as its one route (no branches)."""
    source = Source(level_m=study.source.level_m,
                    top_water_level_m=study.source.top_water_level_m,
                    entrance_k=line.start_k)
    return dataclasses.replace(
        study, source=source, outlet=Outlet(line.required_head_m, line.exit_k),
        route=line.route, fittings=line.fittings, offtakes=line.offtakes,
        min_pressure_m=line.min_pressure_m, local_k_per_km=line.local_k_per_km,
        branches=(), tanks=tuple(t for t in study.tanks if t.branch == line.name),
        # The slow-closure surge of a branch's pipes takes the whole path from the source,
        # and what the study carries past the line's end (a part cut at a tank).
        upstream_pipe_length_m=0.0 if line.is_trunk else length_above_m(study, line),
        pipe_length_beyond_m=_beyond(study, line))


def _beyond(study: Study, line: Line) -> tuple[tuple[str, float], ...]:
    """The line's length carried past its end, as the route view's own (its trunk)."""
    beyond = dict(study.pipe_length_beyond_m).get(line.name, 0.0)
    return ((TRUNK, beyond),) if beyond > 0 else ()


def line_studies(study: Study) -> list[tuple[Line, Study]]:
    """Every line of ``study`` with its single-route view, parents before children."""
    return [(line, line_study(study, line)) for line in study_lines(study)]


def line_design(design: Design, name: str) -> Design:
    """The pieces of line ``name`` as a design of its single-route view (branch label
    kept, so they can be put back)."""
    return Design(tuple(p for p in design.pieces if p.branch == name))


def on_line(design: Design, name: str) -> Design:
    """``design`` (of a single-route view) with every piece labelled as line ``name``."""
    return Design(tuple(Piece(p.from_m, p.to_m, p.option, name) for p in design.pieces))
