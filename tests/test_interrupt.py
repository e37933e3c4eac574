"""Ctrl-C and failed runs never leave a partial or stale set of outputs (issue 16 item 10).

A command is started as the console script and sent SIGINT 0.5 s, 1 s and 2 s after
Python has started it (while it imports, while it solves): it must print one line, exit
130 with no traceback, and leave ``--out`` and the folder around it exactly as they
were. The run is a long trade-off (many steps), so it is still solving at every moment
the signal is sent; no time is asserted. With worker processes, the workers leave Ctrl-C
to the command, which stops them. Exit 130 for SIGINT is the shell's convention 128 +
signal number 2 (POSIX.1-2017, Shell Command Language, 2.8.2 Exit Status for Commands).
"""

from __future__ import annotations

import json
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from optimiser.cli import app
from optimiser.io import InputError
from optimiser.io.writers import StagedOutput, write_json
from optimiser.reports.pdf import find_browser

SCRIPT = Path(sys.executable).parent / "optimiser"

PDF = ["report.pdf"] if find_browser() else []  # written when a browser is found


def wait_until_started(process: subprocess.Popen, timeout_s: float = 120.0) -> None:
    """Wait until the command's Python has finished starting: numpy's compiled core is
    mapped into it (Linux's /proc/<pid>/maps). A SIGINT before that lands in the
    interpreter's own start-up (a fatal error in its site import, exit 1), outside the
    program; on a loaded machine start-up alone took more than 0.5 s."""
    maps = Path(f"/proc/{process.pid}/maps")
    ends = time.monotonic() + timeout_s
    while maps.exists() and time.monotonic() < ends and process.poll() is None:
        try:
            if "_multiarray_umath" in maps.read_text(errors="replace"):
                return
        except OSError:  # the process ended between the two reads
            return
        time.sleep(0.01)


def snapshot(folder: Path) -> dict[str, bytes | None]:
    """Every entry under ``folder`` with its bytes (None for folders)."""
    return {p.relative_to(folder).as_posix(): None if p.is_dir() else p.read_bytes()
            for p in sorted(folder.rglob("*"))}


@pytest.mark.parametrize(("delay_s", "spread"), [
    (0.5, []), (1.0, []), (2.0, []), (2.0, ["--workers", "2"])])
def test_sigint_leaves_out_exactly_as_it_was(delay_s, spread, study_files, tmp_path):
    assert SCRIPT.exists(), "the console script is installed with the package"
    place = tmp_path / "place"
    out = place / "out"
    out.mkdir(parents=True)
    (out / "tradeoff.csv").write_text("an earlier run\n", encoding="utf-8")
    (out / "notes.txt").write_text("the engineer's own file\n", encoding="utf-8")
    before = snapshot(place)
    process = subprocess.Popen(
        [str(SCRIPT), "tradeoff", str(study_files.study), "--vary", "source-level",
         "--from", "197", "--to", "209", "--steps", "2000", "--out", str(out), *spread],
        stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    wait_until_started(process)
    try:
        process.wait(timeout=delay_s)
    except subprocess.TimeoutExpired:
        process.send_signal(signal.SIGINT)
    stdout, stderr = process.communicate(timeout=120)
    assert process.returncode == 130, (stdout, stderr)
    assert stderr == "interrupted, nothing written\n"
    assert "Traceback" not in stdout
    assert snapshot(place) == before


def test_interrupt_inside_the_commit_waits_for_it(tmp_path):
    from optimiser.cli import interrupt

    handler = signal.getsignal(signal.SIGINT)
    interrupt.while_running(watch=False)
    try:
        with pytest.raises(interrupt.Interrupted), StagedOutput() as output:
            write_json(output.folder(tmp_path / "out", {"a.json"}) / "a.json", {"a": 1})
            with interrupt.committing():
                signal.raise_signal(signal.SIGINT)  # held back until the move is done
                output.commit()
        assert interrupt.message() == interrupt.MESSAGE_AFTER_WRITING
    finally:
        signal.signal(signal.SIGINT, handler)
        interrupt._state["written"] = False
        interrupt._handled.clear()
    assert json.loads((tmp_path / "out" / "a.json").read_text()) == {"a": 1}


# --------------------------------------------------------------------------- staged output


def test_nothing_is_in_place_before_commit_and_nothing_left_after_a_failure(tmp_path):
    target = tmp_path / "new" / "deeper" / "out"
    with pytest.raises(RuntimeError), StagedOutput() as output:
        folder = output.folder(target, {"a.json"})
        write_json(folder / "a.json", {"a": 1})
        assert not target.exists()
        raise RuntimeError("a failure after half the files")
    assert list(tmp_path.iterdir()) == []  # the folders made for the target went too


def test_commit_replaces_the_set_and_removes_its_stale_members(tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    for name in ("a.json", "b.json", "own.txt"):
        (out / name).write_text("old\n", encoding="utf-8")
    (out / "sub").mkdir()
    (out / "sub" / "old.csv").write_text("old\n", encoding="utf-8")
    with StagedOutput() as output:
        folder = output.folder(out, {"a.json", "b.json", "sub"})
        write_json(folder / "a.json", {"a": 2})
        (folder / "sub").mkdir()
        write_json(folder / "sub" / "new.json", {"n": 1})
        written = output.commit()
    assert written == [out / "a.json", out / "sub" / "new.json"]
    # b.json belonged to the set and this run did not write it: stale, removed; the
    # engineer's own file stays; the folder sub is replaced whole.
    assert snapshot(out) == {"a.json": b'{\n  "a": 2\n}\n', "own.txt": b"old\n",
                             "sub": None, "sub/new.json": b'{\n  "n": 1\n}\n'}
    assert [p.name for p in tmp_path.iterdir()] == ["out"]


def test_a_file_in_the_way_is_bad_input(tmp_path):
    (tmp_path / "out").write_text("a file\n", encoding="utf-8")
    with pytest.raises(InputError, match="--out must be a folder"), StagedOutput() as output:
        output.folder(tmp_path / "out", {"a.json"})


def test_a_rerun_without_a_design_leaves_no_stale_report(make_study, runner, tmp_path):
    # Before: the report.html and design.csv of the earlier run stayed beside the new
    # result.json of a run that found no design.
    out = tmp_path / "out"
    feasible = make_study()
    first = runner.invoke(app, ["design", str(feasible.study), "--out", str(out)])
    assert first.exit_code == 0, first.output
    assert {p.name for p in out.iterdir()} == {"design.csv", "result.json", "report.html",
                                               "appurtenances.csv", "design.xlsx",
                                               *PDF}
    # A required outlet head far above the source: no design (common practice, no source).
    infeasible = make_study(study={"outlet": {"required_head_m": 400.0}})
    second = runner.invoke(app, ["design", str(infeasible.study), "--out", str(out)])
    assert second.exit_code == 1, second.output
    assert {p.name for p in out.iterdir()} == {"result.json"}
    assert json.loads((out / "result.json").read_text())["status"] == "infeasible"


def test_sigint_inside_compiled_code_still_ends_the_run():
    # Python runs a handler only between its own instructions; a long call into compiled
    # code (here a key derivation of 10^9 rounds, as a long solve inside a solver) would
    # hold it back for minutes. The watcher ends the process instead, with the same line.
    code = ("import hashlib, sys\nfrom optimiser.cli import interrupt\n"
            "interrupt.while_running()\nprint('ready', flush=True)\n"
            "try:\n    hashlib.pbkdf2_hmac('sha256', b'x', b'y', 10**9)\n"
            "except interrupt.Interrupted:\n    print('handler ran')\n")
    process = subprocess.Popen([sys.executable, "-c", code], stdout=subprocess.PIPE,
                               stderr=subprocess.PIPE, text=True)
    try:
        assert process.stdout.readline() == "ready\n"
        time.sleep(0.5)  # let it enter the compiled call (a statement away)
        process.send_signal(signal.SIGINT)
        stdout, stderr = process.communicate(timeout=120)
    finally:
        process.kill()
    assert process.returncode == 130
    assert stderr == "interrupted, nothing written\n"
    assert "handler ran" not in stdout


def test_json_inside_the_out_folder_of_the_same_run(study_files, runner, tmp_path):
    out = tmp_path / "out"
    result = runner.invoke(app, ["design", str(study_files.study), "--out", str(out),
                                 "--json", str(out / "result.json")])
    assert result.exit_code == 0, result.output
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".")]  # no staging left
    assert sorted(p.name for p in out.iterdir()) == sorted([
        "appurtenances.csv", "design.csv", "design.xlsx", "report.html", "result.json",
        *PDF])
    assert json.loads((out / "result.json").read_text())["status"] == "optimal"
