"""The Monte Carlo of roughness and ageing on a branched scheme.

Check values: the delivery margins of an independent evaluation of the tree written from
the contract with friction from the ``fluids`` package (``independent_tree.py``:
Colebrook, C.F. (1939), Turbulent flow in pipes, J. Inst. Civil Eng. 11, as
``fluids.friction.Colebrook``; a reference library used only in tests); the single
route's Monte Carlo (itself tested equal to the independent check in
``test_sensitivity.py``); the project's independent check (``check_design``) for the
pressures and the capacity; and the fact that a rougher pipe loses more head (Colebrook
1939), which bounds the probability. The schemes and designs are invented test data.
"""

from __future__ import annotations

import dataclasses
import json

import numpy as np
import pandas as pd
import pytest
from independent_tree import design_line_energies
from report_schemes import scheme_design, scheme_study
from scheme_builders import write_branch_scheme, write_scheme_design
from typer.testing import CliRunner

import optimiser
from optimiser.analysis import check_design
from optimiser.analysis.sensitivity import RoughnessDistribution, monte_carlo
from optimiser.cli import app
from optimiser.sweeps.scheme_monte_carlo import scheme_monte_carlo
from optimiser.sweeps.variants import with_roughness


@pytest.fixture(scope="module")
def scheme(tmp_path_factory):
    """The report scheme with branch "east" asking for 45 m more head, so that it has
    the least delivery margin when the pipe is smooth and the trunk when it is rough."""
    study = scheme_study(tmp_path_factory.mktemp("scheme"))
    branches = tuple(dataclasses.replace(b, required_head_m=b.required_head_m + 45.0)
                     if b.name == "east" else b for b in study.branches)
    study = dataclasses.replace(study, branches=branches)
    return study, scheme_design(study)


def _fixed(roughness_mm: float) -> RoughnessDistribution:
    return RoughnessDistribution("fixed", roughness_mm, roughness_mm)


def test_each_sample_as_the_independent_tree_finds_it(scheme):
    study, design = scheme
    result = scheme_monte_carlo(study, design, RoughnessDistribution("uniform", 0.01, 2.0),
                                samples=12, seed=5)
    samples = result.samples
    assert len(samples) == 12 and set(samples["governing_branch"]) == {"main", "east"}
    for _, row in samples.iterrows():
        roughness = row["roughness_mm[PE]"]  # the only material of the design
        energies = design_line_energies(with_roughness(study, roughness), design)
        margins = {name: float(values[0, -1]) for name, values in energies.items()}
        governing = min(margins, key=margins.get)
        assert row["outlet_margin_m"] == pytest.approx(margins[governing], abs=1e-6)
        assert row["governing_branch"] == governing


def test_fixed_draw_equals_the_check(scheme):
    study, design = scheme
    for roughness in (0.02, 0.5, 2.0):
        result = scheme_monte_carlo(study, design, _fixed(roughness), samples=3, seed=0)
        check = check_design(with_roughness(study, roughness), design)
        scenario = check.scenarios[0]
        row = result.samples.iloc[0]
        least = scenario.least_pressure_margin
        assert row["least_pressure_margin_m"] == pytest.approx(
            float(least["pressure_m"] - least["min_pressure_m"]), abs=1e-9)
        assert row["outlet_margin_m"] == pytest.approx(
            min(o.margin_m for o in scenario.outlets), abs=1e-9)
        assert row["capacity_m3_s"] == pytest.approx(scenario.capacity_m3_s, rel=1e-6)
        short = [v for v in check.violations if v.kind in ("min_pressure", "outlet_head")]
        assert bool(row["meets"]) == (not short)
        points = result.delivery_points.set_index("branch")
        for outlet in scenario.outlets:
            assert points.at[outlet.branch, "margin_p50_m"] == pytest.approx(
                outlet.margin_m, abs=1e-9)


def test_a_route_as_a_tree_of_one_line_equals_the_routes_monte_carlo(study_files):
    study = optimiser.load_study(study_files.study)
    design = optimiser.load_design(study_files.design, study)
    distribution = RoughnessDistribution("log-uniform", 0.005, 1.5)
    options = {"samples": 40, "seed": 11, "years": 20.0,
               "ageing_mm_per_year": {"PE": 0.01}}
    route = monte_carlo(study, design, distribution, **options)
    tree = scheme_monte_carlo(study, design, distribution, **options)
    for column in route.samples.columns:
        if route.samples[column].dtype.kind == "f":
            assert np.allclose(tree.samples[column], route.samples[column], rtol=1e-7,
                               atol=1e-9, equal_nan=True), column
        else:
            assert (tree.samples[column] == route.samples[column]).all(), column
    assert (tree.samples["governing_branch"] == "main").all()
    for column in route.summary.columns:
        expected, found = route.summary[column], tree.summary[column]
        if expected.dtype.kind == "f":
            assert np.allclose(found, expected, rtol=1e-7, atol=1e-9), column
        else:
            assert (found == expected).all(), column


def test_probability_is_one_below_and_zero_above_the_failing_roughness(scheme):
    study, design = scheme
    # The independent tree: every delivery met at 0.02 mm, the trunk short at 0.6 mm.
    smooth = design_line_energies(with_roughness(study, 0.02), design)
    rough = design_line_energies(with_roughness(study, 0.6), design)
    assert min(values[0, -1] for values in smooth.values()) > 0.0
    assert rough["main"][0, -1] < 0.0
    assert check_design(with_roughness(study, 0.02), design).ok
    # A rougher pipe loses more head (Colebrook 1939): below 0.02 mm every sample meets
    # the scenario, above 0.6 mm none does.
    low = scheme_monte_carlo(study, design, RoughnessDistribution("uniform", 0.001, 0.02),
                             samples=60, seed=2).summary.iloc[0]
    high = scheme_monte_carlo(study, design, RoughnessDistribution("uniform", 0.6, 3.0),
                              samples=60, seed=2).summary.iloc[0]
    assert low["probability_meets"] == 1.0 and low["probability_deliveries_met"] == 1.0
    assert high["probability_meets"] == 0.0 and high["governing_branch"] == "main"
    assert high["capacity_p95_m3_s"] < high["design_flow_m3_s"] < low["capacity_p05_m3_s"]


def test_ageing_adds_rate_times_years_and_the_seed_repeats(scheme):
    study, design = scheme
    aged = scheme_monte_carlo(study, design, _fixed(0.1), samples=4, seed=0, years=25.0,
                              ageing_mm_per_year={"PE": 0.02})
    at_once = scheme_monte_carlo(study, design, _fixed(0.6), samples=4, seed=0)
    columns = ["capacity_m3_s", "outlet_margin_m", "least_pressure_margin_m"]
    assert np.allclose(aged.samples[columns], at_once.samples[columns], atol=1e-9)
    assert np.allclose(aged.samples["roughness_mm[PE]"], 0.6)
    uniform = RoughnessDistribution("uniform", 0.01, 1.0)
    first = scheme_monte_carlo(study, design, uniform, samples=20, seed=7)
    again = scheme_monte_carlo(study, design, uniform, samples=20, seed=7)
    other = scheme_monte_carlo(study, design, uniform, samples=20, seed=8)
    pd.testing.assert_frame_equal(first.samples, again.samples)
    assert not np.allclose(first.samples["roughness_mm[PE]"],
                           other.samples["roughness_mm[PE]"])


def test_the_command_writes_the_schemes_monte_carlo(tmp_path):
    files = write_branch_scheme(tmp_path)
    out = tmp_path / "out"
    result = CliRunner().invoke(app, [
        "sensitivity", str(files.study), "--roughness-from", "0.01", "--roughness-to", "0.5",
        "--steps", "2", "--design", str(write_scheme_design(files.folder)), "--no-reoptimise",
        "--samples", "30", "--seed", "3", "--years", "10", "--ageing", "PE=0.01",
        "--out", str(out)])
    assert result.exit_code == 0, result.output
    samples = pd.read_csv(out / "monte_carlo_samples.csv")
    assert len(samples) == 30 and "governing_branch" in samples.columns
    points = pd.read_csv(out / "monte_carlo_delivery_points.csv")
    assert set(points["branch"]) == {"main", "north end", "school"}
    assert np.isclose(points["governs_share"].sum(), 1.0)
    payload = json.loads((out / "sensitivity.json").read_text())
    assert payload["monte_carlo"]["seed"] == 3
    assert len(payload["monte_carlo"]["delivery_points"]) == 3
    assert payload["cautions"]
    page = (out / "sensitivity.html").read_text()
    assert "each delivery point" in page and "licensed engineer" in page
    assert "Monte Carlo: 30 samples" in result.output and "Cautions" in result.output


def test_bad_monte_carlo_input_on_a_scheme_exits_2_and_writes_nothing(tmp_path):
    files = write_branch_scheme(tmp_path)
    out = tmp_path / "out"
    result = CliRunner().invoke(app, [
        "sensitivity", str(files.study), "--roughness-from", "0.01", "--roughness-to", "0.5",
        "--design", str(write_scheme_design(files.folder)), "--samples", "10",
        "--ageing", "copper=0.1", "--out", str(out)])
    assert result.exit_code == 2
    assert "--ageing" in result.output and "copper" in result.output
    assert "Traceback" not in result.output and not out.exists()
