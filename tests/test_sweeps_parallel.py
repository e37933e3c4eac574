"""Serial runs, local worker processes and a Dask cluster give identical tables.

Each solve is a pure function of its study variant and results are put back in input
order, so the way a sweep is spread cannot change a number (common practice, no
source). The cluster is a ``distributed.LocalCluster`` on the loopback interface.
"""

from __future__ import annotations

import pandas as pd
import pytest
import typer
from distributed import LocalCluster
from typer.testing import CliRunner

import optimiser
from optimiser.cli.analyse import check
from optimiser.cli.sweeps import tradeoff as tradeoff_command
from optimiser.sweeps.robust import roughness_runs
from optimiser.sweeps.tradeoff import tradeoff


@pytest.fixture(scope="module")
def cluster():
    with LocalCluster(n_workers=2, processes=True, threads_per_worker=1, host="127.0.0.1",
                      dashboard_address=None) as local:
        yield local


def test_tradeoff_tables_identical_serial_workers_dask(study_files, tmp_path, cluster):
    study = optimiser.load_study(study_files.study)
    values = [196.0, 201.0, 206.0, 211.0]  # the first has no feasible design
    serial = tradeoff(study, "source-level", values)
    pooled = tradeoff(study, "source-level", values, workers=2)
    remote = tradeoff(study, "source-level", values, dask_address=cluster.scheduler_address)
    assert serial["status"].iloc[0] == "infeasible"
    assert serial.equals(pooled)
    assert serial.equals(remote)

    # The same through the command line: the CSV files are identical byte for byte.
    app = typer.Typer()
    app.command()(check)
    app.command()(tradeoff_command)
    texts = []
    for extra in ([], ["--workers", "2"], ["--dask", cluster.scheduler_address]):
        out = tmp_path / f"out{len(texts)}"
        result = CliRunner().invoke(app, [
            "tradeoff", str(study_files.study), "--vary", "source-level", "--from", "196",
            "--to", "211", "--steps", "4", "--out", str(out), *extra])
        assert result.exit_code == 0, result.output
        texts.append((out / "tradeoff.csv").read_text())
    assert texts[0] == texts[1] == texts[2]


def test_roughness_runs_identical_serial_workers_dask(study_files, cluster):
    study = optimiser.load_study(study_files.study)
    values = [0.01, 0.2, 0.6]
    runs = [roughness_runs(study, values, robust=True, **spread)
            for spread in ({}, {"workers": 2}, {"dask_address": cluster.scheduler_address})]
    first = runs[0]
    for other in runs[1:]:
        assert first.reoptimised.equals(other.reoptimised)
        # As one-row tables, so that missing values (NaN) compare equal.
        assert pd.DataFrame([first.nominal.row]).equals(pd.DataFrame([other.nominal.row]))
        assert pd.DataFrame([first.robust.row]).equals(pd.DataFrame([other.robust.row]))
        assert first.robust.outcome.design == other.robust.outcome.design
