"""Pressure classes under surge by wave speed in the optimiser's data (contract section 10).

The check judges a piece's class with the surge of the largest velocity anywhere in the
piece, in any scenario: static + a V / g (Joukowsky), or 2 L V / (g T) for a closure
slower than 2 L / a (Michaud; both as given in Wylie, E.B. & Streeter, V.L. (1993),
Fluid Transients in Systems, ch. 1), at most the option's surge limit at every metre of
the piece. The optimiser cannot know in advance how long a piece will be, so it splits
the rule in two, each exact:

- *own velocity* (:func:`class_ok`): option j is admissible in section s only if s's
  static head + the surge of j's own largest velocity in s fits. Any piece that covers
  s has at least that velocity, so this admits every design the check accepts: a
  relaxation, safe for every bound, infeasibility verdict and diagnosis;
- *pairs a piece may not span* (:func:`wave_conflicts`): along one line the flow never
  grows downstream (offtakes and branches only take water out; through a break-pressure
  tank it is unchanged), so a piece's largest velocity is that of its first section f.
  A piece of j from f on may reach section c only if every section t of f..c takes
  static(t) + surge(v_j(f)) within the limit. The first c that fails is a conflict
  (f, c, j): no piece of j may run from f into c. Of the conflicts of j only the
  smallest windows are kept (a piece over a longer window covers a smaller one): inside
  a run of equal velocity the own rule already holds, so f is the last section before a
  drop of j's velocity, and of the windows ending at one c the latest f.

Together the two are the check's class test on the pieces of the model's designs: the
optimiser writes each kept conflict as a row of its models (:mod:`optimiser.milp.wave_rows`).
The route is split at the class limits of every velocity a piece can bring from
upstream (:func:`optimiser.milp.class_limits.limit_levels_m`), so in each part the
class of j at any such velocity holds at every metre or at none, and a conflict judged
at a section's lowest pipe level is exact.
"""

from __future__ import annotations

import numpy as np

from optimiser.analysis.limits import CHECK_TOLERANCE, class_holds
from optimiser.analysis.surge import surge_head_m, wave_speeds_m_s
from optimiser.model import Study, SurgeMethod

NO_CONFLICTS = np.zeros((0, 3), dtype=int)


def surge_limit_m(study: Study) -> np.ndarray:
    """(m,) limit of static + surge head: the working limit with the allowance method
    (contract section 5), else each option's allowable_surge_head_m (section 10)."""
    if study.surge.method is SurgeMethod.ALLOWANCE:
        return study.catalogue.allowable_head_m
    return study.catalogue.surge_limit_head_m


def class_ok(study: Study, static_head_m: np.ndarray, velocity_m_s: np.ndarray,
             length_m: np.ndarray | None = None) -> np.ndarray:
    """(n, m) option j's class takes section s's static head (and its surge).

    Allowance (contract section 5): static + allowance <= allowable_head_m. By wave speed
    (section 10): static <= allowable_head_m and static + surge <= the surge limit, the
    surge at j's own largest velocity in s over the scenarios ``velocity_m_s`` (K, n, m)
    (a relaxation of the check's piece rule: module docstring). ``length_m``: (n,) or
    (n, 1) slow-closure length L per section where break-pressure tanks restart it
    (else the study's).
    """
    catalogue = study.catalogue
    # The check's tolerance: a part of the route split exactly at a class limit has its
    # lowest point on the limit, up to the rounding of the interpolated level.
    tol = CHECK_TOLERANCE
    operating = class_holds(static_head_m[:, None], catalogue.allowable_head_m[None, :], tol)
    limit = surge_limit_m(study) + tol
    if study.surge.method is SurgeMethod.ALLOWANCE:
        return operating & class_holds(static_head_m[:, None] + study.surge_allowance_m,
                                       limit[None, :])
    fastest = velocity_m_s.max(axis=0)  # (n, m) over scenarios
    wave_speed = wave_speeds_m_s(study, catalogue)
    length = None if length_m is None else np.reshape(length_m, (-1, 1))
    return operating & (static_head_m[:, None] + surge_head_m(
        study, wave_speed[None, :], fastest, length_m=length) <= limit[None, :])


def wave_conflicts(study: Study, static_head_m: np.ndarray, fastest_m_s: np.ndarray,
                   admissible: np.ndarray, length_m: np.ndarray | None = None
                   ) -> np.ndarray:
    """(C, 3) the smallest windows (f, c, j) a piece of j may not span (module
    docstring), sections in the order of one line. ``static_head_m`` (n,) at each
    section's lowest pipe level, ``fastest_m_s`` (n, m) largest velocity over the
    scenarios, ``admissible`` (n, m) by the own rule and the velocity window,
    ``length_m`` (n,) L per section where tanks restart it. Empty with the allowance
    method, where the surge does not depend on the piece."""
    if study.surge.method is not SurgeMethod.JOUKOWSKY or not admissible.size:
        return NO_CONFLICTS
    wave = wave_speeds_m_s(study, study.catalogue)
    limit = surge_limit_m(study) + CHECK_TOLERANCE
    length = None if length_m is None else np.reshape(length_m, -1)
    found: list[tuple[int, int, int]] = []
    for j in range(admissible.shape[1]):
        ok = admissible[:, j]
        velocity = fastest_m_s[:, j]
        bad = np.flatnonzero(~ok)
        latest: dict[int, int] = {}  # c -> the latest f of a window ending there
        for f in np.flatnonzero(ok[:-1] & ok[1:] & (velocity[1:] < velocity[:-1])).tolist():
            after = bad[bad > f]
            stop = int(after[0]) if len(after) else len(ok)
            t = np.arange(f + 1, stop)
            surge = surge_head_m(study, wave[j], velocity[f],
                                 length_m=None if length is None else length[t])
            fails = static_head_m[t] + surge > limit[j]
            if fails.any():
                c = int(t[int(np.argmax(fails))])
                latest[c] = max(latest.get(c, f), f)
        found.extend((f, c, j) for c, f in latest.items())
    return np.array(sorted(found), dtype=int).reshape(-1, 3) if found else NO_CONFLICTS


def window_sections(conflicts: np.ndarray | None, n_sections: int) -> np.ndarray:
    """(n,) sections inside some conflict window f..c (ends included)."""
    inside = np.zeros(n_sections, dtype=bool)
    if conflicts is None:
        return inside
    for f, c, _ in conflicts.tolist():
        inside[f:c + 1] = True
    return inside


def options_in_conflict(conflicts: np.ndarray | None, n_options: int) -> np.ndarray:
    """(m,) options with at least one conflict window."""
    found = np.zeros(n_options, dtype=bool)
    if conflicts is not None and len(conflicts):
        found[np.unique(conflicts[:, 2])] = True
    return found


def carry_mask(fastest_m_s: np.ndarray, admissible: np.ndarray) -> np.ndarray:
    """(n, m) a piece of j may bring into section s a velocity above j's own there: j is
    admissible in every section from some drop of its velocity down to s."""
    n, m = admissible.shape
    carry = np.zeros((n, m), dtype=bool)
    drop = np.zeros((n, m), dtype=bool)
    drop[1:] = admissible[1:] & admissible[:-1] & (fastest_m_s[1:] < fastest_m_s[:-1])
    for j in range(m):
        flag = False
        for s in range(n):
            flag = bool(admissible[s, j]) and (flag or bool(drop[s, j]))
            carry[s, j] = flag
    return carry
