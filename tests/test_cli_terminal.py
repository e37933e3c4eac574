"""What the terminal tells the engineer (issue 16 item 11): plain words for the values an
option takes, the files a run wrote, and the cost of a checked design.

Presentation checks of the project's own output (common practice, no source); the study
is invented test data (``builders.py``).
"""

from __future__ import annotations

import json
import re
import subprocess
import sys
from pathlib import Path

import pytest

from optimiser.cli import app
from optimiser.reports.pdf import find_browser

COMMANDS = ["check", "design", "report", "compare", "tradeoff", "sensitivity"]
PARSER_TYPES = re.compile(r"<\w+>|\b(PATH|TEXT|FLOAT|INTEGER|BOOLEAN)\b")

PDF = ["report.pdf"] if find_browser() else []  # written when a browser is found


@pytest.mark.parametrize("command", [None, *COMMANDS])
def test_help_names_values_in_plain_words(command, runner):
    args = ["--help"] if command is None else [command, "--help"]
    result = runner.invoke(app, args, env={"COLUMNS": "160"}, terminal_width=160)
    assert result.exit_code == 0, result.output
    assert PARSER_TYPES.search(result.output) is None, result.output


def test_design_help_shows_the_unit_of_the_time_limit(runner):
    result = runner.invoke(app, ["design", "--help"], env={"COLUMNS": "160"},
                           terminal_width=160)
    assert re.search(r"--time-limit\s+SECONDS", result.output), result.output
    assert re.search(r"--out\s+FOLDER", result.output), result.output


def _written(output: str) -> set[Path]:
    return {Path(line.removeprefix("wrote ").strip()) for line in output.splitlines()
            if line.startswith("wrote ")}


def test_design_out_lists_every_file_it_wrote(study_files, runner, tmp_path):
    out = tmp_path / "out"
    result = runner.invoke(app, ["design", str(study_files.study), "--out", str(out),
                                 "--json", str(tmp_path / "r.json")],
                           env={"COLUMNS": "400"}, terminal_width=400)
    assert result.exit_code == 0, result.output
    assert _written(result.output) == {*out.iterdir(), tmp_path / "r.json"}
    assert {p.name for p in out.iterdir()} == {"design.csv", "result.json", "report.html",
                                               "appurtenances.csv", "design.xlsx",
                                               *PDF}


def test_check_prints_the_cost_of_the_design_it_checked(study_files, runner, tmp_path):
    result = runner.invoke(app, ["check", str(study_files.study), "--design",
                                 str(study_files.design), "--json", str(tmp_path / "r.json")],
                           env={"COLUMNS": "200"}, terminal_width=200)
    assert result.exit_code == 0, result.output
    payload = json.loads((tmp_path / "r.json").read_text())
    total = sum(piece["cost"] for piece in payload["pieces"]) + payload["change_cost_total"]
    assert total > 0
    line = next(line for line in result.output.splitlines()
                if line.startswith("Capital cost of the design:"))
    assert f"{total:,.0f}" in line
    assert payload["currency"] in line


def test_help_loads_no_heavy_library():
    # The help must come quickly: nothing numeric, no plotting, no solver (issue 12).
    code = ("import sys\nsys.argv = ['optimiser', '--help']\nfrom optimiser.cli import app\n"
            "try:\n    app()\nexcept SystemExit:\n    pass\n"
            "heavy = ('pandas', 'numpy', 'plotly', 'pulp', 'highspy', 'scipy', 'pint')\n"
            "print('loaded:', sorted(m for m in heavy if m in sys.modules))\n")
    result = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                            timeout=120, check=True)
    assert result.stdout.splitlines()[-1] == "loaded: []", result.stdout + result.stderr


def _summary(page: str) -> str:
    start = page.index("<h2>Summary</h2>")
    return page[start:page.index("</table>", start)]


def test_report_from_result_json_shows_the_figures_of_the_design_run(study_files, runner,
                                                                     tmp_path):
    # The report of `report --result` reads the optimiser's figures from the file; the
    # report `design` writes reads them from the run itself: the same summary.
    out = tmp_path / "out"
    first = runner.invoke(app, ["design", str(study_files.study), "--out", str(out)])
    assert first.exit_code == 0, first.output
    again = tmp_path / "again"
    second = runner.invoke(app, ["report", str(study_files.study), "--design",
                                 str(out / "design.csv"), "--result", str(out / "result.json"),
                                 "--out", str(again)])
    assert second.exit_code == 0, second.output
    summary = _summary((again / "report.html").read_text(encoding="utf-8"))
    assert summary == _summary((out / "report.html").read_text(encoding="utf-8"))
    assert "optimiser status" in summary and "cheapest uniform design" in summary


def test_report_with_a_result_that_is_not_a_design_run_is_bad_input(study_files, runner,
                                                                    tmp_path):
    result_file = tmp_path / "r.json"
    result_file.write_text('{"title": "no status here"}\n', encoding="utf-8")
    result = runner.invoke(app, ["report", str(study_files.study), "--design",
                                 str(study_files.design), "--result", str(result_file),
                                 "--out", str(tmp_path / "out")])
    assert result.exit_code == 2, result.output
    assert "r.json" in result.output and "Traceback" not in result.output
    assert not (tmp_path / "out").exists()
