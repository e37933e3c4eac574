"""Writing results: atomic file writes, JSON-safe values, design CSV, and output sets
staged beside their targets and moved into place whole."""

from __future__ import annotations

import contextlib
import json
import math
import os
import shutil
import tempfile
from collections.abc import Iterable
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from optimiser.io.errors import InputError

if TYPE_CHECKING:
    from optimiser.model import Study


def json_safe(value: Any) -> Any:
    """Plain JSON values: numpy scalars to Python, NaN and infinity to None."""
    if isinstance(value, dict):
        return {str(k): json_safe(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [json_safe(v) for v in value]
    if isinstance(value, np.ndarray):
        return [json_safe(v) for v in value.tolist()]
    if isinstance(value, np.bool_ | bool):
        return bool(value)
    if isinstance(value, np.integer):
        return int(value)
    if isinstance(value, float | np.floating):
        number = float(value)
        return number if math.isfinite(number) else None
    return value


def _umask_mode() -> int:
    """Permissions a plain ``open`` would give a new file (mkstemp makes them 0600)."""
    mask = os.umask(0)
    os.umask(mask)
    return 0o666 & ~mask


def atomic_write_text(path: Path, text: str) -> None:
    """Write a file whole or not at all (temporary file in the same folder, then rename)."""
    path = Path(path)
    if path.exists() and path.is_dir():
        raise InputError(f"{path}: is a folder, not a file")
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise InputError(f"{path}: the folder {folder} does not exist")
    descriptor, temporary = tempfile.mkstemp(dir=folder, prefix=f".{path.name}.", suffix=".tmp")
    try:
        with os.fdopen(descriptor, "w", encoding="utf-8", newline="") as handle:
            handle.write(text)
        os.chmod(temporary, _umask_mode())
        os.replace(temporary, path)
    except BaseException:
        Path(temporary).unlink(missing_ok=True)
        raise


def atomic_write_bytes(path: Path, data: bytes) -> None:
    """Write a binary file whole or not at all (temporary file, then rename)."""
    path = Path(path)
    folder = path.parent if str(path.parent) else Path(".")
    descriptor, temporary = tempfile.mkstemp(dir=folder, prefix=f".{path.name}.", suffix=".tmp")
    try:
        with os.fdopen(descriptor, "wb") as handle:
            handle.write(data)
        os.chmod(temporary, _umask_mode())
        os.replace(temporary, path)
    except BaseException:
        Path(temporary).unlink(missing_ok=True)
        raise


def write_json(path: Path, payload: dict) -> None:
    atomic_write_text(path, json.dumps(json_safe(payload), indent=2) + "\n")


def write_csv(path: Path, table: pd.DataFrame) -> None:
    atomic_write_text(path, table.to_csv(index=False, lineterminator="\n"))


_BAD_SHEET_CHARACTERS = set('[]:*?/\\')


def sheet_name(name: str, taken: set[str]) -> str:
    """An Excel-safe, unique sheet name (31 characters at most)."""
    clean = "".join("_" if c in _BAD_SHEET_CHARACTERS else c for c in name).strip() or "sheet"
    candidate = clean[:31]
    counter = 2
    while candidate.lower() in {t.lower() for t in taken}:
        suffix = f" ({counter})"
        candidate = clean[:31 - len(suffix)] + suffix
        counter += 1
    taken.add(candidate)
    return candidate


def write_workbook(path: Path, sheets: dict[str, pd.DataFrame]) -> None:
    """An XLSX workbook with one sheet per table, written whole or not at all."""
    path = Path(path)
    folder = path.parent if str(path.parent) else Path(".")
    descriptor, temporary = tempfile.mkstemp(dir=folder, prefix=f".{path.name}.", suffix=".xlsx")
    os.close(descriptor)
    try:
        taken: set[str] = set()
        with pd.ExcelWriter(temporary, engine="openpyxl") as writer:
            for name, table in sheets.items():
                table.to_excel(writer, sheet_name=sheet_name(name, taken), index=False)
        os.chmod(temporary, _umask_mode())
        os.replace(temporary, path)
    except BaseException:
        Path(temporary).unlink(missing_ok=True)
        raise


# --------------------------------------------------------------------------- staged output


def input_paths(study: Study | None, *paths: Path | None) -> frozenset[Path]:
    """The files a run reads (the study file, its profile and catalogue, and ``paths``
    such as a design or a tank file): outputs must never replace them."""
    found = [] if study is None else [study.path, study.profile_path, study.catalogue_path]
    return frozenset(Path(p).resolve() for p in (*found, *paths) if p is not None)


def _missing_parents(folder: Path) -> list[Path]:
    """The folders that must be created for ``folder`` to exist, outermost first."""
    missing = []
    while not folder.exists():
        missing.append(folder)
        if folder.parent == folder:
            break
        folder = folder.parent
    return missing[::-1]


class StagedOutput:
    """The files of one run, written beside their targets and moved into place together.

    :meth:`folder` and :meth:`file` give paths in temporary places (a hidden folder
    beside each target); the caller writes there, then :meth:`commit` moves everything
    into place. Until then the targets are untouched, and :meth:`discard` (also run when
    the ``with`` block ends by an exception or an interrupt) removes every trace, the
    folders created for the targets included. A folder's ``names`` are the files and
    subfolders the command writes there: on commit, those the run did not produce are
    removed, so the folder never holds a stale file of an earlier run beside new ones.
    Other files in the folder are left alone.
    """

    def __init__(self, protect: Iterable[Path] = ()) -> None:
        self._created: list[Path] = []
        self._folders: list[tuple[Path, Path, frozenset[str]]] = []
        self._files: list[tuple[Path, Path]] = []
        self._protect = frozenset(Path(p).resolve() for p in protect)
        """The run's input files: an output there would replace an input (contract
        section 8: bad input loses nothing)."""

    def _refuse_inputs(self, targets: Iterable[Path], where: Path) -> None:
        for target in targets:
            if target.resolve() in self._protect:
                raise InputError(f"{where}: writing {target.name} there would replace an "
                                 "input file of this run; choose another name or folder")

    def __enter__(self) -> StagedOutput:
        return self

    def __exit__(self, kind: object, error: object, trace: object) -> None:
        if kind is not None:
            self.discard()

    def _parent(self, target: Path) -> Path:
        parent = target.parent if str(target.parent) else Path(".")
        if parent.exists() and not parent.is_dir():
            raise InputError(f"{target}: {parent} is a file, not a folder")
        for folder in _missing_parents(parent):
            folder.mkdir()
            self._created.append(folder)
        return parent

    def folder(self, target: Path, names: set[str] | frozenset[str]) -> Path:
        """A temporary folder to write the set ``names`` of ``target`` into."""
        target = Path(target)
        if target.exists() and not target.is_dir():
            raise InputError(f"{target}: --out must be a folder, but a file has this name")
        self._refuse_inputs([target / name for name in names], target)
        stage = Path(tempfile.mkdtemp(dir=self._parent(target), prefix=f".{target.name}.",
                                      suffix=".partial"))
        self._folders.append((target, stage, frozenset(names)))
        return stage

    def file(self, target: Path) -> Path:
        """A temporary path to write the single file ``target`` to."""
        target = Path(target)
        if target.is_dir():
            raise InputError(f"{target}: is a folder, not a file")
        self._refuse_inputs([target], target)
        descriptor, stage = tempfile.mkstemp(dir=self._parent(target),
                                             prefix=f".{target.name}.", suffix=".partial")
        os.close(descriptor)
        self._files.append((target, Path(stage)))
        return Path(stage)

    def commit(self) -> list[Path]:
        """Move every staged file into place; the paths now in place, in order."""
        written: list[Path] = []
        for target, stage in self._files:
            os.chmod(stage, _umask_mode())
            os.replace(stage, target)
            written.append(target)
        for target, stage, names in self._folders:
            written += _move_folder(stage, target, names)
        self._files, self._folders, self._created = [], [], []
        return written

    def discard(self) -> None:
        """Remove every staged file and folder, and the folders made for the targets."""
        for _, stage in self._files:
            stage.unlink(missing_ok=True)
        for _, stage, _ in self._folders:
            shutil.rmtree(stage, ignore_errors=True)
        for folder in reversed(self._created):
            with contextlib.suppress(OSError):  # not empty: something else wrote there
                folder.rmdir()
        self._files, self._folders, self._created = [], [], []


def _move_folder(stage: Path, target: Path, names: frozenset[str]) -> list[Path]:
    """Move the staged set into ``target``; return the files now in place."""
    files = sorted(p.relative_to(stage) for p in stage.rglob("*") if p.is_file())
    for path in stage.rglob("*"):
        path.chmod(_umask_mode() | (0o111 if path.is_dir() else 0))
    if not target.exists():
        stage.chmod(_umask_mode() | 0o111)
        os.replace(stage, target)
        return [target / f for f in files]
    old = stage / ".replaced"  # inside the stage, so removed with it
    old.mkdir()
    produced = {p.name for p in stage.iterdir() if p != old}
    for name in sorted(names | produced):
        if (target / name).exists():
            os.replace(target / name, old / name)
        if name in produced:
            os.replace(stage / name, target / name)
    shutil.rmtree(stage, ignore_errors=True)
    return [target / f for f in files]
