"""The report, workbook, CSVs and terminal summary of a checked scheme (contract
section 7): every branch shown, totals that add up, a ``branch`` column wherever rows
belong to a branch, and the cautions kept.

Check values are the check's own figures re-read (a report must show what the check
found: common practice, no source) and sums of pieces. The scheme and its design are
invented test data (``report_schemes.py``).
"""

from __future__ import annotations

import io
import json

import pandas as pd
import pytest
from builders import write_study
from openpyxl import load_workbook
from report_schemes import scheme_design, scheme_study, with_plan
from rich.console import Console
from scheme_builders import write_branch_scheme
from typer.testing import CliRunner

from optimiser import load_design, load_study
from optimiser.analysis import check_design
from optimiser.analysis.appurtenances import schedule
from optimiser.cli import app
from optimiser.milp import DesignOutcome
from optimiser.model import Status
from optimiser.model.lines import study_lines
from optimiser.reports.branch_view import branch_view
from optimiser.reports.cautions import CAUTIONS
from optimiser.reports.design_report import DESIGN_CSV_COLUMNS, design_table, print_design
from optimiser.reports.files import APPURTENANCE_COLUMNS, write_design_files
from optimiser.reports.html import render_report
from optimiser.reports.scheme_geometry import write_scheme_geometry_files
from optimiser.reports.scheme_sections import MARGIN_COLUMNS, margin_rows
from optimiser.reports.terminal import print_check
from optimiser.reports.workbook import design_workbook
from optimiser.sweeps.tradeoff import pieces_summary


@pytest.fixture(scope="module")
def checked(tmp_path_factory):
    study = scheme_study(tmp_path_factory.mktemp("scheme"))
    return check_design(study, scheme_design(study))


def _outcome(result) -> DesignOutcome:
    """A design run's outcome around a hand-made design (to write its files)."""
    return DesignOutcome(Status.FEASIBLE, result.design, result, result.total_cost, None,
                         None, None, 0.0, "by hand", 1e-4, 0.0)


def test_branch_view_is_the_check_on_that_line(checked):
    names = [line.name for line in study_lines(checked.study)]
    total = 0.0
    for name in names:
        view = branch_view(checked, name)
        own = checked.pieces[checked.pieces["branch"] == name]
        assert len(view.pieces) == len(own) == len(checked.design.on(name).pieces)
        assert view.total_cost == pytest.approx(own["cost"].sum() + view.change_cost_total)
        total += view.total_cost
        for whole, part in zip(checked.scenarios, view.scenarios, strict=True):
            outlet = next(o for o in whole.outlets if o.branch == name)
            assert part.outlet_energy_m == outlet.energy_m
            assert part.required_head_m == outlet.required_head_m
            assert set(part.points["branch"]) == {name}
            assert len(part.points) == int((whole.points["branch"] == name).sum())
            assert part.segments["piece"].max() == len(view.pieces) - 1
        # no tanks: every line's static line is the source's top water level
        assert view.study.source.top_water_level_m == pytest.approx(
            checked.study.source.top_water_level_m)
        assert view.study.route.total_chainage_m == pytest.approx(
            float(checked.study.route.total_chainage_m if name == "main"
                  else checked.study.branch(name).route.total_chainage_m))
    assert total == pytest.approx(checked.total_cost)


def test_margins_table_has_every_delivery_point_in_every_scenario(checked):
    rows = margin_rows(checked)
    lines = study_lines(checked.study)
    assert len(rows) == len(checked.scenarios) * len(lines)
    assert len(rows[0]) == len(MARGIN_COLUMNS)
    for row, (scenario, outlet) in zip(rows, [(s, o) for s in checked.scenarios
                                              for o in s.outlets], strict=True):
        assert row[:2] == (scenario.name, outlet.branch)
        assert float(row[5].replace(",", "")) == pytest.approx(
            outlet.energy_m - outlet.required_head_m, abs=0.006)
    assert {row[1] for row in rows} == {line.name for line in lines}


def test_report_shows_every_branch_and_the_cautions(checked):
    page = render_report(checked, schedule(checked))
    for line in study_lines(checked.study):
        assert f"Long section: {'branch ' + line.name if line.parent else 'the trunk'}" in page
    for div in ("plot-scheme", *(f"plot-line-{n}" for n in range(len(study_lines(
            checked.study))))):
        assert f'id="{div}"' in page
    for heading in ("Scheme diagram", "Branches", "Delivery margins", "scheme total (pipes)"):
        assert heading in page
    for caution in CAUTIONS:
        assert caution.replace("'", "&#39;") in page or caution in page
    assert 'id="plot-0"' not in page  # the trunk's long section is among the lines'


def test_workbook_carries_branch_everywhere_rows_belong_to_one(checked):
    book = load_workbook(io.BytesIO(design_workbook(
        checked, schedule(checked), None, "scheme")))
    sheet = list(book["Schedule"].values)
    assert sheet[0][0] == "branch"
    assert [r[0] for r in sheet[1:]] == ["main", "main", "east", "east", "east spur",
                                            "west"]
    branches = list(book["Branches"].values)
    costs = {r[0]: r[-1] for r in branches[1:]}
    assert costs["scheme total (pipes)"] == pytest.approx(checked.pieces["cost"].sum())
    for name, part in checked.pieces.groupby("branch"):
        assert costs[name] == pytest.approx(part["cost"].sum())
    margins = list(book["Delivery margins"].values)
    assert len(margins) - 1 == len(checked.scenarios) * len(study_lines(checked.study))
    bill = list(book["Bill of quantities"].values)
    assert bill[0][1] == "branch"
    billed = {r[1] for r in bill[1:] if r[2] and r[2].endswith("supplied and laid")}
    assert billed == set(checked.study.branch_names)
    assert "Cautions" in book.sheetnames


def test_csvs_carry_branch(checked, tmp_path):
    outcome = _outcome(checked)
    assert list(design_table(outcome).columns)[:6] == ["branch", "from_m", "to_m",
                                                       "material", "dn_mm", "pressure_class"]
    write_design_files(tmp_path, outcome, checked.study)
    design = pd.read_csv(tmp_path / "design.csv")
    assert list(design["branch"]) == [p.branch for p in checked.design.pieces]
    appurtenances = pd.read_csv(tmp_path / "appurtenances.csv")
    assert list(appurtenances.columns)[:2] == ["branch", "kind"]
    assert set(appurtenances["branch"]) <= set(checked.study.branch_names)


def test_terminal_summary_per_branch(checked):
    console = Console(width=100, record=True)
    print_check(console, checked)
    text = console.export_text()
    assert "Branches (least margins over every scenario)" in text
    for line in study_lines(checked.study):
        assert line.name in text
    assert "scheme total (pipes)" in text
    console = Console(width=100, record=True)
    print_design(console, _outcome(checked), checked.study)
    assert "east spur" in console.export_text()


def test_geometry_files_of_a_scheme_in_plan(tmp_path):
    # UTM zone 33 north (EPSG:32633), an arbitrary projected grid for invented lines
    study = with_plan(scheme_study(tmp_path / "study"), "EPSG:32633", (500_000.0, 4_000_000.0))
    result = check_design(study, scheme_design(study))
    out = tmp_path / "out"
    out.mkdir()
    written = write_scheme_geometry_files(out, result, schedule(result))
    assert {p.name for p in written} == {"design.geojson", "profile_points.csv"}
    collection = json.loads((out / "design.geojson").read_text())
    pipes = [f["properties"] for f in collection["features"]
             if f["properties"]["kind"] == "pipe piece"]
    assert [p["branch"] for p in pipes] == [p.branch for p in result.design.pieces]
    kinds = {(f["properties"]["branch"], f["properties"]["kind"])
             for f in collection["features"]}
    assert ("main", "source") in kinds and ("east", "junction") in kinds
    assert {b for b, k in kinds if k == "outlet"} == set(study.branch_names)
    assert collection["cautions"] == list(CAUTIONS)
    points = pd.read_csv(out / "profile_points.csv")
    assert points.columns[0] == "branch"
    assert set(points["branch"]) == set(study.branch_names)


def test_no_geometry_files_when_a_line_has_no_coordinates(checked, tmp_path):
    assert write_scheme_geometry_files(tmp_path, checked, []) == []


def test_report_command_on_a_scheme_file(tmp_path):
    files = write_branch_scheme(tmp_path)
    design = files.folder / "scheme_design.csv"
    design.write_text("branch,from_m,to_m,material,dn_mm,pressure_class\n"
                      "main,0,1200,PE,250,PN10\nmain,1200,3000,PE,200,PN10\n"
                      "north end,0,1000,PE,160,PN10\nschool,0,400,PE,160,PN10\n",
                      encoding="utf-8")
    out = tmp_path / "out"
    result = CliRunner().invoke(app, ["report", str(files.study), "--design", str(design),
                                      "--out", str(out)])
    assert result.exit_code in (0, 1), result.output
    assert "Branches (least margins over every scenario)" in result.output
    page = (out / "report.html").read_text(encoding="utf-8")
    for name in ("north end", "school"):
        assert f"Long section: branch {name}" in page
    assert "Offtakes on branches" in page and "north tap" in page
    table = pd.read_csv(out / "appurtenances.csv")
    assert list(table.columns)[:2] == ["branch", "kind"]
    book = load_workbook(out / "design.xlsx")
    assert {"Branches", "Delivery margins"} <= set(book.sheetnames)


def test_sweep_summary_of_a_scheme_names_each_branch(checked):
    n_runs, text = pieces_summary(_outcome(checked))
    assert n_runs == len(checked.design.merged().pieces)
    assert text.startswith("main: DN250 PE PN10")
    for name in ("east", "east spur", "west"):
        assert f"; {name}: DN" in text


def test_single_route_files_keep_their_columns(tmp_path):
    files = write_study(tmp_path)
    study = load_study(files.study)
    result = check_design(study, load_design(files.design, study))
    outcome = _outcome(result)
    assert list(design_table(outcome).columns) == DESIGN_CSV_COLUMNS
    out = tmp_path / "out"
    out.mkdir()
    write_design_files(out, outcome, study)
    assert list(pd.read_csv(out / "design.csv").columns) == DESIGN_CSV_COLUMNS
    assert list(pd.read_csv(out / "appurtenances.csv").columns) == APPURTENANCE_COLUMNS
    book = load_workbook(out / "design.xlsx")
    assert next(book["Schedule"].values)[0] == "from (m)"
    assert next(book["Bill of quantities"].values)[1] == "description"
    assert not {"Branches", "Delivery margins"} & set(book.sheetnames)
    payload = json.loads((out / "result.json").read_text())
    assert {piece["branch"] for piece in payload["pieces"]} == {"main"}  # contract section 7
    page = (out / "report.html").read_text(encoding="utf-8")
    assert "Scheme diagram" not in page and 'id="plot-0"' in page
