"""Loaders on good input: defaults, node insertion, zones, costs and tolerated variations
of the files (contract sections 1-5). Expected values are written out from the contract.
"""

from __future__ import annotations

import math

import pytest
from builders import DEFAULT_DESIGN, DEFAULT_PROFILE, DELETE, csv_text
from reference import water_nu_m2_s

import optimiser
from optimiser.model import Friction


def _load(files):
    study = optimiser.load_study(files.study)
    return study, optimiser.load_design(files.design, study)


def test_defaults_of_the_contract(make_study):
    """Contract section 1 defaults: top water = level, entrance 0.5, exit 1.0, cover 1.0,
    min pressure 0, 15 C water, slope length, colebrook-white, velocity 0..3 m/s."""
    files = make_study(study={
        "water": DELETE, "currency": DELETE,
        "source": {"top_water_level_m": DELETE, "entrance_k": DELETE},
        "outlet": {"exit_k": DELETE},
        "route": {"cover_m": DELETE, "min_pressure_m": DELETE, "fitting": DELETE},
        "offtake": DELETE})
    study, _ = _load(files)
    assert study.source.top_water_level_m == study.source.level_m == 201.0
    assert study.source.entrance_k == 0.5
    assert study.outlet.exit_k == 1.0
    assert study.route.cover_m == 1.0
    assert study.min_pressure_m == 0.0
    assert study.currency == ""
    assert study.temperature_c == 15.0
    # IAPWS 2008 via iapws: about 1.139e-6 m^2/s at 15 C
    assert study.kinematic_viscosity_m2_s == pytest.approx(water_nu_m2_s(15.0), rel=1e-4)
    assert study.route.slope_length
    assert study.friction is Friction.COLEBROOK_WHITE
    assert study.rules.velocity_min_m_s == 0.0
    assert study.rules.velocity_max_m_s == 3.0
    assert study.surge_allowance_m == 0.0
    assert study.local_k_per_km == 0.0


def test_explicit_viscosity_overrides_temperature(make_study):
    files = make_study(study={"water": {"temperature_c": 30.0,
                                        "kinematic_viscosity_m2_s": 1.31e-6}})
    study, _ = _load(files)
    assert study.kinematic_viscosity_m2_s == 1.31e-6


def test_nodes_inserted_at_offtakes_and_fittings(make_study):
    """Contract section 2: a point at every offtake and fitting chainage, ground linear."""
    study, _ = _load(make_study())
    route = study.route
    assert list(route.chainage_m) == [0.0, 800.0, 1500.0, 1600.0, 2200.0, 2400.0, 3000.0]
    # 1500 lies between (800, 190) and (1600, 160); 2200 between (1600, 160), (2400, 128)
    assert route.ground_m[2] == pytest.approx(190.0 + (160.0 - 190.0) * 700 / 800)
    assert route.ground_m[4] == pytest.approx(160.0 + (128.0 - 160.0) * 600 / 800)
    assert list(route.pipe_level_m) == pytest.approx(list(route.ground_m - 1.0))


def test_slope_and_chainage_lengths(make_study):
    """Section length: sqrt(dx^2 + dz^2) of pipe levels, or dx with length = "chainage"."""
    profile = [(0.0, 500.0), (300.0, 100.0), (700.0, 400.0)]  # 3-4-5 triangles
    design = [(0.0, 700.0, "PE", 200, "PN10")]
    plain = {"route": {"fitting": DELETE}, "offtake": DELETE}
    study, _ = _load(make_study(profile=profile, design=design, study=plain))
    assert list(study.route.length_m) == pytest.approx([500.0, 500.0])
    study, _ = _load(make_study(profile=profile, design=design,
                                study={**plain, "route": {"fitting": DELETE,
                                                          "length": "chainage"}}))
    assert list(study.route.length_m) == pytest.approx([300.0, 400.0])


def test_zone_applies_to_the_section_starting_at_its_row_and_costs(make_study):
    """Contract sections 2 and 5: cost = cost_per_m x zone factor x length, plus
    change_cost per option change. 'rock' starts at 1600 m and ends at 2400 m."""
    files = make_study(study={"costs": {"zone_factor": {"rock": 1.5}, "change_cost": 1000.0}})
    study, design = _load(files)
    result = optimiser.check_design(study, design, capacity=False)
    pipe = {c: g - 1.0 for c, g in [(0.0, 199.0), (800.0, 190.0), (1600.0, 160.0),
                                    (2400.0, 128.0), (3000.0, 145.0)]}

    def slope(a: float, b: float) -> float:
        return math.hypot(b - a, pipe[b] - pipe[a])

    # piece 1: 0-1200 at 65/m; 800-1200 is half of the section 800-1600
    first = 65.0 * (slope(0, 800) + 0.5 * slope(800, 1600))
    # piece 2: 1200-3000 at 45/m; rock (x1.5) on 1600-2400
    second = 45.0 * (0.5 * slope(800, 1600) + 1.5 * slope(1600, 2400) + slope(2400, 3000))
    assert list(result.pieces["cost"]) == pytest.approx([first, second], rel=1e-12)
    assert result.change_cost_total == 1000.0
    assert result.total_cost == pytest.approx(first + second + 1000.0, rel=1e-12)


def test_design_with_extra_columns_and_small_mismatch(make_study):
    """Contract section 4: more columns are ignored on input; ends within 1 mm are snapped."""
    rows = [{"from_m": 0.0, "to_m": 1200.0004, "material": "PE", "dn_mm": 250,
             "pressure_class": "PN10", "length_m": 1200.3, "cost": 1.0},
            {"from_m": 1200.0, "to_m": 2999.9995, "material": "PE", "dn_mm": "200.0",
             "pressure_class": "PN10", "length_m": 1800.0, "cost": 2.0}]
    _, design = _load(make_study(design=rows))
    assert [(p.from_m, p.to_m) for p in design.pieces] == [(0.0, 1200.0004),
                                                          (1200.0004, 3000.0)]
    assert design.pieces[1].option.internal_diameter_mm == 176.2


def test_csv_with_bom_blank_lines_and_spaces(make_study):
    """A spreadsheet's UTF-8 CSV (byte order mark, blank lines, padded cells) reads fine."""
    text = "\ufeff" + csv_text([(f" {c} ", f" {g} ", label, zone)
                                for c, g, label, zone in DEFAULT_PROFILE],
                               ("chainage_m", "ground_m", "label", "zone")).replace(
        "\n", "\n\n", 2)
    study, _ = _load(make_study(profile=text))
    assert study.route.chainage_m[0] == 0.0
    assert study.route.total_chainage_m == 3000.0


def test_materials_filter_keeps_the_whole_catalogue_for_checks(make_study):
    """[catalogue] materials filters optimisation options; a checked design may still use
    any row of the file (load_design looks in the whole catalogue)."""
    study, design = _load(make_study(study={"catalogue": {"materials": ["DI"]}}))
    assert {o.material for o in study.catalogue} == {"DI"}
    assert design.pieces[0].option.material == "PE"


def test_unknown_material_in_filter_is_bad_input(make_study):
    with pytest.raises(optimiser.InputError, match="materials"):
        _load(make_study(study={"catalogue": {"materials": ["steel"]}}))


def test_relative_paths_are_relative_to_the_study_file(make_study, tmp_path, monkeypatch):
    files = make_study()
    monkeypatch.chdir(tmp_path)
    study, design = _load(files)
    assert study.profile_path == files.profile.resolve()
    assert len(design.pieces) == len(DEFAULT_DESIGN)


def test_flows_in_other_units(make_study):
    study, _ = _load(make_study(study={"scenario": [{"name": "a", "flow": "90 m3/h"}],
                                       "offtake": [{"chainage_m": 2200.0,
                                                    "flow": "0.3456 ML/d"}]}))
    assert study.scenarios[0].outlet_flow_m3_s == pytest.approx(0.025)
    assert study.offtakes[0].flow_m3_s == pytest.approx(0.004)


@pytest.mark.parametrize("which", ["study", "profile", "catalogue", "design"])
def test_byte_order_mark_at_the_start_of_any_input_file(make_study, which):
    """A UTF-8 byte-order mark, as Windows editors and spreadsheets write it, is accepted
    in every input file, and the file means exactly what it means without one."""
    plain = _load(make_study())
    files = make_study()
    path = getattr(files, which)
    path.write_bytes(b"\xef\xbb\xbf" + path.read_bytes())
    study, design = _load(files)
    assert study.title == plain[0].title
    assert study.scenarios == plain[0].scenarios
    assert list(study.route.chainage_m) == list(plain[0].route.chainage_m)
    assert study.catalogue == plain[0].catalogue
    assert design == plain[1]


def test_study_file_not_utf8_names_the_line(make_study):
    files = make_study()
    files.study.write_bytes(files.study.read_bytes() + b'\nlabel = "r\xe9servoir"\n')
    with pytest.raises(optimiser.InputError, match=r"study\.toml: line \d+: .*not UTF-8"):
        optimiser.load_study(files.study)


def test_a_very_long_title_is_kept_whole_and_shown_shortened(make_study, runner, tmp_path):
    """A title of 100,000 characters loads; the result JSON keeps it whole, the terminal
    and the HTML report show its first 119 characters and an ellipsis."""
    import json
    import re

    from optimiser.cli import app

    title = "A" * 100_000
    files = make_study(study={"title": title})
    assert optimiser.load_study(files.study).title == title
    out = tmp_path / "out"
    result = runner.invoke(app, ["design", str(files.study), "--out", str(out)])
    assert result.exit_code == 0, result.output[:2000]
    flat = "".join(result.output.split())
    assert "A" * 119 + "\u2026" in flat
    assert "A" * 120 not in flat
    assert json.loads((out / "result.json").read_text(encoding="utf-8"))["title"] == title
    page = (out / "report.html").read_text(encoding="utf-8")
    assert re.search(r"<h1>A{119}\u2026</h1>", page)
    assert "A" * 120 not in page


def test_titles_are_shown_on_one_line_as_written(make_study, runner):
    """Line breaks and tabs in a title become spaces; square brackets are shown, not read
    as terminal markup ("[/bold]" in a title used to stop the run)."""
    from optimiser.cli import app
    from optimiser.reports.text import short_title

    assert short_title("Main\n\tline,  option A") == "Main line, option A"
    assert short_title("x" * 120) == "x" * 120
    assert short_title("x" * 121) == "x" * 119 + "\u2026"
    for title in ("Main [phase 2]", "Main [/bold] and [red]"):
        files = make_study(study={"title": title})
        result = runner.invoke(app, ["check", str(files.study), "--design",
                                     str(files.design)])
        assert result.exit_code == 0, result.output
        assert title in result.output
