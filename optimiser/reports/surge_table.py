"""Terminal table of the pressure class of each piece: static head, surge head, the limit
that governs (contract sections 5 and 10)."""

from __future__ import annotations

from rich import box
from rich.console import Console
from rich.table import Table

from optimiser.analysis.check import CheckResult
from optimiser.model import SurgeMethod
from optimiser.reports.terminal import chainage_label


def print_class_table(console: Console, result: CheckResult) -> None:
    """Static and surge head of every piece against its class; nothing when no piece
    carries any surge (the allowance is zero)."""
    pieces = result.pieces
    if not (pieces["surge_head_m"] > 0).any():
        return
    study = result.study
    if study.surge.method is SurgeMethod.JOUKOWSKY:
        closure = study.surge.closure_time_s
        how = ("surge a V / g from each pipe's wave speed" if closure == 0 else
               f"surge from each pipe's wave speed, closure in {closure:g} s")
    else:
        how = f"surge allowance {study.surge_allowance_m:g} m"
    table = Table(title=f"Pressure classes ({how})", title_justify="left",
                  box=box.SIMPLE_HEAD, pad_edge=False, padding=(0, 1, 0, 0))
    # "set by": static + surge head against the surge limit, or static head alone
    for column in ("from", "to", "class", "a m/s", "static m", "surge m", "limit m",
                   "spare m", "set by"):
        table.add_column(column, justify="left" if column in ("class", "set by") else "right")
    for row in pieces.itertuples():
        by_surge = row.class_governs == "static + surge"
        limit = row.allowable_surge_head_m if by_surge else row.allowable_head_m
        demand = row.static_head_m + (row.surge_head_m if by_surge else 0.0)
        speed = "" if row.wave_speed_m_s != row.wave_speed_m_s else f"{row.wave_speed_m_s:.0f}"
        table.add_row(chainage_label(row.from_m), chainage_label(row.to_m), row.pressure_class,
                      speed, f"{row.static_head_m:.1f}", f"{row.surge_head_m:.1f}",
                      f"{limit:.1f}", f"{limit - demand:+.1f}",
                      "surge" if by_surge else "static")
    console.print(table)
