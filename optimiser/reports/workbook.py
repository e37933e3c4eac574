"""Workbooks an engineer can hand on: ``design.xlsx`` of a design and the sheets of
``comparison.xlsx``. Every sheet has units in its headers, a number format per column
(:data:`optimiser.reports.numbers.EXCEL_FORMATS`), set column widths and a frozen header
row; the cautions and the inputs have sheets of their own."""

from __future__ import annotations

import io
from collections.abc import Iterable, Sequence
from dataclasses import dataclass

import pandas as pd
from openpyxl import Workbook
from openpyxl.styles import Alignment, Font, PatternFill
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.worksheet import Worksheet

from optimiser.analysis.appurtenances import Appurtenance
from optimiser.analysis.check import CheckResult
from optimiser.io.writers import sheet_name
from optimiser.model import Study
from optimiser.reports.bill import BillLine, bill_of_quantities
from optimiser.reports.cautions import CAUTIONS
from optimiser.reports.inputs import input_tables
from optimiser.reports.life_cycle import sheet_specs
from optimiser.reports.numbers import EXCEL_FORMATS
from optimiser.reports.run_summary import RunSummary
from optimiser.reports.scheme_tables import branch_totals, by_branch, scheme_total

_HEADER_FILL = PatternFill("solid", fgColor="E8E8E8")


@dataclass(frozen=True)
class Column:
    """A workbook column: header (with its unit), kind of number (a key of
    ``EXCEL_FORMATS``, or "text") and width [characters]."""

    header: str
    kind: str
    width: float


def add_sheet(book: Workbook, title: str, columns: Sequence[Column],
              rows: Iterable[Sequence[object]], taken: set[str]) -> Worksheet:
    """A sheet with a bold, frozen header row, formats and widths by column."""
    sheet = book.create_sheet(sheet_name(title, taken))
    sheet.append([c.header for c in columns])
    for cell in sheet[1]:
        cell.font = Font(bold=True)
        cell.fill = _HEADER_FILL
        cell.alignment = Alignment(wrap_text=True, vertical="top")
    for row in rows:
        sheet.append(list(row))
    for index, column in enumerate(columns, start=1):
        letter = get_column_letter(index)
        sheet.column_dimensions[letter].width = column.width
        if column.kind == "text":
            continue
        for (cell,) in sheet.iter_rows(min_row=2, min_col=index, max_col=index):
            cell.number_format = EXCEL_FORMATS[column.kind]
    sheet.freeze_panes = "A2"
    return sheet


def schedule_sheet(book: Workbook, title: str, result: CheckResult, taken: set[str]) -> None:
    currency = result.study.currency or "cost units"
    columns = [Column("from (m)", "length", 11), Column("to (m)", "length", 11),
               Column("length (m)", "length", 11), Column("material", "text", 16),
               Column("DN", "dn", 7), Column("ID (mm)", "length", 9),
               Column("class", "text", 8), Column("static head (m)", "head", 11),
               Column("surge head (m)", "head", 11), Column("allowable head (m)", "head", 12),
               Column("class set by", "text", 14), Column(f"cost ({currency})", "money", 14)]
    pieces = result.pieces
    if result.study.is_scheme:
        # A scheme's pieces grouped by branch, the branch named first on every row.
        pieces = pd.concat([part for _, part in by_branch(result.study, pieces)])
        columns = [Column("branch", "text", 16), *columns]
    rows = [((p.branch,) if result.study.is_scheme else ()) + (
        p.from_m, p.to_m, p.length_m, p.material, round(p.dn_mm), p.internal_diameter_mm,
        p.pressure_class, p.static_head_m, p.surge_head_m,
        p.allowable_surge_head_m if p.class_governs == "static + surge"
        else p.allowable_head_m, p.class_governs, p.cost) for p in pieces.itertuples()]
    add_sheet(book, title, columns, rows, taken)


def _scenario_sheet(book: Workbook, result: CheckResult, taken: set[str]) -> None:
    columns = [Column("scenario", "text", 18), Column("inflow (L/s)", "flow", 11),
               Column("outlet energy (m)", "head", 12), Column("required (m)", "head", 11),
               Column("outlet margin (m)", "head", 12),
               Column("least pressure margin (m)", "head", 14),
               Column("least margin at (m)", "length", 13),
               Column("highest velocity (m/s)", "velocity", 12)]
    rows = []
    for s in result.scenarios:
        least = s.least_pressure_margin
        rows.append((s.name, s.inflow_m3_s * 1000, s.outlet_energy_m, s.required_head_m,
                     s.outlet_margin_m, float(least["pressure_m"] - least["min_pressure_m"]),
                     float(least["chainage_m"]), float(s.segments["velocity_m_s"].max())))
    add_sheet(book, "Scenarios", columns, rows, taken)


def _branch_sheets(book: Workbook, result: CheckResult, taken: set[str]) -> None:
    """A scheme's branches with their totals, and its delivery margins."""
    study = result.study
    currency = study.currency or "cost units"
    totals = branch_totals(study, result.pieces)
    whole = scheme_total(totals)
    rows: list[tuple[object, ...]] = [
        (r.branch, r.leaves, None if r.leaves == "source" else r.at_chainage_m, r.chainage_m,
         r.length_m, r.pieces, r.cost) for r in totals.itertuples()]
    rows.append(("scheme total (pipes)", None, None, whole["chainage_m"], whole["length_m"],
                 whole["pieces"], whole["cost"]))
    sheet = add_sheet(book, "Branches", [
        Column("branch", "text", 22), Column("leaves", "text", 16),
        Column("at chainage (m)", "length", 12), Column("chainage (m)", "length", 12),
        Column("laid length (m)", "length", 12), Column("pieces", "count", 8),
        Column(f"cost ({currency})", "money", 14)], rows, taken)
    for cell in sheet[sheet.max_row]:
        cell.font = Font(bold=True)
    add_sheet(book, "Delivery margins", [
        Column("scenario", "text", 18), Column("branch", "text", 22),
        Column("delivery flow (L/s)", "flow", 11), Column("energy (m)", "head", 11),
        Column("required head (m)", "head", 11), Column("margin (m)", "head", 11),
        Column("spare head (m)", "head", 11), Column("uncontrolled flow (L/s)", "flow", 12)],
        [(s.name, o.branch, o.flow_m3_s * 1000, o.energy_m, o.required_head_m, o.margin_m,
          max(o.margin_m, 0.0), _l_s(o.uncontrolled_flow_m3_s))
         for s in result.scenarios for o in s.outlets], taken)


def _l_s(flow_m3_s: float | None) -> float | None:
    """A flow in L/s for a cell; None (blank) when there is none or it is unbounded."""
    if flow_m3_s is None or flow_m3_s == float("inf"):
        return None
    return flow_m3_s * 1000


def bill_sheet(book: Workbook, title: str, lines: list[BillLine], currency: str,
               taken: set[str], design_cost: float | None = None) -> None:
    """The bill of quantities, with a total of the priced lines (and, below it, the
    design's own cost on laid lengths, which the bill exceeds by its whole pipes)."""
    currency = currency or "cost units"
    columns = [Column("item", "count", 6), Column("description", "text", 46),
               Column("unit", "text", 6), Column("quantity", "length", 11),
               Column("laid length (m)", "length", 12),
               Column("standard pipe length (m)", "length", 12),
               Column("pipes (no.)", "count", 9), Column(f"rate ({currency})", "money", 12),
               Column(f"amount ({currency})", "money", 14)]
    rows: list[tuple[object, ...]] = [
        (number, line.description, line.unit, line.quantity, line.laid_length_m,
         line.standard_length_m, line.pipes, line.rate, line.amount)
        for number, line in enumerate(lines, start=1)]
    total = sum(line.amount for line in lines if line.amount is not None)
    rows.append((None, "total of the priced items", None, None, None, None, None, None, total))
    by_branch = any(line.branch is not None for line in lines)
    if by_branch:  # a scheme's pipes are billed per branch: the branch after the item
        columns.insert(1, Column("branch", "text", 16))
        branches = [line.branch or "" for line in lines] + [None]
        rows = [(row[0], branch, *row[1:]) for row, branch in zip(rows, branches, strict=True)]
    sheet = add_sheet(book, title, columns, rows, taken)
    for cell in sheet[sheet.max_row]:
        cell.font = Font(bold=True)
    if design_cost is not None:
        sheet.append([None, *([None] if by_branch else []), "design cost on laid lengths "
                      "(pipes not rounded up; items without a rate left out)", None, None,
                      None, None, None, None, design_cost])
        sheet.cell(sheet.max_row, len(columns)).number_format = EXCEL_FORMATS["money"]


def inputs_sheet(book: Workbook, title: str, studies: dict[str, tuple[Study,
                 RunSummary | None]], taken: set[str]) -> None:
    """Every input table of each study, one after the other, in plain words."""
    rows: list[tuple[object, ...]] = []
    for option, (study, summary) in studies.items():
        for table in input_tables(study, summary):
            rows.append((f"{option}: {table.title}",))
            rows.append(table.columns)
            rows.extend(table.rows)
            if table.note:
                rows.append((table.note,))
            rows.append(())
    columns = [Column("inputs (as read from each study file and its catalogue)", "text", 44),
               *(Column("", "text", 22) for _ in range(5))]
    add_sheet(book, title, columns, rows, taken)


def cautions_sheet(book: Workbook, taken: set[str]) -> None:
    sheet = add_sheet(book, "Cautions", [Column("cautions: read before using any figure",
                                                "text", 120)],
                      [(c,) for c in CAUTIONS], taken)
    for (cell,) in sheet.iter_rows(min_row=2, max_col=1):
        cell.alignment = Alignment(wrap_text=True, vertical="top")


def design_workbook(result: CheckResult, appurtenances: list[Appurtenance],
                    summary: RunSummary | None, option: str) -> bytes:
    """``design.xlsx``: cautions, schedule, bill of quantities, scenarios, air valves and
    washouts, inputs."""
    book = Workbook()
    book.remove(book.active)
    taken: set[str] = set()
    cautions_sheet(book, taken)
    schedule_sheet(book, "Schedule", result, taken)
    if result.study.is_scheme:
        _branch_sheets(book, result, taken)
    bill_sheet(book, "Bill of quantities", bill_of_quantities(result, appurtenances),
               result.study.currency, taken, result.total_cost)
    _scenario_sheet(book, result, taken)
    for title, columns, rows in sheet_specs(result):  # a pumped main's station (none else)
        add_sheet(book, title, [Column(*spec) for spec in columns], rows, taken)
    scheme = result.study.is_scheme
    add_sheet(book, "Air valves and washouts",
              [*([Column("branch", "text", 16)] if scheme else []),
               Column("kind", "text", 10), Column("chainage (m)", "length", 12),
               Column("pipe level (m)", "head", 12), Column("ground (m)", "head", 11),
               Column("reason", "text", 50), Column("label", "text", 16)],
              [((a.branch,) if scheme else ()) + (
                  a.kind, a.chainage_m, a.pipe_level_m, a.ground_m, a.reason, a.label)
               for a in appurtenances], taken)
    inputs_sheet(book, "Inputs", {option: (result.study, summary)}, taken)
    return save(book)


def save(book: Workbook) -> bytes:
    buffer = io.BytesIO()
    book.save(buffer)
    return buffer.getvalue()
