"""Surge inputs (contract section 10), the standard catalogue and the optimiser's per-option
surge admissibility.

Bad input: exit 2, one located message per problem (contract section 6). Standard
dimensions: ISO 4427-2, ISO 4427-1 / ISO 12162, EN 545, as listed in the reference checks
(all from memory: confirm against the standards' own tables). The studies are invented
test data; costdata/standard.csv prices are invented.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
from builders import DEFAULT_CATALOGUE, DEFAULT_STUDY
from test_surge import CATALOGUE_KEYS, _catalogue

from optimiser import load_design, load_study
from optimiser.analysis import check_design
from optimiser.analysis.surge import wave_speeds_m_s
from optimiser.cli import app
from optimiser.io import InputError
from optimiser.io.study_file import load_catalogue
from optimiser.milp import optimise_design
from optimiser.model import Friction

STANDARD = Path(__file__).resolve().parents[1] / "costdata" / "standard.csv"


def _exit_2(runner, files, *needles: str) -> str:
    outcome = runner.invoke(app, ["check", str(files.study), "--design", str(files.design)])
    assert outcome.exit_code == 2, outcome.output
    assert "Traceback" not in outcome.output
    text = " ".join(outcome.output.split())
    for needle in needles:
        assert needle in text, text
    return text


def test_joukowsky_needs_a_wave_speed_for_every_option(make_study, runner):
    files = make_study(study={**DEFAULT_STUDY, "surge": {"method": "joukowsky"}},
                       catalogue=_catalogue({"PE": {"wave_speed_m_s": 300.0}}))
    text = _exit_2(runner, files, "catalogue.csv: DI DN300 K9", 'method "joukowsky" needs')
    assert "PE DN" not in text


def test_wall_without_modulus_is_named(make_study, runner):
    files = make_study(catalogue=_catalogue({"DI": {"wall_thickness_mm": 6.0}}))
    _exit_2(runner, files, "catalogue.csv: line 7: column wall_thickness_mm is given "
                           "without elastic_modulus_gpa")


@pytest.mark.parametrize("cells, needle", [
    ({"wave_speed_m_s": -5.0}, "column wave_speed_m_s must be > 0"),
    ({"wave_speed_m_s": 4000.0}, "faster than sound in water"),
    ({"wall_thickness_mm": 6.0, "elastic_modulus_gpa": 0.0},
     "column elastic_modulus_gpa must be > 0"),
    ({"wall_thickness_mm": 6.0, "elastic_modulus_gpa": 170.0, "poisson_ratio": 0.6},
     "column poisson_ratio must be below 0.5"),
    ({"allowable_surge_head_m": 200.0}, "allowable_surge_head_m (200) is below "
                                        "allowable_head_m (250)"),
    ({"outside_diameter_mm": 300.0}, "outside_diameter_mm (300) must exceed"),
    ({"sdr": 1.5}, "column sdr"),
])
def test_bad_surge_cells_exit_2(make_study, runner, cells, needle):
    files = make_study(catalogue=_catalogue({"DI": cells}))
    _exit_2(runner, files, "catalogue.csv: line 7:", needle)


@pytest.mark.parametrize("surge, catalogue, needle", [
    ({"method": "sudden"}, {}, "[surge] method"),
    ({"closure_time": 5.0}, {}, "[surge] closure_time: unknown key"),
    ({"closure_time_s": -1.0}, {}, "[surge] closure_time_s"),
    ({"min_transient_pressure_m": -20.0}, {}, "below the vapour pressure"),
    ({"method": "joukowsky"}, {"surge_allowance_m": 20.0},
     "[catalogue] surge_allowance_m applies to [surge] method \"allowance\" only"),
    # contract section 10: the slow closure 2LV/(gT) is the wave-speed method's; found
    # by mutating the demos (a closure time beside an allowance was silently ignored)
    ({"closure_time_s": 30.0}, {"surge_allowance_m": 20.0},
     "[surge] closure_time_s applies to [surge] method \"joukowsky\" only"),
    ({}, {"hazen_williams_coefficient": 0.0}, "[catalogue] hazen_williams_coefficient"),
])
def test_bad_surge_keys_exit_2(make_study, runner, surge, catalogue, needle):
    files = make_study(study={**DEFAULT_STUDY, "surge": surge,
                              "catalogue": {"file": "catalogue.csv", **catalogue}},
                       catalogue=_catalogue({"PE": {"wave_speed_m_s": 300.0},
                                             "DI": {"wave_speed_m_s": 1100.0}}))
    _exit_2(runner, files, "study.toml", needle)


def test_design_option_outside_the_filter_needs_a_wave_speed(make_study):
    """A design may use an option the materials filter leaves out; with joukowsky it too
    needs a wave speed, named at its design line."""
    files = make_study(
        study={**DEFAULT_STUDY, "surge": {"method": "joukowsky"},
               "catalogue": {"file": "catalogue.csv", "materials": ["PE"]}},
        catalogue=_catalogue({"PE": {"wave_speed_m_s": 300.0}}),
        design=[(0.0, 1200.0, "DI", 300, "K9"), (1200.0, 3000.0, "PE", 200, "PN10")])
    study = load_study(files.study)
    with pytest.raises(InputError) as error:
        load_design(files.design, study)
    assert any("design.csv: line 2: DI DN300 K9 has no wave_speed_m_s" in p
               for p in error.value.problems)


# ----------------------------------------------------------------- standard catalogue


@pytest.fixture(scope="module")
def standard():
    return load_catalogue(STANDARD, Friction.COLEBROOK_WHITE)


def _pe(catalogue, outside_mm: float, sdr: float):
    [option] = [o for o in catalogue if o.material == "PE100"
                and o.outside_diameter_mm == outside_mm and o.sdr == sdr]
    return option


@pytest.mark.parametrize("outside, sdr, wall", [
    (110, 11, 10.0), (110, 17, 6.6), (160, 11, 14.6), (250, 11, 22.7), (250, 17, 14.8)])
def test_pe100_walls_are_iso_4427(standard, outside, sdr, wall):
    """PE100 walls: ISO 4427-2 (2019) table (from memory), exact to 0.1 mm; bore = OD - 2e;
    SDR = OD / wall within the standard's rounding up to 0.1 mm."""
    option = _pe(standard, outside, sdr)
    assert option.wall_thickness_mm == pytest.approx(wall, abs=1e-9)
    assert option.internal_diameter_mm == pytest.approx(outside - 2 * wall, abs=1e-9)
    assert outside / sdr <= option.wall_thickness_mm + 0.05
    assert option.label == f"PE100 OD{outside} SDR{sdr} {option.pressure_class}"


@pytest.mark.parametrize("sdr, pn", [(11, "PN16"), (17, "PN10")])
def test_pe100_pressure_rating(standard, sdr, pn):
    """PN = 20 MRS / (C (SDR - 1)), MRS 10 MPa, C 1.25 (ISO 4427-1 / ISO 12162, from
    memory): SDR 11 -> PN 16, SDR 17 -> PN 10; allowable head = PN x 10.197 m/bar
    (1 bar = 1e5 Pa over 1000 kg/m^3 x g, common practice, no source)."""
    assert 20 * 10 / (1.25 * (sdr - 1)) == pytest.approx(float(pn[2:]), rel=1e-12)
    for outside in (110, 160, 250):
        option = _pe(standard, outside, sdr)
        assert option.pressure_class == pn
        assert option.allowable_head_m == pytest.approx(float(pn[2:]) * 1e5 / (1000 * 9.80665),
                                                        abs=0.05)


def test_ductile_iron_dn200(standard):
    """EN 545 (2010): DN 200 outside diameter 222 mm (from memory, +-0.5 mm); PMA = 1.2 PFA
    for the maximum allowable pressure with surge (EN 545, from memory)."""
    rows = [o for o in standard if o.material == "ductile iron" and o.dn_mm == 200]
    assert rows
    for option in rows:
        assert option.outside_diameter_mm == pytest.approx(222.0, abs=0.5)
        pfa_bar = float(option.pressure_class[1:])
        assert option.allowable_surge_head_m == pytest.approx(
            1.2 * pfa_bar * 1e5 / (1000 * 9.80665), abs=0.05)


def test_standard_wave_speeds_in_published_ranges(standard, make_study):
    """Korteweg wave speeds of the standard catalogue (water at 15 C): PE100 SDR 11 about
    300–350 m/s, ductile iron DN 200 about 1,100–1,300 m/s (Korteweg 1878; ranges common
    practice, no source, from memory; 5 % tolerance as the reference list allows)."""
    study = load_study(make_study().study)
    speeds = wave_speeds_m_s(study, standard)
    for option, speed in zip(standard, speeds, strict=True):
        assert math.isfinite(speed), option.label
        if option.material == "PE100" and option.sdr == 11:
            assert 300 * 0.95 <= speed <= 350 * 1.05, option.label
        if option.material == "ductile iron" and option.dn_mm == 200:
            assert 1100 * 0.95 <= speed <= 1300 * 1.05, option.label


def test_standard_catalogue_notes_say_prices_are_invented(standard):
    assert all("INVENTED price" in o.note for o in standard)


# ----------------------------------------------------------------- the optimiser


def _two_material_catalogue() -> list[dict]:
    """A cheap stiff pipe and a dearer flexible one of the same bore (invented)."""
    base = dict(zip(CATALOGUE_KEYS, DEFAULT_CATALOGUE[3], strict=True))  # PE 250 PN10
    stiff = {**base, "material": "stiff", "cost_per_m": 50.0, "wave_speed_m_s": 1200.0}
    flexible = {**base, "material": "flexible", "cost_per_m": 70.0, "wave_speed_m_s": 250.0}
    return [stiff, flexible]


@pytest.mark.parametrize("method, material", [("allowance", "stiff"),
                                              ("joukowsky", "flexible")])
def test_design_uses_each_options_own_surge(make_study, method, material):
    """With a sudden closure the stiff pipe's surge (a V / g, Joukowsky 1898) takes 76 m of
    static head over its class, so the optimiser must leave it out of the deep part; its
    design passes the independent check."""
    files = make_study(study={**DEFAULT_STUDY, "surge": {"method": method}},
                       catalogue=_two_material_catalogue())
    study = load_study(files.study)
    outcome = optimise_design(study)
    assert outcome.status == "optimal"
    assert outcome.check is not None and outcome.check.ok
    low = [p for p in outcome.design.pieces if p.from_m <= 2400.0 <= p.to_m]
    assert low[0].option.material == material
    assert check_design(study, outcome.design, capacity=False).ok


def _random_study(make_study, seed: int):
    """An invented falling route with a valley, two large offtakes (so one option's
    velocity differs along the route) and two scenarios; a catalogue of stiff and
    flexible pipes of three sizes and two classes each (invented data)."""
    rng = np.random.default_rng(seed)
    chainage = np.linspace(0.0, 4000.0, 9)
    ground = np.linspace(200.0, 150.0, 9) - np.concatenate(
        [[0.0], rng.uniform(20.0, 70.0, 7), [0.0]])
    ground[0] = 196.0
    rows = []
    for material, speed, price, surge_factor in (("stiff", 1150.0, 1.0, 1.2),
                                                 ("flexible", 330.0, 1.15, None)):
        for bore, cost in ((150.0, 40.0), (200.0, 60.0), (250.0, 85.0)):
            for pn, head in (("PN10", 102.0), ("PN16", 163.2)):
                rows.append({
                    "material": material, "dn_mm": bore + 20, "internal_diameter_mm": bore,
                    "pressure_class": pn, "allowable_head_m": head, "roughness_mm": 0.05,
                    "hazen_williams_c": 140, "cost_per_m": round(
                        cost * price * (1.25 if pn == "PN16" else 1.0), 2),
                    "note": "invented test data", "wave_speed_m_s": speed,
                    "allowable_surge_head_m": "" if surge_factor is None
                    else round(head * surge_factor, 1)})
    study = {**DEFAULT_STUDY,
             "source": {"level_m": 200.0, "top_water_level_m": 201.0, "entrance_k": 0.5},
             "outlet": {"required_head_m": 165.0, "exit_k": 1.0},
             "route": {"profile": "profile.csv", "cover_m": 1.0, "min_pressure_m": 2.0},
             "offtake": [{"chainage_m": 1000.0, "flow": f"{rng.uniform(10, 25):.1f} L/s"},
                         {"chainage_m": 2500.0, "flow": f"{rng.uniform(5, 15):.1f} L/s"}],
             "scenario": [{"name": "peak", "flow": "20 L/s"},
                          {"name": "future", "flow": "26 L/s", "offtake_factor": 1.3}],
             "rules": {"min_piece_length_m": 100.0, "max_changes": 4},
             "surge": {"method": "joukowsky", "closure_time_s": float(rng.choice([0, 60]))}}
    return make_study(study=study, catalogue=rows,
                      profile=[(float(c), float(g), "", "") for c, g in
                               zip(chainage, ground, strict=True)])


@pytest.mark.parametrize("seed", range(6))
def test_designs_with_joukowsky_pass_the_check(make_study, seed):
    """Every design `design` returns with surge by wave speed passes the independent check
    (its per-section class admissibility is conservative: the largest velocity of the
    option over the run of sections it may cover, the section's lowest pipe level)."""
    study = load_study(_random_study(make_study, seed).study)
    outcome = optimise_design(study)
    if outcome.status == "infeasible":
        pytest.skip("no design for this invented route")
    assert outcome.check is not None and outcome.check.ok
    result = check_design(study, outcome.design, capacity=False)
    assert result.ok, [v.message for v in result.violations]
    assert outcome.total_cost == pytest.approx(result.total_cost)
