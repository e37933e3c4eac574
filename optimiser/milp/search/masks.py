"""Options a restricted model keeps: (n, m) masks around the LP's or a design's choice.

A restricted model's designs are designs of the full model, so any mask gives valid
incumbents; the masks only decide how much of the full model a stage searches.
"""

from __future__ import annotations

import numpy as np

from optimiser.milp.data import ProblemData
from optimiser.milp.repair import design_mask
from optimiser.model import Design


def window_mask(data: ProblemData, used: np.ndarray, width_m: float) -> np.ndarray:
    """Options used by the LP in any section overlapping [start - w, end + w]."""
    chainage = data.node_chainage_m
    lo = np.searchsorted(chainage, chainage[:-1] - width_m, side="right") - 1
    hi = np.searchsorted(chainage, chainage[1:] + width_m, side="left")
    lo = np.clip(lo, 0, data.n_sections)
    hi = np.clip(hi, 0, data.n_sections)
    cumulative = np.vstack([np.zeros((1, data.n_options), dtype=int),
                            np.cumsum(used, axis=0)])
    return (cumulative[hi] - cumulative[lo]) > 0


def widened(data: ProblemData, base: np.ndarray, radius: int) -> np.ndarray:
    """``base`` (n, m) with, in each section, the admissible options within ``radius``
    places of a chosen one in the section's size order."""
    mask = base & data.admissible
    if radius <= 0:
        return mask
    out = mask.copy()
    for s in range(data.n_sections):
        order = data.order[data.admissible[s, data.order]]
        chosen = mask[s, order]
        grown = chosen.copy()
        for shift in range(1, radius + 1):
            grown[shift:] |= chosen[:-shift]
            grown[:-shift] |= chosen[shift:]
        out[s, order] = grown
    return out


def neighbour_mask(data: ProblemData, design: Design, width_m: float, radius: int
                   ) -> np.ndarray:
    """Options the design uses near each section, and those within ``radius`` places of
    them in the section's size order."""
    return widened(data, design_mask(data, design, width_m), radius)


def global_mask(data: ProblemData, used: np.ndarray) -> np.ndarray:
    """Options used anywhere by the LP, with their neighbours in the size order."""
    chosen = used.any(axis=0)
    ranks = data.rank[chosen]
    wanted = set(ranks.tolist()) | set((ranks - 1).tolist()) | set((ranks + 1).tolist())
    mask = np.isin(data.rank, list(wanted))
    return np.broadcast_to(mask, used.shape).copy()
