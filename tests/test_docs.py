"""The repository documents itself: a clone has no copy of the shared contract, so the
formats, the method and the two commands must be in the repository (common practice, no
source: a project's README and docs are what a new user reads first)."""

from __future__ import annotations

import re
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def test_readme_has_the_install_with_a_virtual_environment_and_the_two_commands():
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    assert "python3 -m venv .venv" in text
    assert ". .venv/bin/activate" in text
    assert "pip install -e '.[test]'" in text
    assert "optimiser design studies/demo-gravity-main/study.toml --out out/demo" in text
    assert re.search(r"^pytest -q -n 2$", text, flags=re.MULTILINE)
    assert len(text.split()) <= 900  # a short README; the detail is in docs/


def test_the_docs_are_in_the_repository_and_linked():
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    for name in ("user-guide.md", "file-formats.md", "method.md"):
        assert (ROOT / "docs" / name).is_file()
        assert f"docs/{name}" in readme
    formats = (ROOT / "docs" / "file-formats.md").read_text(encoding="utf-8")
    for key in ("[source]", "[outlet]", "[route]", "[[scenario]]", "[catalogue]", "[rules]",
                "[surge]", "chainage_m", "allowable_head_m", "from_m", "violations"):
        assert key in formats, key
    assert "shared/specs" not in formats  # a clone has no such folder


def test_the_ci_runs_the_readme_test_command():
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    command = re.search(r"^(pytest [^\n]+)$", readme, flags=re.MULTILINE).group(1)
    assert command in ci
