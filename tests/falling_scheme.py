"""An invented falling scheme that needs new break-pressure tanks (shared by the time
limit tests and ``benchmarks/bench_time_limits.py``).

Nothing here describes a real place, price or catalogue: a trunk falling 250 m over 6 km
(more than the highest class of the invented catalogue takes) with three branches of
2.4 km, ground a straight fall with a 3 m bump at every third point.
"""

from __future__ import annotations

from pathlib import Path

from builders import toml_text
from random_trees import catalogue_text


def falling_profile(points: int, top_m: float, fall_m: float, length_m: float) -> str:
    """Profile CSV text: ``points`` evenly spaced rows falling ``fall_m`` from ``top_m``
    over ``length_m``, every third point 3 m higher."""
    rows = ["chainage_m,ground_m"]
    for i in range(points):
        x = i / (points - 1)
        rows.append(f"{x * length_m:.1f},{top_m - fall_m * x + 3.0 * (i % 3 == 1):.3f}")
    return "\n".join(rows) + "\n"


def write_falling_scheme(folder: Path) -> Path:
    """Write the scheme (trunk of 61 points, three branches of 25, new tanks at every
    point, at most 6) into ``folder``; returns the study file."""
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "trunk.csv").write_text(falling_profile(61, 495.0, 250.0, 6000.0), "utf-8")
    branches = []
    for index, at_m in enumerate((1500.0, 3000.0, 4500.0), start=1):
        top_m = 495.0 - 250.0 * at_m / 6000.0
        (folder / f"b{index}.csv").write_text(falling_profile(25, top_m, 120.0, 2400.0),
                                              "utf-8")
        branches.append({"name": f"b{index}", "at_chainage_m": at_m,
                         "profile": f"b{index}.csv", "flow": "3 L/s",
                         "required_head_m": top_m - 110.0})
    (folder / "catalogue.csv").write_text(catalogue_text((90, 110, 125, 160, 200, 250)),
                                          "utf-8")
    study = {"title": "Invented falling scheme with new tanks", "currency": "USD",
             "source": {"level_m": 500.0}, "outlet": {"required_head_m": 265.0},
             "route": {"profile": "trunk.csv", "min_pressure_m": 2.0},
             "branch": branches,
             "scenario": [{"name": "peak", "flow": "8 L/s"},
                          {"name": "night", "flow": "3 L/s", "branch_factor": 0.4}],
             "catalogue": {"file": "catalogue.csv"},
             "rules": {"min_piece_length_m": 100.0},
             "break_pressure_tanks": {"height_m": 5.0, "cost": 3000.0, "max_count": 6}}
    (folder / "study.toml").write_text(toml_text(study), encoding="utf-8")
    return folder / "study.toml"
