"""Monte Carlo of roughness and ageing for a fixed design of a pumped main and its station.

The draws are those of every Monte Carlo (:func:`optimiser.analysis.sensitivity.
drawn_roughness_mm`: one initial roughness per material and sample, aged linearly after
Colebrook, C.F. & White, C.M. (1937), The reduction of carrying capacity of pipes with
age, J. Inst. Civil Eng. 7(1)); each scenario applies its own roughness rule to them.
Every sample's gravity energy line comes from the check's own functions, all samples at
once (:mod:`optimiser.sweeps.tree_samples`), and the station is judged as the check
judges it (:mod:`optimiser.analysis.pumping`, contract section 9):

- the least head H of a scenario is the largest deficit of its gravity line (delivery
  head, every pressure minimum, the down-surge limit with each pipe's surge head), 0 if
  none; the head checked is H capped at ``max_head_m``;
- power P = rho g Q H / (1000 eta) with Q the flow drawn from the source and rho by Kell
  (1975) at the study's temperature, energy a year P t, the installed power the largest
  P of any scenario, the energy's present value PWF x price x energy a year;
- classes: every piece takes the larger of its static head (the static line the
  non-return valve holds) and its largest pressure head while pumping in any scenario,
  plus its surge head, against its class.

Per sample and scenario (``samples``): ``station_head_m`` (H), ``within_max_head``,
``head_m`` (checked), ``power_kw``, ``energy_cost_per_year``, ``meets`` (every limit of
the scenario met with the head checked, i.e. H within ``max_head_m``); per sample, on
each of its rows: ``classes_hold``, ``installed_kw`` and ``life_cycle_cost`` (pipes +
station + energy present value).
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import pandas as pd

from optimiser.analysis import check_design
from optimiser.analysis.check import CheckResult
from optimiser.analysis.flows import inflow_m3_s
from optimiser.analysis.limits import CHECK_TOLERANCE, class_holds
from optimiser.analysis.scheme_check import SchemeHydraulics
from optimiser.analysis.sensitivity import (
    MonteCarloResult,
    RoughnessDistribution,
    drawn_roughness_mm,
)
from optimiser.analysis.surge import water_density_kg_m3
from optimiser.hydraulics.pumping import present_worth_factor, pump_power_kw, yearly_energy_kwh
from optimiser.model import TRUNK, Design, Study
from optimiser.sweeps.tree_samples import tree_samples


def _percentile(values: np.ndarray, q: float) -> float:
    return float(np.percentile(values, q))


def _classes_hold(check: CheckResult, largest_pumping_m: np.ndarray) -> np.ndarray:
    """(S,) every piece's class takes max(static, pumping) head + surge (the check's
    rule, :func:`optimiser.analysis.pumping.with_pumping_heads`)."""
    pieces = check.pieces
    still = pieces["still_head_m"].to_numpy()[:, None]
    head = np.maximum(still, largest_pumping_m)
    surge = pieces["surge_head_m"].to_numpy()[:, None]
    holds = class_holds(head + surge, pieces["allowable_surge_head_m"].to_numpy()[:, None],
                        CHECK_TOLERANCE) & \
        class_holds(head, pieces["allowable_head_m"].to_numpy()[:, None], CHECK_TOLERANCE)
    return holds.all(axis=0)


def _scenario_frame(study: Study, hydraulics: SchemeHydraulics, check: CheckResult,
                    materials: list[str], aged: np.ndarray, index: int
                    ) -> tuple[pd.DataFrame, np.ndarray]:
    """One scenario's rows (without the per-sample columns) and the largest pumping
    pressure head of every piece (pieces, S)."""
    pump = study.pump
    assert pump is not None
    scenario = study.scenarios[index]
    surge = check.pieces["surge_head_m"].to_numpy()
    line = tree_samples(hydraulics, scenario, materials, aged, surge, by_piece=True).lines[
        TRUNK]
    if line.moving_margin_m is not None:  # the station lifts to the trunk's first tank
        deficits = [np.zeros(aged.shape[0]), -line.moving_margin_m]
        transient = line.moving_transient_m
    else:
        deficits = [np.zeros(aged.shape[0]), -line.outlet_margin_m,
                    -line.least_pressure_margin_m]
        transient = line.transient_margin_m
    if transient is not None:
        deficits.append(-transient)
    needed = np.max(deficits, axis=0)
    head = needed if pump.max_head_m is None else np.minimum(needed, pump.max_head_m)
    within = np.full(needed.shape, True) if pump.max_head_m is None else \
        needed <= pump.max_head_m + 1e-9
    power = pump_power_kw(water_density_kg_m3(study), inflow_m3_s(study, scenario), head,
                          pump.efficiency)
    energy = yearly_energy_kwh(power, scenario.hours_per_year)
    frame = pd.DataFrame({
        "sample": np.arange(len(needed)), "scenario": scenario.name,
        "station_head_m": needed, "within_max_head": within, "head_m": head,
        "power_kw": power, "energy_kwh_per_year": energy,
        "energy_cost_per_year": energy * pump.energy_price, "meets": within})
    assert line.largest_pressure_m is not None
    # Pumping lifts the trunk above its first tank; below it (and on branches, all below
    # it) the pressure is the gravity line's, as in the check's piece table.
    lifted = line.largest_pressure_m + head[None, :]
    if line.largest_below_m is not None:
        lifted = np.maximum(lifted, line.largest_below_m)
    pumping = np.full((len(check.pieces), len(head)), -np.inf)
    pumping[hydraulics.trunk.piece_index] = lifted
    return frame, pumping


def _summary_row(frame: pd.DataFrame, years: float, max_head_m: float | None) -> dict:
    head = frame["station_head_m"].to_numpy()
    costs = frame["life_cycle_cost"].to_numpy()
    return {
        "scenario": frame["scenario"].iloc[0], "samples": len(frame), "years": years,
        "probability_meets": float(frame["meets"].mean()),
        "probability_classes_hold": float(frame["classes_hold"].mean()),
        "station_head_p05_m": _percentile(head, 5),
        "station_head_p50_m": _percentile(head, 50),
        "station_head_p95_m": _percentile(head, 95), "max_head_m": max_head_m,
        "power_p95_kw": _percentile(frame["power_kw"].to_numpy(), 95),
        "energy_cost_per_year_p50": _percentile(frame["energy_cost_per_year"].to_numpy(),
                                                50),
        "life_cycle_cost_p05": _percentile(costs, 5),
        "life_cycle_cost_p50": _percentile(costs, 50),
        "life_cycle_cost_p95": _percentile(costs, 95)}


def pump_monte_carlo(study: Study, design: Design, distribution: RoughnessDistribution, *,
                     samples: int, seed: int, years: float = 0.0,
                     ageing_mm_per_year: Mapping[str, float] | None = None
                     ) -> MonteCarloResult:
    """The station of the fixed design of a pumped main over sampled roughness at year
    ``years`` (module docstring). Same seed, same numbers."""
    pump = study.pump
    if pump is None:
        raise ValueError(f"'{study.title}' has no [pump]")
    materials, aged = drawn_roughness_mm(design, distribution, samples=samples, seed=seed,
                                         years=years, ageing_mm_per_year=ageing_mm_per_year)
    check = check_design(study, design, capacity=False)
    hydraulics = SchemeHydraulics(study, design)
    frames, largest = [], np.full((len(design.pieces), samples), -np.inf)
    for index in range(len(study.scenarios)):
        frame, pumping = _scenario_frame(study, hydraulics, check, materials, aged, index)
        frames.append(frame)
        largest = np.maximum(largest, pumping)
    installed = np.max([f["power_kw"].to_numpy() for f in frames], axis=0)
    energy_cost = np.sum([f["energy_cost_per_year"].to_numpy() for f in frames], axis=0)
    factor = float(present_worth_factor(pump.discount_rate, pump.life_years))
    per_sample = {"classes_hold": _classes_hold(check, largest), "installed_kw": installed,
                  "life_cycle_cost": check.total_cost + pump.station_cost_per_kw * installed
                  + factor * energy_cost}
    for scenario, frame in zip(study.scenarios, frames, strict=True):
        for column, values in per_sample.items():
            frame[column] = values
        used = scenario.effective_roughness_mm(aged)
        for i, material in enumerate(materials):
            frame[f"roughness_mm[{material}]"] = used[:, i]
    summary = pd.DataFrame([_summary_row(f, years, pump.max_head_m) for f in frames])
    return MonteCarloResult(pd.concat(frames, ignore_index=True), summary, seed, years)
