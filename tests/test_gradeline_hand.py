"""Hand-calculated route checks of ``optimiser.check_design`` (contract section 5).

Every expected number comes from ``reference.gradeline``: a plain-Python loop over the
contract's formulas with friction from ``fluids.friction.Colebrook`` (Colebrook 1939,
``fluids`` as reference implementation) or the SI Hazen--Williams formula (Williams &
Hazen 1905), and viscosity from ``iapws`` (IAPWS 2008 viscosity). The package's own
hydraulics path is not used for any expected value. Agreement within 1 mm of head.
The route, flows and pipes are invented test data.
"""

from __future__ import annotations

import math

import pytest
from reference import Pipe, gradeline, water_nu_m2_s

import optimiser

HEAD_TOL_M = 1e-3  # contract check: 1 mm of head

PROFILE = [(0.0, 150.0), (500.0, 146.0), (1200.0, 120.0), (2000.0, 131.0), (2600.0, 100.0)]
COVER_M = 1.2
TEMPERATURE_C = 12.0
SOURCE_M, TOP_WATER_M = 152.0, 154.0
ENTRANCE_K, EXIT_K, K_PER_KM = 0.6, 0.9, 0.8
OUTLET_FLOW_M3_S = 0.020
OFFTAKE = (900.0, 0.006, 8.0)  # inside the section 500-1200, not a survey point
OFFTAKE_FACTOR = 1.5
BOUNDARY_M = 1000.0  # a piece boundary inside the same section

CATALOGUE = [
    ("PE", 250, 220.4, "PN10", 102.0, 0.05, 145, 65.0, "invented"),
    ("PE", 200, 176.2, "PN10", 102.0, 0.02, 150, 45.0, "invented"),
]
DESIGN = [(0.0, BOUNDARY_M, "PE", 250, "PN10"), (BOUNDARY_M, 2600.0, "PE", 200, "PN10")]


def _pipes(hazen_williams: bool) -> list[Pipe]:
    return [
        Pipe(0.0, BOUNDARY_M, 0.2204, roughness_m=0.05e-3, hazen_williams_c=145.0),
        Pipe(BOUNDARY_M, 2600.0, 0.1762, roughness_m=0.02e-3, hazen_williams_c=150.0),
    ]


def _write(make_study, *, length: str, friction: str, fittings: list[tuple[float, float]]):
    study = {
        "water": {"temperature_c": TEMPERATURE_C},
        "source": {"level_m": SOURCE_M, "top_water_level_m": TOP_WATER_M,
                   "entrance_k": ENTRANCE_K},
        "outlet": {"required_head_m": 60.0, "exit_k": EXIT_K},
        "route": {"cover_m": COVER_M, "min_pressure_m": 1.0, "local_k_per_km": K_PER_KM,
                  "length": length,
                  "fitting": [{"chainage_m": c, "k": k} for c, k in fittings]},
        "offtake": [{"chainage_m": OFFTAKE[0], "flow": "6 L/s",
                     "min_pressure_m": OFFTAKE[2]}],
        "scenario": [{"name": "hand", "flow": "20 L/s", "offtake_factor": OFFTAKE_FACTOR}],
        "catalogue": {"friction": friction},
    }
    if not fittings:
        study["route"]["fitting"] = []
    return make_study(study=study, profile=PROFILE, catalogue=CATALOGUE, design=DESIGN)


CASES = {
    # one fitting inside a section (1700 m, not a survey point), slope length
    "slope-colebrook": ("slope", "colebrook-white", [(1700.0, 3.0)]),
    "chainage-colebrook": ("chainage", "colebrook-white", [(1700.0, 3.0)]),
    "slope-hazen-williams": ("slope", "hazen-williams", [(1700.0, 3.0)]),
    # fittings at the source, on the piece boundary and at the outlet: each takes the
    # velocity of the pipe just downstream of it (the last pipe's at the outlet)
    "fittings-at-ends-and-boundary": ("slope", "colebrook-white",
                                      [(0.0, 0.3), (BOUNDARY_M, 1.1), (2600.0, 0.7)]),
}


@pytest.fixture(params=list(CASES), ids=list(CASES))
def hand_case(request, make_study):
    length, friction, fittings = CASES[request.param]
    files = _write(make_study, length=length, friction=friction, fittings=fittings)
    study = optimiser.load_study(files.study)
    result = optimiser.check_design(study, optimiser.load_design(files.design, study),
                                    capacity=False)
    hazen = friction == "hazen-williams"
    expected = gradeline(
        profile=PROFILE, pipes=_pipes(hazen), outlet_flow_m3_s=OUTLET_FLOW_M3_S,
        source_level_m=SOURCE_M, top_water_level_m=TOP_WATER_M, cover_m=COVER_M,
        entrance_k=ENTRANCE_K, exit_k=EXIT_K, local_k_per_km=K_PER_KM, fittings=fittings,
        offtakes=[OFFTAKE], offtake_factor=OFFTAKE_FACTOR, min_pressure_m=1.0,
        nu_m2_s=water_nu_m2_s(TEMPERATURE_C), slope_length=length == "slope",
        hazen_williams=hazen)
    return result, expected


def test_every_check_point_matches_the_hand_calculation(hand_case):
    """Energy, HGL, pressure and static pressure at every check point, both sides of every
    node where velocity or a point loss makes them differ (contract section 5)."""
    result, expected = hand_case
    points = result.scenarios[0].points
    got = list(zip(points["chainage_m"], points["side"], strict=True))
    want = [(p.chainage_m, p.side) for p in expected.points]
    assert [(pytest.approx(c, abs=1e-9), s) for c, s in want] == got
    for row, ref in zip(points.itertuples(), expected.points, strict=True):
        where = f"{ref.chainage_m} m {ref.side}"
        assert row.ground_m == pytest.approx(ref.ground_m, abs=1e-9), where
        assert row.pipe_level_m == pytest.approx(ref.pipe_level_m, abs=1e-9), where
        assert row.energy_m == pytest.approx(ref.energy_m, abs=HEAD_TOL_M), where
        assert row.hgl_m == pytest.approx(ref.hgl_m, abs=HEAD_TOL_M), where
        assert row.pressure_m == pytest.approx(ref.pressure_m, abs=HEAD_TOL_M), where
        assert row.static_pressure_m == pytest.approx(ref.static_pressure_m, abs=1e-9), where
        assert row.min_pressure_m == pytest.approx(ref.min_pressure_m), where
        assert row.velocity_m_s == pytest.approx(ref.velocity_m_s, rel=1e-12), where


def test_outlet_energy_and_inflow(hand_case):
    """Outlet: energy at the last point minus exit_k V^2/2g (contract section 5)."""
    result, expected = hand_case
    scenario = result.scenarios[0]
    assert scenario.outlet_energy_m == pytest.approx(expected.outlet_energy_m, abs=HEAD_TOL_M)
    assert scenario.inflow_m3_s == pytest.approx(expected.inflow_m3_s, rel=1e-12)
    assert expected.inflow_m3_s == pytest.approx(0.020 + 1.5 * 0.006)


def test_segments_velocity_flow_and_length(hand_case):
    """Flow in each section = outlet flow + offtake_factor x offtakes downstream; V = Q/A;
    slope or chainage length, split in proportion to chainage (contract sections 4, 5)."""
    result, expected = hand_case
    segments = result.scenarios[0].segments
    assert len(segments) == len(expected.segments)
    for row, ref in zip(segments.itertuples(), expected.segments, strict=True):
        assert row.from_m == pytest.approx(ref.from_m)
        assert row.to_m == pytest.approx(ref.to_m)
        assert row.length_m == pytest.approx(ref.length_m, rel=1e-12)
        assert row.flow_m3_s == pytest.approx(ref.flow_m3_s, rel=1e-12)
        assert row.velocity_m_s == pytest.approx(ref.velocity_m_s, rel=1e-12)
        assert row.friction_loss_m == pytest.approx(ref.friction_loss_m, abs=HEAD_TOL_M / 10)


def test_static_head_and_length_per_piece(hand_case):
    """Static head of a piece = top_water_level_m - its lowest pipe level (contract 5)."""
    result, expected = hand_case
    pieces = result.pieces
    assert list(pieces["static_head_m"]) == pytest.approx(expected.piece_static_head_m,
                                                           abs=1e-9)
    assert list(pieces["lowest_chainage_m"]) == pytest.approx(expected.piece_lowest_chainage_m)
    assert list(pieces["length_m"]) == pytest.approx(expected.piece_length_m, rel=1e-12)


def test_hand_calculation_is_not_trivial(hand_case):
    """Guard on the test itself: the route really has losses of metres, so 1 mm is tight."""
    _, expected = hand_case
    assert SOURCE_M - expected.outlet_energy_m > 5.0
    sides = {p.side for p in expected.points}
    assert {"upstream", "downstream", ""} <= sides


def test_first_point_written_out(make_study):
    """The first check point written out in full, without the reference loop (contract
    section 5): energy = source - entrance_k V^2/2g; HGL = energy - V^2/2g; pressure =
    HGL - (ground - cover). No friction is involved at the source."""
    files = _write(make_study, length="slope", friction="colebrook-white", fittings=[])
    study = optimiser.load_study(files.study)
    result = optimiser.check_design(study, optimiser.load_design(files.design, study),
                                    capacity=False)
    first = result.scenarios[0].points.iloc[0]
    q = OUTLET_FLOW_M3_S + OFFTAKE_FACTOR * OFFTAKE[1]
    v = q / (math.pi * 0.2204**2 / 4)
    hv = v**2 / (2 * 9.80665)
    assert first["energy_m"] == pytest.approx(SOURCE_M - ENTRANCE_K * hv, abs=1e-9)
    assert first["hgl_m"] == pytest.approx(SOURCE_M - (ENTRANCE_K + 1) * hv, abs=1e-9)
    assert first["pressure_m"] == pytest.approx(SOURCE_M - (ENTRANCE_K + 1) * hv
                                                - (150.0 - COVER_M), abs=1e-9)
    assert first["static_pressure_m"] == pytest.approx(TOP_WATER_M - (150.0 - COVER_M))
