"""`optimiser compare`: ranking, infeasible options kept, CSV and XLSX agree.

The ranking and the workbook are checked against the command's own CSV and against
each option's own `design` result (the optimiser is tested elsewhere against published
results); the facts checked here are the report's: options sorted by capital cost, an
infeasible option listed with its diagnosis and no rank (common practice, no source).
"""

from __future__ import annotations

import numpy as np
import openpyxl
import pandas as pd
import pytest

from optimiser.cli import app

FEWER_PIPES = {"catalogue": {"file": "catalogue.csv", "materials": ["PE"]}}


@pytest.fixture
def options(make_study):
    cheap = make_study(folder="option-any")
    pe_only = make_study(folder="option-pe", study=FEWER_PIPES)
    impossible = make_study(folder="option-impossible",
                            study={"outlet": {"required_head_m": 260.0}})
    return [cheap.study, pe_only.study, impossible.study]


def test_compare_ranks_by_cost_and_keeps_infeasible(runner, options, tmp_path):
    out = tmp_path / "out"
    result = runner.invoke(app, ["compare", *map(str, options), "--out", str(out)])
    assert result.exit_code == 0, result.output
    assert "licensed engineer" in result.output
    table = pd.read_csv(out / "comparison.csv")
    feasible = table[table["total_cost"].notna()]
    assert list(feasible["total_cost"]) == sorted(feasible["total_cost"])
    assert list(feasible["rank"]) == [1, 2]
    infeasible = table[table["option"] == "option-impossible"].iloc[0]
    assert infeasible["status"] == "infeasible"
    assert pd.isna(infeasible["rank"]) and pd.isna(infeasible["total_cost"])
    assert "outlet" in str(infeasible["diagnosis"]).lower()
    # Fewer materials can only cost as much or more (the feasible set shrinks).
    costs = table.set_index("option")["total_cost"]
    assert costs["option-pe"] >= costs["option-any"] - 1e-6 * costs["option-any"]
    assert (out / "comparison.html").is_file()
    assert (out / "option-any" / "report.html").is_file()


def test_workbook_holds_the_csv_numbers(runner, options, tmp_path):
    out = tmp_path / "out"
    result = runner.invoke(app, ["compare", *map(str, options[:2]), "--out", str(out)])
    assert result.exit_code == 0, result.output
    table = pd.read_csv(out / "comparison.csv")
    book = openpyxl.load_workbook(out / "comparison.xlsx", read_only=True)
    assert book.sheetnames[:2] == ["Cautions", "Comparison"]
    rows = list(book["Comparison"].iter_rows(values_only=True))
    header = list(rows[0])
    headers = {"total_cost": "capital cost", "cost_per_l_s": "cost per L/s",
               "least_pressure_margin_m": "least pressure margin (m)",
               "n_changes": "changes (no.)"}
    for column, heading in headers.items():
        sheet_values = [row[header.index(heading)] for row in rows[1:]]
        assert np.allclose(np.array(sheet_values, dtype=float),
                           table[column].to_numpy(dtype=float), rtol=1e-12)
    # One sheet per option's schedule, with the same total as the comparison.
    for name in ("option-any", "option-pe"):
        sheet = list(book[name].iter_rows(values_only=True))
        cost_column = list(sheet[0]).index("cost (USD)")
        total = sum(row[cost_column] for row in sheet[1:])
        listed = float(table.set_index("option").loc[name, "total_cost"])
        # no change cost in these studies; comparison.csv gives costs to 0.01
        assert total == pytest.approx(listed, abs=0.006)


def test_compare_bad_study_is_exit_2(runner, options, tmp_path):
    missing = tmp_path / "nowhere" / "study.toml"
    result = runner.invoke(app, ["compare", str(options[0]), str(missing)])
    assert result.exit_code == 2
    assert "nowhere" in result.output and "Traceback" not in result.output


def test_two_options_with_one_name_are_told_apart(runner, make_study, tmp_path):
    # Two runs both in folders called `opt` (issue 16, item 8): each keeps a row, a sheet,
    # a heading and a folder of its own, named in the order given (`opt`, then `opt-2`),
    # as docs/user-guide.md states (common practice, no source).
    first = make_study(folder="a/opt")
    second = make_study(folder="b/opt", study=FEWER_PIPES)
    out = tmp_path / "out"
    result = runner.invoke(app, ["compare", str(first.study), str(second.study),
                                 "--out", str(out)])
    assert result.exit_code == 0, result.output
    table = pd.read_csv(out / "comparison.csv")
    assert sorted(table["option"]) == ["opt", "opt-2"]
    by_name = table.set_index("option")["study"]
    assert by_name["opt"] == str(first.study) and by_name["opt-2"] == str(second.study)
    book = openpyxl.load_workbook(out / "comparison.xlsx", read_only=True)
    assert {"opt", "opt-2"} <= set(book.sheetnames)
    for name in ("opt", "opt-2"):
        assert (out / name / "design.csv").is_file()
    page = (out / "comparison.html").read_text(encoding="utf-8")
    assert "opt-2" in page


def test_unique_names_keep_a_name_another_option_has():
    from pathlib import Path

    from optimiser.sweeps.options import unique_names

    paths = [Path("a/opt/study.toml"), Path("b/opt/study.toml"), Path("c/opt-2/study.toml"),
             Path("d/base.toml")]
    # `opt-2` is the third option's own name, so the second `opt` becomes `opt-3`.
    assert unique_names(paths) == ["opt", "opt-3", "opt-2", "base"]
