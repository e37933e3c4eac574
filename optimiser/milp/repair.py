"""Rules repair: turn the LP's design into one whose piece structure obeys the rules.

The LP relaxation (rules relaxed) usually has more changes and shorter pieces than the
rules allow. This greedy step removes pieces one at a time until the merged design has
at most ``max_changes`` changes and every piece is at least ``min_piece_length_m`` long:
each removal gives the piece the option of a neighbouring piece, preferring the larger
internal diameter (less head loss, so the pressures the LP met stay met) and, among the
removable pieces, the one whose removal adds the least cost. The result is not yet
optimised; it marks where the pieces go, and the reduced MILP that follows (options
used near each section by the repaired design) moves the boundaries to their best
place and returns a verified design. It is a heuristic: it only proposes incumbents.
"""

from __future__ import annotations

import numpy as np

from optimiser.milp.data import ProblemData
from optimiser.milp.priced import rule_abiding_choice
from optimiser.model import Design, Piece, PipeOption


def _piece_cost(data: ProblemData, start: float, stop: float, option: PipeOption) -> float:
    chainage = data.node_chainage_m
    j = data.study.catalogue.index_of(option)
    first = max(int(np.searchsorted(chainage, start, side="right")) - 1, 0)
    last = min(int(np.searchsorted(chainage, stop, side="left")) - 1, data.n_sections - 1)
    total = 0.0
    for s in range(first, last + 1):
        overlap = min(stop, chainage[s + 1]) - max(start, chainage[s])
        if overlap > 0:
            total += data.section_cost[s, j] * overlap / (chainage[s + 1] - chainage[s])
    return total


def _admissible(data: ProblemData, start: float, stop: float, option: PipeOption) -> bool:
    chainage = data.node_chainage_m
    j = data.study.catalogue.index_of(option)
    first = max(int(np.searchsorted(chainage, start, side="right")) - 1, 0)
    last = min(int(np.searchsorted(chainage, stop, side="left")) - 1, data.n_sections - 1)
    return bool(data.admissible[first:last + 1, j].all())


def repair(data: ProblemData, design: Design, max_steps: int = 10_000) -> Design | None:
    """A design with the rules' piece structure near ``design``, or None if the greedy
    removal gets stuck (no removable piece keeps every option admissible)."""
    rules = data.study.rules
    total = data.node_chainage_m[-1]
    shortest = min(rules.min_piece_length_m, total)
    pieces = list(design.merged().pieces)

    def violations(items: list[Piece]) -> bool:
        if rules.max_changes is not None and len(items) - 1 > rules.max_changes:
            return True
        return any(p.to_m - p.from_m < shortest - 1e-6 for p in items)

    for _ in range(max_steps):
        if not violations(pieces):
            return Design(tuple(pieces))
        too_many = rules.max_changes is not None and len(pieces) - 1 > rules.max_changes
        best: tuple[int, float, int, PipeOption] | None = None  # (priority, cost, ...)
        for index, piece in enumerate(pieces):
            short = piece.to_m - piece.from_m < shortest - 1e-6
            if not short and not too_many:
                continue
            neighbours = [pieces[i].option for i in (index - 1, index + 1)
                          if 0 <= i < len(pieces)]
            # a larger pipe keeps the head the LP met; a smaller one only as a last resort
            neighbours.sort(key=lambda o: -o.internal_diameter_mm)
            for option in neighbours:
                if not _admissible(data, piece.from_m, piece.to_m, option):
                    continue
                delta = (_piece_cost(data, piece.from_m, piece.to_m, option)
                         - _piece_cost(data, piece.from_m, piece.to_m, piece.option))
                smaller = option.internal_diameter_mm < piece.option.internal_diameter_mm
                candidate = (2 * (0 if short else 1) + int(smaller), delta, index, option)
                if best is None or candidate[:2] < best[:2]:
                    best = candidate
                break
        if best is None:
            return None
        _, _, index, option = best
        piece = pieces[index]
        pieces[index] = Piece(piece.from_m, piece.to_m, option)
        pieces = list(Design(tuple(pieces)).merged().pieces)
    return None


def design_mask(data: ProblemData, design: Design, width_m: float) -> np.ndarray:
    """(n, m) options a design uses in any section overlapping [start - w, end + w]."""
    chainage = data.node_chainage_m
    used = np.zeros((data.n_sections, data.n_options), dtype=bool)
    catalogue = data.study.catalogue
    for piece in design.pieces:
        j = catalogue.index_of(piece.option)
        first = max(int(np.searchsorted(chainage, piece.from_m - width_m, side="right")) - 1,
                    0)
        last = min(int(np.searchsorted(chainage, piece.to_m + width_m, side="left")) - 1,
                   data.n_sections - 1)
        used[first:last + 1, j] = True
    return used


def covering_choice(data: ProblemData, fractions: np.ndarray) -> np.ndarray | None:
    """One option per whole section, obeying the rules, each at least as good
    hydraulically as the LP's mix in that section; the cheapest such (None if the rules
    leave none).

    An option qualifies in section ``s`` if it is admissible there and, in every
    scenario, its head loss over the whole section is at most that of the LP's mix and
    its velocity head at most that of the LP's smallest pipe in the section. A design of
    qualifying options then has, at every survey node, at least the LP design's energy
    and at most its velocity head: it meets every pressure the LP design met. The
    cheapest rule-abiding sequence of them is found exactly by
    :func:`optimiser.milp.sequence_dp.cheapest_sequence`. It is a heuristic (the check
    judges the result): it trades cost for a design that obeys the rules by
    construction where the greedy :func:`repair` gets stuck.
    """
    used = fractions > 1e-9
    loss = data.section_loss_m  # (K, n, m)
    lp_loss = np.einsum("ksj,sj->ks", loss, np.clip(fractions, 0.0, None))
    lp_head = np.where(used[None, :, :], data.velocity_head_m, 0.0).max(axis=2)
    tolerance = 1e-9
    good = data.admissible.copy()
    good &= (loss <= lp_loss[:, :, None] + tolerance).all(axis=0)
    good &= (data.velocity_head_m <= lp_head[:, :, None] + tolerance).all(axis=0)
    return rule_abiding_choice(data, np.where(good, data.section_cost, np.inf))
