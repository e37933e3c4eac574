"""How a fixed design behaves when the roughness assumption is wrong or the pipe ages.

A swept (or drawn) roughness stands for the catalogue's roughness of every option; each
scenario then applies its own rule to it, as it does to the catalogue's
(:meth:`optimiser.model.Scenario.effective_roughness_mm`): a ``roughness_factor``
multiplies it, a scenario's own ``roughness_mm`` replaces it (such a scenario does not
move with the sweep). Flows, levels and offtakes stay as each scenario states them.

Ageing follows the linear growth of absolute roughness with time that Colebrook & White
observed in water mains: eps(T) = eps_0 + alpha T (Colebrook, C.F. & White, C.M. (1937),
The reduction of carrying capacity of pipes with age, J. Inst. Civil Eng. 7(1)); the
rates alpha [mm/year] are the user's.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from optimiser.analysis.limits import CHECK_TOLERANCE
from optimiser.analysis.linear_check import LinearCheck, linear_check
from optimiser.model import Design, Study

DISTRIBUTIONS = ("uniform", "log-uniform", "triangular", "fixed")


def roughness_sweep(study: Study, design: Design, roughness_mm: np.ndarray,
                    linear: LinearCheck | None = None) -> pd.DataFrame:
    """Capacity and margins of a fixed design at each roughness, per scenario.

    Columns: scenario, roughness_mm (the swept value), scenario_roughness_mm (the value
    the scenario uses: see the module docstring), capacity_m3_s,
    capacity_outlet_only_m3_s, outlet_margin_m, least_pressure_margin_m, meets (outlet and
    pressures).
    """
    linear = linear or linear_check(study, design)
    values = np.asarray(roughness_mm, dtype=float)
    rows = []
    for scenario in study.scenarios:
        used = scenario.effective_roughness_mm(values)
        roughness = np.repeat(used[:, None], linear.n_groups, axis=1)
        source = np.full(values.shape, scenario.source_level_m)
        flow = np.full(values.shape, scenario.outlet_flow_m3_s)
        outlet, pressure = linear.margins(flow, scenario.offtake_factor, source, roughness)
        capacity = linear.capacity_m3_s(scenario.offtake_factor, source, roughness)
        outlet_only = linear.capacity_m3_s(scenario.offtake_factor, source, roughness,
                                            outlet_only=True)
        rows.append(pd.DataFrame({
            "scenario": scenario.name, "roughness_mm": values,
            "scenario_roughness_mm": used, "capacity_m3_s": capacity,
            "capacity_outlet_only_m3_s": outlet_only, "outlet_margin_m": outlet,
            "least_pressure_margin_m": pressure,
            "meets": (outlet >= -CHECK_TOLERANCE) & (pressure >= -CHECK_TOLERANCE)}))
    return pd.concat(rows, ignore_index=True)


@dataclass(frozen=True)
class RoughnessDistribution:
    """Initial roughness of each material, drawn independently per material [mm].

    ``uniform`` and ``log-uniform`` between ``low_mm`` and ``high_mm``; ``triangular``
    with its mode at ``mode_mm`` (default the middle); ``fixed`` always ``low_mm``.
    """

    kind: str
    low_mm: float
    high_mm: float
    mode_mm: float | None = None

    def draw(self, rng: np.random.Generator, size: tuple[int, ...]) -> np.ndarray:
        if self.kind == "fixed":
            return np.full(size, self.low_mm)
        if self.kind == "uniform":
            return rng.uniform(self.low_mm, self.high_mm, size)
        if self.kind == "log-uniform":
            return np.exp(rng.uniform(np.log(self.low_mm), np.log(self.high_mm), size))
        if self.kind == "triangular":
            mode = self.mode_mm if self.mode_mm is not None else 0.5 * (self.low_mm +
                                                                        self.high_mm)
            return rng.triangular(self.low_mm, mode, self.high_mm, size)
        raise ValueError(f"unknown distribution {self.kind!r}; use one of {DISTRIBUTIONS}")


@dataclass
class MonteCarloResult:
    samples: pd.DataFrame  # one row per sample and scenario
    summary: pd.DataFrame  # per scenario: probability of meeting, capacity percentiles
    seed: int
    years: float
    notes: list[str] = field(default_factory=list)
    delivery_points: pd.DataFrame | None = None  # a scheme's: per scenario and branch


def drawn_roughness_mm(design: Design, distribution: RoughnessDistribution, *,
                       samples: int, seed: int, years: float = 0.0,
                       ageing_mm_per_year: Mapping[str, float] | None = None
                       ) -> tuple[list[str], np.ndarray]:
    """The design's materials (sorted) and the aged roughness [mm] of each, (samples,
    materials): one initial value per material and sample from ``distribution`` with
    ``numpy.random.default_rng(seed)``, plus ``rate x years`` (module docstring). Every
    Monte Carlo draws here, so one seed gives the same draws for a route and a scheme
    of the same materials."""
    rates = dict(ageing_mm_per_year or {})
    materials = sorted({piece.option.material for piece in design.pieces})
    rng = np.random.default_rng(seed)
    initial = distribution.draw(rng, (samples, len(materials)))
    return materials, initial + np.array([rates.get(m, 0.0) for m in materials]) * years


def monte_carlo(study: Study, design: Design, distribution: RoughnessDistribution, *,
                samples: int, seed: int, years: float = 0.0,
                ageing_mm_per_year: Mapping[str, float] | None = None,
                linear: LinearCheck | None = None) -> MonteCarloResult:
    """Probability that the fixed design meets each scenario at year ``years``.

    Each sample draws one initial roughness per material and adds ``rate x years`` for
    the material's ageing rate; every scenario applies its own rule to that aged value
    (module docstring: a ``roughness_factor`` multiplies it) and is evaluated (outlet
    head and minimum pressures; velocities and classes do not depend on roughness). The
    ``roughness_mm[material]`` columns hold the value each scenario used. Same seed, same
    numbers.
    """
    linear = linear or linear_check(study, design)
    materials, aged = drawn_roughness_mm(design, distribution, samples=samples, seed=seed,
                                         years=years, ageing_mm_per_year=ageing_mm_per_year)
    column = {m: i for i, m in enumerate(materials)}
    base = aged[:, [column[m] for m in linear.group_materials]]
    frames = []
    summary = []
    for scenario in study.scenarios:
        roughness = scenario.effective_roughness_mm(base)
        used = scenario.effective_roughness_mm(aged)
        source = np.full(samples, scenario.source_level_m)
        flow = np.full(samples, scenario.outlet_flow_m3_s)
        outlet, pressure = linear.margins(flow, scenario.offtake_factor, source, roughness)
        capacity = linear.capacity_m3_s(scenario.offtake_factor, source, roughness)
        meets = (outlet >= -CHECK_TOLERANCE) & (pressure >= -CHECK_TOLERANCE)
        frame = pd.DataFrame({"sample": np.arange(samples), "scenario": scenario.name,
                              "capacity_m3_s": capacity, "outlet_margin_m": outlet,
                              "least_pressure_margin_m": pressure, "meets": meets})
        for i, material in enumerate(materials):
            frame[f"roughness_mm[{material}]"] = used[:, i]
        frames.append(frame)
        finite = capacity[np.isfinite(capacity)]
        summary.append({
            "scenario": scenario.name, "samples": samples, "years": years,
            "probability_meets": float(meets.mean()),
            "capacity_p05_m3_s": float(np.percentile(finite, 5)) if finite.size else None,
            "capacity_p50_m3_s": float(np.percentile(finite, 50)) if finite.size else None,
            "capacity_p95_m3_s": float(np.percentile(finite, 95)) if finite.size else None,
            "design_flow_m3_s": scenario.outlet_flow_m3_s,
        })
    return MonteCarloResult(pd.concat(frames, ignore_index=True), pd.DataFrame(summary),
                            seed, years)
