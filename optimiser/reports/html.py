"""A self-contained HTML report (plotly.js embedded, works offline) for a design or check."""

from __future__ import annotations

import html
from datetime import UTC, datetime

import pandas as pd
from plotly.offline import get_plotlyjs

from optimiser import __version__
from optimiser.analysis.appurtenances import Appurtenance
from optimiser.analysis.check import CheckResult
from optimiser.reports.cautions import CAUTIONS
from optimiser.reports.charts import cost_figure, pressure_velocity_figure, profile_figure
from optimiser.reports.plan_view import plan_section
from optimiser.reports.results import assumptions
from optimiser.reports.run_summary import RunSummary
from optimiser.reports.terminal import chainage_label
from optimiser.reports.text import short_title

_STYLE = """
body { font-family: "Segoe UI", Helvetica, Arial, sans-serif; color: #222; margin: 2em auto;
       max-width: 1100px; padding: 0 1em; line-height: 1.4; }
h1 { font-size: 1.6em; margin-bottom: 0.2em; } h2 { font-size: 1.25em; margin-top: 1.6em;
     border-bottom: 1px solid #bbb; padding-bottom: 0.2em; }
table { border-collapse: collapse; margin: 0.6em 0; font-size: 0.92em; }
th, td { border: 1px solid #ccc; padding: 0.25em 0.6em; text-align: right; }
th { background: #f0f0f0; } td.text, th.text { text-align: left; }
.cautions { border: 2px solid #b8860b; background: #fff8e1; padding: 0.6em 1em; }
.status-ok { color: #1a7f37; font-weight: bold; } .status-bad { color: #b2182b;
    font-weight: bold; }
.meta { color: #555; font-size: 0.9em; }
@media print { .plot { page-break-inside: avoid; } body { margin: 0; max-width: none; } }
"""


def _table(frame: pd.DataFrame, text_columns: set[str] | None = None) -> str:
    text_columns = text_columns or set()
    head = "".join(f"<th class='{'text' if c in text_columns else ''}'>{html.escape(str(c))}"
                   "</th>" for c in frame.columns)
    body = []
    for row in frame.itertuples(index=False):
        cells = []
        for column, value in zip(frame.columns, row, strict=True):
            css = "text" if column in text_columns else ""
            if isinstance(value, float):
                value = f"{value:,.2f}"
            cells.append(f"<td class='{css}'>{html.escape(str(value))}</td>")
        body.append("<tr>" + "".join(cells) + "</tr>")
    return f"<table><thead><tr>{head}</tr></thead><tbody>{''.join(body)}</tbody></table>"


def _money(value: float | None, currency: str) -> str:
    if value is None:
        return "–"
    return f"{value:,.0f} {currency}".strip()


def render_report(result: CheckResult, appurtenances: list[Appurtenance],
                  summary: RunSummary | None = None) -> str:
    """The report as one HTML string; ``summary`` carries the optimiser's figures when
    the design comes from a design run."""
    study = result.study
    figures = [("Longitudinal profile", profile_figure(result)),
               ("Pressure head and velocity", pressure_velocity_figure(result)),
               ("Cost by option", cost_figure(result))]
    plots = []
    for index, (heading, figure) in enumerate(figures):
        div = figure.to_html(full_html=False, include_plotlyjs=False,
                             div_id=f"plot-{index}", config={"displaylogo": False})
        plots.append(f"<h2>{html.escape(heading)}</h2><div class='plot'>{div}</div>")
        if index == 0:
            plots.append(plan_section(result, appurtenances))  # "" without coordinates
            plots.append(_schedule_section(result, study.currency))
    basis = pd.DataFrame([{"assumption": k, "value": "" if v is None else str(v)}
                          for k, v in assumptions(study).items()])
    cautions = "".join(f"<li>{html.escape(c)}</li>" for c in CAUTIONS)
    stamp = datetime.now(UTC).strftime("%Y-%m-%d %H:%M UTC")
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8">
<title>{html.escape(short_title(study.title))}</title>
<style>{_STYLE}</style>
<script type="text/javascript">{get_plotlyjs()}</script>
</head><body>
<h1>{html.escape(short_title(study.title))}</h1>
<p class="meta">Pipeline sizing report, tool version {__version__}, made {stamp}.</p>
<div class="cautions"><strong>Cautions.</strong><ul>{cautions}</ul></div>
<h2>Summary</h2><table>{_summary_rows(result, summary)}</table>
<h2>Scenarios</h2>{_table(_scenario_frame(result), {"scenario", "at"})}
{''.join(plots)}
<h2>Violations</h2>{_violations_section(result)}
<h2>Air valves and washouts (preliminary)</h2>{_appurtenance_section(appurtenances)}
<h2>Assumptions</h2>{_table(basis, {"assumption", "value"})}
</body></html>
"""


def _summary_rows(result: CheckResult, summary: RunSummary | None) -> str:
    study = result.study
    currency = study.currency
    status = ("<span class='status-ok'>every limit met in every scenario</span>"
              if result.ok else
              f"<span class='status-bad'>{len(result.violations)} violation(s)</span>")
    rows = [
        ("study", html.escape(short_title(study.title))),
        ("route length", f"{study.route.total_chainage_m:,.0f} m (chainage)"),
        ("check", status),
        ("capital cost", html.escape(_money(result.total_cost, currency))),
    ]
    if summary is not None:
        rows += [
            ("optimiser status", html.escape(summary.status)),
            ("solver", html.escape(f"{summary.solver or ''}, "
                                   f"{summary.solve_time_s or 0:.1f} s")),
            ("best bound", html.escape(_money(summary.lower_bound, currency))),
            ("relative gap", html.escape(f"{summary.gap or 0:.2e}")),
            ("LP bound (rules relaxed)", html.escape(_money(summary.lp_bound, currency))),
        ]
        if summary.uniform_cost:
            saving = summary.uniform_cost - result.total_cost
            rows.append((
                "cheapest uniform design",
                html.escape(f"{summary.uniform_label}: "
                            f"{_money(summary.uniform_cost, currency)}; this design saves "
                            f"{_money(saving, currency)} "
                            f"({saving / summary.uniform_cost:.1%})")))
    return "".join(f"<tr><th class='text'>{k}</th><td class='text'>{v}</td></tr>"
                   for k, v in rows)


def _scenario_frame(result: CheckResult) -> pd.DataFrame:
    return pd.DataFrame([{
        "scenario": s.name, "inflow L/s": s.inflow_m3_s * 1000,
        "outlet energy m": s.outlet_energy_m, "required m": s.required_head_m,
        "outlet margin m": s.outlet_margin_m,
        "least pressure margin m": float(s.least_pressure_margin["pressure_m"]
                                         - s.least_pressure_margin["min_pressure_m"]),
        "at": chainage_label(float(s.least_pressure_margin["chainage_m"])),
        "max velocity m/s": float(s.segments["velocity_m_s"].max()),
        "capacity L/s": (s.capacity_m3_s or 0.0) * 1000 if s.capacity_m3_s is not None
        else "none",
    } for s in result.scenarios])


def _violations_section(result: CheckResult) -> str:
    if result.ok:
        return "<p>None.</p>"
    return _table(pd.DataFrame([{
        "kind": v.kind, "scenario": v.scenario or "(static)",
        "chainage": chainage_label(v.chainage_m), "value": v.value, "limit": v.limit,
        "detail": v.message} for v in result.violations[:200]]),
        {"kind", "scenario", "chainage", "detail"})


def _appurtenance_section(appurtenances: list[Appurtenance]) -> str:
    if not appurtenances:
        return "<p>None found.</p>"
    return _table(pd.DataFrame([{
        "kind": a.kind, "chainage": chainage_label(a.chainage_m),
        "pipe level m": a.pipe_level_m, "ground m": a.ground_m, "reason": a.reason,
        "label": a.label} for a in appurtenances]), {"kind", "chainage", "reason", "label"})


def _schedule_section(result: CheckResult, currency: str) -> str:
    pieces = result.pieces
    frame = pd.DataFrame({
        "from": [chainage_label(v) for v in pieces["from_m"]],
        "to": [chainage_label(v) for v in pieces["to_m"]],
        "length m": pieces["length_m"],
        "material": pieces["material"], "DN": pieces["dn_mm"].map(lambda v: f"{v:g}"),
        "ID mm": pieces["internal_diameter_mm"], "class": pieces["pressure_class"],
        "surge m": pieces["surge_head_m"],
        "static + surge m": pieces["static_head_m"] + pieces["surge_head_m"],
        "allowable m": pieces["allowable_surge_head_m"],
        "governs": pieces["class_governs"],
        f"cost {currency}".strip(): pieces["cost"],
    })
    return ("<h2>Schedule of pieces</h2>"
            + _table(frame, {"from", "to", "material", "DN", "class"})
            + f"<p>Total {_money(result.total_cost, currency)}"
            + (f", including {_money(result.change_cost_total, currency)} for changes of pipe"
               if result.change_cost_total else "") + ".</p>")
