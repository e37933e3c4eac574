"""What the sweep reports share: number formats, JSON records and the terminal table of a
sweep (one row per step, with the reason for each step without a design)."""

from __future__ import annotations

import math
from typing import Any

import pandas as pd
from rich.console import Console
from rich.table import Table

from optimiser.model import Status
from optimiser.reports.terminal import chainage_label, flow_text

INFEASIBLE_NOTE = ("Steps marked infeasible have no design meeting every limit; they are "
                   "results of the sweep, not errors.")


def money(value: float | None, currency: str = "") -> str:
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "-"
    return f"{value:,.0f}" + (f" {currency}" if currency else "")


def gap_text(value: float | None) -> str:
    """A relative gap as a percentage, to two significant figures: 0.00061 -> '0.061 %'."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "-"
    return f"{100 * value:.2g} %" if value > 0 else "0 %"


def records(table: pd.DataFrame) -> list[dict[str, Any]]:
    """Rows as dicts with None for missing values (JSON null, not NaN)."""
    return [{k: (None if isinstance(v, float) and math.isnan(v) else v) for k, v in r.items()}
            for r in table.to_dict(orient="records")]


def flow(value: float | None) -> str:
    """A flow for the terminal; a missing value (None or NaN) reads "none"."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "none"
    return flow_text(float(value))


def status_style(status: str) -> str:
    return {Status.OPTIMAL: "green", Status.FEASIBLE: "yellow", Status.INFEASIBLE: "red",
            Status.FAILED: "bold red"}.get(status, "")


def sweep_terminal_table(title: str, table: pd.DataFrame, value_header: str,
                          value_text, currency: str) -> tuple[Table, list[str]]:
    """The table of a sweep, and one line per step without a design (its reason)."""
    view = Table(title=title, title_justify="left")
    for column, justify in ((value_header, "right"), ("status", "left"),
                            ("least cost", "right"), ("gap", "right"),
                            ("pieces", "left"), ("limiting point", "left")):
        view.add_column(column, justify=justify)
    reasons = []
    for row in table.itertuples(index=False):
        row = row._asdict()
        status = row["status"]
        value = value_text(row[table.columns[0]])
        if Status(status).has_design:
            binding = (f"{row['binding_what']} at {chainage_label(row['binding_chainage_m'])}"
                       f", {row['binding_scenario']} ({row['binding_margin_m']:+.2f} m)")
            detail = row["pieces"]
        else:
            binding = ""
            detail = "no design (see below)" if status == Status.INFEASIBLE else \
                "solver failed (see below)"
            reasons.append(f"{value}: {status}: {row['note'] or 'no reason given'}")
        style = status_style(status)
        shown = "feasible (time limit)" if status == Status.FEASIBLE \
            else status
        view.add_row(value, f"[{style}]{shown}[/{style}]", money(row["cost"], currency),
                     gap_text(row["gap"]), detail, binding)
    return view, reasons


def print_sweep(console: Console, view: Table, reasons: list[str]) -> None:
    console.print(view)
    for reason in reasons:
        console.print(f"- {reason}", markup=False, highlight=False)
