"""One step of the plan the driver runs: what to run, on which options, with how much
of the time left."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from optimiser.milp.search.kinds import StageKind


@dataclass(frozen=True)
class Step:
    """A stage to run: its kind, the options its model keeps (``mask``, None: all),
    the share of the time left it may use, and a suffix to its label."""

    kind: StageKind
    mask: np.ndarray | None = None
    share: float = 0.0
    suffix: str = ""

    @property
    def name(self) -> str:
        """The text shown for this step."""
        return self.kind.label + self.suffix
