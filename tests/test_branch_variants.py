"""Trade-offs of a scheme over one branch's required head or flow (``--vary
branch-head:NAME`` / ``branch-flow:NAME``): the variant studies change that branch and
nothing else, and bad names are input errors (exit 2).

Check values: continuity of flows on the tree (common practice, no source), worked from
the invented scheme of ``report_schemes.py``.
"""

from __future__ import annotations

import dataclasses

import pytest
from builders import write_study
from report_schemes import scheme_study
from typer.testing import CliRunner

from optimiser.analysis.flows import branch_inflow_m3_s
from optimiser.cli import app
from optimiser.cli.sweep_options import parse_range
from optimiser.reports.tradeoff_report import axis_title, value_column
from optimiser.sweeps.branch_variants import (
    branch_problems,
    branch_variable,
    is_flow,
    normalised,
)
from optimiser.sweeps.variants import known_variable, study_value, vary, with_required_head


@pytest.fixture
def scheme(tmp_path):
    return scheme_study(tmp_path)


def test_branch_variables_are_read_with_the_name_as_written():
    assert branch_variable(" Branch-Head : East spur ") == ("branch-head", "East spur")
    assert normalised("BRANCH-FLOW:west") == "branch-flow:west"
    assert normalised(" Flow ") == "flow"
    assert branch_variable("required-head") is None
    assert known_variable("branch-flow:west") and not known_variable("branch-level:west")
    assert is_flow("branch-flow:west") and is_flow("flow")
    assert not is_flow("branch-head:west")


def test_branch_head_changes_that_branch_only(scheme):
    varied = vary(scheme, "branch-head:east spur", 141.5)
    assert varied.branch("east spur").required_head_m == 141.5
    for before, after in zip(scheme.branches, varied.branches, strict=True):
        if before.name != "east spur":
            assert after == before
    assert varied.outlet == scheme.outlet and varied.scenarios == scheme.scenarios
    assert study_value(varied, "branch-head:east spur") == 141.5


def test_branch_flow_moves_its_delivery_and_every_line_above_it(scheme):
    scenario = scheme.scenarios[0]
    varied = vary(scheme, "branch-flow:east spur", 0.005)
    assert varied.branch("east spur").flow_m3_s == 0.005
    new = varied.scenarios[0]
    extra = 0.005 - 0.002  # the spur's flow was 2 L/s
    # continuity: the spur's extra flow enters east at its junction and east from main
    assert branch_inflow_m3_s(varied, new, "east spur") == pytest.approx(0.005)
    assert branch_inflow_m3_s(varied, new, "east") == pytest.approx(
        branch_inflow_m3_s(scheme, scenario, "east") + extra)
    assert branch_inflow_m3_s(varied, new, "west") == pytest.approx(
        branch_inflow_m3_s(scheme, scenario, "west"))


def test_a_scenario_flow_of_the_branch_keeps_its_proportion(scheme):
    scenario = dataclasses.replace(scheme.scenarios[0], branch_factor=1.5,
                                   branch_flows_m3_s=(("west", 0.006),))
    study = dataclasses.replace(scheme, scenarios=(scenario,))
    varied = vary(study, "branch-flow:west", 0.006)  # the key was 3 L/s: doubled
    assert dict(varied.scenarios[0].branch_flows_m3_s)["west"] == pytest.approx(0.012)
    # the factor still multiplies another branch's key
    assert branch_inflow_m3_s(varied, varied.scenarios[0], "east spur") == pytest.approx(
        1.5 * 0.002)


def test_the_trunk_by_its_branch_name_is_the_plain_variable(scheme):
    assert vary(scheme, "branch-head:main", 170.0) == with_required_head(scheme, 170.0)
    assert study_value(scheme, "branch-flow:main") == scheme.scenarios[0].outlet_flow_m3_s


def test_unknown_or_missing_branch_is_named(scheme):
    (problem,) = branch_problems(scheme, "branch-head:north")
    assert "no branch 'north'" in problem and "'east spur'" in problem
    (problem,) = branch_problems(scheme, "branch-flow:")
    assert "name the branch" in problem
    assert branch_problems(scheme, "branch-flow:west") == []


def test_range_of_a_branch_flow_is_read_with_its_unit():
    variable, low, high, problems = parse_range("branch-flow:West", "2 L/s", "6 L/s")
    assert (variable, problems) == ("branch-flow:West", [])
    assert (low, high) == pytest.approx((0.002, 0.006))
    _, _, _, problems = parse_range("branch-level:West", "2", "6")
    assert "branch-head:NAME" in problems[0]


def test_report_words_for_a_branch_variable():
    assert value_column("branch-flow:west") == "flow_m3_s"
    assert value_column("branch-head:west") == "required_head_m"
    assert axis_title("branch-head:west") == "required energy level at the end of branch west (m)"
    assert axis_title("flow") == "outlet flow of the first scenario (L/s)"


def test_tradeoff_over_an_unknown_branch_is_an_input_error(tmp_path):
    files = write_study(tmp_path)
    result = CliRunner().invoke(app, [
        "tradeoff", str(files.study), "--vary", "branch-head:east", "--from", "150",
        "--to", "160", "--out", str(tmp_path / "out")])
    assert result.exit_code == 2
    assert "no branch 'east'" in result.output
    assert not (tmp_path / "out").exists()
