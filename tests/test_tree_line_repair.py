"""The tree's repair of a design to the rules, line by line (``milp/tree/line_repair``).

Check values: the rules as the contract states them (section 6: at most ``max_changes``
changes of option along a line, every piece at least ``min_piece_length_m`` long;
section 7: the rules hold per branch), counted here independently of the optimiser on
the merged pieces; and the independent check (``optimiser.analysis.check_design``) for
the head: a repair only ever gives a piece a larger bore or an option at least as good
hydraulically, so a design that passed still passes. Schemes are invented
(``random_trees.py``).
"""

from __future__ import annotations

import itertools

import numpy as np
from random_trees import random_tree

from optimiser.analysis import check_design
from optimiser.milp.tree.line_repair import repaired_lines
from optimiser.milp.tree.problem import prepare_tree
from optimiser.model import Design, Piece

RULES = "[rules]\nmax_changes = 1\nmin_piece_length_m = 60.0"


def _pieces_by_line(design: Design) -> dict[str, list[Piece]]:
    """Merged pieces of every line, written here (adjacent pieces of one option join)."""
    out: dict[str, list[Piece]] = {}
    for piece in sorted(design.pieces, key=lambda p: (p.branch, p.from_m)):
        own = out.setdefault(piece.branch, [])
        if own and own[-1].option == piece.option and abs(own[-1].to_m - piece.from_m) < 1e-9:
            own[-1] = Piece(own[-1].from_m, piece.to_m, piece.option, piece.branch)
        else:
            own.append(piece)
    return out


def _busy_design(problem) -> Design:
    """Every line in its largest admissible bore, but for a short piece of the next
    size down at each third of the line: more changes and shorter pieces than allowed."""
    pieces = []
    catalogue = problem.study.catalogue
    for line, data in zip(problem.lines, problem.datas, strict=True):
        ok = data.admissible.all(axis=0)
        order = np.argsort(-catalogue.internal_diameter_mm)
        big, small = [int(j) for j in order if ok[j]][:2]
        end = float(data.node_chainage_m[-1])
        cuts = [0.0, end / 3, end / 3 + 10.0, 2 * end / 3, 2 * end / 3 + 10.0, end]
        for index, (start, stop) in enumerate(itertools.pairwise(cuts)):
            option = catalogue.options[small if index % 2 else big]
            pieces.append(Piece(start, stop, option, line.name))
    return Design(tuple(pieces))


def test_repaired_lines_obey_the_rules_and_keep_the_head(tmp_path) -> None:
    for seed in range(3):
        study = random_tree(tmp_path / f"t{seed}", seed, lines=4, sections=(4, 8),
                            rules=RULES, exact=False, spacing_m=(80.0, 200.0))
        problem = prepare_tree(study)
        busy = _busy_design(problem)
        assert any(len(p) > 2 for p in _pieces_by_line(busy).values())
        before = check_design(study, busy, capacity=False)
        repaired = repaired_lines(problem, busy)
        for name, pieces in _pieces_by_line(repaired).items():
            assert len(pieces) - 1 <= 1, name  # contract section 6: max_changes
            assert all(p.to_m - p.from_m >= 60.0 - 1e-6 for p in pieces), name
        assert before.ok  # the largest bores meet every limit on these trees
        # larger bores only: the head the design met stays met
        assert check_design(study, repaired, capacity=False).ok
