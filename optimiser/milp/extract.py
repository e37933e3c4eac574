"""From solved fractions to a design, and the rules of a design (merged) checked directly."""

from __future__ import annotations

import itertools

import numpy as np

from optimiser.milp.data import ProblemData
from optimiser.milp.tree.line_study import line_design, line_studies
from optimiser.model import Design, Piece, Study

SLIVER_M = 1e-5
"""Pieces shorter than this [m of chainage] inside a section are solver noise: their
length goes to the longest piece of the section (head change < 1e-6 m, inside the
model's safety margin)."""


def design_from_fractions(data: ProblemData, fractions: np.ndarray) -> Design:
    """Pieces in section order (descending internal diameter) inside every section,
    boundaries at start + cumulative fraction x chainage length; merged.

    A section with one option only (most of them) is that option's whole; runs of such
    sections in one option become one piece here already, as merging would make them."""
    catalogue = data.study.catalogue
    chainage = data.node_chainage_m
    positive = data.admissible & (fractions > 0.0)
    count = positive.sum(axis=1)
    if not count.all():
        raise ValueError(f"section {int(np.argmin(count))}: the solution lays no pipe")
    # Option of each one-option section; -1 where a section is split between options.
    whole = np.where(count == 1, np.argmax(positive, axis=1), -1)
    starts = np.flatnonzero(np.concatenate([[True], (whole[1:] != whole[:-1])
                                            | (whole[1:] < 0)]))
    ends = np.append(starts[1:], data.n_sections)
    pieces: list[Piece] = []
    for first, end in zip(starts.tolist(), ends.tolist(), strict=True):
        option = int(whole[first])
        if option < 0:
            pieces.extend(_split_section(data, first, fractions[first]))
        else:
            pieces.append(Piece(float(chainage[first]), float(chainage[end]),
                                catalogue[option]))
    return Design(tuple(pieces)).merged()


def _split_section(data: ProblemData, s: int, fractions: np.ndarray) -> list[Piece]:
    """Pieces of section s shared between options (``fractions``: (m,) of its chainage),
    in section order; slivers go to the longest piece."""
    catalogue = data.study.catalogue
    chainage = data.node_chainage_m
    order = data.section_order(s)
    share = np.clip(fractions[order], 0.0, None)
    share = share / share.sum()
    width = chainage[s + 1] - chainage[s]
    tiny = share * width < SLIVER_M
    if tiny.all():
        tiny[int(np.argmax(share))] = False
    keep = int(np.argmax(np.where(tiny, -1.0, share)))
    share[keep] += share[tiny].sum()
    share[tiny] = 0.0
    start = float(chainage[s])
    used = [(j, f) for j, f in zip(order, share, strict=True) if f > 0]
    pieces = []
    for index, (j, f) in enumerate(used):
        stop = float(chainage[s + 1]) if index == len(used) - 1 else start + f * width
        pieces.append(Piece(start, stop, catalogue[j]))
        start = stop
    return pieces


def design_from_choice(data: ProblemData, choice: np.ndarray) -> Design:
    """One option per whole section (``choice[s]``), merged."""
    catalogue = data.study.catalogue
    chainage = data.node_chainage_m
    pieces = [Piece(float(chainage[s]), float(chainage[s + 1]), catalogue[int(j)])
              for s, j in enumerate(choice)]
    return Design(tuple(pieces)).merged()


def section_use(data: ProblemData, design: Design) -> dict[tuple[str, int, int], float]:
    """Values of the model's ``x`` and ``y`` for a design laid in section order (for a
    warm start): fraction of each section's chainage per option, and use indicators."""
    values: dict[tuple[str, int, int], float] = {}
    catalogue = data.study.catalogue
    chainage = data.node_chainage_m
    for piece in design.pieces:
        j = catalogue.index_of(piece.option)
        first = max(int(np.searchsorted(chainage, piece.from_m, side="right")) - 1, 0)
        last = min(int(np.searchsorted(chainage, piece.to_m, side="left")) - 1,
                   data.n_sections - 1)
        for s in range(first, last + 1):
            overlap = min(piece.to_m, chainage[s + 1]) - max(piece.from_m, chainage[s])
            if overlap <= 0:
                continue
            key = ("x", s, j)
            values[key] = values.get(key, 0.0) + overlap / (chainage[s + 1] - chainage[s])
            values["y", s, j] = 1.0
    return values


def rule_problems(study: Study, design: Design) -> list[str]:
    """Breaches of the [rules] on the merged design (the check does not look at rules);
    on a scheme, on each line's pieces (contract section 7: rules per branch)."""
    if study.is_scheme:
        return [f"branch {line.name!r}: {problem}" for line, own in line_studies(study)
                for problem in rule_problems(own, line_design(design, line.name))]
    rules = study.rules
    merged = design.merged()
    problems: list[str] = []
    changes = len(merged.pieces) - 1
    if rules.max_changes is not None and changes > rules.max_changes:
        problems.append(f"{changes} option changes, more than max_changes = "
                        f"{rules.max_changes}")
    total = study.route.total_chainage_m
    shortest = min(rules.min_piece_length_m, total)
    for piece in merged.pieces:
        if piece.to_m - piece.from_m < shortest - 1e-6:
            problems.append(f"piece {piece.from_m:.2f}-{piece.to_m:.2f} m is shorter than "
                            f"min_piece_length_m = {rules.min_piece_length_m:g}")
    if rules.sizes_non_increasing:
        for a, b in itertools.pairwise(merged.pieces):
            if b.option.internal_diameter_mm > a.option.internal_diameter_mm + 1e-9:
                problems.append(f"internal diameter grows at {b.from_m:.2f} m "
                                f"({a.option.internal_diameter_mm:g} to "
                                f"{b.option.internal_diameter_mm:g} mm)")
    return problems
