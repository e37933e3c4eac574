"""A design: contiguous pieces of catalogue pipe along the route."""

from __future__ import annotations

import itertools
from dataclasses import dataclass

import numpy as np

from optimiser.model.catalogue import PipeOption
from optimiser.model.scheme import TRUNK
from optimiser.model.tanks import BreakPressureTank


@dataclass(frozen=True)
class Piece:
    """A run of one option from ``from_m`` to ``to_m`` (chainage)."""

    from_m: float
    to_m: float
    option: PipeOption
    branch: str = TRUNK


@dataclass(frozen=True)
class Design:
    """Pieces of every branch (the trunk's first, each branch's contiguous from its
    chainage 0), and the new break-pressure tanks that go with them (contract section 8;
    the study's own tanks are not repeated here)."""

    pieces: tuple[Piece, ...]
    tanks: tuple[BreakPressureTank, ...] = ()

    @property
    def branch_names(self) -> tuple[str, ...]:
        """Branches that have pieces, in the order of their first piece."""
        return tuple(dict.fromkeys(p.branch for p in self.pieces))

    def on(self, branch: str) -> Design:
        """The pieces of one branch (and its new tanks) as a design of their own."""
        return Design(tuple(p for p in self.pieces if p.branch == branch),
                      tuple(t for t in self.tanks if t.branch == branch))

    @property
    def boundaries_m(self) -> np.ndarray:
        """Chainages of piece ends: from_m of every piece, then to_m of the last."""
        return np.array([p.from_m for p in self.pieces] + [self.pieces[-1].to_m])

    def merged(self) -> Design:
        """Adjacent pieces of the same option joined into one."""
        merged: list[Piece] = []
        for piece in self.pieces:
            if merged and merged[-1].option == piece.option and \
                    merged[-1].branch == piece.branch:
                merged[-1] = Piece(merged[-1].from_m, piece.to_m, piece.option, piece.branch)
            else:
                merged.append(piece)
        return Design(tuple(merged), self.tanks)

    @property
    def n_changes(self) -> int:
        """Boundaries where the option changes (within a branch; every branch counted)."""
        return sum(1 for a, b in itertools.pairwise(self.pieces)
                   if a.branch == b.branch and a.option != b.option)
