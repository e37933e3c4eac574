"""The optimiser's friction gradients, worked once per distinct section flow, against the
same function applied to every section (consistency of one computation done two ways,
common practice, no source; invented study from ``builders``): bit for bit, in every
scenario, with offtakes (several distinct flows), a scenario roughness (Colebrook-White) and
Hazen-Williams friction."""

from __future__ import annotations

import numpy as np
import pytest

import optimiser
from optimiser.analysis.flows import flow_below_m3_s, friction_gradient
from optimiser.milp import prepare

OFFTAKES = [{"chainage_m": 800.0, "flow": "3 L/s"}, {"chainage_m": 2200.0, "flow": "4 L/s"}]
SCENARIOS = [{"name": "peak", "flow": "25 L/s"},
             {"name": "more offtake", "flow": "20 L/s", "offtake_factor": 1.5},
             {"name": "night", "flow": "2 L/s"}]
OLD_PIPE = {"name": "old pipe", "flow": "20 L/s", "roughness_mm": 1.0}


@pytest.mark.parametrize("friction", ["colebrook-white", "hazen-williams"])
def test_gradients_match_section_by_section(make_study, friction):
    scenarios = SCENARIOS + ([OLD_PIPE] if friction == "colebrook-white" else [])
    files = make_study(study={"offtake": OFFTAKES, "scenario": scenarios,
                              "catalogue": {"file": "catalogue.csv", "friction": friction}})
    study = optimiser.load_study(files.study)
    data = prepare(study)
    catalogue = study.catalogue
    for k, scenario in enumerate(study.scenarios):
        flow = flow_below_m3_s(study, scenario, study.route.chainage_m[:-1])
        assert len(np.unique(flow)) >= 3
        expected = friction_gradient(study, scenario, flow[:, None],
                                     catalogue.internal_diameter_m[None, :],
                                     catalogue.roughness_mm[None, :],
                                     catalogue.hazen_williams_c[None, :])
        assert np.array_equal(data.gradient[k], expected)
