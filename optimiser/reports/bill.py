"""The bill of quantities of a design: pipe by material, size and class in whole
standard lengths, the extra for zone cost factors and changes of pipe, air valves,
washouts and fittings, each with its rate and amount.

Pipes are bought in whole lengths: the quantity of each pipe is its laid length rounded
up to a whole number of the study's standard length (``[quantities] pipe_length_m``,
6 m unless set, or ``pipe_length_by_material_m``), priced at the catalogue's cost per
metre. 6 m is a common bar length of both PE pressure pipe in straight lengths and
socketed ductile iron pipe (common practice, no source); set the supplier's length.
Items without a rate in the study are listed with their count and no amount.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import pandas as pd

from optimiser.analysis.appurtenances import Appurtenance
from optimiser.analysis.check import CheckResult
from optimiser.reports.scheme_tables import by_branch

_EPS = 1e-6


@dataclass(frozen=True)
class BillLine:
    """One item of the bill; ``rate`` and ``amount`` are None when not priced."""

    description: str
    unit: str
    quantity: float
    rate: float | None
    amount: float | None
    laid_length_m: float | None = None
    standard_length_m: float | None = None
    pipes: int | None = None
    branch: str | None = None
    """The branch of a scheme's pipe line (None on a single route and for other items)."""


def _pipe_lines(result: CheckResult) -> list[BillLine]:
    """Pipe by material, size and class; on a scheme per branch as well (each branch is
    laid, and its whole pipes counted, on its own), branches in the study's order."""
    if not result.study.is_scheme:
        return _option_lines(result, result.pieces, None)
    return [line for branch, part in by_branch(result.study, result.pieces)
            for line in _option_lines(result, part, branch)]


def _option_lines(result: CheckResult, pieces: pd.DataFrame,
                  branch: str | None) -> list[BillLine]:
    study = result.study
    rules = study.quantities
    lines = []
    for (material, dn_mm, pressure_class), group in pieces.groupby(
            ["material", "dn_mm", "pressure_class"], sort=False):
        option = study.catalogue.find(material, dn_mm, pressure_class)
        laid = float(group["length_m"].sum())
        standard = rules.standard_length_m(material)
        count = math.ceil(laid / standard - _EPS)
        supplied = count * standard
        rate = None if option is None else option.cost_per_m
        label = f"{material} DN{dn_mm:g} {pressure_class} pipe, supplied and laid"
        lines.append(BillLine(label, "m", supplied, rate,
                              None if rate is None else supplied * rate, laid, standard, count,
                              branch))
        if rate is not None:
            extra = float(group["cost"].sum()) - laid * rate
            if abs(extra) >= 0.5:
                lines.append(BillLine(
                    f"extra over {material} DN{dn_mm:g} {pressure_class} for zone cost "
                    "factors", "sum", 1.0, extra, extra, branch=branch))
    return lines


def _counted(description: str, count: int, rate: float | None, key: str) -> BillLine:
    if rate is None:
        description += f" (no rate in the study: [quantities] {key})"
    return BillLine(description, "no.", float(count), rate,
                    None if rate is None else count * rate)


def bill_of_quantities(result: CheckResult,
                       appurtenances: list[Appurtenance]) -> list[BillLine]:
    """Every line of the bill, pipes first."""
    study = result.study
    rules = study.quantities
    lines = _pipe_lines(result)
    if result.change_cost_total:
        count = round(result.change_cost_total / study.costs.change_cost)
        lines.append(BillLine("changes of pipe (adaptors, as costed by the study)", "no.",
                              float(count), study.costs.change_cost,
                              result.change_cost_total))
    air_valves = sum(1 for a in appurtenances if a.kind == "air valve")
    washouts = sum(1 for a in appurtenances if a.kind == "washout")
    lines.append(_counted("air valves with chamber (preliminary positions)", air_valves,
                          rules.air_valve_each, "air_valve_each"))
    lines.append(_counted("washouts with chamber (preliminary positions)", washouts,
                          rules.washout_each, "washout_each"))
    if study.fittings:
        lines.append(_counted("fittings with a stated loss (" + ", ".join(
            sorted({f.label or "fitting" for f in study.fittings})) + ")",
            len(study.fittings), rules.fitting_each, "fitting_each"))
    return lines
