"""A dynamic programme over the pieces of a rising main: a lower bound of the life-cycle
cost over every design of the model with the rules, and the design that attains it.

Why it is separable (:mod:`optimiser.milp.pumps.two_pieces` for the same relaxation with
one change): with the pipes fixed, the least station head of scenario k is at least
``need_k + D_k(0)`` (the outlet's required head less the source level, plus the friction
and per-km allowance of the whole route; point losses and the other pressure rows left
out, which only lowers the cost), and the installed power at least that of any one
scenario k_s. So the life-cycle cost is at least

    sum_s value[s, j_s] + change_cost * changes + constant,
    value[s, j] = cost[s, j] + sum_k w_k loss_k[s, j],  w_k = PV of energy per metre
                  (+ station cost per kW x kW per metre for k = k_s).

The class rule under pumping needs the losses *downstream* of each section, ``D(start
of s) <= theta[s, j]`` (:mod:`optimiser.milp.pumps.piece_tables`), relaxed to one
scenario k* (the rule holds for every scenario). Hence the programme runs from the outlet
to the pump, label = (option of the current piece, changes used, D, value), with Pareto
dominance on (D, value) per (option, changes): a label with no more loss and no more
value downstream does at least as well upstream (the rule and the cost rise with D).

The model lets a piece change inside a section (:mod:`optimiser.milp.formulation`); with
every piece longer than any section (checked by the caller) a section holds at most one
change, and a section shared by A (upstream) and B holds both classes at its start and
costs at least ``min(value_A, value_B)`` with loss at least ``min(loss_A, loss_B)``.
The section a new piece A begins in is taken wholly A (the change at its downstream
node) or, where B's class takes the loss at its start even so, at that bound (which
covers every share of A and B in it, the change at its upstream node included), with
lengths counted over whole sections (a piece is no longer than the sections it
touches). Before a label is offered to the next piece, it
is dropped only if another label *robustly* dominates it (whatever the next option, as
computed from the shared section's best and worst cases), so no design of the model is
lost: the least value is a lower bound of the model's optimum. Labels whose value plus
the least value of the sections upstream reaches ``ceiling`` (a design's cost) are
pruned; the bound returned is then the smaller of the two (branch and bound).
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field

import numpy as np

from optimiser.milp.pumps.piece_last import last_changes
from optimiser.milp.pumps.piece_tables import PieceTables

__all__ = ["Labels", "PieceResult", "run_programme"]


@dataclass
class Labels:
    """A set of labels: option, changes used, relative loss and value, identity."""

    option: np.ndarray
    level: np.ndarray
    loss: np.ndarray
    value: np.ndarray
    ident: np.ndarray

    @classmethod
    def empty(cls) -> Labels:
        e = np.zeros(0)
        return cls(e.astype(np.int64), e.astype(np.int64), e, e.copy(), e.astype(np.int64))

    def take(self, keep: np.ndarray) -> Labels:
        return Labels(self.option[keep], self.level[keep], self.loss[keep],
                      self.value[keep], self.ident[keep])

    @staticmethod
    def joined(parts: list[Labels]) -> Labels:
        return Labels(*(np.concatenate([getattr(p, name) for p in parts])
                        for name in ("option", "level", "loss", "value", "ident")))

    def __len__(self) -> int:
        return len(self.loss)


@dataclass
class _Arena:
    """Where each label came from: its parent label, option and the node it began at."""

    parent: list[np.ndarray] = field(default_factory=list)
    option: list[np.ndarray] = field(default_factory=list)
    start: list[np.ndarray] = field(default_factory=list)
    count: int = 0

    def add(self, parent: np.ndarray, option: np.ndarray, start: np.ndarray) -> np.ndarray:
        ident = np.arange(self.count, self.count + len(parent))
        self.count += len(parent)
        self.parent.append(parent.astype(np.int32))  # int32: long runs keep millions
        self.option.append(option.astype(np.int16))
        self.start.append(start.astype(np.int32))
        return ident

    def chain(self, ident: int) -> list[tuple[int, int]]:
        """(option, start node) of the label and its ancestors, upstream first."""
        for name in ("parent", "option", "start"):  # joined once, kept joined
            parts = getattr(self, name)
            # none yet when the clock stopped the programme before its first change
            setattr(self, name, [np.concatenate(parts) if parts else np.zeros(0, np.int32)])
        parent, option, start = self.parent[0], self.option[0], self.start[0]
        chain = []
        while ident >= 0:
            chain.append((int(option[ident]), int(start[ident])))
            ident = int(parent[ident])
        return chain


@dataclass(frozen=True)
class PieceResult:
    """The least value (a bound, already capped at the ceiling; None if the programme
    ran out of time, when it is no bound) and the chains of the cheapest final labels
    (option, start node), upstream first."""

    bound: float | None
    chains: list[list[tuple[int, int]]]
    labels_made: int


def _pareto(labels: Labels, m: int) -> Labels:
    """The labels no other of the same option and level dominates (both no larger),
    sorted by option and level, then loss."""
    if len(labels) == 0:
        return labels
    key = labels.level * m + labels.option
    order = np.lexsort((labels.value, labels.loss, key))
    return _front(labels.take(order), key[order])


def _front(labels: Labels, key: np.ndarray) -> Labels:
    """Of labels sorted by key then loss, those with less value than every label before
    them of their key (each key's Pareto front; a tie may keep both)."""
    spread = float(np.ptp(labels.value)) * 2.0 + 1.0
    shifted = labels.value - key * spread  # later keys lie wholly below earlier ones
    running = np.minimum.accumulate(shifted)
    keep = np.ones(len(labels), dtype=bool)
    keep[1:] = shifted[1:] < running[:-1] - 1e-9 * (1.0 + np.abs(labels.value[1:]))
    return labels.take(keep)


def _merged(old: Labels, new: Labels, m: int) -> Labels:
    """The Pareto fronts of ``old`` (already fronts, sorted as :func:`_pareto` leaves
    them) joined with ``new``: the new ones sorted alone, then merged in order (no sort
    of the whole)."""
    new = _pareto(new, m)
    if not len(old) or not len(new):
        return new if not len(old) else old
    old_key = old.level * m + old.option
    new_key = new.level * m + new.option
    low = min(float(old.loss.min()), float(new.loss.min()))
    span = max(float(old.loss.max()), float(new.loss.max())) - low + 1.0
    at = np.searchsorted(old_key * span + (old.loss - low), new_key * span + (new.loss - low))
    slots = at + np.arange(len(new))
    mine = np.ones(len(old) + len(new), dtype=bool)
    mine[slots] = False
    fields = {}
    for name in ("option", "level", "loss", "value", "ident"):
        column = np.empty(len(mine), dtype=getattr(old, name).dtype)
        column[mine] = getattr(old, name)
        column[slots] = getattr(new, name)
        fields[name] = column
    joined = Labels(**fields)
    return _front(joined, joined.level * m + joined.option)


@dataclass
class _Finals:
    """The cheapest complete designs met so far: each label also stands for its piece
    carried on to the pump without another change (value, parent label, option, start
    node)."""

    keep: int
    best: list[tuple[float, int, int, int]] = field(default_factory=list)

    @property
    def least(self) -> float:
        return self.best[0][0] if self.best else np.inf

    def offer(self, tables: PieceTables, made: Labels, parent: np.ndarray, x: int) -> None:
        """The labels ``made`` at change node x (``parent``: their parents), carried on
        to the pump unchanged."""
        ok = made.loss <= tables.head_room[x, made.option] + 1e-12
        total = np.where(ok, made.value + tables.tail_value[0, made.option], np.inf)
        self.add(total + tables.constant, parent, made.option, x)

    def add(self, total: np.ndarray, parent: np.ndarray, option: np.ndarray, x: int) -> None:
        """Finished designs: their values, parent labels and last options (from node x
        to the pump)."""
        for i in np.argsort(total)[:self.keep].tolist():
            if np.isfinite(total[i]):
                self.best.append((float(total[i]), int(parent[i]), int(option[i]), x))
        self.best = sorted(self.best)[:self.keep]


def run_programme(tables: PieceTables, ceiling: float, keep_chains: int = 3,
                  deadline: float = np.inf) -> PieceResult:
    """The programme (module docstring), from the outlet (node n) to the pump; stops
    at ``deadline`` (``time.perf_counter()``) with the chains met so far and no bound."""
    n, m = tables.loss.shape
    arena = _Arena()
    finals = _Finals(keep_chains)
    pending: dict[int, list[Labels]] = {}
    first = _first_pieces(tables, finals)
    if first is not None:
        pending.setdefault(int(tables.complete_at[n]), []).append((first, n))
    labels = Labels.empty()
    complete = True
    for x in range(n, 0, -1):
        if time.perf_counter() > deadline:  # a node can hold many labels: ask at each
            complete = False
            break
        limit = min(ceiling, finals.least) - tables.constant
        if x < n and len(labels):
            labels = labels.take(labels.loss <= tables.room[x, labels.option] + 1e-12)
        if x in pending:
            labels = _arrived(labels, pending.pop(x), arena, m)
        if len(labels):
            labels = labels.take(_hopeful(tables, labels, x, limit))
        target = int(tables.complete_at[x])
        if target >= 1 and len(labels):
            new = _changes(tables, labels, x, limit, finals)
            if len(new):
                pending.setdefault(target, []).append((new, x))
    chains = [[(option, start), *arena.chain(parent)] for _, parent, option, start
              in finals.best]
    bound = min(finals.least, ceiling) if complete else None
    return PieceResult(bound, chains, arena.count)


def _hopeful(tables: PieceTables, labels: Labels, x: int, limit: float) -> np.ndarray:
    """Labels at node x whose value downstream plus the least value of the sections
    upstream (at their loss) is below ``limit``."""
    loss = labels.loss + tables.tail_loss[x, labels.option] - tables.least_loss[x]
    value = labels.value + tables.tail_value[x, labels.option]
    level = np.searchsorted(tables.rest_levels, loss, side="right") - 1
    left = tables.max_changes - labels.level
    return value + tables.rest[np.maximum(level, 0), left, x] < limit


def _arrived(labels: Labels, fresh: list[tuple[Labels, int]], arena: _Arena,
             m: int) -> Labels:
    """``labels`` joined by the new pieces that complete here (each with its parent as
    ``ident`` and the node it began at), dominated ones dropped; those kept are
    recorded (only they can be traced back)."""
    batch = Labels.joined([part for part, _ in fresh])
    parents = batch.ident
    starts = np.concatenate([np.full(len(part), start) for part, start in fresh])
    batch.ident = -1 - np.arange(len(batch))
    labels = _merged(labels, batch, m)
    new = labels.ident < 0
    which = -1 - labels.ident[new]
    labels.ident[new] = arena.add(parents[which], labels.option[new], starts[which])
    return labels


def _first_pieces(tables: PieceTables, finals: _Finals) -> Labels | None:
    """The piece at the outlet, one label per option (each laid over the whole route is
    a final); None if no piece can change."""
    n = tables.loss.shape[0]
    options = np.arange(tables.loss.shape[1])
    zero = np.zeros(len(options))
    whole = Labels(options, np.zeros(len(options), dtype=np.int64), zero, zero.copy(),
                   options)
    finals.offer(tables, whole, np.full(len(options), -1), n)
    if tables.complete_at[n] < 1 or tables.max_changes < 1:
        return None
    whole = whole.take(tables.window[n] >= 0.0)
    whole.ident = np.full(len(whole), -1)
    return whole


def _changes(tables: PieceTables, labels: Labels, x: int, limit: float,
             finals: _Finals) -> Labels:
    """New pieces beginning at node x (section x-1 shared with the label's piece, or
    wholly theirs), one per label offered and next option, each also finished (carried
    on to the pump); those that may change again are returned (``ident``: their
    parent), complete at ``complete_at[x]``."""
    offered = labels.take(labels.level < tables.max_changes)
    last = offered.level == tables.max_changes - 1
    if last.any():
        final = offered.take(last)
        finals.add(*last_changes(tables, final.option, final.loss, final.value,
                                 final.ident, x), x)
    offered = offered.take(~last)
    if not len(offered):
        return Labels.empty()
    s = x - 1
    loss = offered.loss + tables.tail_loss[x, offered.option]
    value = offered.value + tables.tail_value[x, offered.option]
    offered, loss, value = _robust_front(tables, offered, loss, value, s)
    if not len(offered):
        return Labels.empty()
    b = offered.option
    share_loss, share_value = _shared_section(tables, offered, s)
    rel_loss = loss[:, None] + share_loss - tables.tail_loss[s][None, :]
    rel_value = value[:, None] + share_value + tables.change_cost \
        - tables.tail_value[s][None, :]
    ok = rel_loss <= tables.window[x][None, :] + 1e-12
    ok &= b[:, None] != np.arange(tables.loss.shape[1])[None, :]
    if tables.non_increasing:
        ok &= tables.diameter[None, :] >= tables.diameter[b][:, None] - 1e-12
    rows, cols = np.nonzero(ok)
    made = Labels(cols, offered.level[rows] + 1, rel_loss[rows, cols], rel_value[rows, cols],
                  rows)
    made = made.take(_hopeful(tables, made, s, limit))
    finals.offer(tables, made, offered.ident[made.ident], x)
    made = made.take(made.level < tables.max_changes)
    made.ident = offered.ident[made.ident]  # the parent, until recorded on arrival
    return made


def _shared_section(tables: PieceTables, offered: Labels, s: int
                    ) -> tuple[np.ndarray, np.ndarray]:
    """(u, m) loss and value of section s for the label's option B below and the new
    option A above: A over all of s, or shared, ``min(A, B)`` of each, where B's class
    can take the loss at the start of s even then (both classes hold there)."""
    b = offered.option
    own_loss, own_value = tables.loss[s, b][:, None], tables.value[s, b][:, None]
    share_loss = np.minimum(tables.loss[s][None, :], own_loss)
    share_value = np.minimum(tables.value[s][None, :], own_value)
    b_holds = offered.loss[:, None] + share_loss - own_loss \
        <= tables.room[s, b][:, None] + 1e-12
    return (np.where(b_holds, share_loss, tables.loss[s][None, :]),
            np.where(b_holds, share_value, tables.value[s][None, :]))


def _robust_front(tables: PieceTables, offered: Labels, loss: np.ndarray,
                  value: np.ndarray, s: int) -> tuple[Labels, np.ndarray, np.ndarray]:
    """The offered labels (absolute loss and value at node s+1) that no other of the same
    level dominates whatever the next option: the other's worst case after the shared
    section s (its own option over all of s, if its class takes that) against this
    one's best (the least loss and value of any option whose class can take the loss
    there); with sizes_non_increasing
    only between labels of one internal diameter. Labels no option can follow are
    dropped."""
    count = np.sum(tables.free_theta[s][None, :] >= loss[:, None] - 1e-12, axis=1)
    alive = count > 0
    offered, loss, value, count = offered.take(alive), loss[alive], value[alive], \
        count[alive]
    best_loss = loss + tables.free_loss[s, count - 1]
    best_value = value + tables.free_value[s, count - 1]
    # a label whose own option cannot cover s may have to leave s to the next one
    covers = offered.loss <= tables.room[s, offered.option] + 1e-12
    worst_loss = np.where(covers, loss + tables.loss[s, offered.option], np.inf)
    worst_value = np.where(covers, value + tables.value[s, offered.option], np.inf)
    keep = np.ones(len(offered), dtype=bool)
    group = offered.level.copy()
    if tables.non_increasing:  # the next options of one must be open to the other
        sizes = np.unique(tables.diameter, return_inverse=True)[1]
        group = group * len(tables.diameter) + sizes[offered.option]
    for key in np.unique(group).tolist():
        mine = np.flatnonzero(group == key)
        order = mine[np.argsort(worst_loss[mine], kind="stable")]
        stair = np.minimum.accumulate(worst_value[order])
        at = np.searchsorted(worst_loss[order], best_loss[mine], side="right") - 1
        beaten = (at >= 0) & (stair[np.maximum(at, 0)]
                              < best_value[mine] - 1e-9 * (1.0 + np.abs(best_value[mine])))
        keep[mine[beaten]] = False
    return offered.take(keep), loss[keep], value[keep]
