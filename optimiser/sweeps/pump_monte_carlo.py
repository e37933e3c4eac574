"""Monte Carlo of roughness and ageing for a fixed design of a pumped main and its station.

The draws are those of every Monte Carlo (:func:`optimiser.analysis.sensitivity.
drawn_roughness_mm`: one initial roughness per material and sample, aged linearly after
Colebrook, C.F. & White, C.M. (1937), The reduction of carrying capacity of pipes with
age, J. Inst. Civil Eng. 7(1)); each scenario applies its own roughness rule to them.
Every sample's gravity energy line comes from the check's own functions, all samples at
once (:mod:`optimiser.sweeps.tree_samples`), and the station is judged as the check
judges it (:mod:`optimiser.analysis.pumping`, contract section 9):

- the least head H of a scenario is the largest deficit of its gravity lines over
  every line the station reaches (the trunk, and on a scheme every branch leaving a
  reached line above that line's first tank, :func:`optimiser.analysis.pumping.
  reached_lines`): delivery head (or the first tank's inflow), every pressure minimum
  and the down-surge limit above the first tank, with each pipe's surge head taken
  segment by segment as the check takes it (a piece through a tank has each side's own
  slow-closure surge, :func:`check_segment_surges_m`), 0 if none; the head checked is H
  capped at ``max_head_m``;
- power P = rho g Q H / (1000 eta) with Q the flow drawn from the source and rho by Kell
  (1975) at the study's temperature, energy a year P t, the installed power the largest
  P of any scenario, the energy's present value PWF x price x energy a year;
- classes: every piece takes the larger of its static head (the static line the
  non-return valve holds) and its largest pressure head while pumping in any scenario
  (on every line: lifted by H where the head reaches, the gravity line's elsewhere),
  plus its surge head, against its class.

Per sample and scenario (``samples``): ``station_head_m`` (H), ``within_max_head``,
``head_m`` (checked), ``power_kw``, ``energy_cost_per_year``, ``meets`` (every limit of
the scenario met with the head checked: H within ``max_head_m``, and every limit the
head does not reach, below a break-pressure tank, met by its gravity line); per sample, on
each of its rows: ``classes_hold``, ``installed_kw`` and ``life_cycle_cost`` (pipes +
station + energy present value).
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import pandas as pd

from optimiser.analysis import check_design
from optimiser.analysis import surge as surge_rule
from optimiser.analysis.check import CheckResult
from optimiser.analysis.flows import inflow_m3_s
from optimiser.analysis.limits import CHECK_TOLERANCE, class_holds
from optimiser.analysis.pumping import reached_lines
from optimiser.analysis.scheme_check import SchemeHydraulics
from optimiser.analysis.sensitivity import (
    MonteCarloResult,
    RoughnessDistribution,
    drawn_roughness_mm,
)
from optimiser.analysis.surge import water_density_kg_m3
from optimiser.hydraulics.pumping import present_worth_factor, pump_power_kw, yearly_energy_kwh
from optimiser.model import Design, Study
from optimiser.sweeps.tree_samples import TreeSamples, tree_samples


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


def check_segment_surges_m(study: Study, design: Design, hydraulics: SchemeHydraulics
                           ) -> dict[str, np.ndarray]:
    """Surge head [m] of every grid segment of every line, as the check works it
    (:func:`optimiser.analysis.surge.segment_surges_m`: each piece's wave speed and its
    largest velocity in any scenario, each side of a tank with its own slow-closure
    length L). Velocities do not depend on roughness or on the station's head, so one
    gravity run per scenario gives them."""
    evaluated = [hydraulics.evaluate(scenario) for scenario in study.scenarios]
    tanks = (*study.tanks, *design.tanks)
    surges = {}
    for name, part in hydraulics.parts.items():
        fastest = np.max([arrays[name].velocity_m_s for arrays in evaluated], axis=0)
        options = [design.pieces[i].option for i in part.piece_index]
        surges[name] = surge_rule.segment_surges_m(
            study, tanks, part.line, part.grid, surge_rule.wave_speeds_m_s(study, options),
            fastest)
    return surges


def _needed_head_m(samples: TreeSamples, reached: Mapping[str, int | None]) -> np.ndarray:
    """(S,) the least head of every sample: the largest deficit of every line the
    station reaches (:func:`optimiser.analysis.pumping.least_head_m`): above a line's
    first tank its pressures, down-surge and the tank's inflow; without a tank its
    pressures, down-surge and delivery head."""
    count = samples.source_level_m.shape[0]
    deficits = [np.zeros(count)]
    for name in reached:
        line = samples.lines[name]
        if line.moving_margin_m is not None:  # the station lifts to the line's first tank
            deficits.append(-line.moving_margin_m)
            transient = line.moving_transient_m
        else:
            deficits += [-line.outlet_margin_m, -line.least_pressure_margin_m]
            transient = line.transient_margin_m
        if transient is not None:
            deficits.append(-transient)
    return np.max(deficits, axis=0)


def _unlifted_margin_m(samples: TreeSamples, reached: Mapping[str, int | None]
                       ) -> np.ndarray:
    """(S,) the least margin of the limits the station's head does not move: at and
    below the first tank of a line it reaches (pressures, later tanks' inflow, delivery,
    down-surge), and every limit of a line it does not reach (below a tank)."""
    least = np.full(samples.source_level_m.shape[0], np.inf)
    for name, line in samples.lines.items():
        if name in reached:
            margins = [line.margin_that_stays_m, line.fixed_transient_m]
        else:
            margins = [line.outlet_margin_m, line.least_pressure_margin_m,
                       line.transient_margin_m]
        for margin in margins:
            if margin is not None:
                least = np.minimum(least, margin)
    return least


def _pumping_heads_m(hydraulics: SchemeHydraulics, samples: TreeSamples,
                     reached: Mapping[str, int | None], head_m: np.ndarray,
                     pieces: int) -> np.ndarray:
    """(pieces, S) the largest pressure head of each piece while pumping: the head lifts
    every reached line above its first tank; below it, and on lines it does not reach,
    the pressure is the gravity line's (as the check's piece table)."""
    pumping = np.full((pieces, len(head_m)), -np.inf)
    for name, part in hydraulics.parts.items():
        line = samples.lines[name]
        assert line.largest_pressure_m is not None
        lifted = line.largest_pressure_m + (head_m[None, :] if name in reached else 0.0)
        if line.largest_below_m is not None:
            lifted = np.maximum(lifted, line.largest_below_m)
        pumping[part.piece_index] = np.maximum(pumping[part.piece_index], lifted)
    return pumping


def _scenario_frame(study: Study, hydraulics: SchemeHydraulics, surges: dict[str, np.ndarray],
                    materials: list[str], aged: np.ndarray, index: int, pieces: int
                    ) -> tuple[pd.DataFrame, np.ndarray]:
    """One scenario's rows (without the per-sample columns) and the largest pumping
    pressure head of every piece (pieces, S)."""
    pump = study.pump
    assert pump is not None
    scenario = study.scenarios[index]
    samples = tree_samples(hydraulics, scenario, materials, aged, by_piece=True,
                           surge_by_segment=surges)
    reached = reached_lines(hydraulics)
    needed = _needed_head_m(samples, reached)
    head = needed if pump.max_head_m is None else np.minimum(needed, pump.max_head_m)
    within = np.full(needed.shape, True) if pump.max_head_m is None else \
        needed <= pump.max_head_m + 1e-9
    # Below a tank the gravity line answers for itself (the station does not reach it).
    meets = within & (_unlifted_margin_m(samples, reached) >= -CHECK_TOLERANCE)
    power = pump_power_kw(water_density_kg_m3(study), inflow_m3_s(study, scenario), head,
                          pump.efficiency)
    energy = yearly_energy_kwh(power, scenario.hours_per_year)
    frame = pd.DataFrame({
        "sample": np.arange(len(needed)), "scenario": scenario.name,
        "station_head_m": needed, "within_max_head": within, "head_m": head,
        "power_kw": power, "energy_kwh_per_year": energy,
        "energy_cost_per_year": energy * pump.energy_price, "meets": meets})
    return frame, _pumping_heads_m(hydraulics, samples, reached, head, pieces)


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
    surges = check_segment_surges_m(study, design, hydraulics)
    frames, largest = [], np.full((len(design.pieces), samples), -np.inf)
    for index in range(len(study.scenarios)):
        frame, pumping = _scenario_frame(study, hydraulics, surges, materials, aged, index,
                                         len(design.pieces))
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
