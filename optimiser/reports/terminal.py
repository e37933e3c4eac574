"""Terminal output with rich: limiting points, violations, cautions.

"Limiting point" is the one name, in every output, for the point where a design comes
nearest a limit (least pressure margin, highest velocity, class nearest its limit).
"""

from __future__ import annotations

from rich.console import Console
from rich.panel import Panel
from rich.table import Table

from optimiser.analysis.check import CheckResult
from optimiser.reports.cautions import CAUTIONS
from optimiser.reports.outlet_control import print_outlet_control
from optimiser.reports.tank_tables import print_tanks
from optimiser.reports.text import console_title


def chainage_label(chainage_m: float) -> str:
    """Chainage in the trade's km+m notation: 12345.6 -> '12+345.6'."""
    kilometres = int(chainage_m // 1000)
    metres = chainage_m - 1000 * kilometres
    return f"{kilometres}+{metres:05.1f}"


def flow_text(flow_m3_s: float | None) -> str:
    if flow_m3_s is None:
        return "none"
    if flow_m3_s == float("inf"):
        return "unbounded"
    return f"{flow_m3_s * 1000:.2f} L/s"


def place_label(result: CheckResult, branch: str, chainage_m: float) -> str:
    """Where a point is: its chainage, after its branch's name on a scheme."""
    where = chainage_label(chainage_m)
    return f"{branch} {where}" if result.study.is_scheme else where


def print_deliveries(console: Console, result: CheckResult) -> None:
    """One line per delivery point (the trunk's and every branch's) and scenario, on a
    scheme (a single route's is the scenario table's)."""
    if not result.study.is_scheme:
        return
    table = Table(title="Delivery points", title_justify="left")
    for column in ("scenario", "branch", "flow", "energy m", "required m", "margin m",
                   "uncontrolled flow"):
        table.add_column(column, justify="left" if column in ("scenario", "branch")
                         else "right")
    for s in result.scenarios:
        for point in s.outlets:
            table.add_row(s.name, point.branch, flow_text(point.flow_m3_s),
                          f"{point.energy_m:.2f}", f"{point.required_head_m:.2f}",
                          f"{point.margin_m:+.2f}", flow_text(point.uncontrolled_flow_m3_s))
    console.print(table)


def print_cautions(console: Console) -> None:
    console.print(Panel("\n".join(f"- {c}" for c in CAUTIONS), title="Cautions",
                        border_style="yellow"))


def print_check(console: Console, result: CheckResult) -> None:
    """Scenario summary, limiting points and violations of a checked design."""
    study = result.study
    extent = f"{study.route.total_chainage_m / 1000:.3f} km"
    if study.is_scheme:
        total_m = study.route.total_chainage_m + sum(b.route.total_chainage_m
                                                     for b in study.branches)
        extent = f"a trunk and {len(study.branches)} branches, {total_m / 1000:.3f} km"
    console.print(f"[bold]{console_title(study.title)}[/bold]  (check of "
                  f"{len(result.design.pieces)} pieces, {extent})")
    cost = f"Capital cost of the design: {result.total_cost:,.0f} {study.currency}".strip()
    if result.change_cost_total:
        cost += f" (including {result.change_cost_total:,.0f} for changes of pipe)"
    console.print(cost, markup=False, highlight=False)
    summary = Table(title="Scenarios", title_justify="left")
    for column in ("scenario", "inflow", "outlet energy m", "required m", "margin m",
                   "capacity (all limits)", "capacity (outlet only)"):
        summary.add_column(column, justify="right" if column != "scenario" else "left")
    for s in result.scenarios:
        summary.add_row(s.name, flow_text(s.inflow_m3_s), f"{s.outlet_energy_m:.2f}",
                        f"{s.required_head_m:.2f}", f"{s.outlet_margin_m:+.2f}",
                        flow_text(s.capacity_m3_s), flow_text(s.capacity_outlet_only_m3_s))
    console.print(summary)
    print_deliveries(console, result)

    critical = Table(title="Limiting points (nearest each limit)", title_justify="left")
    for column in ("scenario", "what", "chainage", "value", "limit", "margin"):
        critical.add_column(column, justify="left" if column in ("scenario", "what") else "right")
    pieces = result.pieces
    worst_static = pieces.loc[(pieces["static_head_limit_m"] - pieces["static_head_m"]).idxmin()]
    for s in result.scenarios:
        least = s.least_pressure_margin
        critical.add_row(s.name, "least pressure margin",
                         place_label(result, least["branch"], least["chainage_m"]),
                         f"{least['pressure_m']:.2f} m", f"{least['min_pressure_m']:.2f} m",
                         f"{least['pressure_m'] - least['min_pressure_m']:+.2f} m")
        fastest = s.segments.loc[s.segments["velocity_m_s"].idxmax()]
        critical.add_row(s.name, "highest velocity",
                         place_label(result, fastest["branch"], fastest["from_m"]),
                         f"{fastest['velocity_m_s']:.2f} m/s",
                         f"{study.rules.velocity_max_m_s:.2f} m/s",
                         f"{study.rules.velocity_max_m_s - fastest['velocity_m_s']:+.2f} m/s")
    spare_m = worst_static["static_head_limit_m"] - worst_static["static_head_m"]
    governs = worst_static["class_governs"]
    limit = worst_static["allowable_surge_head_m" if governs == "static + surge"
                         else "allowable_head_m"]
    critical.add_row("(static)", f"class, {governs} (surge "
                     f"{worst_static['surge_head_m']:.1f} m)",
                     place_label(result, worst_static["branch"],
                                 worst_static["lowest_chainage_m"]),
                     f"{limit - spare_m:.1f} m", f"{limit:.1f} m", f"{spare_m:+.1f} m")
    console.print(critical)
    print_tanks(console, result)
    print_outlet_control(console, result)
    print_violations(console, result)


def print_violations(console: Console, result: CheckResult, limit: int = 20) -> None:
    if result.ok:
        console.print("[bold green]OK[/bold green]: every limit is met in every scenario.")
        return
    # One sentence each (what, where, by how much, which scenario): a table would cut
    # them into narrow columns at 80 columns.
    console.print(f"[bold]Violations ({len(result.violations)})[/bold]")
    for v in result.violations[:limit]:
        console.print(f"- {v.message} [{v.kind}]", markup=False, highlight=False)
    if len(result.violations) > limit:
        console.print(f"... and {len(result.violations) - limit} more (see --json)")
    console.print("[bold red]NOT OK[/bold red]: the design violates the limits above.")
