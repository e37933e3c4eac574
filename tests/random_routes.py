"""Seeded random gravity routes for judging the optimiser from outside (invented data).

Every route falls far enough that the static head crosses the pressure classes' limits
inside survey sections, which is where deciding classes per section (instead of per
metre) shows. Nothing here is a check value: the checks compare the optimiser with an
independent model (``independent_grid.py``) and with ``check_design`` on the same
invented study.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

# Invented catalogue: one plastic-like material, four sizes, three classes; the bore
# shrinks as the class rises (a thicker wall), prices made up.
SIZES = ((110, 0.090), (160, 0.131), (200, 0.164), (250, 0.205))
CLASSES = (("PN6", 61.0, 1.00, 1.00), ("PN10", 102.0, 0.95, 1.35), ("PN16", 163.0, 0.90, 1.9))


def catalogue_text() -> str:
    lines = ["material,dn_mm,internal_diameter_mm,pressure_class,allowable_head_m,"
             "roughness_mm,hazen_williams_c,cost_per_m,note"]
    for dn, bore_m in SIZES:
        for name, allowable, bore_factor, price_factor in CLASSES:
            bore_mm = 1000 * bore_m * bore_factor
            price = round(0.004 * dn ** 1.6 * price_factor, 2)
            lines.append(f"plastic,{dn},{bore_mm:.1f},{name},{allowable},0.05,140,{price},"
                         "invented")
    return "\n".join(lines) + "\n"


def write_random_study(folder: Path, seed: int, rules: bool) -> Path:
    """Write a random study into ``folder``; returns the study file's path."""
    rng = np.random.default_rng(seed)
    folder.mkdir(parents=True, exist_ok=True)
    n = int(rng.integers(4, 8))
    chainage = np.concatenate([[0.0], np.cumsum(rng.uniform(300, 900, n))])
    drops = rng.uniform(-50, 8, n)
    drops[0] = min(drops[0], -8.0)  # the intake stands above the route
    drops *= min(1.0, 150.0 / max(-np.cumsum(drops).min(), 1.0))  # PN16 takes the lowest point
    ground = 500.0 + np.concatenate([[0.0], np.cumsum(drops)])
    rows = ["chainage_m,ground_m"] + [f"{c:.1f},{g:.2f}" for c, g in zip(chainage, ground,
                                                                        strict=True)]
    (folder / "profile.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    (folder / "catalogue.csv").write_text(catalogue_text(), encoding="utf-8")
    source = 503.0
    pipe_end = ground[-1] - 1.0
    required = pipe_end + float(rng.uniform(0.2, 0.7)) * max(source - pipe_end, 5.0)
    flow = float(rng.uniform(12, 35))
    text = [f'title = "Random invented route {seed}"', 'currency = "USD"',
            "[source]", f"level_m = {source}", f"top_water_level_m = {source + 1.0}",
            "[outlet]", f"required_head_m = {required:.2f}",
            "[route]", 'profile = "profile.csv"', "cover_m = 1.0",
            f"min_pressure_m = {float(rng.uniform(1, 5)):.1f}",
            "[[scenario]]", 'name = "design"', f'flow = "{flow:.1f} L/s"',
            "[[scenario]]", 'name = "low"', f'flow = "{0.5 * flow:.1f} L/s"',
            "velocity_limits = false",
            "[catalogue]", 'file = "catalogue.csv"',
            f"surge_allowance_m = {float(rng.choice([0.0, 10.0])):.1f}"]
    if n > 4:
        at = float(chainage[int(rng.integers(1, n - 1))])
        text[10:10] = ["[[offtake]]", f"chainage_m = {at:.1f}",
                       f'flow = "{float(rng.uniform(1, 5)):.1f} L/s"']
    if rules:
        text += ["[rules]", f"max_changes = {int(rng.integers(1, 4))}"]
        if rng.random() < 0.5:
            text.append('sizes_downstream = "non-increasing"')
        text += ["[costs]", f"change_cost = {float(rng.choice([0.0, 500.0, 2000.0]))}"]
    text += ["[solver]", "time_limit_s = 60", "mip_gap = 1e-6"]
    path = folder / "study.toml"
    path.write_text("\n".join(text) + "\n", encoding="utf-8")
    return path
