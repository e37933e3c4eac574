"""The terminal's summary of a scheme: one row per line (the trunk, each branch) with its
junction, length, pieces and cost, and the least margins found on it in any scenario,
so that the line which limits the scheme is seen at a glance."""

from __future__ import annotations

from rich import box
from rich.console import Console
from rich.table import Table

from optimiser.analysis.check import CheckResult
from optimiser.reports.numbers import chainage_label
from optimiser.reports.scheme_tables import branch_totals, scheme_total


def least_margins(result: CheckResult) -> dict[str, tuple[float, float]]:
    """Per line: the least delivery margin and the least pressure margin [m] over every
    scenario."""
    margins: dict[str, tuple[float, float]] = {}
    for scenario in result.scenarios:
        points = scenario.points
        pressure = (points["pressure_m"] - points["min_pressure_m"]).groupby(
            points["branch"]).min()
        for outlet in scenario.outlets:
            delivery, least = margins.get(outlet.branch, (float("inf"), float("inf")))
            margins[outlet.branch] = (min(delivery, outlet.margin_m),
                                      min(least, float(pressure.get(outlet.branch,
                                                                    float("inf")))))
    return margins


def print_scheme_summary(console: Console, result: CheckResult) -> None:
    """The table of lines with their totals and least margins, and the scheme's total."""
    study = result.study
    currency = study.currency
    totals = branch_totals(study, result.pieces)
    margins = least_margins(result)
    view = Table(title="Branches (least margins over every scenario)", title_justify="left",
                 box=box.SIMPLE_HEAD, pad_edge=False, padding=(0, 1, 0, 0))
    for header in ("branch", "leaves", "at", "length\nm", "pieces", f"cost\n{currency}".strip(),
                   "delivery\nmargin m", "pressure\nmargin m"):
        view.add_column(header, justify="left" if header in ("branch", "leaves") else "right",
                        overflow="fold")
    for row in totals.itertuples():
        delivery, pressure = margins.get(row.branch, (float("nan"), float("nan")))
        view.add_row(row.branch, row.leaves,
                     "" if row.leaves == "source" else chainage_label(row.at_chainage_m),
                     f"{row.length_m:,.1f}", str(row.pieces), f"{row.cost:,.0f}",
                     f"{delivery:+.2f}", f"{pressure:+.2f}")
    whole = scheme_total(totals)
    view.add_row("scheme total (pipes)", "", "", f"{whole['length_m']:,.1f}",
                 str(whole["pieces"]), f"{whole['cost']:,.0f}", "", "", style="bold")
    console.print(view)
