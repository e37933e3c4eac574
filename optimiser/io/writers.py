"""Writing results: atomic file writes, JSON-safe values, design CSV."""

from __future__ import annotations

import json
import math
import os
import tempfile
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from optimiser.io.errors import InputError


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


def write_json(path: Path, payload: dict) -> None:
    atomic_write_text(path, json.dumps(json_safe(payload), indent=2) + "\n")


def write_csv(path: Path, table: pd.DataFrame) -> None:
    atomic_write_text(path, table.to_csv(index=False, lineterminator="\n"))


def prepare_out_dir(path: Path) -> Path:
    """Create an output folder (and parents); a file in the way is an input error."""
    path = Path(path)
    if path.exists() and not path.is_dir():
        raise InputError(f"{path}: --out must be a folder, but a file has this name")
    path.mkdir(parents=True, exist_ok=True)
    return path


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
