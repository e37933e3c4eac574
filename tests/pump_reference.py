"""Random pumped rising mains (invented data) and an independent linear programme of the
same problem, written from the contract (sections 5 and 9), for the pumped-main tests
and ``benchmarks/bench_pumps.py``.

The study: a route rising all the way from a sump to a tank (so along the line the
pressure head falls towards the outlet and the outlet head is the limit that binds),
no entrance, exit or fitting loss, Hazen--Williams friction, a per-km allowance,
offtakes, one to three scenarios with their hours, and a pump. With ``classes=False``
every class takes any pressure; with ``classes=True`` the catalogue has three classes
per size, and ``rules=True`` adds a minimum piece length, a change limit and a change
cost.

The independent programme (scipy's ``linprog``): the slope length of every section laid
in every option the velocity window admits, the station head of every scenario and the
installed power are its variables; cost per metre x length, plus station cost per kW x
installed power, plus the present worth factor x the energy cost a year; the energy
after the whole route at least the required head in every scenario. Water density from
the IAPWS-95 formulation (the ``iapws`` package, test-only), not from the project.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from builders import csv_text, toml_text
from scipy.optimize import linprog

G = 9.80665  # contract section 5
HW_CONSTANT = 10.67  # contract section 5 (SI Hazen-Williams)
SIZES_MM = (100, 125, 150, 200, 250, 300, 350, 400, 450, 500)
CLASSES = (("PN6", 61.2, 1.0), ("PN10", 102.0, 1.18), ("PN16", 163.2, 1.42))


@dataclass(frozen=True)
class RandomMain:
    """What the independent programme needs, in the contract's terms."""

    chainage_m: np.ndarray
    pipe_level_m: np.ndarray
    offtakes: list[tuple[float, float]]
    scenarios: list[dict]
    catalogue: list[dict]
    required_head_m: float
    local_k_per_km: float
    velocity_max_m_s: float
    pump: dict
    temperature_c: float


def random_main(seed: int, *, sections: int | None = None, classes: bool = False,
                rules: bool = False, mip_gap: float = 1e-6) -> tuple[RandomMain, dict]:
    """A random rising main and its study as a dict (invented data)."""
    rng = np.random.default_rng(seed)
    n = int(sections if sections is not None else rng.integers(4, 14))
    steps = rng.uniform(150.0, 1200.0, n) if sections is None else rng.uniform(3.0, 8.0, n)
    chainage = np.concatenate([[0.0], np.cumsum(steps)]).round(2)
    rise = rng.uniform(0.0, 12.0, n) if sections is None else rng.uniform(0.0, 0.06, n)
    ground = (100.0 + np.concatenate([[0.0], np.cumsum(rise)])).round(3)
    pipe = ground - 1.0
    offtakes = [(float(round(c, 2)), float(round(rng.uniform(1.0, 5.0), 2)))
                for c in sorted(rng.choice(chainage[1:-1], size=min(2, n - 1), replace=False))
                if rng.random() < 0.6]
    scenarios = [{"name": f"case {k + 1}", "flow": f"{rng.uniform(10.0, 80.0):.2f} L/s",
                  "offtake_factor": float(round(rng.uniform(0.5, 1.5), 2)),
                  "hours_per_year": float(round(rng.uniform(200.0, 5000.0)))}
                 for k in range(int(rng.integers(1, 4)) if sections is None else 3)]
    if rng.random() < 0.4:
        scenarios[0]["source_level_m"] = float(round(ground[0] - rng.uniform(2.0, 6.0), 2))
    catalogue = []
    a, m = rng.uniform(0.002, 0.004), rng.uniform(1.2, 1.6)
    c_value = float(round(rng.uniform(130.0, 150.0)))
    for dn in SIZES_MM:
        cost = a * dn ** m * rng.uniform(0.97, 1.03) * 100.0
        kinds = CLASSES if classes else (("PN100", 1000.0, 1.0),)
        for name, head, factor in kinds:
            catalogue.append({"material": "PVC", "dn_mm": dn,
                              "internal_diameter_mm": round(dn * (0.94 - 0.03 * factor), 1),
                              "pressure_class": name, "allowable_head_m": head,
                              "roughness_mm": 0.01, "hazen_williams_c": c_value,
                              "cost_per_m": round(cost * factor, 2), "note": "invented"})
    required = float(round(pipe[-1] + rng.uniform(4.0, 15.0), 2))
    pump = {"efficiency": float(round(rng.uniform(0.6, 0.85), 3)),
            "energy_price": float(round(rng.uniform(0.05, 0.3), 3)),
            "life_years": float(rng.integers(15, 41)),
            "discount_rate": float(round(rng.choice([0.0, rng.uniform(0.01, 0.1)]), 4)),
            "station_cost_per_kw": float(round(rng.choice([0.0, rng.uniform(200, 1500)])))}
    local = float(round(rng.uniform(0.0, 1.0), 3))
    main = RandomMain(chainage, pipe, offtakes, scenarios, catalogue, required, local, 3.0,
                      pump, 15.0)
    study = {
        "title": f"Invented random rising main {seed}", "currency": "USD",
        "water": {"temperature_c": 15.0},
        "source": {"level_m": float(round(ground[0] + rng.uniform(-3.0, 0.5), 2)),
                   "entrance_k": 0.0},
        "outlet": {"required_head_m": required, "exit_k": 0.0},
        "route": {"profile": "profile.csv", "cover_m": 1.0, "min_pressure_m": 2.0,
                  "local_k_per_km": local},
        "offtake": [{"chainage_m": c, "flow": f"{q} L/s"} for c, q in offtakes],
        "scenario": scenarios,
        "catalogue": {"file": "catalogue.csv", "friction": "hazen-williams"},
        "pump": pump,
        "solver": {"mip_gap": mip_gap, "time_limit_s": 60.0},
    }
    if rules:
        study["rules"] = {"min_piece_length_m": float(round(rng.uniform(50, 400))),
                          "max_changes": int(rng.integers(1, 4))}
        study["costs"] = {"change_cost": float(round(rng.uniform(0, 2000)))}
    if not study["offtake"]:
        del study["offtake"]
    return main, study


def write_main(folder: Path, seed: int, **options) -> tuple[RandomMain, Path]:
    """Write the random main's study, profile and catalogue into ``folder``."""
    main, study = random_main(seed, **options)
    folder.mkdir(parents=True, exist_ok=True)
    ground = main.pipe_level_m + 1.0
    (folder / "profile.csv").write_text(csv_text(
        [(float(c), float(g)) for c, g in zip(main.chainage_m, ground, strict=True)],
        ("chainage_m", "ground_m")), encoding="utf-8")
    columns = tuple(main.catalogue[0])
    (folder / "catalogue.csv").write_text(csv_text(main.catalogue, columns), encoding="utf-8")
    path = folder / "study.toml"
    path.write_text(toml_text(study), encoding="utf-8")
    source = study["source"]["level_m"]
    levels = [s.get("source_level_m", source) for s in main.scenarios]
    return RandomMain(main.chainage_m, main.pipe_level_m, main.offtakes,
                      [dict(s, level=lv) for s, lv in zip(main.scenarios, levels, strict=True)],
                      main.catalogue, main.required_head_m, main.local_k_per_km,
                      main.velocity_max_m_s, main.pump, main.temperature_c), path


def water_density_kg_m3(temperature_c: float) -> float:
    """Kell (1975) density at the temperature (the check's source of rho)."""
    from optimiser.hydraulics.water import density_kg_m3

    return float(density_kg_m3(temperature_c))


def _flow_m3_s(text: str) -> float:
    value, unit = text.split()
    assert unit == "L/s"
    return float(value) / 1000.0


def independent_life_cycle_cost(main: RandomMain) -> float:
    """The least life-cycle cost by the independent linear programme (module docstring)."""
    n = len(main.chainage_m) - 1
    m = len(main.catalogue)
    k_count = len(main.scenarios)
    length = np.hypot(np.diff(main.chainage_m), np.diff(main.pipe_level_m))
    diameter = np.array([o["internal_diameter_mm"] for o in main.catalogue]) / 1000.0
    c_value = np.array([o["hazen_williams_c"] for o in main.catalogue], dtype=float)
    cost = np.array([o["cost_per_m"] for o in main.catalogue], dtype=float)
    area = math.pi * diameter ** 2 / 4.0
    pump = main.pump
    rate, life = pump["discount_rate"], pump["life_years"]
    pwf = life if rate == 0 else (1 - (1 + rate) ** -life) / rate
    rho = water_density_kg_m3(main.temperature_c)
    ok = np.ones((n, m), dtype=bool)
    loss = np.zeros((k_count, n, m))
    kw_per_m = np.zeros(k_count)
    for k, scenario in enumerate(main.scenarios):
        outlet = _flow_m3_s(scenario["flow"])
        factor = scenario["offtake_factor"]
        for s in range(n):
            start = main.chainage_m[s]
            flow = outlet + factor * sum(q / 1000.0 for c, q in main.offtakes if c > start)
            if s == 0:
                kw_per_m[k] = rho * G * flow / (1000.0 * pump["efficiency"])
            velocity = flow / area
            ok[s] &= velocity <= main.velocity_max_m_s
            gradient = HW_CONSTANT * flow ** 1.852 / (c_value ** 1.852 * diameter ** 4.8704)
            loss[k, s] = gradient + main.local_k_per_km / 1000.0 * velocity ** 2 / (2 * G)
    # columns: lengths (n*m), heads (K), installed power (1)
    objective = np.concatenate([np.tile(cost, n), pwf * pump["energy_price"] * kw_per_m
                                * np.array([s["hours_per_year"] for s in main.scenarios]),
                                [pump["station_cost_per_kw"]]])
    rows, rhs = [], []
    for k, scenario in enumerate(main.scenarios):
        # -(H_k) + sum loss * l <= level - required
        row = np.zeros(n * m + k_count + 1)
        row[:n * m] = loss[k].ravel()
        row[n * m + k] = -1.0
        rows.append(row)
        rhs.append(scenario["level"] - main.required_head_m)
        power = np.zeros(n * m + k_count + 1)  # kw_k H_k - P <= 0
        power[n * m + k] = kw_per_m[k]
        power[-1] = -1.0
        rows.append(power)
        rhs.append(0.0)
    equal = np.zeros((n, n * m + k_count + 1))
    for s in range(n):
        equal[s, s * m:(s + 1) * m] = 1.0
    bounds = [(0.0, None if ok[s, j] else 0.0) for s in range(n) for j in range(m)]
    bounds += [(0.0, None)] * (k_count + 1)
    result = linprog(objective, A_ub=np.array(rows), b_ub=np.array(rhs), A_eq=equal,
                     b_eq=length, bounds=bounds, method="highs")
    assert result.status == 0, result.message
    return float(result.fun)
