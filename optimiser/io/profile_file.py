"""The profile CSV (contract section 2) and the catalogue CSV (section 3) into the model."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from optimiser.io.errors import InputError, ProblemList
from optimiser.io.limits import MIN_SECTION_M
from optimiser.io.surge_inputs import SURGE_COLUMNS, surge_columns
from optimiser.io.tables import number, read_rows
from optimiser.model import Catalogue, Friction, PipeOption, Route

PROFILE_COLUMNS = ["chainage_m", "ground_m"]
PROFILE_OPTIONAL = ["label", "zone"]
CATALOGUE_COLUMNS = [
    "material", "dn_mm", "internal_diameter_mm", "pressure_class", "allowable_head_m",
    "roughness_mm", "hazen_williams_c", "cost_per_m", "note",
]


def load_profile(path: Path, cover_m: float, slope_length: bool) -> Route:
    """Read a profile CSV (contract section 2) into a :class:`Route`."""
    rows, _header = read_rows(path, PROFILE_COLUMNS, PROFILE_OPTIONAL, what="profile")
    problems = ProblemList()
    chainages: list[float] = []
    grounds: list[float] = []
    for index, row in enumerate(rows):
        chainage = number(path, row, "chainage_m", problems)
        ground = number(path, row, "ground_m", problems)
        if chainage is None or ground is None:
            continue
        if index == 0 and chainage != 0.0:
            problems.add(f"{path}: line {row.line}: the first chainage_m must be 0 "
                         f"(the source), got {chainage:g}")
        if chainages and chainage <= chainages[-1]:
            problems.add(f"{path}: line {row.line}: chainage_m {chainage:g} does not "
                         f"increase (previous row has {chainages[-1]:g})")
        elif chainages and chainage - chainages[-1] < MIN_SECTION_M:
            problems.add(f"{path}: line {row.line}: chainage_m {chainage:g} is less than "
                         f"{MIN_SECTION_M * 1000:g} mm beyond the previous row's "
                         f"({chainages[-1]:g}); points that close are one point (merge "
                         "the rows)")
        chainages.append(chainage)
        grounds.append(ground)
    problems.raise_if_any()
    if len(chainages) < 2:
        raise InputError(f"{path}: the profile needs at least two points")
    labels = [row.cells.get("label", "") for row in rows]
    zones = [row.cells.get("zone", "") for row in rows][:-1]
    return Route(np.array(chainages), np.array(grounds), cover_m, labels, zones, slope_length)


def load_catalogue(path: Path, friction: Friction) -> Catalogue:
    """Read a catalogue CSV (contract section 3)."""
    rows, _ = read_rows(path, CATALOGUE_COLUMNS, SURGE_COLUMNS, what="catalogue")
    problems = ProblemList()
    options: list[PipeOption] = []
    seen: dict[tuple, int] = {}
    for row in rows:
        material = row.cells["material"]
        pressure_class = row.cells["pressure_class"]
        if not material:
            problems.add(f"{path}: line {row.line}: column material is empty")
        if not pressure_class:
            problems.add(f"{path}: line {row.line}: column pressure_class is empty")
        dn = number(path, row, "dn_mm", problems, positive=True)
        diameter = number(path, row, "internal_diameter_mm", problems, positive=True)
        allowable = number(path, row, "allowable_head_m", problems, positive=True)
        roughness = number(path, row, "roughness_mm", problems, non_negative=True)
        c_value = number(path, row, "hazen_williams_c", problems, positive=True,
                         allow_empty=friction is not Friction.HAZEN_WILLIAMS)
        cost = number(path, row, "cost_per_m", problems, non_negative=True)
        surge = surge_columns(path, row, problems, diameter, allowable)
        if None in (dn, diameter, allowable, roughness, cost) or not material \
                or not pressure_class:
            continue
        if friction is Friction.HAZEN_WILLIAMS and c_value is None:
            continue
        key = (material, dn, pressure_class)
        if key in seen:
            problems.add(f"{path}: line {row.line}: duplicate option {material} DN{dn:g} "
                         f"{pressure_class} (first given on line {seen[key]})")
            continue
        seen[key] = row.line
        options.append(PipeOption(material, dn, diameter, pressure_class, allowable,
                                  roughness, c_value, cost, row.cells["note"], **surge))
    problems.raise_if_any()
    return Catalogue(tuple(options))
