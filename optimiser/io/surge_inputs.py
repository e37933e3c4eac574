"""Inputs of surge by wave speed (contract section 10) and the catalogue's optional
dimension columns: read, validated and turned into model values.

Catalogue columns (all optional, empty cells allowed): ``wave_speed_m_s``,
``wall_thickness_mm``, ``elastic_modulus_gpa``, ``poisson_ratio`` (default 0.3),
``allowable_surge_head_m``, and two columns of our own that name plastic pipe as it is
sold, ``outside_diameter_mm`` and ``sdr``.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from optimiser.io.errors import ProblemList
from optimiser.io.schema import StudyFile
from optimiser.io.tables import Row, number
from optimiser.model import Catalogue, PipeOption, SurgeMethod, SurgeSettings

SURGE_COLUMNS = ["wave_speed_m_s", "wall_thickness_mm", "elastic_modulus_gpa",
                 "poisson_ratio", "allowable_surge_head_m", "outside_diameter_mm", "sdr"]
MAX_WAVE_SPEED_M_S = 1500.0
"""Sound in water (about 1,480 m/s) bounds the wave speed in any water pipe; a larger
value is a unit slip (ft/s, km/h)."""
VAPOUR_HEAD_M = -10.0
"""About the vapour pressure of water as a gauge head [m]: a lower limit cannot be met."""


def surge_columns(path: Path, row: Row, problems: ProblemList,
                  internal_diameter_mm: float | None,
                  allowable_head_m: float | None) -> dict[str, Any]:
    """The optional surge and dimension cells of one catalogue row, validated, as keyword
    arguments of :class:`PipeOption`."""
    values = {name: number(path, row, name, problems, allow_empty=True, positive=True)
              for name in SURGE_COLUMNS if name != "poisson_ratio"}
    poisson = number(path, row, "poisson_ratio", problems, allow_empty=True,
                     non_negative=True)
    where = f"{path}: line {row.line}"
    speed = values["wave_speed_m_s"]
    if speed is not None and speed > MAX_WAVE_SPEED_M_S:
        problems.add(f"{where}: column wave_speed_m_s {speed:g} m/s is faster than sound in "
                     f"water (about 1480 m/s); give metres per second")
    if poisson is not None and poisson >= 0.5:
        problems.add(f"{where}: column poisson_ratio must be below 0.5, got {poisson:g}")
    has_wall, has_modulus = _cell(row, "wall_thickness_mm"), _cell(row, "elastic_modulus_gpa")
    if has_wall != has_modulus and not _cell(row, "wave_speed_m_s"):
        given, missing = (("wall_thickness_mm", "elastic_modulus_gpa") if has_wall
                          else ("elastic_modulus_gpa", "wall_thickness_mm"))
        problems.add(f"{where}: column {given} is given without {missing} (the wave speed "
                     f"needs both, or give wave_speed_m_s)")
    surge_limit = values["allowable_surge_head_m"]
    if surge_limit is not None and allowable_head_m is not None \
            and surge_limit < allowable_head_m:
        problems.add(f"{where}: column allowable_surge_head_m ({surge_limit:g}) is below "
                     f"allowable_head_m ({allowable_head_m:g}); the limit with surge "
                     "included cannot be lower than the working limit")
    outside = values["outside_diameter_mm"]
    if outside is not None and internal_diameter_mm is not None \
            and outside <= internal_diameter_mm:
        problems.add(f"{where}: column outside_diameter_mm ({outside:g}) must exceed "
                     f"internal_diameter_mm ({internal_diameter_mm:g})")
    if values["sdr"] is not None and values["sdr"] <= 2.0:
        problems.add(f"{where}: column sdr (outside diameter / wall) must be above 2, got "
                     f"{values['sdr']:g}")
    values["poisson_ratio"] = 0.3 if poisson is None else poisson
    return values


def _cell(row: Row, column: str) -> bool:
    return bool(row.cells.get(column, ""))


def surge_settings(spec: StudyFile) -> SurgeSettings:
    table = spec.surge
    return SurgeSettings(SurgeMethod(table.method), table.closure_time_s,
                         table.min_transient_pressure_m)


def surge_problems(path: Path, catalogue_path: Path, spec: StudyFile,
                   options: Catalogue) -> list[str]:
    """Problems of the ``[surge]`` table against the options the study may use."""
    problems: list[str] = []
    table = spec.surge
    limit = table.min_transient_pressure_m
    if limit is not None and limit < VAPOUR_HEAD_M:
        problems.append(f"{path}: [surge] min_transient_pressure_m ({limit:g} m) is below "
                        f"the vapour pressure of water (about {VAPOUR_HEAD_M:g} m)")
    if table.method != "joukowsky":
        # The slow closure (Michaud) is a rule of the wave-speed method: with a fixed
        # allowance a closure time was silently ignored (as an allowance is refused
        # beside "joukowsky" below).
        if table.closure_time_s > 0.0:
            problems.append(f"{path}: [surge] closure_time_s applies to [surge] method "
                            "\"joukowsky\" only; with \"allowance\" the surge is "
                            "[catalogue] surge_allowance_m (remove the key or change the "
                            "method)")
        return problems
    if spec.catalogue.surge_allowance_m != 0.0:
        problems.append(f"{path}: [catalogue] surge_allowance_m applies to [surge] method "
                        "\"allowance\" only; with \"joukowsky\" each option's surge comes "
                        "from its wave speed (remove the allowance or change the method)")
    problems.extend(wave_speed_problems(catalogue_path, options))
    return problems


def wave_speed_problems(catalogue_path: Path, options: Catalogue | list[PipeOption]
                        ) -> list[str]:
    """Options that give neither a wave speed nor a wall with its elastic modulus."""
    return [f"{catalogue_path}: {o.label}: [surge] method \"joukowsky\" needs "
            "wave_speed_m_s, or wall_thickness_mm with elastic_modulus_gpa, for every "
            "option the study may use" for o in options if not has_wave_speed(o)]


def has_wave_speed(option: PipeOption) -> bool:
    return option.has_wave_speed
