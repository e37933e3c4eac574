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


# Invented test catalogue: long material names and prices that make eight-figure costs.
WIDE_CATALOGUE = [
    ("ductile iron", 160, 141.0, "PN10", 102.0, 0.02, 150, 6100.0, "invented test data"),
    ("ductile iron", 200, 176.2, "PN10", 102.0, 0.02, 150, 9050.0, "invented test data"),
    ("ductile iron", 250, 220.4, "PN10", 102.0, 0.02, 150, 13100.0, "invented test data"),
    ("ductile iron", 250, 204.6, "PN16", 163.0, 0.02, 150, 17050.0, "invented test data"),
]


def test_schedule_at_80_columns_shows_every_column_and_whole_costs(make_study, runner,
                                                                    tmp_path):
    # Issue 16, item 11: at 80 columns no column of the schedule is dropped and no number
    # is cut (common practice, no source: a cost read off a cut cell is a wrong cost).
    files = make_study(catalogue=WIDE_CATALOGUE)
    result = runner.invoke(app, ["design", str(files.study), "--json",
                                 str(tmp_path / "r.json")],
                           env={"COLUMNS": "80"}, terminal_width=80)
    assert result.exit_code == 0, result.output
    payload = json.loads((tmp_path / "r.json").read_text())
    lines = result.output.splitlines()
    start = next(i for i, line in enumerate(lines) if line.startswith("Schedule"))
    end = next(i for i, line in enumerate(lines) if line.startswith("Status:"))
    schedule = lines[start:end]
    assert max(len(line.rstrip()) for line in schedule) <= 80
    header = " ".join(schedule[1:4])
    for word in ("from", "to", "length", "material", "DN", "ID", "class", "V", "J", "cost",
                 "USD"):
        assert re.search(rf"\b{re.escape(word)}\b", header), (word, header)
    assert max(piece["cost"] for piece in payload["pieces"]) >= 1e7  # eight figures
    for piece in payload["pieces"]:
        row = next(line for line in schedule if f"{piece['length_m']:,.1f}" in line)
        assert row.rstrip().endswith(f"{piece['cost']:,.0f}"), (row, piece["cost"])


def test_one_word_for_the_limiting_points_in_every_output(study_files, runner, tmp_path):
    # Issue 16, item 11: the points nearest a limit have one name ("limiting point")
    # on screen and in the documentation of the files; the JSON field names stay
    # (common practice, no source: one thing, one name).
    other_words = re.compile(r"critical point|binding point|binding limit", re.IGNORECASE)
    outputs = []
    for args in (["check", str(study_files.study), "--design", str(study_files.design)],
                 ["design", str(study_files.study), "--json", str(tmp_path / "r.json")],
                 ["tradeoff", str(study_files.study), "--vary", "source-level", "--from",
                  "203", "--to", "205", "--steps", "2", "--out", str(tmp_path / "t")]):
        result = runner.invoke(app, args, env={"COLUMNS": "200"}, terminal_width=200)
        assert result.exit_code == 0, result.output
        assert "limiting point" in " ".join(result.output.lower().split()), args[0]
        outputs.append(result.output)
    assert "binding" in json.loads((tmp_path / "r.json").read_text())  # field name kept
    root = Path(__file__).resolve().parents[1]
    docs = [root / "README.md", root / "docs" / "user-guide.md",
            root / "docs" / "file-formats.md"]
    for text in [*outputs, *(path.read_text(encoding="utf-8") for path in docs)]:
        assert other_words.search(text) is None, other_words.search(text)


def _chainage(chainage_m: float) -> str:
    kilometres = int(chainage_m // 1000)
    return f"{kilometres}+{chainage_m - 1000 * kilometres:05.1f}"


SHORTFALL = {
    "min_pressure": lambda v: f"is {v['limit'] - v['value']:.2f} m below the minimum "
                              f"{v['limit']:.2f} m",
    "outlet_head": lambda v: f"{v['limit'] - v['value']:.2f} m short of the required "
                             f"{v['limit']:.2f} m",
    "velocity_max": lambda v: f"is {v['value'] - v['limit']:.2f} m/s above the maximum "
                              f"{v['limit']:.2f} m/s",
    "velocity_min": lambda v: f"is {v['limit'] - v['value']:.2f} m/s below the minimum "
                              f"{v['limit']:.2f} m/s",
    "max_pressure": lambda v: f"is {v['value'] - v['limit']:.1f} m above the class's "
                              f"{v['limit']:g} m",
}


def test_violations_say_what_where_how_much_and_which_scenario(make_study, runner,
                                                              tmp_path):
    # Issue 16, item 11: each violation is one sentence naming the scenario, what is
    # short, where (km+m) and by how much against which limit; the fields kind, value,
    # limit, chainage_m and scenario stay as they were. The sentence is checked against
    # the violation's own fields (common practice, no source).
    profile = [(0.0, 199.0, "", ""), (600.0, 192.0, "", ""), (1000.0, 199.5, "ridge", ""),
               (1600.0, 160.0, "", ""), (2400.0, 95.0, "valley", ""), (3000.0, 145.0, "", "")]
    files = make_study(profile=profile, study={
        "outlet": {"required_head_m": 190.0},
        "rules": {"velocity_min_m_s": 0.9, "velocity_max_m_s": 1.1}})
    result = runner.invoke(app, ["check", str(files.study), "--design", str(files.design),
                                 "--json", str(tmp_path / "r.json")],
                           env={"COLUMNS": "80"}, terminal_width=80)
    assert result.exit_code == 1, result.output
    violations = json.loads((tmp_path / "r.json").read_text())["violations"]
    assert {v["kind"] for v in violations} == set(SHORTFALL)
    flat = "".join(result.output.split())
    for v in violations:
        assert set(v) == {"kind", "scenario", "branch", "chainage_m", "value", "limit",
                          "message"}
        assert v["branch"] == "main"  # contract section 7: every violation names its branch
        message = v["message"]
        assert "\n" not in message and ". " not in message  # one sentence
        who = v["scenario"] if v["scenario"] is not None else "static (every scenario)"
        assert message.startswith(f"{who}: "), message
        assert f" {_chainage(v['chainage_m'])}" in message, message
        assert SHORTFALL[v["kind"]](v) in message, message
        if v["kind"] not in ("max_pressure", "outlet_head"):
            assert f"{v['value']:.2f} m" in message, message
        assert "".join(message.split()) in flat  # whole on the terminal, however wrapped
