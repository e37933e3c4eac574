"""The check's table of points against a node-by-node transcription of contract section 5.

The check builds its points with array operations; here the same rule is written out
plainly, one node at a time, and both must give the same table on a few invented
designs (``builders``): a boundary inside a section, fittings inside the route and at
its end, a size change on a survey point, and a scenario with no flow at all (where both
sides of every node agree). Consistency with the contract's own wording, common
practice, no source; the hydraulic values themselves are checked against outside
references in ``test_gradeline_hand.py`` and ``test_water_reference.py``.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import optimiser
from optimiser.analysis.design_hydraulics import DesignHydraulics
from optimiser.analysis.scheme_check import SchemeHydraulics
from optimiser.hydraulics.local_losses import velocity_head_m

_SAME = 1e-12


def reference_points(hydraulics: DesignHydraulics, scenario) -> pd.DataFrame:
    """Section 5 node by node: the upstream side of node i is the end of segment i - 1,
    the downstream side the start of segment i after the node's point loss (past the
    last fitting at the outlet node); one point (side "") where both agree."""
    arrays = hydraulics.evaluate(scenario)
    grid = hydraulics.grid
    n = len(grid.segment_length_m)
    rows = []
    for node in range(n + 1):
        sides = []
        if node > 0:
            sides.append(("upstream", arrays.energy_end_m[node - 1],
                          arrays.velocity_m_s[node - 1], node - 1))
        if node < n:
            sides.append(("downstream", arrays.energy_start_m[node],
                          arrays.velocity_m_s[node], node))
        else:
            sides.append(("downstream", arrays.after_final_fitting_m,
                          arrays.velocity_m_s[-1], n - 1))
        if len(sides) == 2 and abs(sides[0][1] - sides[1][1]) <= _SAME \
                and abs(sides[0][2] - sides[1][2]) <= _SAME:
            sides = [sides[1]] if node < n else [sides[0]]
        if len(sides) == 1:
            sides = [("", *sides[0][1:])]
        for side, energy, velocity, segment in sides:
            pipe = grid.node_pipe_level_m[node]
            hgl = energy - velocity_head_m(velocity)
            rows.append({
                "chainage_m": grid.node_chainage_m[node], "side": side,
                "label": grid.node_label[node], "ground_m": grid.node_ground_m[node],
                "pipe_level_m": pipe, "energy_m": energy, "hgl_m": hgl,
                "pressure_m": hgl - pipe,
                "static_pressure_m": hydraulics.study.source.top_water_level_m - pipe,
                "min_pressure_m": hydraulics.node_min_pressure_m[node],
                "velocity_m_s": velocity, "flow_m3_s": arrays.flow_m3_s[segment],
                "piece": grid.segment_piece[segment]})
    return pd.DataFrame(rows)


CASES = {
    "boundary inside a section, fitting inside": {},
    "fitting at the outlet, size change on a survey point": {
        "study": {"route": {"profile": "profile.csv", "cover_m": 1.0, "min_pressure_m": 2.0,
                            "fitting": [{"chainage_m": 1500.0, "k": 2.0},
                                        {"chainage_m": 3000.0, "k": 1.5}]}},
        "design": [(0.0, 800.0, "DI", 300, "K9"), (800.0, 2400.0, "PE", 250, "PN10"),
                   (2400.0, 3000.0, "PE", 200, "PN10")]},
    "no flow: every node one point": {
        "study": {"scenario": [{"name": "shut", "flow": "0 L/s"}],
                  "offtake": [{"chainage_m": 2200.0, "flow": "0 L/s"}]}},
}


@pytest.mark.parametrize("case", sorted(CASES))
def test_points_match_the_node_by_node_rule(make_study, case):
    files = make_study(**CASES[case])
    study = optimiser.load_study(files.study)
    design = optimiser.load_design(files.design, study)
    result = optimiser.check_design(study, design, capacity=False)
    hydraulics = DesignHydraulics(study, design)
    for scenario, scenario_result in zip(study.scenarios, result.scenarios, strict=True):
        expected = reference_points(hydraulics, scenario)
        got = scenario_result.points[list(expected.columns)]
        assert list(got["side"]) == list(expected["side"])
        assert list(got["label"]) == list(expected["label"])
        numeric = [c for c in expected.columns if c not in ("side", "label")]
        np.testing.assert_allclose(got[numeric].to_numpy(float),
                                   expected[numeric].to_numpy(float), rtol=0, atol=1e-9)
    if case.startswith("no flow"):
        assert (result.scenarios[0].points["side"] == "").all()
    else:
        assert {"upstream", "downstream", ""} <= set(result.scenarios[0].points["side"])


def test_capacity_margin_is_the_least_margin_of_the_points_table(make_study):
    """The capacity search's margin (arrays only) equals the least margin read from the
    check's table of points at the same outlet flow."""
    study = optimiser.load_study(make_study().study)
    design = optimiser.load_design(make_study().design, study)
    hydraulics = DesignHydraulics(study, design)
    scheme = SchemeHydraulics(study, design)
    scenario = study.scenarios[0]
    for flow in (0.0, 0.01, 0.025, 0.04):
        arrays = hydraulics.evaluate(scenario, flow)
        points = hydraulics.points(arrays)
        from_table = min(arrays.outlet_energy_m - study.outlet.required_head_m,
                         float((points["pressure_m"] - points["min_pressure_m"]).min()))
        assert scheme.least_margin_m(scenario, "main", flow, outlet_only=False) == from_table
