"""Outlet flow control: the head a gravity main has to spare at its delivery point, and
the flow it would carry with no control valve (contract sections 7 and 8, `outlets`).

A gravity main sized for the design flow usually arrives with head to spare. Without a
flow-control valve (or an orifice, or a float valve at the reservoir) the line then
carries more than the design flow, overdraws its source and starves the offtakes
upstream. The uncontrolled flow is the delivery flow at which the energy after the exit
loss equals the required head, everything else of the scenario unchanged: the check's
outlet-only capacity (Brent's method on the same hydraulics, with offtakes at their
scenario flows). On a branched scheme every delivery point (the trunk's and each
branch's) has its own, the extra flow running through the lines above it as well.
"""

from __future__ import annotations

from typing import Any

from rich.console import Console

from optimiser.analysis import violation_text as text
from optimiser.analysis.check import CheckResult, ScenarioResult
from optimiser.analysis.scheme_check import DeliveryPoint
from optimiser.model import TRUNK

OVERDRAW_SHARE = 0.10
"""A caution is shown where the uncontrolled flow exceeds the design flow by more than
this share (common practice, no source: beyond metering and demand uncertainty)."""


def outlets(result: ScenarioResult) -> list[dict[str, Any]]:
    """The ``outlets`` objects of one scenario: one per delivery point (a single route
    has one, on branch "main")."""
    return [{
        "branch": point.branch,
        "flow_m3_s": point.flow_m3_s,
        "energy_m": point.energy_m,
        "required_head_m": point.required_head_m,
        "margin_m": point.margin_m,
        "spare_head_m": point.margin_m,
        "uncontrolled_flow_m3_s": point.uncontrolled_flow_m3_s,
    } for point in result.outlets]


def overdraws(point: DeliveryPoint) -> bool:
    """True where the line would carry over ``OVERDRAW_SHARE`` more than the design flow."""
    uncontrolled = point.uncontrolled_flow_m3_s
    return uncontrolled is not None and \
        uncontrolled > (1.0 + OVERDRAW_SHARE) * point.flow_m3_s


def delivery_sentence(name: str, point: DeliveryPoint) -> str:
    """One sentence: spare head, uncontrolled flow and the head a control valve takes at
    one delivery point; ``name`` says whose (the scenario, and the branch on a scheme)."""
    spare = point.margin_m
    flow_l_s = 1000.0 * point.flow_m3_s
    uncontrolled = point.uncontrolled_flow_m3_s
    line = "line" if point.branch == TRUNK else "branch"
    if uncontrolled is None:
        return f"{name}: the outlet is short of its required head by {-spare:.2f} m."
    if uncontrolled == float("inf"):
        return (f"{name}: {spare:.2f} m of head to spare at {flow_l_s:.1f} L/s; the "
                f"{line} has no flow limit within reach of the check.")
    ratio = uncontrolled / point.flow_m3_s if point.flow_m3_s > 0 else 0.0
    sentence = (f"{name}: {spare:.2f} m of head to spare at {flow_l_s:.1f} L/s; "
                f"without flow control the {line} would carry {1000.0 * uncontrolled:.1f} "
                f"L/s ({ratio:.2f} x the design flow); a control valve at the outlet must "
                f"take {max(spare, 0.0):.2f} m at the design flow.")
    if overdraws(point):
        sentence += (" Caution: fit flow control, or the source is overdrawn and the "
                     "offtakes upstream may be starved.")
    return sentence


def control_sentences(result: ScenarioResult) -> list[str]:
    """The sentence of every delivery point of a scenario with its capacity computed (or
    short of head); on a scheme each names its branch."""
    scheme = len(result.outlets) > 1
    return [delivery_sentence(text.scenario_on(result.name, p.branch if scheme else None), p)
            for p in result.outlets
            if p.uncontrolled_flow_m3_s is not None or p.margin_m < 0]


def scheme_control_summary(result: ScenarioResult) -> str:
    """One sentence for a scenario of a scheme: how many delivery points would overdraw
    without flow control, the worst of them, and where the figures are (the delivery
    margins table), instead of a sentence per point."""
    short = [p for p in result.outlets if p.uncontrolled_flow_m3_s is None]
    over = [p for p in result.outlets if overdraws(p)]
    parts = []
    if over:
        worst = max(over, key=lambda p: p.uncontrolled_flow_m3_s / max(p.flow_m3_s, 1e-12))
        ratio = worst.uncontrolled_flow_m3_s / max(worst.flow_m3_s, 1e-12)
        parts.append(f"{len(over)} of {len(result.outlets)} delivery points would carry over "
                     f"{OVERDRAW_SHARE:.0%} more than their design flow without flow "
                     f"control (the most: '{worst.branch}', {ratio:.2f} x); each needs a "
                     "control valve taking its spare head (table of delivery margins). "
                     "Caution: fit flow control, or the source is overdrawn and the "
                     "offtakes upstream may be starved.")
    else:
        parts.append("no delivery point would carry over "
                     f"{OVERDRAW_SHARE:.0%} more than its design flow without flow control.")
    if short:
        parts.append("Short of required head: "
                     + ", ".join(f"'{p.branch}' by {-p.margin_m:.2f} m" for p in short) + ".")
    return f"{result.name}: " + " ".join(parts)


def control_sentence(result: ScenarioResult) -> str:
    """The sentences of :func:`control_sentences` as one paragraph (the trunk's alone on
    a single route)."""
    return " ".join(control_sentences(result))


def print_outlet_control(console: Console, result: CheckResult) -> None:
    """The outlet flow-control sentence of every delivery point with its capacity
    computed, scenario by scenario."""
    if result.study.is_scheme:  # one sentence per scenario; the figures are in a table
        sentences = [scheme_control_summary(scenario) for scenario in result.scenarios]
    else:
        sentences = [s for scenario in result.scenarios for s in control_sentences(scenario)]
    if not sentences:
        return
    console.print("[bold]Outlet flow control[/bold]")
    for sentence in sentences:
        console.print(f"- {sentence}", markup=False, highlight=False)
