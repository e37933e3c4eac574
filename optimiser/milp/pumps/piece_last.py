"""The last change of the programme over pieces (:mod:`optimiser.milp.pumps.piece_programme`),
found without expanding labels: a label with one change left finishes by a change at
some node to an option run on to the pump, and each such case is open to the labels of
an option whose loss is at most a threshold (the class rules are upper limits on the
loss), so one search per pair of options finds the cheapest (Bellman 1957 for the
recursion; the cases are those of the programme's shared section)."""

from __future__ import annotations

import numpy as np

from optimiser.milp.pumps.piece_tables import PieceTables

__all__ = ["last_changes"]


def last_changes(tables: PieceTables, option: np.ndarray, loss: np.ndarray,
                 value: np.ndarray, ident: np.ndarray, x: int
                 ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The last change, at node x, of labels with one change left (their options,
    relative losses and values, identities), each new option run on to the pump: for a
    label's option B and a new option A, the cases open to a label (A over all of
    section x-1, or shared as the programme shares it) are those with loss at most a
    threshold, so the cheapest label of B in each case is found by one search in B's
    labels sorted by loss (the same finals as expanding every label; all options B at
    once, their labels one after another on a common key). Returns the finished values,
    their parent labels and new options."""
    s = x - 1
    m = tables.loss.shape[1]
    absolute = loss + tables.tail_loss[x, option]
    order = np.lexsort((absolute, option))
    value = (value + tables.tail_value[x, option])[order]
    option, loss, ident = option[order], absolute[order], ident[order]
    groups, first = np.unique(option, return_index=True)
    segment = np.repeat(np.arange(len(groups)), np.diff(np.append(first, len(option))))
    spread = float(np.ptp(value)) * 2.0 + 1.0
    shifted = value - segment * spread  # a running minimum restarting at each B
    running = np.minimum.accumulate(shifted)
    where = np.maximum.accumulate(np.where(shifted <= running, np.arange(len(value)), 0))
    low = float(loss.min())
    span = float(loss.max()) - low + 1.0
    threshold, shift, allowed = _last_cases(tables, groups, s, x, m)
    query = np.clip(threshold + 1e-9 - low, -0.5, span - 0.5) \
        + np.arange(len(groups))[:, None] * span
    at = np.searchsorted(segment * span + (loss - low), query, side="right") - 1
    ok = allowed & (at >= first[:, None])
    pick = np.maximum(at, 0)
    least = running + segment * spread  # the least value of B's labels so far
    total = np.where(ok, least[pick] + shift, np.inf)
    return (total.ravel(), ident[where[pick]].ravel(),
            np.tile(np.arange(2 * m) % m, len(groups)))


def _last_cases(tables: PieceTables, groups: np.ndarray, s: int, x: int, m: int
                ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(g, 2m) per option B below and new option A: the largest loss at node x of a
    label of B for which the case is open (A over all of s, then shared), its value
    added (the change, section s, A from s to the pump), and whether it is allowed."""
    loss_a, value_a = tables.loss[s][None, :], tables.value[s][None, :]
    own_loss = tables.loss[s, groups][:, None]
    own_value = tables.value[s, groups][:, None]
    room_a = (tables.head_room[x] + tables.tail_loss[s])[None, :]
    theta_b = (tables.room[s, groups] + tables.tail_loss[s, groups])[:, None]
    share = np.minimum(loss_a, own_loss)
    threshold = np.hstack([np.broadcast_to(room_a - loss_a, share.shape),
                           np.minimum(room_a, theta_b) - share])
    price = tables.change_cost - tables.tail_value[s] + tables.tail_value[0] + tables.constant
    shift = np.hstack([np.broadcast_to(value_a, share.shape),
                       np.minimum(value_a, own_value)]) + np.tile(price, 2)[None, :]
    allowed = np.isfinite(loss_a) & (np.arange(m)[None, :] != groups[:, None])
    if tables.non_increasing:
        allowed &= tables.diameter[None, :] >= tables.diameter[groups][:, None] - 1e-12
    return threshold, shift, np.hstack([allowed, allowed])
