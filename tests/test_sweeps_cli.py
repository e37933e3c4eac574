"""``tradeoff`` and ``sensitivity`` through the command line: files written, exit codes
(contract section 6: 0 done, 2 bad input, 3 solver failure), cautions, seeds.

The commands are registered on a local typer app here, as ``optimiser.cli`` registers
them. Check values come from the project's independent check (``check_design``) or are
properties named beside each check; the study is invented test data (``builders.py``).
"""

from __future__ import annotations

import csv
import json

import dask
import numpy as np
import pandas as pd
import pytest
import typer
from typer.testing import CliRunner

import optimiser
import optimiser.sweeps.tradeoff as tradeoff_module
from optimiser.cli.analyse import check
from optimiser.cli.sweeps import sensitivity, tradeoff
from optimiser.milp import SolverError
from optimiser.reports.cautions import CAUTIONS
from optimiser.sweeps.variants import with_roughness

SECTION_4 = ["from_m", "to_m", "material", "dn_mm", "pressure_class"]


@pytest.fixture(scope="module")
def app():
    local = typer.Typer()
    local.command()(check)
    local.command()(tradeoff)
    local.command()(sensitivity)
    return local


def run(app, *args):
    result = CliRunner().invoke(app, [str(a) for a in args])
    assert "Traceback" not in result.output, result.output
    assert result.exception is None or isinstance(result.exception, SystemExit), \
        result.output
    return result


def squash(text: str) -> str:
    return "".join(text.split())


def said(result, text: str) -> bool:
    """``text`` in the output, whatever the terminal wrapping (rich wraps at 80)."""
    return squash(text) in squash(result.output)


def _cautions_shown(output: str) -> bool:
    flat = "".join(c for c in squash(output) if c not in "│╭╮╰╯─")
    return all(squash(caution) in flat for caution in CAUTIONS)


# --------------------------------------------------------------------------- tradeoff


def test_tradeoff_writes_table_chart_and_json(app, study_files, tmp_path):
    out = tmp_path / "out"
    result = run(app, "tradeoff", study_files.study, "--vary", "source-level", "--from",
                 "197", "--to", "209", "--steps", "4", "--out", out)
    assert result.exit_code == 0, result.output  # infeasible steps are not an error
    assert "infeasible" in result.output
    assert _cautions_shown(result.output)
    table = pd.read_csv(out / "tradeoff.csv")
    assert table.columns[0] == "source_level_m"
    assert table["source_level_m"].tolist() == [197.0, 201.0, 205.0, 209.0]
    assert table["status"].iloc[0] == "infeasible"  # reported, not dropped
    assert table["cost"].isna().iloc[0] and isinstance(table["note"].iloc[0], str)
    assert set(table["status"].iloc[1:]) == {"optimal"}
    # Cost change per metre of head between steps: negative (more head, less cost).
    assert (table["cost_change_per_m"].iloc[2:] < 0).all()
    payload = json.loads((out / "tradeoff.json").read_text())
    assert payload["cautions"] == list(CAUTIONS)
    assert payload["study_point"]["value"] == 201.0
    assert payload["study_point"]["cost"] == pytest.approx(table["cost"].iloc[1])
    assert payload["infeasible_steps"] == 1 and len(payload["steps"]) == 4
    page = (out / "tradeoff.html").read_text()
    assert "licensed engineer" in page and "no feasible design" in page
    assert "this study" in page


def test_tradeoff_flow_takes_units(app, study_files, tmp_path):
    out = tmp_path / "flow"
    result = run(app, "tradeoff", study_files.study, "--vary", "flow", "--from", "36 m3/h",
                 "--to", "30 L/s", "--steps", "3", "--out", out)
    assert result.exit_code == 0, result.output
    table = pd.read_csv(out / "tradeoff.csv")
    # 36 m^3/h = 0.01 m^3/s; 30 L/s = 0.03 m^3/s (definitions of the units).
    assert table["flow_m3_s"].tolist() == pytest.approx([0.01, 0.02, 0.03])
    assert "cost_change_per_l_s" in table.columns


@pytest.mark.parametrize(("extra", "word"), [
    (["--vary", "source-level", "--from", "210", "--to", "200"], "--from"),
    (["--vary", "source-level", "--from", "200", "--to", "200"], "--from"),
    (["--vary", "source-level", "--from", "200", "--to", "210", "--steps", "1"], "--steps"),
    (["--vary", "intake", "--from", "200", "--to", "210"], "--vary"),
    (["--vary", "flow", "--from", "10", "--to", "20 L/s"], "give a unit"),
    (["--vary", "flow", "--from", "10 m", "--to", "20 L/s"], "--from"),
    (["--vary", "required-head", "--from", "high", "--to", "180"], "--from"),
    (["--vary", "source-level", "--from", "200", "--to", "210", "--workers", "0"],
     "--workers"),
    (["--vary", "source-level", "--from", "200", "--to", "210", "--solver", "simplex"],
     "--solver"),
    (["--vary", "source-level", "--from", "200", "--to", "210", "--gap", "1.5"], "--gap"),
    (["--vary", "source-level", "--from", "200", "--to", "210", "--time-limit", "0"],
     "--time-limit"),
    (["--vary", "source-level", "--from", "200", "--to", "210", "--workers", "2",
      "--dask", "tcp://127.0.0.1:1"], "--dask"),
    # a TCP address needs its port (Dask's address form scheme://host:port, as in the
    # option's help); found by fuzzing: it failed on connecting, exit 3
    (["--vary", "source-level", "--from", "200", "--to", "210", "--dask", "nonsense"],
     "--dask 'nonsense': not a scheduler address"),
])
def test_tradeoff_bad_options_exit_2_and_write_nothing(app, study_files, tmp_path, extra,
                                                       word):
    out = tmp_path / "never"
    result = run(app, "tradeoff", study_files.study, *extra, "--out", out)
    assert result.exit_code == 2, result.output
    assert said(result, word)
    assert not out.exists()


def test_tradeoff_missing_study_and_out_file_exit_2(app, study_files, tmp_path):
    result = run(app, "tradeoff", tmp_path / "nothing.toml", "--vary", "source-level",
                 "--from", "200", "--to", "210", "--out", tmp_path / "o")
    assert result.exit_code == 2 and said(result, "nothing.toml: study file not found")
    blocker = tmp_path / "file"
    blocker.write_text("x")
    result = run(app, "tradeoff", study_files.study, "--vary", "source-level", "--from",
                 "200", "--to", "210", "--out", blocker)
    assert result.exit_code == 2 and said(result, "--out must be a folder")


def test_tradeoff_unreachable_dask_exits_2(app, study_files, tmp_path):
    # Port 1 on the loopback: nothing listens there; a short timeout keeps the test fast.
    with dask.config.set({"distributed.comm.timeouts.connect": "1s"}):
        result = run(app, "tradeoff", study_files.study, "--vary", "source-level", "--from",
                     "200", "--to", "210", "--steps", "2", "--dask", "tcp://127.0.0.1:1",
                     "--out", tmp_path / "o")
    assert result.exit_code == 2, result.output
    assert said(result, "--dask tcp://127.0.0.1:1")
    assert not (tmp_path / "o").exists()


def test_tradeoff_solver_failure_exits_3_and_keeps_other_steps(app, study_files, tmp_path,
                                                              monkeypatch):
    real = tradeoff_module.optimise_design

    def failing(study, **options):
        if study.source.level_m > 206.0:
            raise SolverError("no design found within the time limit (test)")
        return real(study, **options)

    monkeypatch.setattr(tradeoff_module, "optimise_design", failing)
    out = tmp_path / "out"
    result = run(app, "tradeoff", study_files.study, "--vary", "source-level", "--from",
                 "201", "--to", "211", "--steps", "3", "--out", out)
    assert result.exit_code == 3, result.output
    table = pd.read_csv(out / "tradeoff.csv")
    assert table["status"].tolist() == ["optimal", "optimal", "failed"]
    assert "time limit" in table["note"].iloc[2]


def test_tradeoff_marks_steps_stopped_at_the_time_limit(app, study_files, tmp_path,
                                                       monkeypatch):
    # A step that stops at its time limit keeps a design that meets every limit but is
    # not proven within the gap (status feasible): the table, CSV, JSON and chart must
    # say so (issue 16, item 7; common practice, no source). The stop is simulated on
    # one step: the marking is what is checked, not the solver.
    import dataclasses

    from optimiser.model import Status

    real = tradeoff_module.optimise_design

    def stopping(study, **options):
        outcome = real(study, **options)
        if study.source.level_m > 206.0:
            return dataclasses.replace(outcome, status=Status.FEASIBLE, gap=0.03)
        return outcome

    monkeypatch.setattr(tradeoff_module, "optimise_design", stopping)
    out = tmp_path / "out"
    result = run(app, "tradeoff", study_files.study, "--vary", "source-level", "--from",
                 "201", "--to", "211", "--steps", "3", "--gap", "0.01", "--out", out)
    assert result.exit_code == 0, result.output
    assert "(time" in result.output  # the status cell: "feasible (time limit)", wrapped
    assert said(result, "1 step(s) stopped at the time limit")
    assert said(result, "each step is proven within 1 % of the least cost")
    table = pd.read_csv(out / "tradeoff.csv")
    assert table["status"].tolist() == ["optimal", "optimal", "feasible"]
    assert "stopped at the time limit" in table["note"].iloc[2]
    assert "gap 3.00 %" in table["note"].iloc[2]
    assert table["target_gap"].tolist() == [0.01] * 3
    payload = json.loads((out / "tradeoff.json").read_text())
    assert payload["time_limit_steps"] == 1
    page = (out / "tradeoff.html").read_text()
    assert "stopped at the time limit (not proven within the gap)" in page
    assert "Target gap: each step is proven within 1 % of the least cost" in page


# --------------------------------------------------------------------------- sensitivity


def test_sensitivity_writes_everything(app, study_files, tmp_path):
    out = tmp_path / "out"
    result = run(app, "sensitivity", study_files.study, "--roughness-from", "0.01",
                 "--roughness-to", "0.4", "--steps", "3", "--robust", "--samples", "40",
                 "--seed", "5", "--distribution", "log-uniform", "--years", "20", "--ageing",
                 "PE=0.005", "--out", out)
    assert result.exit_code == 0, result.output
    assert _cautions_shown(result.output)
    for name in ("fixed_design_roughness.csv", "reoptimised_roughness.csv",
                 "robust/design.csv", "robust/result.json", "nominal/design.csv",
                 "nominal/result.json", "robust_design_roughness.csv",
                 "monte_carlo_samples.csv", "monte_carlo_summary.csv", "sensitivity.json",
                 "sensitivity.html"):
        assert (out / name).is_file(), name
    fixed = pd.read_csv(out / "fixed_design_roughness.csv")
    # A rougher pipe carries less (Colebrook, C.F. & White, C.M. (1937), The reduction
    # of carrying capacity of pipes with age, J. Inst. Civil Eng. 7(1)).
    for _, part in fixed.groupby("scenario"):
        assert np.all(np.diff(part["capacity_m3_s"]) < 0)
    # The robust result has the shape `design` writes (contract section 6) ...
    robust = json.loads((out / "robust/result.json").read_text())
    for key in ("ok", "violations", "scenarios", "status", "total_cost", "lower_bound",
                "currency", "verified", "pieces", "cautions"):
        assert key in robust, key
    assert robust["verified"] is True and robust["status"] == "optimal"
    for piece in robust["pieces"]:
        assert {*SECTION_4, "length_m", "internal_diameter_mm", "cost"} <= set(piece)
    # ... and its design.csv (contract section 4) passes `check` at the top roughness.
    with open(out / "robust/design.csv", newline="") as handle:
        assert next(csv.reader(handle))[:5] == SECTION_4
    study = optimiser.load_study(study_files.study)
    design = optimiser.load_design(out / "robust/design.csv", study)
    assert optimiser.check_design(with_roughness(study, 0.4), design, capacity=False).ok
    summary = json.loads((out / "sensitivity.json").read_text())
    assert summary["cautions"] == list(CAUTIONS)
    assert summary["robust"]["premium"] == pytest.approx(
        robust["total_cost"] - summary["nominal"]["total_cost"])
    assert summary["monte_carlo"]["seed"] == 5
    assert summary["monte_carlo"]["ageing_mm_per_year"] == {"PE": 0.005}
    assert "licensed engineer" in (out / "sensitivity.html").read_text()
    # Issue 16, item 6: the robust and nominal designs get the files `design --out`
    # writes, and the page states the probability of meeting each scenario (the same
    # figure as monte_carlo_summary.csv).
    for folder in ("robust", "nominal"):
        for name in ("report.html", "appurtenances.csv"):
            assert (out / folder / name).is_file(), (folder, name)
    assert "licensed engineer" in (out / "robust" / "report.html").read_text()
    page = (out / "sensitivity.html").read_text()
    mc = pd.read_csv(out / "monte_carlo_summary.csv")
    for row in mc.itertuples():
        assert (f"Monte Carlo, year 20: the fixed design meets scenario &#x27;{row.scenario}"
                f"&#x27; in {100 * row.probability_meets:.1f} % of 40 samples.") in page
    assert "probability of meeting" in page


def test_monte_carlo_degenerate_equals_check_and_seeds_repeat(app, study_files, tmp_path):
    """A fixed roughness of 0.05 mm aged 0.01 mm/year for 10 years (linear growth:
    Colebrook, C.F. & White, C.M. (1937), The reduction of carrying capacity of pipes
    with age) is 0.15 mm in every sample: the Monte Carlo must give the deterministic
    check's capacity and verdict."""
    common = ["sensitivity", study_files.study, "--design", study_files.design,
              "--no-reoptimise", "--roughness-from", "0.05", "--roughness-to", "0.3",
              "--samples", "6"]
    out = tmp_path / "fixed"
    result = run(app, *common, "--distribution", "fixed", "--years", "10", "--ageing",
                 "PE=0.01", "--out", out)
    assert result.exit_code == 0, result.output
    samples = pd.read_csv(out / "monte_carlo_samples.csv")
    study = optimiser.load_study(study_files.study)
    design = optimiser.load_design(study_files.design, study)
    full = optimiser.check_design(with_roughness(study, 0.15), design)
    summary = pd.read_csv(out / "monte_carlo_summary.csv").set_index("scenario")
    for scenario in full.scenarios:
        rows = samples[samples["scenario"] == scenario.name]
        assert np.allclose(rows["roughness_mm[PE]"], 0.15, rtol=0, atol=1e-12)
        assert np.allclose(rows["capacity_m3_s"], scenario.capacity_m3_s, atol=1e-8)
        fails = any(v.scenario == scenario.name and v.kind in ("min_pressure", "outlet_head")
                    for v in full.violations)
        assert summary.loc[scenario.name, "probability_meets"] == (0.0 if fails else 1.0)
    # No solve was asked for: nothing re-optimised, no nominal design written.
    assert not (out / "reoptimised_roughness.csv").exists()
    assert not (out / "nominal").exists()

    # Same seed, same numbers; another seed, other numbers.
    texts = []
    for seed in ("11", "11", "12"):
        folder = tmp_path / f"seed{len(texts)}"
        result = run(app, *common, "--seed", seed, "--out", folder)
        assert result.exit_code == 0, result.output
        texts.append((folder / "monte_carlo_samples.csv").read_text())
    assert texts[0] == texts[1]
    assert texts[0] != texts[2]


@pytest.mark.parametrize(("extra", "word"), [
    (["--roughness-from", "-0.1", "--roughness-to", "0.5"], "--roughness-from"),
    (["--roughness-from", "0.5", "--roughness-to", "0.1"], "--roughness-from"),
    (["--roughness-from", "0.1", "--roughness-to", "0.5", "--steps", "1"], "--steps"),
    (["--roughness-from", "0.1", "--roughness-to", "0.5", "--samples", "9", "--ageing",
      "PE:0.01"], "--ageing"),
    (["--roughness-from", "0.1", "--roughness-to", "0.5", "--samples", "9", "--ageing",
      "PE=fast"], "--ageing"),
    (["--roughness-from", "0.1", "--roughness-to", "0.5", "--samples", "9", "--ageing",
      "PE=-0.01"], "--ageing"),
    (["--roughness-from", "0.1", "--roughness-to", "0.5", "--samples", "9", "--ageing",
      "cast iron=0.05"], "cast iron"),
    (["--roughness-from", "0.1", "--roughness-to", "0.5", "--samples", "9", "--ageing",
      "PE=0.01", "--ageing", "PE=0.02"], "twice"),
    (["--roughness-from", "0.1", "--roughness-to", "0.5", "--ageing", "PE=0.01"],
     "--samples"),
    (["--roughness-from", "0.1", "--roughness-to", "0.5", "--seed", "3"], "--samples"),
    (["--roughness-from", "0.1", "--roughness-to", "0.5", "--samples", "0"], "--samples"),
    (["--roughness-from", "0.1", "--roughness-to", "0.5", "--samples", "9",
      "--distribution", "normal"], "--distribution"),
    (["--roughness-from", "0", "--roughness-to", "0.5", "--samples", "9",
      "--distribution", "log-uniform"], "--roughness-from"),
    (["--roughness-from", "0.1", "--roughness-to", "0.5", "--samples", "9",
      "--distribution", "triangular", "--mode", "0.7"], "--mode"),
    (["--roughness-from", "0.1", "--roughness-to", "0.5", "--samples", "9",
      "--years", "-1"], "--years"),
    (["--roughness-from", "0.1", "--roughness-to", "0.5", "--design", "missing.csv"],
     "missing.csv"),
])
def test_sensitivity_bad_input_exits_2_and_writes_nothing(app, study_files, tmp_path,
                                                          extra, word):
    out = tmp_path / "never"
    result = run(app, "sensitivity", study_files.study, *extra, "--out", out)
    assert result.exit_code == 2, result.output
    assert said(result, word)
    assert not out.exists()


def test_sensitivity_refuses_hazen_williams(app, make_study, tmp_path):
    files = make_study(study={"catalogue": {"friction": "hazen-williams"}})
    result = run(app, "sensitivity", files.study, "--roughness-from", "0.1",
                 "--roughness-to", "0.5", "--out", tmp_path / "o")
    assert result.exit_code == 2, result.output
    assert said(result, "study.toml: [catalogue] friction = hazen-williams")


def test_sensitivity_without_a_nominal_design_still_reports(app, make_study, tmp_path):
    # The source 30 m too low: no design exists as written; re-optimised steps are
    # reported as infeasible, and the fixed-design part says why it is skipped.
    files = make_study(study={"source": {"level_m": 171.0, "top_water_level_m": 173.0}})
    out = tmp_path / "out"
    result = run(app, "sensitivity", files.study, "--roughness-from", "0.01",
                 "--roughness-to", "0.1", "--steps", "2", "--samples", "5", "--out", out)
    assert result.exit_code == 0, result.output
    assert said(result, "skipped")
    table = pd.read_csv(out / "reoptimised_roughness.csv")
    assert set(table["status"]) == {"infeasible"}
    payload = json.loads((out / "sensitivity.json").read_text())
    assert payload["fixed_design"] is None and payload["monte_carlo"] is None
