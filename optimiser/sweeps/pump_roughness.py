"""How a fixed design of a pumped main and its station fare across a roughness range.

The engineer's question: if the pipe is rougher than assumed, or ages, how much more
head and energy does the station need, and can the pump chosen still do it? At each
roughness the study is checked as written but for the roughness
(:func:`optimiser.sweeps.variants.with_roughness`: each scenario applies its own rule to
the swept value) by the independent check itself (:func:`optimiser.analysis.
check_design`), whose station part finds the least head meeting every limit of each
scenario (:func:`optimiser.analysis.pumping.least_head_m`), caps it at ``max_head_m``,
prices the energy (power P = rho g Q H / (1000 eta), the present worth factor of the
contract's section 9) and judges the classes under the pumping pressures. A rougher
pipe loses more head at the same flow (Colebrook, C.F. (1939), Turbulent flow in
pipes, J. Inst. Civil Eng. 11), so the head, power and energy grow with roughness.

Columns, one row per scenario and roughness: ``scenario``, ``roughness_mm`` (the swept
value), ``scenario_roughness_mm`` (the value the scenario used), ``station_head_m``
(the least head meeting every limit, before the cap), ``extra_head_m`` (that head less
the one needed at the study's own roughness), ``max_head_m`` (empty without one),
``within_max_head``, ``head_m`` (the head checked with: capped at ``max_head_m``),
``power_kw``, ``energy_kwh_per_year`` and ``energy_cost_per_year`` of the scenario at
that head; for the whole station at that roughness ``installed_kw``, ``station_cost``,
``energy_present_value`` and ``life_cycle_cost`` (pipes + station + energy present
value); ``meets`` (every limit of the scenario met with the head checked: pressures,
delivery head, down-surge) and ``classes_hold`` (every piece's class takes the pumping
and static heads plus surge at that roughness).
"""

from __future__ import annotations

from collections.abc import Sequence

import pandas as pd

from optimiser.analysis import check_design
from optimiser.analysis.check import CheckResult
from optimiser.model import Design, Study
from optimiser.sweeps.variants import with_roughness

SCENARIO_LIMITS = ("min_pressure", "outlet_head", "transient_pressure")
"""The limits a scenario's ``meets`` covers, as on a gravity route: those the station's
head answers (velocities do not change with roughness; classes are ``classes_hold``)."""


def _rows(study: Study, check: CheckResult, value: float, nominal: dict[str, float]
          ) -> list[dict]:
    pump = study.pump
    station = check.station
    assert pump is not None and station is not None
    classes_hold = not any(v.kind == "max_pressure" for v in check.violations)
    life_cycle = check.life_cycle_cost
    rows = []
    for scenario in check.study.scenarios:
        name = scenario.name
        needed = station.needed_head_m[name]
        energy = station.energy_kwh_per_year[name]
        short = [v for v in check.violations
                 if v.scenario == name and v.kind in SCENARIO_LIMITS]
        rows.append({
            "scenario": name, "roughness_mm": value,
            "scenario_roughness_mm": scenario.roughness_mm,  # set by with_roughness
            "station_head_m": needed, "extra_head_m": needed - nominal[name],
            "max_head_m": pump.max_head_m,
            "within_max_head": pump.max_head_m is None or needed <= pump.max_head_m + 1e-9,
            "head_m": station.head_m[name], "power_kw": station.power_kw[name],
            "energy_kwh_per_year": energy,
            "energy_cost_per_year": energy * pump.energy_price,
            "installed_kw": station.installed_kw, "station_cost": station.station_cost,
            "energy_present_value": station.energy_present_value,
            "life_cycle_cost": life_cycle, "meets": not short,
            "classes_hold": classes_hold})
    return rows


def pump_roughness_sweep(study: Study, design: Design,
                         roughness_mm: Sequence[float]) -> pd.DataFrame:
    """The station and the fixed design of a pumped main at each roughness, per
    scenario (columns in the module docstring; scenarios in the study's order, each
    over the whole range)."""
    if study.pump is None:
        raise ValueError(f"'{study.title}' has no [pump]")
    own = check_design(study, design, capacity=False).station
    assert own is not None
    values = [float(v) for v in roughness_mm]
    by_value = [_rows(study, check_design(with_roughness(study, value), design,
                                          capacity=False), value, own.needed_head_m)
                for value in values]
    # Scenario after scenario, each over the range in the order given.
    return pd.DataFrame([rows[index] for index in range(len(study.scenarios))
                         for rows in by_value])
