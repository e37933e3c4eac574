"""Monte Carlo of roughness and ageing for a fixed design of a branched scheme.

The draws are the single route's (:func:`optimiser.analysis.sensitivity.
drawn_roughness_mm`: one initial roughness per material and sample, aged linearly with
years in service after Colebrook, C.F. & White, C.M. (1937), The reduction of carrying
capacity of pipes with age, J. Inst. Civil Eng. 7(1)), so one seed gives the same
numbers on a route and on a scheme of the same materials; each scenario applies its own
roughness rule to them. Every sample is judged on the tree by the check's own
hydraulics, all samples at once (:mod:`optimiser.sweeps.tree_samples`).

Per sample and scenario: ``outlet_margin_m`` is the least delivery margin of any
delivery point (the trunk's outlet and every branch's end) and ``governing_branch`` the
delivery point where it occurs; ``least_pressure_margin_m`` is the least pressure margin
anywhere on the tree; ``meets`` says every delivery point and every pressure minimum of
the tree is met; ``capacity_m3_s`` is the trunk's delivery capacity, every branch
delivering its stated flow (as the check and the scheme's roughness sweep define it).
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import pandas as pd

from optimiser.analysis.limits import CHECK_TOLERANCE
from optimiser.analysis.scheme_check import SchemeHydraulics
from optimiser.analysis.sensitivity import (
    MonteCarloResult,
    RoughnessDistribution,
    drawn_roughness_mm,
)
from optimiser.model import Design, Scenario, Study
from optimiser.sweeps.tree_samples import TreeSamples, tree_samples


def _percentile(values: np.ndarray, q: float) -> float | None:
    finite = values[np.isfinite(values)]
    return float(np.percentile(finite, q)) if finite.size else None


def _scenario_samples(tree: TreeSamples, names: list[str], materials: list[str],
                      used: np.ndarray) -> pd.DataFrame:
    """One row per sample of one scenario (columns in the module docstring)."""
    margins = tree.outlet_margins_m
    least = margins.min(axis=1)
    pressure = tree.least_pressure_margin_m
    frame = pd.DataFrame({
        "sample": np.arange(len(least)), "scenario": tree.scenario.name,
        "capacity_m3_s": tree.trunk_capacity_m3_s(), "outlet_margin_m": least,
        "least_pressure_margin_m": pressure,
        "meets": (least >= -CHECK_TOLERANCE) & (pressure >= -CHECK_TOLERANCE),
        "governing_branch": np.asarray(names, dtype=object)[margins.argmin(axis=1)]})
    for i, material in enumerate(materials):
        frame[f"roughness_mm[{material}]"] = used[:, i]
    return frame


def _summary_row(scenario: Scenario, frame: pd.DataFrame, years: float) -> dict:
    """Per scenario: the route's summary fields, and the tree's additions."""
    capacity = frame["capacity_m3_s"].to_numpy(dtype=float)
    margin = frame["outlet_margin_m"].to_numpy(dtype=float)
    governing = frame["governing_branch"].value_counts()
    return {
        "scenario": scenario.name, "samples": len(frame), "years": years,
        "probability_meets": float(frame["meets"].mean()),
        "capacity_p05_m3_s": _percentile(capacity, 5),
        "capacity_p50_m3_s": _percentile(capacity, 50),
        "capacity_p95_m3_s": _percentile(capacity, 95),
        "design_flow_m3_s": scenario.outlet_flow_m3_s,
        "probability_deliveries_met": float((margin >= -CHECK_TOLERANCE).mean()),
        "probability_pressures_met": float(
            (frame["least_pressure_margin_m"] >= -CHECK_TOLERANCE).mean()),
        "outlet_margin_p05_m": _percentile(margin, 5),
        "outlet_margin_p50_m": _percentile(margin, 50),
        "outlet_margin_p95_m": _percentile(margin, 95),
        "governing_branch": str(governing.index[0]),
        "governing_share": float(governing.iloc[0] / len(frame)),
    }


def _delivery_rows(tree: TreeSamples) -> list[dict]:
    """Per delivery point of one scenario: how often it is met and how often it
    governs, and its margin's percentiles."""
    margins = tree.outlet_margins_m
    governs = margins.argmin(axis=1)
    rows = []
    for i, line in enumerate(tree.hydraulics.lines):
        margin = margins[:, i]
        rows.append({
            "scenario": tree.scenario.name, "branch": line.name,
            "delivery_flow_m3_s": line.delivery_flow_m3_s(tree.scenario),
            "required_head_m": line.required_head_m,
            "probability_met": float((margin >= -CHECK_TOLERANCE).mean()),
            "margin_p05_m": _percentile(margin, 5), "margin_p50_m": _percentile(margin, 50),
            "margin_p95_m": _percentile(margin, 95),
            "governs_share": float((governs == i).mean())})
    return rows


def scheme_monte_carlo(study: Study, design: Design, distribution: RoughnessDistribution, *,
                       samples: int, seed: int, years: float = 0.0,
                       ageing_mm_per_year: Mapping[str, float] | None = None
                       ) -> MonteCarloResult:
    """Probability that the fixed design of a scheme meets each scenario at year
    ``years`` (module docstring), with the columns of the route's
    :func:`optimiser.analysis.sensitivity.monte_carlo` and the tree's additions; the
    ``delivery_points`` table gives each delivery point's share. Same seed, same
    numbers."""
    materials, aged = drawn_roughness_mm(design, distribution, samples=samples, seed=seed,
                                         years=years, ageing_mm_per_year=ageing_mm_per_year)
    hydraulics = SchemeHydraulics(study, design)
    names = [line.name for line in hydraulics.lines]
    frames, summary, deliveries = [], [], []
    for scenario in study.scenarios:
        tree = tree_samples(hydraulics, scenario, materials, aged)
        frame = _scenario_samples(tree, names, materials,
                                  scenario.effective_roughness_mm(aged))
        frames.append(frame)
        summary.append(_summary_row(scenario, frame, years))
        deliveries += _delivery_rows(tree)
    return MonteCarloResult(pd.concat(frames, ignore_index=True), pd.DataFrame(summary),
                            seed, years, delivery_points=pd.DataFrame(deliveries))
