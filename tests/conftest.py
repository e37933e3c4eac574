"""Shared fixtures. Study builders live in ``builders.py`` (import them as ``builders``:
pytest puts ``tests/`` on the import path, see ``pythonpath`` in pyproject.toml);
the independent reference hydraulics used as check values live in ``reference.py``.

Fixtures:

- ``make_study(**overrides)``: :func:`builders.write_study` bound to a fresh folder under
  this test's ``tmp_path`` (each call gets its own folder, so a test may write several);
- ``study_files``: the default study written once for this test (it passes ``check``);
- ``runner``: a ``typer.testing.CliRunner`` for ``optimiser.cli.app``.
"""

from __future__ import annotations

import itertools
from pathlib import Path

import pytest
from builders import StudyFiles, write_study


@pytest.fixture
def make_study(tmp_path: Path):
    """A callable ``make_study(**overrides) -> StudyFiles`` (see ``builders.write_study``)."""
    counter = itertools.count(1)

    def make(**overrides) -> StudyFiles:
        overrides.setdefault("folder", f"study{next(counter)}")
        return write_study(tmp_path, **overrides)

    return make


@pytest.fixture
def study_files(make_study) -> StudyFiles:
    """The default invented study (see ``builders.DEFAULT_STUDY``)."""
    return make_study()


@pytest.fixture
def runner():
    from typer.testing import CliRunner

    return CliRunner()
