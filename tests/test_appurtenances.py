"""Air valve and washout detection on constructed profiles.

Placement rule: common practice, no source (air valves at local high points and where
the grade line nears the pipe, washouts at local low points; e.g. AWWA Manual M51 for air
valves, from memory).
"""

from __future__ import annotations

import numpy as np

from optimiser.analysis.appurtenances import turning_points


def test_clean_profile_finds_each_high_and_low():
    # Up to a crest at index 2, down to a trough at 4, up to a crest at 6, down to the end.
    level = np.array([100.0, 105.0, 110.0, 104.0, 95.0, 101.0, 108.0, 99.0, 90.0])
    highs, lows = turning_points(level, tolerance_m=1.0)
    assert highs == [2, 6]
    assert lows == [4]


def test_jitter_below_tolerance_is_ignored():
    rng = np.random.default_rng(7)
    x = np.linspace(0.0, 1.0, 401)
    # One crest (x = 0.3) and one trough (x = 0.7) of about 20 m relief, plus +-0.3 m noise.
    smooth = 100.0 + 20.0 * np.sin(2 * np.pi * (x - 0.05) * 1.0)
    noisy = smooth + rng.uniform(-0.3, 0.3, x.size)
    highs, lows = turning_points(noisy, tolerance_m=1.0)
    assert len(highs) == 1 and len(lows) == 1
    assert abs(x[highs[0]] - 0.30) < 0.03
    assert abs(x[lows[0]] - 0.80) < 0.03
    # Without the filter the same noise makes dozens of spurious points.
    many_highs, many_lows = turning_points(noisy, tolerance_m=0.0)
    assert len(many_highs) > 20 and len(many_lows) > 20


def test_ends_are_never_turning_points():
    level = np.array([120.0, 110.0, 100.0, 90.0])  # falling all the way: nothing to vent
    assert turning_points(level, 0.5) == ([], [])
    rising_then_falling = np.array([90.0, 100.0, 95.0])
    assert turning_points(rising_then_falling, 0.5) == ([1], [])


def test_small_bump_just_above_tolerance_counts():
    level = np.array([100.0, 99.0, 98.0, 99.6, 97.0, 96.0])
    assert turning_points(level, 1.0) == ([3], [2])
    assert turning_points(level, 2.0) == ([], [])
