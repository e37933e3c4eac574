"""Sensitivity of a fixed design of a scheme to the roughness assumption.

Check values: the independent check at the same roughness (the sweep must say what
``check`` says of the study with that roughness), and the fact that a rougher pipe
loses more head (Colebrook, C.F. (1939), Turbulent flow in pipes, J. Inst. Civil Eng.
11: the friction factor grows with relative roughness at a given Reynolds number). The
scheme and its design are invented test data (``report_schemes.py``).
"""

from __future__ import annotations

import pandas as pd
import pytest
from report_schemes import scheme_design, scheme_study
from scheme_builders import write_branch_scheme, write_scheme_design
from typer.testing import CliRunner

from optimiser.analysis import check_design
from optimiser.cli import app
from optimiser.sweeps.scheme_roughness import scheme_roughness_sweep
from optimiser.sweeps.variants import with_roughness

ROUGHNESS_MM = [0.01, 0.1, 1.0]


@pytest.fixture(scope="module")
def scheme(tmp_path_factory):
    study = scheme_study(tmp_path_factory.mktemp("scheme"))
    return study, scheme_design(study)


def test_each_roughness_as_the_check_finds_it(scheme):
    study, design = scheme
    table = scheme_roughness_sweep(study, design, ROUGHNESS_MM)
    assert len(table) == len(ROUGHNESS_MM) * len(study.scenarios)
    for row in table.itertuples():
        result = check_design(with_roughness(study, row.roughness_mm), design)
        scenario = next(s for s in result.scenarios if s.name == row.scenario)
        least = scenario.least_pressure_margin
        assert row.outlet_margin_m == pytest.approx(min(o.margin_m for o in scenario.outlets))
        assert row.least_pressure_margin_m == pytest.approx(
            float(least["pressure_m"] - least["min_pressure_m"]))
        assert row.capacity_m3_s == pytest.approx(scenario.capacity_m3_s, rel=1e-6)
        assert row.capacity_outlet_only_m3_s == pytest.approx(
            scenario.capacity_outlet_only_m3_s, rel=1e-6)


def test_rougher_pipe_delivers_less(scheme):
    study, design = scheme
    table = scheme_roughness_sweep(study, design, ROUGHNESS_MM)
    for _, part in table.groupby("scenario"):
        assert part["outlet_margin_m"].is_monotonic_decreasing
        assert part["capacity_outlet_only_m3_s"].is_monotonic_decreasing


def test_sensitivity_command_on_a_scheme(tmp_path):
    files = write_branch_scheme(tmp_path)
    out = tmp_path / "out"
    result = CliRunner().invoke(app, [
        "sensitivity", str(files.study), "--roughness-from", "0.01", "--roughness-to", "0.5",
        "--steps", "3", "--design", str(write_scheme_design(files.folder)), "--no-reoptimise",
        "--out", str(out)])
    assert result.exit_code == 0, result.output
    table = pd.read_csv(out / "fixed_design_roughness.csv")
    assert len(table) == 3
    assert table["outlet_margin_m"].is_monotonic_decreasing
    assert "Fixed design (given) across roughness" in result.output
