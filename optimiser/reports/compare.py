"""Side-by-side comparison of design options (one study each): the table and its
terminal view; the page and workbook are in :mod:`optimiser.reports.compare_report`."""

from __future__ import annotations

import pandas as pd
from rich.console import Console
from rich.table import Table

from optimiser.model import Status
from optimiser.model.lines import study_lines
from optimiser.reports.life_cycle import COMPARE_COLUMNS, compare_fields, is_pumped_table
from optimiser.reports.text import short_title
from optimiser.sweeps.options import OptionResult, option_name

__all__ = ["comparison_row", "comparison_table", "option_name",
           "print_comparison"]

COMPARISON_COLUMNS = [
    "rank", "option", "title", "study", "status", "verified", "total_cost", "currency",
    "cost_per_l_s", "design_flow_l_s", "length_by_dn", "length_by_material", "n_changes",
    "highest_static_head_m", "least_pressure_margin_m", "least_margin_at_m",
    "highest_velocity_m_s", "uniform_option", "uniform_cost", "saving_vs_uniform",
    "gap", "lower_bound", "diagnosis", "new_tanks", "tank_cost",
]


def _lengths(pieces: pd.DataFrame, column: str, fmt: str) -> str:
    groups = pieces.groupby(column, sort=False)["length_m"].sum()
    return "; ".join(f"{fmt.format(key)}: {value / 1000:.2f} km" for key, value in
                     groups.sort_values(ascending=False).items())


def comparison_row(option: OptionResult) -> dict:
    study = option.study
    outcome = option.outcome
    # Flow delivered at every delivery point (the outlet alone on a single route).
    design_flow = max(sum(line.delivery_flow_m3_s(s) for line in study_lines(study))
                      for s in study.scenarios) * 1000.0
    row = {"option": option.label, "title": short_title(study.title),
           "study": str(option.path), "currency": study.currency,
           "design_flow_l_s": design_flow}
    if outcome is None:
        row.update(status=Status.ERROR, verified=False, diagnosis=option.error or "")
        return row
    row.update(status=outcome.status, verified=outcome.verified,
               diagnosis=" | ".join(outcome.diagnosis), gap=outcome.gap,
               lower_bound=outcome.lower_bound)
    if outcome.check is None or outcome.design is None:
        return row
    check = outcome.check
    row.update(compare_fields(check))  # a pumped main's life-cycle figures
    pieces = check.pieces
    margins = [(s.least_pressure_margin, s) for s in check.scenarios]
    least, _ = min(margins, key=lambda item: item[0]["pressure_m"] - item[0]["min_pressure_m"])
    row.update(
        total_cost=outcome.total_cost,
        cost_per_l_s=outcome.total_cost / design_flow if design_flow > 0 else None,
        length_by_dn=_lengths(pieces, "dn_mm", "DN{:g}"),
        length_by_material=_lengths(pieces, "material", "{}"),
        n_changes=outcome.design.n_changes,
        highest_static_head_m=float(pieces["static_head_m"].max()),
        least_pressure_margin_m=float(least["pressure_m"] - least["min_pressure_m"]),
        least_margin_at_m=float(least["chainage_m"]),
        highest_velocity_m_s=max(float(s.segments["velocity_m_s"].max())
                                 for s in check.scenarios),
        new_tanks=sum(1 for t in outcome.design.tanks if t.new),
        tank_cost=check.tank_cost_total,
    )
    if outcome.uniform is not None:
        row.update(uniform_option=outcome.uniform.option.label,
                   uniform_cost=outcome.uniform.cost,
                   saving_vs_uniform=outcome.uniform.cost - outcome.total_cost)
    return row


def comparison_table(options: list[OptionResult]) -> pd.DataFrame:
    """One row per option, ranked by cost; options without a design rank last."""
    table = pd.DataFrame([comparison_row(o) for o in options])
    # Pumped mains are ranked by life-cycle cost (contract section 9), gravity by capital.
    pumped = is_pumped_table(table)
    columns = COMPARISON_COLUMNS + COMPARE_COLUMNS if pumped else COMPARISON_COLUMNS
    for column in columns:
        if column not in table:
            table[column] = None
    by = "life_cycle_cost" if pumped else "total_cost"
    table = table.sort_values(by, na_position="last", kind="stable")
    ranks = [str(i) if pd.notna(cost) else "" for i, cost in
             enumerate(table[by], start=1)]
    table["rank"] = ranks
    return table[columns].reset_index(drop=True)


def print_comparison(console: Console, table: pd.DataFrame) -> None:
    """The deciding figures of each option, ranked; every column is in comparison.csv."""
    pumped = is_pumped_table(table)
    view = Table(title="Options ranked by " + ("life-cycle cost" if pumped else
                                               "capital cost"), title_justify="left")
    columns = [("rank", "#"), ("option", "option"), ("status", "status"),
               ("total_cost", "cost"), ("n_changes", "changes"), ("new_tanks", "tanks"),
               ("least_pressure_margin_m", "least margin m"), ("verified", "verified")]
    if pumped:
        columns[4:4] = [("energy_present_value", "energy PV"),
                        ("life_cycle_cost", "life-cycle")]
    for _, title in columns:
        view.add_column(title, justify="left" if title in ("option", "status") else "right")
    for row in table.itertuples(index=False):
        cells = []
        for key, _ in columns:
            value = getattr(row, key)
            if value is None or (isinstance(value, float) and pd.isna(value)):
                cells.append("–")
            elif isinstance(value, float):
                cells.append(f"{value:,.0f}" if abs(value) >= 100 else f"{value:.2f}")
            else:
                cells.append(str(value))
        view.add_row(*cells)
    console.print(view)
    for row in table.itertuples(index=False):
        if row.diagnosis:
            console.print(f"[bold]{row.option}[/bold]: {row.diagnosis}")
