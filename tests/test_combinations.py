"""Additions of contract version 2 that are not yet available together are refused
plainly (exit 2, the study file named, nothing written) rather than designed wrongly:
a pump with tanks chosen by ``design`` but no tank of its own. (A pumped scheme is
designed, tests/test_pumped_scheme.py; a pump with the study's own
tanks is modelled, tests/test_rising_main_tank.py; so are a scheme's own tanks,
tests/test_scheme_tanks.py, and new tanks chosen by ``design`` in a scheme,
tests/test_scheme_new_tanks.py.)

Invented test studies; the facts checked are the tool's own stated limits (common
practice, no source: refuse what is not modelled rather than ignore it).
"""

from __future__ import annotations

from builders import write_study
from typer.testing import CliRunner

from optimiser.cli.app import app

PUMP = {"efficiency": 0.7, "energy_price": 0.15}
TANK = [{"chainage_m": 400.0}]


def _design(study_path, tmp_path):
    out = tmp_path / "out"
    result = CliRunner().invoke(app, ["design", str(study_path), "--out", str(out)])
    return result, out


def test_a_pump_with_new_tanks_but_no_tank_of_its_own_is_refused(tmp_path):
    route = write_study(tmp_path, folder="pumped-new-tanks",
                        study={"pump": PUMP, "break_pressure_tanks": {"cost": 5000.0}})
    result, out = _design(route.study, tmp_path)
    assert result.exit_code == 2
    text = " ".join(result.output.split())
    assert "[pump] with [break_pressure_tanks] cost" in text and "Traceback" not in text
    assert not out.exists()
