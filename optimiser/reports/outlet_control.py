"""Outlet flow control: the head a gravity main has to spare at its delivery point, and
the flow it would carry with no control valve (contract sections 7 and 8, `outlets`).

A gravity main sized for the design flow usually arrives with head to spare. Without a
flow-control valve (or an orifice, or a float valve at the reservoir) the line then
carries more than the design flow, overdraws its source and starves the offtakes
upstream. The uncontrolled flow is the delivery flow at which the energy after the exit
loss equals the required head, everything else of the scenario unchanged: the check's
outlet-only capacity (Brent's method on the same hydraulics, with offtakes at their
scenario flows).
"""

from __future__ import annotations

from typing import Any

from rich.console import Console

from optimiser.analysis.check import CheckResult, ScenarioResult

OVERDRAW_SHARE = 0.10
"""A caution is shown where the uncontrolled flow exceeds the design flow by more than
this share (common practice, no source: beyond metering and demand uncertainty)."""


def outlets(result: ScenarioResult) -> list[dict[str, Any]]:
    """The ``outlets`` objects of one scenario: one per delivery point (a single route
    has one, on branch "main")."""
    return [{
        "branch": "main",
        "flow_m3_s": result.outlet_flow_m3_s,
        "energy_m": result.outlet_energy_m,
        "required_head_m": result.required_head_m,
        "margin_m": result.outlet_margin_m,
        "spare_head_m": result.outlet_margin_m,
        "uncontrolled_flow_m3_s": result.capacity_outlet_only_m3_s,
    }]


def overdraws(result: ScenarioResult) -> bool:
    """True where the line would carry over ``OVERDRAW_SHARE`` more than the design flow."""
    uncontrolled = result.capacity_outlet_only_m3_s
    return uncontrolled is not None and \
        uncontrolled > (1.0 + OVERDRAW_SHARE) * result.outlet_flow_m3_s


def control_sentence(result: ScenarioResult) -> str:
    """One sentence: spare head, uncontrolled flow and the head a control valve takes."""
    spare = result.outlet_margin_m
    flow_l_s = 1000.0 * result.outlet_flow_m3_s
    uncontrolled = result.capacity_outlet_only_m3_s
    if uncontrolled is None:
        return f"{result.name}: the outlet is short of its required head by {-spare:.2f} m."
    if uncontrolled == float("inf"):
        return (f"{result.name}: {spare:.2f} m of head to spare at {flow_l_s:.1f} L/s; the "
                "line has no flow limit within reach of the check.")
    ratio = uncontrolled / result.outlet_flow_m3_s if result.outlet_flow_m3_s > 0 else 0.0
    sentence = (f"{result.name}: {spare:.2f} m of head to spare at {flow_l_s:.1f} L/s; "
                f"without flow control the line would carry {1000.0 * uncontrolled:.1f} L/s "
                f"({ratio:.2f} x the design flow); a control valve at the outlet must take "
                f"{max(spare, 0.0):.2f} m at the design flow.")
    if overdraws(result):
        sentence += (" Caution: fit flow control, or the source is overdrawn and the "
                     "offtakes upstream may be starved.")
    return sentence


def print_outlet_control(console: Console, result: CheckResult) -> None:
    """The outlet flow-control sentence of every scenario with capacities computed."""
    scenarios = [s for s in result.scenarios if s.capacity_outlet_only_m3_s is not None
                 or s.outlet_margin_m < 0]
    if not scenarios:
        return
    console.print("[bold]Outlet flow control[/bold]")
    for scenario in scenarios:
        console.print(f"- {control_sentence(scenario)}", markup=False, highlight=False)
