"""The comparison's page (``comparison.html``, printed to ``comparison.pdf``) and
workbook (``comparison.xlsx``), from ``templates/comparison.html.j2``. Each option keeps
one colour (:func:`optimiser.reports.colours.option_colours`) in every chart here and in
its own design report."""

from __future__ import annotations

import math
from pathlib import Path

import pandas as pd
import plotly.graph_objects as go
from openpyxl import Workbook

from optimiser.analysis.appurtenances import schedule
from optimiser.reports import numbers as fmt
from optimiser.reports.bill import bill_of_quantities
from optimiser.reports.charts import profile_figure
from optimiser.reports.hashing import file_sha256
from optimiser.reports.html import Grid
from optimiser.reports.inputs import input_tables
from optimiser.reports.life_cycle import is_pumped_table
from optimiser.reports.life_cycle_chart import life_cycle_bars
from optimiser.reports.pages import TitleBlock, chart, render
from optimiser.reports.pdf import PRINTABLE_WIDTH_PX
from optimiser.reports.run_summary import RunSummary
from optimiser.reports.scheme_diagram import scheme_figure
from optimiser.reports.workbook import (
    Column,
    add_sheet,
    bill_sheet,
    cautions_sheet,
    inputs_sheet,
    save,
    schedule_sheet,
)
from optimiser.sweeps.options import OptionResult

DOCUMENT = "Comparison of options"


def _value(row: pd.Series, key: str) -> float | None:
    value = row.get(key)
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return None
    return float(value)


def comparison_title(options: list[OptionResult], keys: list[str],
                     colours: dict[str, str]) -> TitleBlock:
    """The title block of the comparison: each option with its file and hash."""
    titles = list(dict.fromkeys(option.study.title for option in options))
    block = TitleBlock.make(" / ".join(titles), ", ".join(keys), None, DOCUMENT)
    rows = tuple((key, colours[key], str(option.path), file_sha256(Path(option.path)))
                 for key, option in zip(keys, options, strict=True))
    return TitleBlock(block.project, block.option, block.study_file, block.study_sha256,
                      block.date, block.tool_version, DOCUMENT, rows)


def _ranked_grid(table: pd.DataFrame, keys_by_path: dict[str, str]) -> Grid:
    rows = []
    for _, row in table.iterrows():
        currency = row.get("currency") or ""
        rows.append((
            str(row["rank"]), keys_by_path.get(str(row["study"]), str(row["option"])),
            str(row["status"]), fmt.money(_value(row, "total_cost"), currency),
            fmt.money(_value(row, "cost_per_l_s"), currency),
            fmt.flow_l_s((_value(row, "design_flow_l_s") or 0) / 1000),
            "–" if _value(row, "n_changes") is None else f"{int(row['n_changes'])}",
            fmt.head(_value(row, "highest_static_head_m")),
            fmt.head(_value(row, "least_pressure_margin_m")),
            fmt.velocity(_value(row, "highest_velocity_m_s")),
            fmt.money(_value(row, "saving_vs_uniform"), currency),
            fmt.percent(_value(row, "gap"))))
    return Grid(("rank", "option", "status", "capital cost", "cost per L/s",
                 "design flow (L/s)", "changes", "highest static head (m)",
                 "least pressure margin (m)", "highest velocity (m/s)",
                 "saving on one pipe", "gap"), rows)


def _cost_figure(table: pd.DataFrame, keys_by_path: dict[str, str],
                 colours: dict[str, str]) -> go.Figure:
    priced = table[table["total_cost"].notna()]
    names = [keys_by_path.get(str(s), str(o)) for s, o in zip(priced["study"],
                                                              priced["option"], strict=True)]
    currency = next((c for c in priced["currency"] if c), "")
    if is_pumped_table(priced):  # capital and energy stacked (a pumped main)
        return life_cycle_bars(priced, names, currency)
    fig = go.Figure(go.Bar(
        x=priced["total_cost"], y=names, orientation="h",
        marker={"color": [colours.get(n, "#4A4A4A") for n in names]},
        hovertemplate="%{y}<br>%{x:,.0f}<extra></extra>"))
    fig.update_layout(template="plotly_white", height=120 + 34 * len(names),
                      xaxis={"title": f"capital cost ({currency})".replace(" ()", ""),
                             "tickformat": ",.0f"},
                      yaxis={"autorange": "reversed"},
                      margin={"l": 140, "r": 20, "t": 15, "b": 45})
    return fig


def comparison_html(table: pd.DataFrame, options: list[OptionResult], keys: list[str],
                    colours: dict[str, str], printing: bool = False) -> str:
    """The comparison page: title block, cautions, ranked table, costs, one long section
    per option (in its colour) and each option's inputs."""
    keys_by_path = {str(o.path): k for o, k in zip(options, keys, strict=True)}
    width = PRINTABLE_WIDTH_PX if printing else None
    heading = "Life-cycle cost" if is_pumped_table(table) else "Capital cost"
    charts = [chart(heading, "plot-cost", _cost_figure(table, keys_by_path, colours),
                    width)]
    sections = []
    for index, (key, option) in enumerate(zip(keys, options, strict=True)):
        outcome = option.outcome
        if outcome is None or outcome.check is None:
            reason = option.error or " | ".join(outcome.diagnosis if outcome else [])
            sections.append({"key": key, "colour": colours[key], "chart": None,
                             "reason": reason or "no design", "inputs": []})
            continue
        check = outcome.check
        # A scheme is shown by its diagram: one long section could show only the trunk.
        figure = (scheme_figure(check.study, check.design) if check.study.is_scheme else
                  profile_figure(check, title="", colour=colours[key],
                                 appurtenances=schedule(check)))
        charts.append(chart(key, f"plot-{index}", figure, width))
        sections.append({"key": key, "colour": colours[key], "chart": charts[-1],
                         "reason": "", "inputs": input_tables(
                             option.study, RunSummary.from_outcome(outcome))})
    return render("comparison.html.j2", comparison_title(options, keys, colours), printing,
                  charts=charts, colour=None, ranked=_ranked_grid(table, keys_by_path),
                  lengths=Grid(("option", "length by size", "length by material",
                                "notes"), [
                      (keys_by_path.get(str(r.study), str(r.option)),
                       r.length_by_dn or "–", r.length_by_material or "–",
                       r.diagnosis or "") for r in table.itertuples()]),
                  sections=sections)


_COMPARISON_COLUMNS = {
    "rank": Column("rank", "text", 6), "option": Column("option", "text", 16),
    "title": Column("title", "text", 30), "study": Column("study file", "text", 30),
    "status": Column("status", "text", 10), "verified": Column("verified", "text", 9),
    "total_cost": Column("capital cost", "money", 14), "currency": Column("currency", "text", 9),
    "cost_per_l_s": Column("cost per L/s", "money", 12),
    "design_flow_l_s": Column("design flow (L/s)", "flow", 11),
    "length_by_dn": Column("length by size", "text", 30),
    "length_by_material": Column("length by material", "text", 30),
    "n_changes": Column("changes (no.)", "count", 9),
    "highest_static_head_m": Column("highest static head (m)", "head", 12),
    "least_pressure_margin_m": Column("least pressure margin (m)", "head", 12),
    "least_margin_at_m": Column("least margin at (m)", "length", 12),
    "highest_velocity_m_s": Column("highest velocity (m/s)", "velocity", 11),
    "uniform_option": Column("cheapest single pipe", "text", 24),
    "uniform_cost": Column("its cost", "money", 14),
    "saving_vs_uniform": Column("saving on one pipe", "money", 14),
    "gap": Column("gap", "percent", 9), "lower_bound": Column("best bound", "money", 14),
    "diagnosis": Column("notes", "text", 40),
    "life_cycle_cost": Column("life-cycle cost", "money", 14),
    "station_cost": Column("pump station", "money", 13),
    "energy_present_value": Column("energy, present value", "money", 14),
    "installed_kw": Column("installed power (kW)", "head", 11),
    "new_tanks": Column("new break-pressure tanks (no.)", "count", 9),
    "tank_cost": Column("cost of new tanks", "money", 14),
}


def _cell(value: object) -> object:
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return None
    return value if isinstance(value, int | float | str) else str(value)


def comparison_workbook(table: pd.DataFrame, options: list[OptionResult],
                        keys: list[str]) -> bytes:
    """``comparison.xlsx``: cautions, the ranked options, each option's schedule and bill
    of quantities, and the inputs of every option."""
    book = Workbook()
    book.remove(book.active)
    taken: set[str] = set()
    cautions_sheet(book, taken)
    columns = [_COMPARISON_COLUMNS[c] for c in table.columns]
    add_sheet(book, "Comparison", columns,
              [[_cell(v) for v in row] for row in table.itertuples(index=False)], taken)
    studies = {}
    for key, option in zip(keys, options, strict=True):
        outcome = option.outcome
        if outcome is None or outcome.check is None:
            continue
        check = outcome.check
        schedule_sheet(book, key, check, taken)
        bill_sheet(book, f"{key[:26]} BoQ", bill_of_quantities(check, schedule(check)),
                   option.study.currency, taken, check.total_cost)
        studies[key] = (option.study, RunSummary.from_outcome(outcome))
    inputs_sheet(book, "Inputs", studies, taken)
    return save(book)


COMPARISON_CSV_DECIMALS = {"total_cost": 2, "cost_per_l_s": 2, "design_flow_l_s": 3,
                           "highest_static_head_m": 3, "least_pressure_margin_m": 3,
                           "least_margin_at_m": 3, "highest_velocity_m_s": 3,
                           "uniform_cost": 2, "saving_vs_uniform": 2, "lower_bound": 2,
                           "life_cycle_cost": 2, "station_cost": 2,
                           "energy_present_value": 2, "installed_kw": 3}
"""Decimals of comparison.csv's columns (and of the workbook's, which holds the same)."""

COMPARISON_FILES = frozenset({"comparison.csv", "comparison.xlsx", "comparison.html",
                              "comparison.pdf"})
"""The files of a comparison beside each option's folder (the PDF when a browser is found)."""


def write_comparison_files(folder: Path, table: pd.DataFrame, options: list[OptionResult],
                           keys: list[str], *, paper: str = "a4",
                           notes: list[str] | None = None) -> None:
    """comparison.csv, .xlsx, .html, .pdf and, in a folder named by each option's key,
    the design files of every option with a design (in the option's colour)."""
    from optimiser.io.writers import atomic_write_bytes, atomic_write_text, write_csv
    from optimiser.reports.colours import option_colours
    from optimiser.reports.files import write_design_files, write_pdf

    notes = [] if notes is None else notes
    colours = option_colours(keys)
    table = table.round(COMPARISON_CSV_DECIMALS)
    for key, option in zip(keys, options, strict=True):
        outcome = option.outcome
        if outcome is None or outcome.check is None:
            continue
        (folder / key).mkdir()
        write_design_files(folder / key, outcome, option.study, paper=paper, option=key,
                           colour=colours[key], notes=notes)
    write_csv(folder / "comparison.csv", table)
    atomic_write_bytes(folder / "comparison.xlsx", comparison_workbook(table, options, keys))
    atomic_write_text(folder / "comparison.html",
                      comparison_html(table, options, keys, colours))
    write_pdf(folder / "comparison.pdf",
              comparison_html(table, options, keys, colours, printing=True),
              comparison_title(options, keys, colours), paper, notes)
