"""How a fixed design of a branched scheme behaves across a roughness range.

The single route's sweep runs on an exact linear form of the check
(:mod:`optimiser.analysis.linear_check`), which follows one chain from the source; a
scheme is a tree, so here every roughness is judged by the check's own hydraulics on
the tree (:class:`optimiser.analysis.scheme_check.SchemeHydraulics`): slower, and exact
by construction. The swept roughness combines with each scenario's own rule as in
:mod:`optimiser.analysis.sensitivity` (:func:`optimiser.sweeps.variants.with_roughness`).

Per scenario and roughness: ``outlet_margin_m`` is the least delivery margin of any
delivery point of the scheme (the trunk's outlet and every branch's end),
``least_pressure_margin_m`` the least pressure margin anywhere on the tree, and the
capacities are those of the trunk's delivery point, every branch delivering its stated
flow (with every limit of the tree, and with its own delivery head only).
"""

from __future__ import annotations

from collections.abc import Sequence

import pandas as pd

from optimiser.analysis.limits import CHECK_TOLERANCE
from optimiser.analysis.scheme_check import SchemeHydraulics
from optimiser.model import TRUNK, Design, Study
from optimiser.sweeps.variants import with_roughness


def _row(study: Study, design: Design, value: float, index: int) -> dict:
    """The row of scenario ``index`` at roughness ``value`` [mm]."""
    varied = with_roughness(study, value)
    scenario = varied.scenarios[index]
    hydraulics = SchemeHydraulics(varied, design)
    arrays = hydraulics.evaluate(scenario)
    outlet = min(hydraulics.outlet_margin_m(name, arrays) for name in arrays)
    pressure = min(hydraulics.parts[name].least_pressure_margin_m(part)
                   for name, part in arrays.items())
    return {
        "scenario": study.scenarios[index].name, "roughness_mm": value,
        "scenario_roughness_mm": scenario.roughness_mm,  # set by with_roughness
        "capacity_m3_s": hydraulics.capacity_m3_s(scenario, TRUNK, outlet_only=False),
        "capacity_outlet_only_m3_s": hydraulics.capacity_m3_s(scenario, TRUNK,
                                                              outlet_only=True),
        "outlet_margin_m": outlet, "least_pressure_margin_m": pressure,
        "meets": bool(outlet >= -CHECK_TOLERANCE and pressure >= -CHECK_TOLERANCE)}


def scheme_roughness_sweep(study: Study, design: Design,
                           roughness_mm: Sequence[float]) -> pd.DataFrame:
    """Capacity and margins of a fixed design of a scheme at each roughness, per
    scenario, in the columns of :func:`optimiser.analysis.sensitivity.roughness_sweep`
    (scenarios in the study's order, each over the whole range)."""
    values = [float(v) for v in roughness_mm]
    rows = [_row(study, design, value, index) for index in range(len(study.scenarios))
            for value in values]
    return pd.DataFrame(rows)
