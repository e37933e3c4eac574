"""Columns of a pumped main (contract section 9) in the split-pipe programme.

Pipes and pump heads in one linear programme, after Alperovits, E. & Shamir, U. (1977),
Design of optimal water distribution systems, *Water Resources Research* 13(6),
885-900: the station head of each scenario is a column, and every energy the rows of
:mod:`optimiser.milp.pressure_rows` write starts at the source level + that column.

Columns, per scenario k: ``H[k]`` (the head the station adds, 0 <= H <= max_head_m and
<= the most head any class could take at the station, see :func:`head_bounds_m`), with
cost PWF x energy_price x hours_per_year x rho g Q_k / (1000 eff) per metre (the
present value of its energy); with ``station_cost_per_kw > 0`` one column ``P`` of
installed power, P >= rho g Q_k H[k] / (1000 eff) for every k, at that cost per kW.
Both are exact: the power is linear in H.

The working limit of each option under pumping (:func:`option_limits_m`) and the
upper bounds of the station heads are here; the rows of the classes under pumping, on
sections and on merged reaches, are in :mod:`optimiser.milp.pumps.class_rows`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from optimiser.analysis.flows import inflow_m3_s
from optimiser.analysis.surge import surge_head_m, water_density_kg_m3, wave_speeds_m_s
from optimiser.hydraulics.pumping import present_worth_factor, pump_power_kw
from optimiser.milp.built_model import Formulation
from optimiser.milp.data import ProblemData
from optimiser.model import Study, SurgeMethod

__all__ = ["PumpCosts", "add_pump_columns", "head_bounds_m", "head_caps_m",
           "head_upper_m", "option_limits_m", "pump_costs", "working_limits_m"]


@dataclass(frozen=True)
class PumpCosts:
    """Per scenario: kW per metre of head and present value of energy per metre."""

    kw_per_m: np.ndarray
    energy_value_per_m: np.ndarray
    station_cost_per_kw: float


def pump_costs(study: Study) -> PumpCosts:
    """The linear costs of the station heads of a pumped study."""
    pump = study.pump
    assert pump is not None
    density = water_density_kg_m3(study)
    flows = np.array([inflow_m3_s(study, s) for s in study.scenarios])
    hours = np.array([s.hours_per_year for s in study.scenarios])
    kw_per_m = pump_power_kw(density, flows, 1.0, pump.efficiency)
    factor = float(present_worth_factor(pump.discount_rate, pump.life_years))
    return PumpCosts(kw_per_m, factor * pump.energy_price * hours * kw_per_m,
                     pump.station_cost_per_kw)


def working_limits_m(form: Formulation) -> np.ndarray:
    """(m,) the most pumping pressure head each option takes with its surge (see
    :func:`option_limits_m`)."""
    return option_limits_m(form.data)


def option_limits_m(data: ProblemData) -> np.ndarray:
    """(m,) the most pumping pressure head each option takes with its surge: the
    allowable head less the allowance, or by wave speed the smaller of the allowable
    head and the surge limit less the surge at the option's largest velocity anywhere."""
    study = data.study
    catalogue = study.catalogue
    if study.surge.method is SurgeMethod.ALLOWANCE:
        return catalogue.allowable_head_m - study.surge_allowance_m
    fastest = data.velocity_m_s.max(axis=(0, 1))
    surge = surge_head_m(study, wave_speeds_m_s(study, catalogue), fastest)
    return np.minimum(catalogue.allowable_head_m, catalogue.surge_limit_head_m - surge)


def pumping_limits_exact(data: ProblemData) -> bool:
    """The limits of :func:`option_limits_m` are the check's for every piece: True with
    the allowance method, or by wave speed where every option has one largest velocity
    wherever it is admissible. Where the flow falls along the line, a piece laid only
    below the fall is slower than the option's largest velocity, and the limit is a
    restriction (not a relaxation) of the check's."""
    if data.study.surge.method is SurgeMethod.ALLOWANCE:
        return True
    fastest = data.velocity_m_s.max(axis=0)
    top = np.where(data.admissible, fastest, -np.inf).max(axis=0)
    low = np.where(data.admissible, fastest, np.inf).min(axis=0)
    used = data.admissible.any(axis=0)
    return bool(np.all(~used | (low >= top * (1 - 1e-12))))


def head_bounds_m(form: Formulation) -> np.ndarray:
    """(K,) upper bound of each station head in ``form`` (see :func:`head_upper_m`)."""
    return head_upper_m(form.data, form.pump_head_cap_m)


def head_upper_m(data: ProblemData, cap_m: np.ndarray | None = None) -> np.ndarray:
    """(K,) upper bound of each station head: max_head_m, ``cap_m`` (None: none), and
    the head at which even the strongest admissible option at the station could not
    take the pressure there."""
    study = data.study
    limit = float(np.max(option_limits_m(data)[data.admissible[0]]))
    entrance = (1.0 + study.source.entrance_k) * data.velocity_head_m[:, 0, :].max(axis=1)
    bound = limit + data.node_pipe_level_m[0] - data.source_level_m + entrance + 1.0
    if study.pump.max_head_m is not None:
        bound = np.minimum(bound, study.pump.max_head_m)
    if cap_m is not None:
        bound = np.minimum(bound, cap_m)
    return np.maximum(bound, 0.0)


def head_caps_m(data: ProblemData, incumbent_cost: float) -> np.ndarray:
    """(K,) the most head each scenario can use in a design of life-cycle cost at most
    ``incumbent_cost``: its energy present value plus its share of the station cost
    (installed power >= its power) cannot exceed the incumbent's cost less the cheapest
    pipes and the least energy of the other scenarios (each needs at least the head
    that the largest pipes everywhere leave short at the outlet). Infinite where a
    scenario's head costs nothing."""
    costs = pump_costs(data.study)
    least_loss = np.where(data.admissible[None], data.section_loss_m, np.inf).min(axis=2)
    least_head = np.maximum(0.0, data.study.outlet.required_head_m - data.source_level_m
                            + least_loss.sum(axis=1))
    pipes = float(np.where(data.admissible, data.section_cost, np.inf).min(axis=1).sum())
    energy = costs.energy_value_per_m * least_head
    per_m = costs.energy_value_per_m + costs.station_cost_per_kw * costs.kw_per_m
    spare = incumbent_cost - pipes - (energy.sum() - energy)
    with np.errstate(divide="ignore"):
        caps = np.where(per_m > 0, spare / np.where(per_m > 0, per_m, 1.0), np.inf)
    return np.maximum(caps * (1.0 + 1e-9) + 1e-6, least_head)


def add_pump_columns(form: Formulation) -> None:
    """The station head of every scenario (and the installed power), with their costs;
    nothing without a pump. ``form.pump_heads`` holds the head columns."""
    study = form.data.study
    if study.pump is None:
        return
    costs = pump_costs(study)
    upper = head_bounds_m(form)
    model = form.model
    form.pump_heads = [model.add_column(0.0, float(upper[k]), float(costs.energy_value_per_m[k]))
                       for k in range(form.data.n_scenarios)]
    if costs.station_cost_per_kw > 0:
        power = model.add_column(0.0, np.inf, costs.station_cost_per_kw)
        for k, head in enumerate(form.pump_heads):
            model.add_row([(power, 1.0), (head, -float(costs.kw_per_m[k]))], lower=0.0)
