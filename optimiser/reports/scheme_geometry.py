"""Geometry files of a scheme whose trunk and branches all have coordinates:
``design.geojson`` and ``profile_points.csv`` as for a single route
(:mod:`optimiser.reports.geojson`), every line drawn from its own coordinates, every
feature and row carrying its ``branch``. A branch starts at a ``junction`` (not at a
source). A scheme where some line has no coordinates gets no geometry files: a map
missing branches would mislead.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pandas as pd

from optimiser.analysis.appurtenances import Appurtenance
from optimiser.analysis.check import CheckResult
from optimiser.model import TRUNK
from optimiser.model.lines import study_lines
from optimiser.reports.branch_view import branch_view
from optimiser.reports.geojson import (
    design_feature_collection,
    profile_points,
    write_plan_files,
)
from optimiser.reports.scheme_diagram import in_plan


def _line_features(result: CheckResult, name: str, appurtenances: list[Appurtenance]
                   ) -> list[dict[str, Any]]:
    view = branch_view(result, name)
    collection = design_feature_collection(
        view, [a for a in appurtenances if a.branch == name])
    features = collection["features"]
    for feature in features:
        properties = feature["properties"]
        if properties["kind"] == "source" and name != TRUNK:
            properties["kind"] = "junction"
            properties.pop("level_m", None)
        feature["properties"] = {"branch": name, **properties}
    return features


def scheme_feature_collection(result: CheckResult, appurtenances: list[Appurtenance]
                              ) -> dict[str, Any]:
    """The FeatureCollection of a scheme: the single route's, line after line."""
    collection = design_feature_collection(branch_view(result, TRUNK), [])
    features = []
    for line in study_lines(result.study):
        features += _line_features(result, line.name, appurtenances)
    collection["features"] = features
    collection["total_cost"] = result.total_cost
    return collection


def scheme_profile_points(result: CheckResult) -> pd.DataFrame:
    """Every node of every line, ``branch`` first."""
    tables = [profile_points(branch_view(result, line.name)).assign(branch=line.name)
              for line in study_lines(result.study)]
    table = pd.concat(tables, ignore_index=True)
    return table[["branch", *(c for c in table.columns if c != "branch")]]


def write_scheme_geometry_files(out_dir: Path, result: CheckResult,
                                appurtenances: list[Appurtenance]) -> list[Path]:
    """``design.geojson`` (every line in one known CRS) and ``profile_points.csv`` (every
    line with coordinates) of a scheme; nothing unless every line has coordinates."""
    if not in_plan(result.study):
        return []
    lines = study_lines(result.study)
    crs = {line.route.coordinates.crs for line in lines if line.route.coordinates}
    collection = scheme_feature_collection(result, appurtenances) \
        if len(crs) == 1 and None not in crs else None
    return write_plan_files(out_dir, collection, scheme_profile_points(result))
