"""Break-pressure tanks in the outputs (contract section 8): the JSON fields, the terminal
lines and the rows of ``break_pressure_tanks.csv``."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from rich.console import Console

from optimiser.analysis.check import CheckResult
from optimiser.analysis.tanks import tank_table_rows
from optimiser.analysis.violation_text import at

if TYPE_CHECKING:
    from optimiser.milp.outcome import DesignOutcome

TANK_COLUMNS = ["branch", "chainage_m", "water_level_m", "new", "cost", "label"]
"""Columns of ``break_pressure_tanks.csv`` (contract section 8)."""

__all__ = ["TANK_COLUMNS", "print_tank_totals", "print_tanks", "tank_dicts",
           "tank_table_rows"]


def tank_dicts(result: CheckResult) -> list[dict[str, Any]]:
    """The JSON's ``break_pressure_tanks``: the CSV fields, plus per scenario the margin
    by which the energy arriving after the inlet loss clears the water level."""
    rows = tank_table_rows(result.study, result.tanks)
    for index, row in enumerate(rows):
        row["inflow_margin_m"] = {
            s.name: float(s.tank_inflow_energy_m[index]) - row["water_level_m"]
            for s in result.scenarios if s.tank_inflow_energy_m is not None}
    return rows


def print_tanks(console: Console, result: CheckResult) -> None:
    """One line per tank: where, water level, new or the study's own, cost, and the
    least margin to fill it over the scenarios."""
    if not result.tanks:
        return
    console.print("[bold]Break-pressure tanks[/bold]")
    currency = result.study.currency
    for index, row in enumerate(tank_table_rows(result.study, result.tanks)):
        margins = [float(s.tank_inflow_energy_m[index]) - row["water_level_m"]
                   for s in result.scenarios if s.tank_inflow_energy_m is not None]
        kind = f"new, {row['cost']:,.0f} {currency}".rstrip() if row["new"] \
            else "the study's own"
        label = f" ({row['label']})" if row["label"] else ""
        least = f"; least margin to fill {min(margins):.2f} m" if margins else ""
        console.print(f"- {at(row['chainage_m'])}{label}: water level "
                      f"{row['water_level_m']:.2f} m, {kind}{least}",
                      markup=False, highlight=False)


def print_tank_totals(console: Console, outcome: DesignOutcome, currency: str) -> None:
    """The new tanks in the total, and the design without new tanks it is set against."""
    check = outcome.check
    if check is None or (not check.tank_cost_total and outcome.no_new_tank_status is None):
        return
    new = sum(1 for t in check.tanks if t.new)
    console.print(f"New break-pressure tanks: {new}, "
                  f"{check.tank_cost_total:,.0f} {currency} (in the total)".rstrip())
    if outcome.no_new_tank_status is None:
        return
    if outcome.no_new_tank_cost is None or outcome.total_cost is None:
        console.print("Without new tanks: no design meets every limit "
                      f"({outcome.no_new_tank_status}).")
        return
    saving = outcome.no_new_tank_cost - outcome.total_cost
    console.print(f"Best design without new tanks: {outcome.no_new_tank_cost:,.0f} {currency} "
                  f"({outcome.no_new_tank_status}); saving {saving:,.0f} {currency}")
