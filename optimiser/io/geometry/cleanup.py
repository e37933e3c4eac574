"""Survey clean-up, each step stated in the route's notes (never silent).

- Points closer than ``min_point_spacing_m`` (horizontal) to the previous kept point are
  dropped: duplicates and zero-length steps (a GPS receiver standing still) carry no
  route and would make sections of no length. Their labels and zones pass to the kept
  point. Every other vertex is kept: the line is never simplified, so bends and high
  points stay where the survey put them.
- Smoothing of ground levels (GPS elevations are noisy, typically several metres) only
  when ``smoothing_window_m`` > 0: a centred moving average over that length of
  chainage (the mean of the points within half the window either side; at the ends,
  the points available). Smoothing lowers crests and raises hollows, so the largest
  changes are reported. Common practice, no source.
- Warnings (not errors) where consecutive points are farther apart than
  ``warn_point_spacing_m`` (features between them are missed) or the ground grade
  between them exceeds ``warn_grade_percent`` (steeper than a pipe trench is normally
  laid, and a typical sign of elevation noise). Common practice, no source.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from optimiser.io.geometry.readers import SurveyLine

LISTED = 5


def _where(chainage_m: np.ndarray, refs: list[str], indices: np.ndarray) -> str:
    items = [f"{chainage_m[i]:,.1f} m ({refs[i]})" for i in indices[:LISTED]]
    more = f" and {len(indices) - LISTED} more" if len(indices) > LISTED else ""
    return ", ".join(items) + more


def _one_pass(steps_m: np.ndarray, threshold: float) -> list[int]:
    """Positions kept by one pass over consecutive distances ``steps_m``."""
    kept = [0]
    since_kept = 0.0
    last = len(steps_m)
    for index in range(1, last + 1):
        since_kept += steps_m[index - 1]
        if since_kept >= threshold:
            kept.append(index)
            since_kept = 0.0
        elif index == last and len(kept) > 1:
            kept[-1] = index  # keep the end of the route
    return kept


def drop_close_points(line: SurveyLine, measure: Callable[[np.ndarray], np.ndarray],
                      min_spacing_m: float) -> tuple[np.ndarray, list[str]]:
    """Indices of the points kept, and a note on those dropped.

    ``measure(indices)`` gives the distances between consecutive points of ``indices``.
    A point is dropped while the distance walked since the previous kept point is below
    ``min_spacing_m`` (at least 1 mm, so chainage strictly increases); passes repeat until
    every kept point is that far from the one before it in a straight line too (a track
    that doubles back). The last point of the file is kept in place of a close
    predecessor, so the route ends where the file ends.
    """
    threshold = max(min_spacing_m, 1e-3)
    kept = np.arange(len(line))
    while len(kept) > 1:
        steps = measure(kept)
        if steps.min() >= threshold:
            break
        kept = kept[_one_pass(steps, threshold)]
    dropped = sorted(set(range(len(line))) - {int(k) for k in kept})
    along = np.concatenate([[0.0], np.cumsum(measure(np.arange(len(line))))])
    _pass_on(line, along, kept, dropped)
    notes = []
    if dropped:
        refs = ", ".join(line.refs[i] for i in dropped[:10])
        more = f" and {len(dropped) - 10} more" if len(dropped) > 10 else ""
        notes.append(f"{len(dropped)} point(s) dropped, closer than {threshold:g} m to the "
                     f"previous kept point (duplicates or zero-length steps): {refs}{more}")
    else:
        notes.append(f"no duplicate or zero-length points (spacing limit {threshold:g} m)")
    return np.array(kept), notes


def _pass_on(line: SurveyLine, along_m: np.ndarray, kept: np.ndarray,
             dropped: list[int]) -> None:
    """Labels of dropped points pass to the nearest kept point; a zone (which applies to
    the section starting at its row) passes to the kept point before it."""
    for index in dropped:
        position = int(np.searchsorted(kept, index))  # kept[position - 1] < index
        before = int(kept[position - 1])
        after = int(kept[min(position, len(kept) - 1)])
        nearest = after if (along_m[after] - along_m[index]
                            < along_m[index] - along_m[before]) else before
        label = line.labels[index]
        if label and label not in line.labels[nearest]:
            line.labels[nearest] = " / ".join(x for x in (line.labels[nearest], label) if x)
        if line.zones[index]:
            line.zones[before] = line.zones[index]


def smooth_ground(chainage_m: np.ndarray, ground_m: np.ndarray,
                  window_m: float) -> tuple[np.ndarray, str]:
    """Centred moving average of ground over ``window_m`` of chainage, and its note."""
    half = window_m / 2.0
    lo = np.searchsorted(chainage_m, chainage_m - half, side="left")
    hi = np.searchsorted(chainage_m, chainage_m + half, side="right")
    total = np.concatenate([[0.0], np.cumsum(ground_m)])
    smoothed = (total[hi] - total[lo]) / (hi - lo)
    change = smoothed - ground_m
    low, high = int(np.argmin(change)), int(np.argmax(change))
    note = (f"ground smoothed (smoothing_window_m = {window_m:g}): centred moving average "
            f"over {window_m:g} m of chainage; levels lowered by up to "
            f"{-change[low]:.2f} m (at {chainage_m[low]:,.1f} m) and raised by up to "
            f"{change[high]:.2f} m (at {chainage_m[high]:,.1f} m); crests and hollows "
            "are flattened by as much")
    return smoothed, note


def survey_warnings(chainage_m: np.ndarray, ground_m: np.ndarray, refs: list[str],
                    max_spacing_m: float, max_grade_percent: float) -> list[str]:
    """Warnings on far-apart points and implausible grades (limits stated)."""
    notes = []
    step = np.diff(chainage_m)
    far = np.flatnonzero(step > max_spacing_m)
    if far.size:
        notes.append(f"warning: {far.size} gap(s) longer than {max_spacing_m:g} m "
                     "(warn_point_spacing_m) between consecutive points, features between "
                     f"them are not surveyed; gaps start at {_where(chainage_m, refs, far)}")
    grade = np.abs(np.diff(ground_m)) / step * 100.0
    steep = np.flatnonzero(grade > max_grade_percent)
    if steep.size:
        notes.append(f"warning: {steep.size} step(s) steeper than {max_grade_percent:g} % "
                     "(warn_grade_percent; steepest "
                     f"{grade.max():.0f} %), check the levels there (elevation noise?); "
                     f"steps start at {_where(chainage_m, refs, steep)}")
    return notes
