"""The Monte Carlo of ``sensitivity`` on a gravity route or a branched scheme: its notes,
tables and terminal summary (a pumped main's: :mod:`optimiser.reports.pump_sensitivity`)."""

from __future__ import annotations

from typing import TYPE_CHECKING

import pandas as pd
import plotly.graph_objects as go
from rich.console import Console
from rich.table import Table

from optimiser.reports.pump_sensitivity import print_station_monte_carlo
from optimiser.reports.sweep_tables import flow

if TYPE_CHECKING:
    from optimiser.sweeps.sensitivity import SensitivityResult


def probability_notes(result: SensitivityResult) -> list[str]:
    """The Monte Carlo's probability of meeting each scenario, one sentence each."""
    if result.monte_carlo is None:
        return []
    mc = result.monte_carlo
    if result.pumped:
        return [f"Monte Carlo, year {mc.years:g}: the station can give the head scenario "
                f"{row.scenario!r} needs (within max_head_m) in "
                f"{100 * row.probability_meets:.1f} % of {row.samples:,} samples (median "
                f"{row.station_head_p50_m:.2f} m); the classes hold in "
                f"{100 * row.probability_classes_hold:.1f} %."
                for row in mc.summary.itertuples()]
    scheme = "governing_branch" in mc.summary.columns
    return [f"Monte Carlo, year {mc.years:g}: the fixed design meets scenario "
            f"{row.scenario!r} in {100 * row.probability_meets:.1f} % of {row.samples:,} "
            "samples" + (f"; its least delivery margin is at {row.governing_branch!r} in "
                         f"{100 * row.governing_share:.1f} % of them (median "
                         f"{row.outlet_margin_p50_m:+.2f} m)." if scheme else ".")
            for row in mc.summary.itertuples()]


def probability_figure(summary: pd.DataFrame) -> go.Figure:
    """The Monte Carlo summary as a table: per scenario, the probability that the fixed
    design meets it (outlet head and every minimum pressure) and its capacity."""
    header = ["scenario", "design flow (L/s)", "probability of meeting", "samples",
              "capacity p05 (L/s)", "p50 (L/s)", "p95 (L/s)"]

    def litres(column: str) -> list[str]:
        return ["none" if pd.isna(v) else f"{1000 * float(v):.2f}" for v in summary[column]]

    cells = [summary["scenario"].tolist(), litres("design_flow_m3_s"),
             [f"{100 * float(p):.1f} %" for p in summary["probability_meets"]],
             [f"{int(n):,}" for n in summary["samples"]], litres("capacity_p05_m3_s"),
             litres("capacity_p50_m3_s"), litres("capacity_p95_m3_s")]
    if "governing_branch" in summary.columns:  # a scheme: where the least margin is
        header += ["least delivery margin p05 / p50 (m)", "governing delivery point"]
        cells += [[f"{low:+.2f} / {mid:+.2f}" for low, mid in
                   zip(summary["outlet_margin_p05_m"], summary["outlet_margin_p50_m"],
                       strict=True)],
                  [f"{name} ({100 * share:.0f} %)" for name, share in
                   zip(summary["governing_branch"], summary["governing_share"],
                       strict=True)]]
    return _table_figure(header, cells)


def _table_figure(header: list[str], cells: list[list[str]]) -> go.Figure:
    figure = go.Figure(go.Table(header={"values": header, "align": "left"},
                                cells={"values": cells, "align": "left"}))
    figure.update_layout(height=80 + 30 * len(cells[0]), margin={"t": 10, "b": 10})
    return figure


def delivery_points_figure(table: pd.DataFrame) -> go.Figure:
    """A scheme's Monte Carlo per delivery point: how often it is met, how often it has
    the least margin, and its margin's percentiles."""
    header = ["scenario", "delivery point", "flow (L/s)", "probability met",
              "margin p05 (m)", "p50 (m)", "p95 (m)", "least margin in"]
    cells = [table["scenario"].tolist(), table["branch"].tolist(),
             [f"{1000 * float(q):.2f}" for q in table["delivery_flow_m3_s"]],
             [f"{100 * float(p):.1f} %" for p in table["probability_met"]],
             *[[f"{float(v):+.2f}" for v in table[c]]
               for c in ("margin_p05_m", "margin_p50_m", "margin_p95_m")],
             [f"{100 * float(p):.1f} %" for p in table["governs_share"]]]
    return _table_figure(header, cells)

def print_monte_carlo(console: Console, result: SensitivityResult) -> None:
    """The Monte Carlo summary (on a scheme with its governing delivery point)."""
    if result.monte_carlo is None or result.monte_carlo_settings is None:
        return
    settings = result.monte_carlo_settings
    summary = result.monte_carlo.summary
    title = (f"Monte Carlo: {settings.samples} samples, seed {settings.seed}, "
             f"{settings.distribution.kind} {settings.distribution.low_mm:g}-"
             f"{settings.distribution.high_mm:g} mm, year {settings.years:g}")
    if result.pumped:
        print_station_monte_carlo(console, summary, title, result.study.currency)
        return
    scheme = "governing_branch" in summary.columns
    view = Table(title=title, title_justify="left")
    columns = ["scenario", "design flow", "P(meets)", "capacity p05", "p50", "p95"]
    if scheme:
        columns += ["delivery margin p50 m", "least margin at"]
    for column in columns:
        view.add_column(column, justify="left" if column in ("scenario", "least margin at")
                        else "right")
    for row in summary.itertuples():
        cells = [row.scenario, flow(row.design_flow_m3_s), f"{row.probability_meets:.3f}",
                 flow(row.capacity_p05_m3_s), flow(row.capacity_p50_m3_s),
                 flow(row.capacity_p95_m3_s)]
        if scheme:
            cells += [f"{row.outlet_margin_p50_m:+.2f}",
                      f"{row.governing_branch} ({100 * row.governing_share:.0f} %)"]
        view.add_row(*cells)
    console.print(view)
