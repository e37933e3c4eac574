"""A design: contiguous pieces of catalogue pipe along the route."""

from __future__ import annotations

import itertools
from dataclasses import dataclass

import numpy as np

from optimiser.model.catalogue import PipeOption


@dataclass(frozen=True)
class Piece:
    """A run of one option from ``from_m`` to ``to_m`` (chainage)."""

    from_m: float
    to_m: float
    option: PipeOption


@dataclass(frozen=True)
class Design:
    pieces: tuple[Piece, ...]

    @property
    def boundaries_m(self) -> np.ndarray:
        """Chainages of piece ends: from_m of every piece, then to_m of the last."""
        return np.array([p.from_m for p in self.pieces] + [self.pieces[-1].to_m])

    def merged(self) -> Design:
        """Adjacent pieces of the same option joined into one."""
        merged: list[Piece] = []
        for piece in self.pieces:
            if merged and merged[-1].option == piece.option:
                merged[-1] = Piece(merged[-1].from_m, piece.to_m, piece.option)
            else:
                merged.append(piece)
        return Design(tuple(merged))

    @property
    def n_changes(self) -> int:
        """Boundaries where the option changes."""
        options = [p.option for p in self.pieces]
        return sum(1 for a, b in itertools.pairwise(options) if a != b)
