"""Life-cycle cost of a pumped main (contract section 9): JSON fields, terminal lines,
a table for the workbook and the HTML report.

Every function returns or prints nothing for a gravity study, so the outputs of a study
without ``[pump]`` are exactly what they were.
"""

from __future__ import annotations

from typing import Any

import pandas as pd
from rich.console import Console
from rich.table import Table

from optimiser.analysis.check import CheckResult

STATION_CAUTION = (
    "The station head is the least that meets the limits at the design flows; pump "
    "selection (duty point, NPSH, number of units, standby), the non-return valve and "
    "surge protection against a pump trip need a specialist's design.")


PUMP_STATEMENT = (
    "With the pump: pipes and the station head of every scenario are chosen together "
    "for the least life-cycle cost (pipes and changes + station cost per kW installed + "
    "present worth of the energy), in one linear programme after Alperovits & Shamir "
    "(1977). Lower bound, LP bound and gap are of the life-cycle cost. Pressure classes "
    "under pumping are held conservatively in the model (the energy at the start of a "
    "section with its lowest pipe level, no velocity head deducted); the check judges "
    "them exactly.")


def print_design_station(console: Console, result: CheckResult) -> None:
    """The station and the life-cycle cost under the design's totals (nothing without
    a pump)."""
    if result.station is None:
        return
    print_station(console, result)
    console.print("Lower bound, LP bound and gap above are of the life-cycle cost.",
                  markup=False, highlight=False)


def life_cycle_fields(result: CheckResult) -> dict[str, Any]:
    """``pump`` and ``life_cycle_cost`` for the JSON (empty without a pump)."""
    if result.station is None:
        return {}
    return {"pump": result.station.as_dict(), "life_cycle_cost": result.life_cycle_cost}


def pumping_piece_fields(result: CheckResult) -> list[str]:
    """Piece columns the check's JSON adds with a pump: the largest pressure head while
    pumping, the static head of the static line, and which one the class takes."""
    if result.station is None:
        return []
    return ["pumping_head_m", "still_head_m", "class_head"]


def breakdown(result: CheckResult) -> list[tuple[str, float]]:
    """(part, amount) of the life-cycle cost: pipes (with changes), station, energy
    present value and the total (empty without a pump)."""
    station = result.station
    if station is None:
        return []
    total = result.life_cycle_cost
    assert total is not None
    return [("pipes and changes (capital)", result.total_cost),
            ("pump station (capital)", station.station_cost),
            ("energy, present value", station.energy_present_value),
            ("life-cycle cost", total)]


def station_table(result: CheckResult) -> pd.DataFrame:
    """Head, power and energy per scenario (empty without a pump)."""
    station = result.station
    if station is None:
        return pd.DataFrame()
    study = result.study
    rows = [{"scenario": s.name, "inflow_m3_s": r.inflow_m3_s,
             "head_m": station.head_m[s.name], "power_kw": station.power_kw[s.name],
             "hours_per_year": s.hours_per_year,
             "energy_kwh_per_year": station.energy_kwh_per_year[s.name],
             "energy_cost_per_year": station.energy_kwh_per_year[s.name]
             * (study.pump.energy_price if study.pump else 0.0)}
            for s, r in zip(study.scenarios, result.scenarios, strict=True)]
    return pd.DataFrame(rows)


def cost_table(result: CheckResult) -> pd.DataFrame:
    """The breakdown and the economic settings as rows (empty without a pump)."""
    station = result.station
    pump = result.study.pump
    if station is None or pump is None:
        return pd.DataFrame()
    rows = [{"item": part, "value": amount} for part, amount in breakdown(result)]
    rows += [{"item": "installed power kW", "value": station.installed_kw},
             {"item": "energy cost a year", "value": station.energy_cost_per_year},
             {"item": "present worth factor", "value": station.present_worth_factor},
             {"item": "energy price per kWh", "value": pump.energy_price},
             {"item": "discount rate", "value": pump.discount_rate},
             {"item": "life years", "value": pump.life_years},
             {"item": "wire-to-water efficiency", "value": pump.efficiency}]
    return pd.DataFrame(rows)


def print_station(console: Console, result: CheckResult) -> None:
    """The station per scenario and the life-cycle cost breakdown (nothing without a
    pump)."""
    station = result.station
    if station is None:
        return
    currency = result.study.currency
    table = Table(title="Pump station (least head meeting every limit)",
                  title_justify="left")
    for column in ("scenario", "head m", "power kW", "hours a year", "energy kWh a year"):
        table.add_column(column, justify="left" if column == "scenario" else "right")
    for row in station_table(result).itertuples():
        table.add_row(row.scenario, f"{row.head_m:.2f}", f"{row.power_kw:.2f}",
                      f"{row.hours_per_year:,.0f}", f"{row.energy_kwh_per_year:,.0f}")
    console.print(table)
    console.print(f"Installed power {station.installed_kw:,.2f} kW; energy "
                  f"{station.energy_cost_per_year:,.0f} {currency} a year; present worth "
                  f"factor {station.present_worth_factor:.4f}".replace("  ", " "),
                  markup=False, highlight=False)
    for part, amount in breakdown(result):
        console.print(f"{part + ':':30s} {amount:>16,.0f} {currency}".rstrip(),
                      markup=False, highlight=False)
    for note in result.notes:
        console.print(f"Note: {note}", markup=False, highlight=False)
    console.print(STATION_CAUTION, markup=False, highlight=False)


def sheet_specs(result: CheckResult
                ) -> list[tuple[str, list[tuple[str, str, float]], list[tuple]]]:
    """Workbook sheets of the station: (title, columns as (header, number kind, width),
    rows); none without a pump."""
    if result.station is None:
        return []
    currency = result.study.currency or "currency"
    per_scenario = station_table(result)
    return [
        ("Life-cycle cost", [("item", "text", 34), (f"value ({currency}, or as named)",
                                                     "head", 20)],
         [(row.item, row.value) for row in cost_table(result).itertuples()]),
        ("Pump station", [("scenario", "text", 18), ("inflow (L/s)", "flow", 11),
                          ("head (m)", "head", 10), ("power (kW)", "head", 11),
                          ("hours a year", "length", 12), ("energy (kWh a year)", "money", 16),
                          (f"energy cost a year ({currency})", "money", 18)],
         [(r.scenario, r.inflow_m3_s * 1000, r.head_m, r.power_kw, r.hours_per_year,
           r.energy_kwh_per_year, r.energy_cost_per_year) for r in per_scenario.itertuples()]),
    ]


def html_section(result: CheckResult) -> dict[str, Any] | None:
    """The report's station section: breakdown rows and the per-scenario grid (None
    without a pump)."""
    if result.station is None:
        return None
    currency = result.study.currency
    per_scenario = station_table(result)
    return {
        "breakdown": [(part, f"{amount:,.0f} {currency}".strip())
                      for part, amount in breakdown(result)],
        "columns": ("scenario", "head (m)", "power (kW)", "hours a year",
                    "energy (kWh a year)"),
        "rows": [(r.scenario, f"{r.head_m:.2f}", f"{r.power_kw:.2f}",
                  f"{r.hours_per_year:,.0f}", f"{r.energy_kwh_per_year:,.0f}")
                 for r in per_scenario.itertuples()],
        "note": (f"Installed power {result.station.installed_kw:,.2f} kW; energy "
                 f"{result.station.energy_cost_per_year:,.0f} {currency} a year; present "
                 f"worth factor {result.station.present_worth_factor:.4f}. "
                 "With a design run, the bound and the gap are of the life-cycle cost. "
                 + STATION_CAUTION),
    }


COMPARE_COLUMNS = ["life_cycle_cost", "station_cost", "energy_present_value",
                   "installed_kw"]
"""Columns a comparison adds when an option is a pumped main."""


def compare_fields(result: CheckResult | None) -> dict[str, Any]:
    """An option's life-cycle figures for the comparison table (empty without a pump)."""
    if result is None or result.station is None:
        return {}
    station = result.station
    return {"life_cycle_cost": result.life_cycle_cost, "station_cost": station.station_cost,
            "energy_present_value": station.energy_present_value,
            "installed_kw": station.installed_kw}


def is_pumped_table(table: pd.DataFrame) -> bool:
    """True when some option of a comparison table has a life-cycle cost."""
    return "life_cycle_cost" in table.columns and bool(table["life_cycle_cost"].notna().any())
