"""Tables of a scheme (contract section 7): the schedule of pieces grouped by branch with
a total per branch, and the branches with their lengths and costs and the scheme's total.

They read the check's piece table (one row per piece, with its ``branch``); a single
route has no ``branch`` column and is read as the trunk alone. Totals are sums of the
pieces' own lengths and costs, so a branch's total is exactly what its pieces say; the
costs of changes of pipe are the check's and are shown beside, not spread over branches.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import pandas as pd

from optimiser.model import Study
from optimiser.model.lines import study_lines
from optimiser.model.scheme import TRUNK
from optimiser.reports import numbers as fmt
from optimiser.reports.numbers import chainage_label

BRANCH_TOTAL_COLUMNS = ["branch", "leaves", "at_chainage_m", "chainage_m", "length_m",
                        "pieces", "cost"]


def with_branch(pieces: pd.DataFrame) -> pd.DataFrame:
    """``pieces`` with a ``branch`` column (the trunk's name where it has none)."""
    if "branch" in pieces:
        return pieces
    return pieces.assign(branch=TRUNK)


def by_branch(study: Study, pieces: pd.DataFrame) -> list[tuple[str, pd.DataFrame]]:
    """The pieces of each line in the study's order (trunk, then branches parents
    first), each in chainage order; lines without pieces are left out."""
    pieces = with_branch(pieces)
    groups = []
    for line in study_lines(study):
        part = pieces[pieces["branch"] == line.name]
        if len(part):
            groups.append((line.name, part.sort_values("from_m", kind="stable")))
    return groups


def branch_totals(study: Study, pieces: pd.DataFrame) -> pd.DataFrame:
    """One row per line: its parent and junction, its chainage length, the laid length,
    number and cost of its pieces (columns :data:`BRANCH_TOTAL_COLUMNS`)."""
    lines = {line.name: line for line in study_lines(study)}
    rows = []
    for name, part in by_branch(study, pieces):
        line = lines[name]
        rows.append({"branch": name, "leaves": line.parent or "source",
                     "at_chainage_m": line.at_chainage_m,
                     "chainage_m": line.route.total_chainage_m,
                     "length_m": float(part["length_m"].sum()), "pieces": len(part),
                     "cost": float(part["cost"].sum())})
    return pd.DataFrame(rows, columns=BRANCH_TOTAL_COLUMNS)


def scheme_total(totals: pd.DataFrame) -> dict[str, float]:
    """The scheme's chainage, laid length, pieces and pipe cost: sums over its lines."""
    return {"chainage_m": float(totals["chainage_m"].sum()),
            "length_m": float(totals["length_m"].sum()),
            "pieces": int(totals["pieces"].sum()), "cost": float(totals["cost"].sum())}


def totals_rows(study: Study, pieces: pd.DataFrame, change_cost_total: float
                ) -> tuple[tuple[str, ...], list[tuple[str, ...]]]:
    """The branches table of the report: columns and rows, the scheme's total last."""
    currency = study.currency
    totals = branch_totals(study, pieces)
    rows = [(row.branch, row.leaves,
             "–" if row.leaves == "source" else chainage_label(row.at_chainage_m),
             fmt.length(row.chainage_m), fmt.length(row.length_m), str(row.pieces),
             fmt.money(row.cost)) for row in totals.itertuples()]
    whole = scheme_total(totals)
    rows.append(("scheme total (pipes)", "", "", fmt.length(whole["chainage_m"]),
                 fmt.length(whole["length_m"]), str(whole["pieces"]), fmt.money(whole["cost"])))
    if change_cost_total:
        rows.append(("changes of pipe", "", "", "", "", "", fmt.money(change_cost_total)))
        rows.append(("scheme total", "", "", "", "", "",
                     fmt.money(whole["cost"] + change_cost_total)))
    return (("branch", "leaves", "at", "chainage (m)", "laid length (m)", "pieces",
             f"cost ({currency})" if currency else "cost"), rows)


def scheme_summary(study: Study) -> str:
    """One line: how many branches, how much chainage in all, how deep the tree is."""
    lines = study_lines(study)
    chainage_m = sum(line.route.total_chainage_m for line in lines)
    return (f"a trunk of {fmt.length(study.route.total_chainage_m)} m and "
            f"{len(lines) - 1} branches; {fmt.length(chainage_m)} m of chainage in all")


def grouped_schedule_rows(study: Study, pieces: pd.DataFrame,
                          piece_row: Callable[[Any], tuple[str, ...]]
                          ) -> list[tuple[str, ...]]:
    """Rows of the schedule grouped by branch: ``branch`` first, then ``piece_row(p)`` of
    each piece, then a total row per branch (its laid length and cost)."""
    rows = []
    for name, part in by_branch(study, pieces):
        for piece in part.itertuples():
            rows.append((name, *piece_row(piece)))
        width = len(rows[-1])
        total = [f"{name}: total", "", "", fmt.length(float(part["length_m"].sum()))]
        total += [""] * (width - len(total) - 1) + [fmt.money(float(part["cost"].sum()))]
        rows.append(tuple(total))
    return rows
