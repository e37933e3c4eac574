"""Builders of small, invented studies for tests (contract: shared/specs/study-format.md).

Everything here is invented test data: it is never a check value in itself. Check values
come from the independent reference calculation in ``reference.py`` or from the sources
cited beside each check.

The main entry point is :func:`write_study`, which writes ``study.toml``, ``profile.csv``,
``catalogue.csv`` and ``design.csv`` into a folder and returns their paths::

    from builders import write_study, DELETE

    files = write_study(tmp_path)                       # the default study, which passes
    files = write_study(tmp_path, study={"route": {"min_pressure_m": 30.0}})
    files = write_study(tmp_path, study={"route": {"fitting": DELETE}})   # drop a key
    files = write_study(tmp_path, profile=[(0, 100), (1000, 90)])         # tuples ...
    files = write_study(tmp_path, design=[{"from_m": 0, "to_m": 1000, ...}])  # ... or dicts
    files = write_study(tmp_path, catalogue="material,dn_mm\\n")          # raw text
    files = write_study(tmp_path, design=MISSING)                         # file not written

    study = optimiser.load_study(files.study)
    design = optimiser.load_design(files.design, study)

In the ``study`` override a dict is merged key by key into the default, any other value
(lists such as ``scenario`` or ``offtake`` included) replaces the default, and
:data:`DELETE` removes the key. ``study_text`` replaces the whole TOML with raw text.
Tables given as lists of tuples use the default column order of that table
(:data:`PROFILE_COLUMNS`, :data:`CATALOGUE_COLUMNS`, :data:`DESIGN_COLUMNS`).
"""

from __future__ import annotations

import copy
import csv
import io
import json
from dataclasses import dataclass
from pathlib import Path
from typing import Any

DELETE = object()
"""In a ``study`` override: remove this key from the default study."""

MISSING = object()
"""As a table argument of :func:`write_study`: do not write that file at all."""

PROFILE_COLUMNS = ("chainage_m", "ground_m", "label", "zone")
CATALOGUE_COLUMNS = ("material", "dn_mm", "internal_diameter_mm", "pressure_class",
                     "allowable_head_m", "roughness_mm", "hazen_williams_c", "cost_per_m",
                     "note")
DESIGN_COLUMNS = ("from_m", "to_m", "material", "dn_mm", "pressure_class")

# A 3 km main falling from a reservoir at 201 m to a tank at 145 m, with a survey
# point at the route's low point, a fitting, an offtake with its own minimum pressure and
# a zone. With the default design it meets every limit (margins of a few metres).
DEFAULT_STUDY: dict[str, Any] = {
    "title": "Invented test main",
    "currency": "USD",
    "water": {"temperature_c": 15.0},
    "source": {"level_m": 201.0, "top_water_level_m": 203.0, "entrance_k": 0.5},
    "outlet": {"required_head_m": 175.0, "exit_k": 1.0},
    "route": {
        "profile": "profile.csv",
        "cover_m": 1.0,
        "min_pressure_m": 2.0,
        "fitting": [{"chainage_m": 1500.0, "k": 2.0, "label": "valve chamber"}],
    },
    "offtake": [{"chainage_m": 2200.0, "flow": "4 L/s", "min_pressure_m": 5.0,
                 "label": "village"}],
    "scenario": [{"name": "peak day", "flow": "25 L/s"}],
    "catalogue": {"file": "catalogue.csv"},
}

DEFAULT_PROFILE: list[tuple] = [
    (0.0, 199.0, "intake", ""),
    (800.0, 190.0, "", ""),
    (1600.0, 160.0, "", "rock"),
    (2400.0, 128.0, "low point", ""),
    (3000.0, 145.0, "tank", ""),
]

# Invented catalogue: PE100-like sizes, prices made up (not a check value).
DEFAULT_CATALOGUE: list[tuple] = [
    ("PE", 160, 141.0, "PN10", 102.0, 0.02, 150, 30.0, "invented test data"),
    ("PE", 200, 176.2, "PN10", 102.0, 0.02, 150, 45.0, "invented test data"),
    ("PE", 200, 163.6, "PN16", 163.0, 0.02, 150, 60.0, "invented test data"),
    ("PE", 250, 220.4, "PN10", 102.0, 0.02, 150, 65.0, "invented test data"),
    ("PE", 250, 204.6, "PN16", 163.0, 0.02, 150, 85.0, "invented test data"),
    ("DI", 300, 312.0, "K9", 250.0, 0.10, 140, 140.0, "invented test data"),
]

# Two pieces; the boundary at 1200 m falls inside the section 800-1600 m.
DEFAULT_DESIGN: list[tuple] = [
    (0.0, 1200.0, "PE", 250, "PN10"),
    (1200.0, 3000.0, "PE", 200, "PN10"),
]


@dataclass(frozen=True)
class StudyFiles:
    """Paths of a written study. ``folder`` holds them all."""

    folder: Path
    study: Path
    profile: Path
    catalogue: Path
    design: Path


# ----------------------------------------------------------------------------- TOML


def _toml_key(key: str) -> str:
    if key and all(c.isalnum() or c in "_-" for c in key):
        return key
    return _toml_value(key)


def _toml_value(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if value != value:
            return "nan"
        if value in (float("inf"), float("-inf")):
            return "inf" if value > 0 else "-inf"
        return repr(value)
    if isinstance(value, str):
        escaped = value.replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n")
        return f'"{escaped}"'
    if isinstance(value, list | tuple):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    if isinstance(value, dict):
        return "{" + ", ".join(f"{_toml_key(k)} = {_toml_value(v)}"
                               for k, v in value.items()) + "}"
    raise TypeError(f"cannot write {value!r} as TOML")


def _is_table_array(value: Any) -> bool:
    return isinstance(value, list) and bool(value) and all(isinstance(v, dict) for v in value)


def _toml_table(lines: list[str], prefix: str, table: dict[str, Any]) -> None:
    scalars = {k: v for k, v in table.items()
               if not isinstance(v, dict) and not _is_table_array(v)}
    for key, value in scalars.items():
        lines.append(f"{_toml_key(key)} = {_toml_value(value)}")
    for key, value in table.items():
        if key in scalars:
            continue
        name = f"{prefix}.{_toml_key(key)}" if prefix else _toml_key(key)
        if isinstance(value, dict):
            lines.append("")
            lines.append(f"[{name}]")
            _toml_table(lines, name, value)
        else:
            for item in value:
                lines.append("")
                lines.append(f"[[{name}]]")
                _toml_table(lines, name, item)


def toml_text(data: dict[str, Any]) -> str:
    """TOML text of a nested dict (tables, arrays of tables, strings, numbers, booleans).

    Enough for study files; not a general TOML writer.
    """
    lines: list[str] = []
    _toml_table(lines, "", data)
    return "\n".join(lines) + "\n"


# ----------------------------------------------------------------------------- merging


def merge(base: dict[str, Any], override: dict[str, Any]) -> dict[str, Any]:
    """A deep copy of ``base`` with ``override`` merged in (dicts key by key; DELETE removes)."""
    result = copy.deepcopy(base)
    for key, value in override.items():
        if value is DELETE:
            result.pop(key, None)
        elif isinstance(value, dict) and isinstance(result.get(key), dict):
            result[key] = merge(result[key], value)
        else:
            result[key] = copy.deepcopy(value)
    return result


def study_dict(**override: Any) -> dict[str, Any]:
    """The default study as a dict, with keyword overrides merged in (see :func:`merge`)."""
    return merge(DEFAULT_STUDY, override)


# ----------------------------------------------------------------------------- CSV


def csv_text(rows: list[tuple] | list[dict], columns: tuple[str, ...] | list[str]) -> str:
    """CSV text with a header. Rows are tuples (in ``columns`` order, may be shorter) or
    dicts (header = ``columns`` restricted to keys used, then any extra keys in order).
    ``None`` cells are written empty."""
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    if rows and isinstance(rows[0], dict):
        keys: list[str] = [c for c in columns if any(c in r for r in rows)]
        for row in rows:
            keys.extend(k for k in row if k not in keys)
        writer.writerow(keys)
        for row in rows:
            writer.writerow(["" if row.get(k) is None else row.get(k, "") for k in keys])
    else:
        width = max((len(r) for r in rows), default=len(columns))
        writer.writerow(list(columns)[:max(width, 1)])
        for row in rows:
            writer.writerow(["" if v is None else v for v in row])
    return buffer.getvalue()


def _write_table(path: Path, content: Any, default: list[tuple],
                 columns: tuple[str, ...]) -> None:
    if content is MISSING:
        return
    if content is None:
        content = default
    text = content if isinstance(content, str) else csv_text(list(content), columns)
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text, encoding="utf-8")


# ----------------------------------------------------------------------------- study


def write_study(
    tmp_path: Path,
    *,
    study: dict[str, Any] | None = None,
    study_text: str | None = None,
    profile: Any = None,
    catalogue: Any = None,
    design: Any = None,
    folder: str = "study",
) -> StudyFiles:
    """Write a small invented study into ``tmp_path / folder`` and return its paths.

    ``study`` is merged into :data:`DEFAULT_STUDY`; ``study_text`` (raw TOML) replaces
    it. ``profile``, ``catalogue`` and ``design`` are ``None`` (the default table), a
    list of tuples or dicts, raw CSV text, or :data:`MISSING` (the file is not written).
    The profile and catalogue file names follow the study's ``route.profile`` and
    ``catalogue.file`` when those are plain names.
    """
    root = Path(tmp_path) / folder
    root.mkdir(parents=True, exist_ok=True)
    data = merge(DEFAULT_STUDY, study or {})
    profile_name = data.get("route", {}).get("profile", "profile.csv")
    catalogue_name = data.get("catalogue", {}).get("file", "catalogue.csv")
    if not isinstance(profile_name, str):
        profile_name = "profile.csv"
    if not isinstance(catalogue_name, str):
        catalogue_name = "catalogue.csv"
    files = StudyFiles(root, root / "study.toml", root / profile_name,
                       root / catalogue_name, root / "design.csv")
    text = study_text if study_text is not None else toml_text(data)
    files.study.write_text(text, encoding="utf-8")
    _write_table(files.profile, profile, DEFAULT_PROFILE, PROFILE_COLUMNS)
    _write_table(files.catalogue, catalogue, DEFAULT_CATALOGUE, CATALOGUE_COLUMNS)
    _write_table(files.design, design, DEFAULT_DESIGN, DESIGN_COLUMNS)
    return files


def flow_text_m3_s(flow_m3_s: float) -> str:
    """A flow as the study file wants it, exactly: ``"0.0123456789 m^3/s"``."""
    return f"{flow_m3_s!r} m^3/s"


def write_pvc_catalogue(folder: Path, sizes: list[tuple] | tuple[tuple, ...],
                        pressure_class: str = "PN100",
                        allowable_head_m: float = 1000.0) -> Path:
    """An invented PVC catalogue of one class, Hazen-Williams C 140, from (DN, internal
    diameter mm, cost per m) rows; written to ``catalogue.csv`` in ``folder``."""
    rows = [("PVC", dn, d, pressure_class, allowable_head_m, 0.01, 140, cost, "invented")
            for dn, d, cost in sizes]
    path = folder / "catalogue.csv"
    path.write_text(csv_text(rows, CATALOGUE_COLUMNS), encoding="utf-8")
    return path


# ----------------------------------------------------------------- scheme tanks by CLI

TANK_FILE_COLUMNS = ["branch", "chainage_m", "water_level_m", "new", "cost", "label"]


def design_tanks_then_check(study_path: Path, out: Path, tank_cost: float
                            ) -> tuple[list[dict[str, str]], dict[str, Any]]:
    """Run ``design`` of a scheme that gets new tanks on the trunk and on branch "b",
    assert the tank file (contract section 8: its columns, every tank new at
    ``tank_cost``, as many as in ``result.json``) and that ``check`` with that file
    passes; return the file's rows and ``result.json``."""
    # The CLI is imported here only: most users of this module build files, no runs.
    from typer.testing import CliRunner

    from optimiser.cli import app

    result = CliRunner().invoke(app, ["design", str(study_path), "--out", str(out)])
    assert result.exit_code == 0, result.output
    with (out / "break_pressure_tanks.csv").open(encoding="utf-8") as handle:
        rows = list(csv.DictReader(handle))
    assert list(rows[0]) == TANK_FILE_COLUMNS
    assert {r["branch"] for r in rows} == {"main", "b"}
    assert all(r["new"] == "True" and float(r["cost"]) == tank_cost for r in rows)
    data = json.loads((out / "result.json").read_text(encoding="utf-8"))
    assert len(data["break_pressure_tanks"]) == len(rows)
    checked = CliRunner().invoke(app, ["check", str(study_path), "--design",
                                       str(out / "design.csv"), "--tanks",
                                       str(out / "break_pressure_tanks.csv")])
    assert checked.exit_code == 0, checked.output
    return rows, data
