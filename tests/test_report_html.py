"""The HTML report opens offline in a real headless browser and draws its plots.

Browser: Debian's chromium (``.ci/run`` installs it when missing). All network access is
blocked with a proxy that refuses connections and a resolver that maps every host to
nothing, so a report that needed the network would show no plot.
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
from pathlib import Path

import pytest

import optimiser
from optimiser.analysis.appurtenances import schedule
from optimiser.reports.html import render_report

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")


def _browser(tmp_path: Path, page: Path) -> tuple[str, str]:
    if CHROMIUM is None:
        if os.environ.get("CI"):
            pytest.fail("chromium is missing in CI (.ci/run should install it)")
        pytest.skip("chromium not installed")
    profile = tmp_path / "browser-profile"
    command = [
        CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
        "--no-first-run", "--disable-background-networking", "--disable-component-update",
        "--disable-sync", f"--user-data-dir={profile}", "--enable-logging=stderr", "--v=0",
        "--proxy-server=127.0.0.1:9", "--host-resolver-rules=MAP * ~NOTFOUND",
        "--virtual-time-budget=15000", "--dump-dom", page.as_uri(),
    ]
    done = subprocess.run(command, capture_output=True, text=True, timeout=120, check=False)
    return done.stdout, done.stderr


def test_report_renders_offline_without_console_errors(study_files, tmp_path):
    study = optimiser.load_study(study_files.study)
    result = optimiser.check_design(study, optimiser.load_design(study_files.design, study))
    page = tmp_path / "report.html"
    page.write_text(render_report(result, schedule(result)), encoding="utf-8")
    text = page.read_text(encoding="utf-8")
    assert not re.search(r"<script[^>]+src=", text), "the report must not load scripts"

    dom, log = _browser(tmp_path, page)
    console_errors = [line for line in log.splitlines()
                      if "CONSOLE" in line and ("Uncaught" in line or "Error" in line)]
    assert console_errors == []
    # The profile plot exists and plotly drew its traces into it.
    assert 'id="plot-0"' in dom
    profile_part = dom.split('id="plot-0"', 1)[1].split('id="plot-1"', 1)[0]
    assert "main-svg" in profile_part
    scenario_count = len(study.scenarios)
    drawn = len(re.findall(r'class="trace scatter', profile_part))
    # ground, pipe, static line, two envelopes and an HGL per scenario at least.
    assert drawn >= 5 + scenario_count
    assert "Cautions" in dom and "licensed engineer" in dom
