"""Reports of an optimised design: the JSON of contract section 6, design.csv, the terminal
schedule."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import pandas as pd
from rich import box
from rich.console import Console
from rich.table import Table

from optimiser.model import Status, Study
from optimiser.model.lines import study_lines
from optimiser.reports.cautions import CAUTIONS
from optimiser.reports.life_cycle import PUMP_STATEMENT, print_design_station
from optimiser.reports.outlet_control import print_outlet_control
from optimiser.reports.results import assumptions, check_dict
from optimiser.reports.scheme_terminal import print_scheme_summary
from optimiser.reports.surge_table import print_class_table
from optimiser.reports.sweep_tables import gap_text
from optimiser.reports.tank_tables import print_tank_totals, print_tanks
from optimiser.reports.terminal import chainage_label, print_violations
from optimiser.reports.text import console_title

if TYPE_CHECKING:
    from optimiser.milp import DesignOutcome

DESIGN_CSV_COLUMNS = ["from_m", "to_m", "material", "dn_mm", "pressure_class", "length_m",
                      "internal_diameter_mm", "cost", "velocity_m_s", "unit_head_loss_m_per_km"]

MODEL_STATEMENT = (
    "Cheapest within the reported gap among designs that lay pieces inside each survey "
    "section in descending internal diameter and choose pressure classes per survey "
    "section at its lowest pipe level. Friction, per-km and exit losses, pressures at "
    "every check point, outlet head, velocity limits and rules are exact; the velocity "
    "head at the start of a split section (entrance, fittings, downstream side of a node) "
    "is taken as that of its smallest pipe (conservative); heads carry a 0.01 mm safety "
    "margin. The design passed the same check as `optimiser check`.")


def governing_scenario(outcome: DesignOutcome) -> int:
    """Index of the scenario with the smallest margin (pressure or outlet head)."""
    assert outcome.check is not None
    margins = []
    for scenario in outcome.check.scenarios:
        least = scenario.least_pressure_margin
        margins.append(min(float(least["pressure_m"] - least["min_pressure_m"]),
                           scenario.outlet_margin_m))
    return int(min(range(len(margins)), key=margins.__getitem__))


def schedule(outcome: DesignOutcome) -> pd.DataFrame:
    """Pieces with velocity (highest along the piece) and unit head loss (friction loss
    over length) in the governing scenario."""
    assert outcome.check is not None
    check = outcome.check
    table = check.pieces[["from_m", "to_m", "material", "dn_mm", "pressure_class", "length_m",
                          "internal_diameter_mm", "cost", "static_head_m", "allowable_head_m",
                          "wave_speed_m_s", "surge_head_m", "allowable_surge_head_m",
                          "class_governs"]].copy()
    if "branch" in check.pieces:  # every piece of the JSON names its branch (section 7)
        table.insert(0, "branch", check.pieces["branch"])
    segments = check.scenarios[governing_scenario(outcome)].segments
    grouped = segments.groupby("piece")
    table["velocity_m_s"] = grouped["velocity_m_s"].max().to_numpy()
    table["unit_head_loss_m_per_km"] = (grouped["friction_loss_m"].sum()
                                        / grouped["length_m"].sum() * 1000.0).to_numpy()
    return table


def _uniform_dict(outcome: DesignOutcome) -> dict[str, Any] | None:
    uniform = outcome.uniform
    if uniform is None:
        return None
    saving = outcome.uniform_saving
    return {
        "material": uniform.option.material, "dn_mm": uniform.option.dn_mm,
        "pressure_class": uniform.option.pressure_class,
        "internal_diameter_mm": uniform.option.internal_diameter_mm,
        "cost": uniform.cost, "saving": saving,
        "saving_fraction": saving / uniform.cost if saving is not None and uniform.cost else None,
    }


def design_dict(outcome: DesignOutcome, study: Study, command: str = "design") -> dict[str, Any]:
    """Everything ``check`` writes for the returned design, plus the design fields;
    ``command`` names the command that ran the optimiser."""
    extra = {
        "status": outcome.status,
        "verified": outcome.verified,
        "lower_bound": outcome.lower_bound,
        "gap": outcome.gap,
        "lp_bound": outcome.lp_bound,
        "solver": outcome.solver_name,
        "solve_time_s": outcome.solve_time_s,
        "time_limit_s": outcome.time_limit_s,
        "mip_gap": outcome.mip_gap,
        "rules_on": outcome.rules_on,
        "uniform": _uniform_dict(outcome),
        "diagnosis": list(outcome.diagnosis),
        "binding": [dict(b.__dict__) for b in outcome.binding],
        "stages": [stage.as_dict() for stage in outcome.stages],
        "model": MODEL_STATEMENT,
        "no_new_tank_cost": outcome.no_new_tank_cost,
        "no_new_tank_status": outcome.no_new_tank_status,
    }
    if outcome.check is None:
        payload = {
            "ok": False, "command": command, "title": study.title,
            "study": str(study.path) if study.path else None, "currency": study.currency,
            "violations": [], "scenarios": [], "pieces": [], "total_cost": None,
            "change_cost_total": None, "assumptions": assumptions(study),
            "cautions": list(CAUTIONS),
        }
    else:
        payload = check_dict(outcome.check, command=command)
        payload["ok"] = outcome.verified
        table = schedule(outcome)
        payload["pieces"] = table.to_dict(orient="records")
        payload["total_cost"] = outcome.total_cost
    payload.update(extra)
    return payload


def design_table(outcome: DesignOutcome) -> pd.DataFrame:
    """design.csv: contract section 4 columns first, then length, ID, cost, hydraulics;
    a scheme's has ``branch`` first (contract section 7)."""
    assert outcome.check is not None
    if outcome.check.study.is_scheme:
        return schedule(outcome)[["branch", *DESIGN_CSV_COLUMNS]]
    return schedule(outcome)[DESIGN_CSV_COLUMNS]


def _money(value: float | None, currency: str) -> str:
    if value is None:
        return "n/a"
    return f"{value:,.0f} {currency}".strip()


def print_design(console: Console, outcome: DesignOutcome, study: Study) -> None:
    """Schedule, totals, bound, limiting points and the uniform comparison."""
    currency = study.currency
    if outcome.status == Status.INFEASIBLE:
        console.print(f"[bold]{console_title(study.title)}[/bold]")
        console.print("[bold red]No design meets every limit[/bold red]:")
        for finding in outcome.diagnosis:
            console.print(f"- {finding}", markup=False, highlight=False)
        return
    assert outcome.check is not None
    table = schedule(outcome)
    governing = outcome.check.scenarios[governing_scenario(outcome)].name
    length_km = study.route.total_chainage_m / 1000
    extent = f"{length_km:.3f} km"
    if study.is_scheme:
        total_km = sum(line.route.total_chainage_m for line in study_lines(study)) / 1000
        extent = f"a trunk and {len(study.branches)} branches, {total_km:.3f} km"
    console.print(f"[bold]{console_title(study.title)}[/bold]  (design of {extent}, "
                  f"{len(table)} pieces)")
    console.print(_schedule_table(table, governing, currency, study.is_scheme))
    if study.is_scheme:
        print_scheme_summary(console, outcome.check)
    print_class_table(console, outcome.check)
    status = {Status.OPTIMAL: "[bold green]optimal[/bold green] (proven within the gap)",
              Status.FEASIBLE: "[bold yellow]feasible[/bold yellow] (not proven cheapest "
                          "within the gap)"}[outcome.status]
    gap = "n/a" if outcome.gap is None else gap_text(outcome.gap)
    console.print(f"Status: {status}; solver {outcome.solver_name}, "
                  f"{outcome.solve_time_s:.1f} s, gap {gap} (target {gap_text(outcome.mip_gap)})")
    if outcome.check.change_cost_total:
        console.print(f"Change costs included: {_money(outcome.check.change_cost_total, currency)}")
    console.print(f"Total cost:              {_money(outcome.total_cost, currency)}")
    print_tank_totals(console, outcome, currency)
    console.print(f"Lower bound:             {_money(outcome.lower_bound, currency)}")
    console.print(f"LP bound (rules relaxed): {_money(outcome.lp_bound, currency)}")
    print_design_station(console, outcome.check)
    if study.pump is not None:
        pass  # no uniform comparison: it prices pipes only
    elif outcome.uniform is not None:
        uniform = outcome.uniform
        saving = outcome.uniform_saving or 0.0
        console.print(f"Cheapest uniform design: {uniform.option.label} along the whole route, "
                      f"{_money(uniform.cost, currency)}; saving "
                      f"{_money(saving, currency)} ({saving / uniform.cost:.1%})"
                      if uniform.cost else "")
    else:
        console.print("Cheapest uniform design: none (no single option meets every limit)")
    console.print(_binding_table(outcome))
    console.print(f"Why cheapest: {MODEL_STATEMENT}", markup=False, highlight=False)
    print_tanks(console, outcome.check)
    if study.pump is not None:
        console.print(PUMP_STATEMENT, markup=False, highlight=False)
    print_outlet_control(console, outcome.check)
    print_violations(console, outcome.check)


SCHEDULE_HEADERS = ("from", "to", "length\nm", "material", "DN", "ID\nmm", "class", "V\nm/s",
                    "J\nm/km")
"""Headers of the terminal schedule: units on a second line, so that at 80 columns every
column and every number is shown whole."""


def _schedule_table(table: pd.DataFrame, governing: str, currency: str,
                    scheme: bool = False) -> Table:
    """The schedule of pieces for the terminal (a scheme's with its branches). Numbers
    are never cut: each number column is at least as wide as its widest value; only the
    material's name (and a branch's) may wrap."""
    rows = [((row.branch,) if scheme else ()) + (
             chainage_label(row.from_m), chainage_label(row.to_m), f"{row.length_m:,.1f}",
             row.material, f"{row.dn_mm:g}", f"{row.internal_diameter_mm:g}",
             row.pressure_class, f"{row.velocity_m_s:.2f}",
             f"{row.unit_head_loss_m_per_km:.2f}", f"{row.cost:,.0f}")
            for row in table.itertuples()]
    view = Table(title=f"Schedule (velocity and unit head loss in scenario {governing!r})",
                 title_justify="left", box=box.SIMPLE_HEAD, pad_edge=False,
                 padding=(0, 0, 0, 0))  # the box puts a space between columns
    headers = (*(("branch",) if scheme else ()), *SCHEDULE_HEADERS,
               f"cost\n{currency}".strip())
    for index, header in enumerate(headers):
        wraps = header in ("material", "branch")
        widest = max((len(row[index]) for row in rows), default=1)
        view.add_column(header, justify="left" if header in ("branch", "material", "class")
                        else "right",
                        no_wrap=not wraps, overflow="fold",
                        min_width=8 if wraps else widest)
    for row in rows:
        view.add_row(*row)
    return view


def _binding_table(outcome: DesignOutcome) -> Table:
    binding = Table(title="Limiting points (least pressure margin per scenario)",
                    title_justify="left", box=box.SIMPLE_HEAD, pad_edge=False,
                    padding=(0, 1, 0, 0))
    for column in ("scenario", "chainage", "label", "pressure m", "minimum m", "margin m",
                   "outlet margin m"):
        binding.add_column(column, justify="left" if column in ("scenario", "label") else "right")
    for point in outcome.binding:
        where = chainage_label(point.chainage_m)
        if outcome.check is not None and outcome.check.study.is_scheme:
            where = f"{point.branch} {where}"
        binding.add_row(point.scenario, where, point.label,
                        f"{point.pressure_m:.2f}", f"{point.min_pressure_m:.2f}",
                        f"{point.margin_m:+.3f}", f"{point.outlet_margin_m:+.3f}")
    return binding
