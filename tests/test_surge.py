"""Surge by wave speed (contract section 10) and the Hazen–Williams constant (section 12).

Sources beside each check: Joukowsky (1898) and Michaud (1878) as given in Wylie, E.B. &
Streeter, V.L. (1993), Fluid Transients in Systems; Korteweg (1878); the hand hydraulics
of ``reference.gradeline`` (``fluids`` Colebrook, ``iapws`` viscosity). The studies are
invented test data (``builders``), never check values in themselves.
"""

from __future__ import annotations

import doctest
import itertools
import json
import math

import pytest
from builders import DEFAULT_CATALOGUE, DEFAULT_PROFILE, DEFAULT_STUDY, write_study
from test_check_cli import _reference

import optimiser.hydraulics.surge as surge_module
from optimiser import load_design, load_study
from optimiser.analysis import check_design
from optimiser.cli import app
from optimiser.hydraulics.surge import (
    closure_head_rise_m,
    joukowsky_head_rise_m,
    korteweg_wave_speed_m_s,
    slow_closure_head_rise_m,
)

G = 9.80665  # standard gravity, CGPM 1901
CATALOGUE_KEYS = ("material", "dn_mm", "internal_diameter_mm", "pressure_class",
                  "allowable_head_m", "roughness_mm", "hazen_williams_c", "cost_per_m", "note")


def test_docstring_examples_hold():
    """The worked numbers in the module's docstrings (each names its source)."""
    failures, tried = doctest.testmod(surge_module)
    assert tried >= 6 and failures == 0


def test_joukowsky_head_rise():
    """a = 1000 m/s, dV = 1 m/s gives 101.97 m: Delta H = a dV / g (Joukowsky 1898; Wylie &
    Streeter 1993, ch. 1)."""
    assert float(joukowsky_head_rise_m(1000.0, 1.0)) == pytest.approx(1000.0 / G, rel=1e-12)
    assert round(float(joukowsky_head_rise_m(1000.0, 1.0)), 2) == 101.97
    # A reversal of the flow is a change of velocity of the same size.
    assert float(joukowsky_head_rise_m(1000.0, -1.0)) == pytest.approx(101.97, rel=1e-4)


def test_slow_closure_head_rise():
    """Delta H = 2 L V / (g T) for T > 2 L / a (Michaud 1878, as given in Wylie & Streeter
    1993): L = 2000 m, V = 1.5 m/s, T = 20 s gives 6000 / 196.133 = 30.5915 m."""
    assert float(slow_closure_head_rise_m(2000.0, 1.5, 20.0)) == pytest.approx(
        2 * 2000 * 1.5 / (G * 20), rel=1e-12)
    assert float(slow_closure_head_rise_m(2000.0, 1.5, 20.0)) == pytest.approx(30.5915,
                                                                                rel=1e-5)


def test_closure_switches_at_the_reflection_time():
    """Joukowsky for T <= 2L/a, Michaud beyond; equal at T = 2L/a, so never above a V / g
    (Wylie & Streeter 1993)."""
    a, v, length = 400.0, 1.2, 3000.0
    reflection = 2 * length / a  # 15 s
    sudden = a * v / G
    assert float(closure_head_rise_m(a, v, length, 0.0)) == pytest.approx(sudden)
    assert float(closure_head_rise_m(a, v, length, reflection * 0.99)) == pytest.approx(sudden)
    assert float(closure_head_rise_m(a, v, length, reflection)) == pytest.approx(sudden)
    assert float(closure_head_rise_m(a, v, length, 60.0)) == pytest.approx(
        2 * length * v / (G * 60.0))
    assert float(closure_head_rise_m(a, v, length, 60.0)) < sudden


def test_korteweg_rigid_pipe_gives_sound_in_water():
    """With a rigid wall, a = sqrt(K / rho): about 1480 m/s for K = 2.19 GPa, rho = 1000
    (Korteweg 1878; speed of sound in water about 1480 m/s near 20 C, common practice,
    from memory)."""
    a = float(korteweg_wave_speed_m_s(0.3, 0.01, 1e40, 1000.0))
    assert a == pytest.approx(math.sqrt(2.19e9 / 1000.0), rel=1e-12)
    assert a == pytest.approx(1480.0, rel=0.01)


def test_korteweg_pe100_sdr11_within_the_published_range():
    """PE100 OD 110 SDR 11 (bore 90 mm, wall 10 mm, ISO 4427-2, from memory), E = 1.0 GPa,
    nu = 0.3: about 300–350 m/s (Korteweg 1878; range common practice, no source, from
    memory; 5 % tolerance as the reference list allows)."""
    a = float(korteweg_wave_speed_m_s(0.090, 0.010, 1.0e9, 999.1, 0.3))
    assert 300.0 * 0.95 <= a <= 350.0 * 1.05
    # The formula written out once more, independently: a^2 (1 + c K D / (E e)) = K / rho.
    assert a**2 * (1 + (1 - 0.3**2) * 2.19e9 * 0.090 / (1.0e9 * 0.010)) == pytest.approx(
        2.19e9 / 999.1, rel=1e-12)


def test_korteweg_ductile_iron_dn200_within_the_published_range():
    """Ductile iron DN 200: OD 222 mm (EN 545, from memory), wall 4.7 mm, 3 mm lining,
    E = 170 GPa, nu = 0.28: about 1,100–1,300 m/s (Korteweg 1878; range common practice,
    no source, from memory)."""
    bore_m = (222.0 - 2 * 4.7 - 2 * 3.0) / 1000.0
    a = float(korteweg_wave_speed_m_s(bore_m, 0.0047, 170e9, 999.1, 0.28))
    assert 1100.0 * 0.95 <= a <= 1300.0 * 1.05


# --------------------------------------------------------------------------- the check


def _catalogue(extra: dict[str, dict]) -> list[dict]:
    """The builders' default catalogue as dicts, with surge columns added by material."""
    rows = []
    for row in DEFAULT_CATALOGUE:
        record = dict(zip(CATALOGUE_KEYS, row, strict=True))
        record.update(extra.get(record["material"], {}))
        rows.append(record)
    return rows


def _velocity(flow_m3_s: float, diameter_mm: float) -> float:
    return flow_m3_s / (math.pi * (diameter_mm / 1000.0) ** 2 / 4.0)


def _joukowsky_study(make_study, surge: dict | None = None, pe: dict | None = None,
                     **extra):
    study = dict(DEFAULT_STUDY)
    study["surge"] = {"method": "joukowsky", **(surge or {})}
    catalogue = _catalogue({"PE": {"wave_speed_m_s": 300.0, **(pe or {})},
                            "DI": {"wave_speed_m_s": 1100.0}})
    return make_study(study=study, catalogue=catalogue, **extra)


def test_surge_head_of_each_piece_is_a_v_over_g(make_study):
    """Per piece, a V / g with V the largest velocity in the piece (Joukowsky 1898): piece 1
    (PE 250, bore 220.4 mm) carries 29 L/s, piece 2 (PE 200, bore 176.2 mm) 29 L/s above
    the offtake at 2,200 m."""
    files = _joukowsky_study(make_study, pe={"allowable_surge_head_m": 170.0})
    study = load_study(files.study)
    result = check_design(study, load_design(files.design, study), capacity=False)
    pieces = result.pieces
    expected = [300.0 * _velocity(0.029, 220.4) / G, 300.0 * _velocity(0.029, 176.2) / G]
    assert pieces["surge_head_m"].tolist() == pytest.approx(expected, rel=1e-9)
    assert pieces["wave_speed_m_s"].tolist() == [300.0, 300.0]
    assert result.ok, [v.message for v in result.violations]


def test_static_plus_surge_above_the_class_is_a_max_pressure_violation(make_study):
    """Contract section 10: static + surge <= allowable_head_m when the option gives no
    allowable_surge_head_m. Piece 2's lowest point (2,400 m, pipe 127 m) has 76 m of static
    head; with its surge of about 36 m that exceeds PN10's 102 m."""
    files = _joukowsky_study(make_study)
    study = load_study(files.study)
    result = check_design(study, load_design(files.design, study), capacity=False)
    surge = 300.0 * _velocity(0.029, 176.2) / G
    classes = [v for v in result.violations if v.kind == "max_pressure"]
    assert len(classes) == 1
    assert classes[0].chainage_m == pytest.approx(2400.0)
    assert classes[0].value == pytest.approx(203.0 - 127.0 + surge)
    assert classes[0].limit == 102.0
    assert result.pieces["class_governs"].tolist()[1] == "static + surge"


def test_static_head_alone_is_held_to_allowable_head(make_study):
    """Contract section 10: static head <= allowable_head_m whatever the surge limit."""
    files = _joukowsky_study(make_study, pe={"allowable_surge_head_m": 300.0})
    study = load_study(files.study)
    design = load_design(files.design, study)
    assert check_design(study, design, capacity=False).ok
    low = write_study(files.folder.parent, folder="low", study={
        **DEFAULT_STUDY, "surge": {"method": "joukowsky"},
        "source": {"level_m": 201.0, "top_water_level_m": 235.0}},
        catalogue=_catalogue({"PE": {"wave_speed_m_s": 300.0, "allowable_surge_head_m": 300.0},
                              "DI": {"wave_speed_m_s": 1100.0}}))
    study = load_study(low.study)
    result = check_design(study, load_design(low.design, study), capacity=False)
    classes = [v for v in result.violations if v.kind == "max_pressure"]
    assert [(v.chainage_m, v.value, v.limit) for v in classes] == [
        (pytest.approx(2400.0), pytest.approx(235.0 - 127.0), 102.0)]


def test_slow_closure_uses_the_length_to_the_end_of_the_route(make_study):
    """T = 120 s > 2 L / a = about 20 s, so the surge is 2 L V / (g T) (Michaud 1878), L the
    pipe (slope) length of the whole route from the source."""
    files = _joukowsky_study(make_study, surge={"closure_time_s": 120.0},
                             pe={"allowable_surge_head_m": 170.0})
    study = load_study(files.study)
    result = check_design(study, load_design(files.design, study), capacity=False)
    pipe = [(c, g - 1.0) for c, g, *_ in DEFAULT_PROFILE]
    length = sum(math.hypot(b[0] - a[0], b[1] - a[1]) for a, b in itertools.pairwise(pipe))
    expected = [2 * length * _velocity(0.029, d) / (G * 120.0) for d in (220.4, 176.2)]
    assert result.pieces["surge_head_m"].tolist() == pytest.approx(expected, rel=1e-9)


def test_allowance_method_is_section_5(make_study):
    """Without [surge] the allowance is the surge of every piece and the class limit is
    allowable_head_m even where allowable_surge_head_m is given (contract section 5)."""
    files = make_study(study={**DEFAULT_STUDY, "catalogue": {"file": "catalogue.csv",
                                                             "surge_allowance_m": 30.0}},
                       catalogue=_catalogue({"PE": {"allowable_surge_head_m": 400.0}}))
    study = load_study(files.study)
    result = check_design(study, load_design(files.design, study), capacity=False)
    assert result.pieces["surge_head_m"].tolist() == [30.0, 30.0]
    classes = [v for v in result.violations if v.kind == "max_pressure"]
    assert [(v.value, v.limit) for v in classes] == [(pytest.approx(76.0 + 30.0), 102.0)]


def test_transient_limit_alone_gives_exit_1_at_the_right_chainages(make_study, runner,
                                                                     tmp_path):
    """Contract section 10: pressure head minus the surge head of its pipe >= the limit.
    The expected points come from the independent hand gradeline: at 1,200 m the upstream
    side (piece 1, small surge) passes and the downstream side (piece 2) fails."""
    limit = -10.0
    files = _joukowsky_study(make_study, surge={"min_transient_pressure_m": limit},
                             pe={"allowable_surge_head_m": 170.0})
    json_path = tmp_path / "check.json"
    outcome = runner.invoke(app, ["check", str(files.study), "--design", str(files.design),
                                  "--json", str(json_path)])
    assert outcome.exit_code == 1, outcome.output
    payload = json.loads(json_path.read_text())
    assert {v["kind"] for v in payload["violations"]} == {"transient_pressure"}
    surge = {False: 300.0 * _velocity(0.029, 220.4) / G,
             True: 300.0 * _velocity(0.029, 176.2) / G}
    expected = []
    for point in _reference({}).points:
        in_piece_2 = point.chainage_m > 1200.0 or (point.chainage_m == 1200.0
                                                    and point.side == "downstream")
        value = point.pressure_m - surge[in_piece_2]
        if value < limit:
            expected.append((point.chainage_m, value))
    assert [c for c, _ in expected] == [0.0, 800.0, 1200.0]
    found = [(v["chainage_m"], v["value"]) for v in payload["violations"]]
    assert found == [(pytest.approx(c), pytest.approx(x, abs=1e-3)) for c, x in expected]
    assert all(v["scenario"] == "peak day" and v["limit"] == limit
               for v in payload["violations"])
    for piece in payload["pieces"]:
        assert piece["wave_speed_m_s"] == 300.0
        assert piece["surge_head_m"] > 0


def test_hazen_williams_constant_is_used(make_study):
    """J = k Q^1.852 / (C^1.852 d^4.8704) with k from [catalogue] (contract section 12;
    Williams & Hazen 1905): the friction loss scales with k."""
    losses = {}
    for k in (10.67, 10.5088):
        files = make_study(study={**DEFAULT_STUDY, "catalogue": {
            "file": "catalogue.csv", "friction": "hazen-williams",
            "hazen_williams_coefficient": k}})
        study = load_study(files.study)
        result = check_design(study, load_design(files.design, study), capacity=False)
        segments = result.scenarios[0].segments
        first = segments.iloc[0]
        by_hand = k * 0.029**1.852 / (150.0**1.852 * 0.2204**4.8704)
        assert first["gradient_m_per_km"] / 1000 == pytest.approx(by_hand, rel=1e-12)
        losses[k] = segments["friction_loss_m"].sum()
    assert losses[10.5088] / losses[10.67] == pytest.approx(10.5088 / 10.67, rel=1e-12)
