"""Helpers for the optimiser tests: small invented studies written into a folder.

Everything written here is invented test data and never a check value in itself; the
check values of the tests come from the sources named beside each check. (This module
holds no tests; pytest collects it and finds none.)
"""

from __future__ import annotations

import csv
import io
from pathlib import Path
from typing import Any

CATALOGUE_HEADER = ["material", "dn_mm", "internal_diameter_mm", "pressure_class",
                    "allowable_head_m", "roughness_mm", "hazen_williams_c", "cost_per_m",
                    "note"]

# Invented options (ID mm, C, cost per m): PE-like sizes, made-up prices.
SMALL_CATALOGUE: list[tuple[str, float, float, str, float, float, float, float]] = [
    ("PE", 160, 141.0, "PN10", 102.0, 0.02, 150.0, 30.0),
    ("PE", 200, 176.2, "PN10", 102.0, 0.02, 150.0, 42.0),
    ("PE", 250, 220.4, "PN10", 102.0, 0.02, 150.0, 60.0),
    ("PE", 315, 277.6, "PN10", 102.0, 0.02, 150.0, 90.0),
]


def _toml_value(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return '"' + value.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(value, list):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    return repr(float(value)) if isinstance(value, float) else str(value)


def toml_text(spec: dict[str, Any]) -> str:
    """A small TOML writer for the study layout (tables, arrays of tables, one level)."""
    lines: list[str] = []
    for key, value in spec.items():
        if not isinstance(value, dict | list) or (isinstance(value, list) and value
                                                  and not isinstance(value[0], dict)):
            lines.append(f"{key} = {_toml_value(value)}")
    for key, value in spec.items():
        if isinstance(value, dict):
            lines.append(f"[{key}]")
            nested = []
            for sub, item in value.items():
                table_array = isinstance(item, list) and item and isinstance(item[0], dict)
                if isinstance(item, dict) or table_array:
                    nested.append((sub, item))
                else:
                    lines.append(f"{sub} = {_toml_value(item)}")
            for sub, item in nested:
                if isinstance(item, dict):
                    lines.append(f"[{key}.{sub}]")
                    lines.extend(f'"{k}" = {_toml_value(v)}' for k, v in item.items())
                else:
                    for entry in item:
                        lines.append(f"[[{key}.{sub}]]")
                        lines.extend(f"{k} = {_toml_value(v)}" for k, v in entry.items())
        elif isinstance(value, list) and value and isinstance(value[0], dict):
            for entry in value:
                lines.append(f"[[{key}]]")
                lines.extend(f"{k} = {_toml_value(v)}" for k, v in entry.items())
    return "\n".join(lines) + "\n"


def csv_text(header: list[str], rows: list[tuple]) -> str:
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(header)
    writer.writerows(rows)
    return buffer.getvalue()


def write_study(folder: Path, *, profile: list[tuple], catalogue: list[tuple] | None = None,
                source_level_m: float = 100.0, required_head_m: float = 50.0,
                scenarios: list[dict] | None = None, route: dict | None = None,
                rules: dict | None = None, costs: dict | None = None,
                offtakes: list[dict] | None = None, extra: dict | None = None,
                friction: str = "hazen-williams", entrance_k: float = 0.5,
                exit_k: float = 1.0) -> Path:
    """Write study.toml, profile.csv and catalogue.csv into ``folder``; return the TOML."""
    folder.mkdir(parents=True, exist_ok=True)
    rows = catalogue if catalogue is not None else SMALL_CATALOGUE
    (folder / "catalogue.csv").write_text(csv_text(
        CATALOGUE_HEADER, [(*row, "invented test data") for row in rows]), encoding="utf-8")
    width = max(len(row) for row in profile)
    header = ["chainage_m", "ground_m", "label", "zone"][:max(width, 2)]
    (folder / "profile.csv").write_text(csv_text(header, profile), encoding="utf-8")
    spec: dict[str, Any] = {
        "title": "invented optimiser test",
        "currency": "USD",
        "source": {"level_m": source_level_m, "entrance_k": entrance_k},
        "outlet": {"required_head_m": required_head_m, "exit_k": exit_k},
        "route": {"profile": "profile.csv", "cover_m": 1.0, **(route or {})},
        "catalogue": {"file": "catalogue.csv", "friction": friction},
        "scenario": scenarios or [{"name": "peak", "flow": "30 L/s"}],
    }
    if offtakes:
        spec["offtake"] = offtakes
    if rules:
        spec["rules"] = rules
    if costs:
        spec["costs"] = costs
    for key, value in (extra or {}).items():
        if isinstance(value, dict) and isinstance(spec.get(key), dict):
            spec[key] = {**spec[key], **value}
        else:
            spec[key] = value
    path = folder / "study.toml"
    path.write_text(toml_text(spec), encoding="utf-8")
    return path
