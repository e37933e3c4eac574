"""Designs read from solved fractions, against a section-by-section transcription.

``design_from_fractions`` handles sections laid in one option as whole runs at once; the
rule it implements is written out here one section at a time (pieces in descending
internal diameter inside a section, boundaries at start + cumulative share x chainage,
slivers under ``SLIVER_M`` given to the longest piece, then merged), and both must give
the same pieces on seeded random fractions: whole sections, splits, slivers, solver
noise below zero and values on options the section does not admit. Consistency of one
rule written twice, common practice, no source; invented study (``builders``).
"""

from __future__ import annotations

import numpy as np
import pytest

import optimiser
from optimiser.milp import prepare
from optimiser.milp.extract import SLIVER_M, design_from_fractions
from optimiser.model import Design, Piece


def reference_design(data, fractions: np.ndarray) -> Design:
    catalogue = data.study.catalogue
    chainage = data.node_chainage_m
    pieces = []
    for s in range(data.n_sections):
        order = [int(j) for j in data.order if data.admissible[s, j]]
        share = np.clip(fractions[s, order], 0.0, None)
        if share.sum() <= 0:
            raise ValueError(f"section {s}: the solution lays no pipe")
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
        for index, (j, f) in enumerate(used):
            stop = float(chainage[s + 1]) if index == len(used) - 1 else start + f * width
            pieces.append(Piece(start, stop, catalogue[j]))
            start = stop
    return Design(tuple(pieces)).merged()


def random_fractions(data, rng: np.random.Generator) -> np.ndarray:
    n, m = data.n_sections, data.n_options
    fractions = rng.normal(0.0, 1e-9, (n, m))  # solver noise either side of zero
    for s in range(n):
        admitted = np.flatnonzero(data.admissible[s])
        kind = rng.integers(4)
        if kind <= 1:  # whole section, often the same option as the last one
            fractions[s, admitted[min(kind, len(admitted) - 1)]] = 1.0
        elif kind == 2:  # split in two or three
            chosen = rng.choice(admitted, size=min(3, len(admitted)), replace=False)
            fractions[s, chosen] = rng.dirichlet(np.ones(len(chosen)))
        else:  # a sliver beside a whole
            fractions[s, admitted[0]] = 1.0
            fractions[s, admitted[-1]] = 1e-12
    return np.where(data.admissible, fractions, 0.5)  # options not admitted: ignored


# Twelve survey points falling to 88 m: the PN10 options (102 m) are not admitted where
# the static head from the top water level (203 m) is larger.
DEEP_PROFILE = [(250.0 * i, 199.0 - 111.0 * np.sin(np.pi * i / 11) ** 2 + 10 * (i == 11),
                 "", "") for i in range(12)]


@pytest.mark.parametrize("seed", range(6))
def test_pieces_match_the_section_by_section_rule(make_study, seed):
    study = optimiser.load_study(make_study(profile=DEEP_PROFILE).study)
    data = prepare(study)
    assert data.n_sections >= 10 and not data.admissible.all()
    fractions = random_fractions(data, np.random.default_rng(seed))
    assert design_from_fractions(data, fractions) == reference_design(data, fractions)


def test_a_section_with_no_pipe_is_named(make_study):
    study = optimiser.load_study(make_study().study)
    data = prepare(study)
    fractions = np.where(data.admissible, 0.0, 1.0)
    fractions[0, np.flatnonzero(data.admissible[0])[0]] = 1.0
    fractions[1, np.flatnonzero(data.admissible[1])[:2]] = 0.5
    with pytest.raises(ValueError, match="section 2: the solution lays no pipe"):
        design_from_fractions(data, fractions)
    with pytest.raises(ValueError, match="section 2: the solution lays no pipe"):
        reference_design(data, fractions)
