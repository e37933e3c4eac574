"""Bad input found by mutating the demo studies: each class of defect the mutations found
now exits 2 with a message naming the file and the row, point or key, with no traceback
and nothing written (docs/file-formats.md section 8, exit code 2; section 9, input
rules). Every study here is invented test data; the check values are the contract's
rules and ranges, cited beside each case.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from geo_builders import gpx_text, invented_line, to_lon_lat
from scheme_builders import LINKS, NODES, write_network_scheme, write_scheme_design

from optimiser.cli import app


def squash(text: str) -> str:
    """Text without whitespace: the terminal may wrap a message anywhere."""
    return "".join(text.split())


def assert_refused(result, named: Path | str, *words: str, written: Path | None = None):
    """Exit 2, no traceback, the file and every word in the output, and (contract
    section 8: "nothing written") no output left at ``written``."""
    output = squash(result.output)
    assert result.exit_code == 2, result.output
    assert result.exception is None or isinstance(result.exception, SystemExit)
    assert "Traceback" not in result.output
    assert squash(str(named)) in output, result.output
    for word in words:
        assert squash(word) in output, (word, result.output)
    if written is not None:
        assert not written.exists()


def _check(runner, files, tmp_path: Path):
    out = tmp_path / "out" / "check.json"
    return runner.invoke(app, ["check", str(files.study), "--design", str(files.design),
                               "--json", str(out)]), out


# --------------------------------------------------------------------------- coordinates


def test_geojson_integer_too_long_for_a_float_is_a_located_error(make_study, runner,
                                                                 tmp_path):
    """RFC 8259 section 6: JSON numbers may have any number of digits, so a position may
    hold an integer no float can carry; section 9: a number must be finite."""
    east, north, ground = invented_line(11, 3000.0)
    positions = [[float(x), float(y), float(z)] for x, y, z in zip(east, north, ground,
                                                                   strict=True)]
    positions[1][0] = 10 ** 400
    text = json.dumps({"type": "LineString", "coordinates": positions})
    files = make_study(study={"route": {"profile": "line.geojson", "crs": "EPSG:32709",
                                        "fitting": []}, "offtake": []}, profile=text)
    result, out = _check(runner, files, tmp_path)
    assert_refused(result, files.profile, "position 2", "numbers", written=out)


def test_gpx_elevation_outside_the_range_of_levels_names_the_point(make_study, runner,
                                                                   tmp_path):
    """Section 9: ground levels lie in -500 to 9,000 m, whatever file they come from."""
    east, north, ground = invented_line(11, 3000.0)
    lon, lat = to_lon_lat(east, north)
    ground = ground.copy()
    ground[3] = 1e300
    files = make_study(study={"route": {"profile": "track.gpx", "fitting": []},
                              "offtake": []}, profile=gpx_text(lon, lat, ground))
    result, out = _check(runner, files, tmp_path)
    assert_refused(result, files.profile, "point 4", "ground", "-500 to 9000 m",
                   written=out)


def test_coordinates_giving_an_absurd_length_are_refused(make_study, runner, tmp_path):
    """Section 9: chainage 0 to 2,000,000 m; a route measured from coordinates of 5e7 m
    (a slip of unit or of CRS; each coordinate within the plan range) is refused like a
    profile's chainage (coordinates of 1e300 m made a route of 2.9e301 m)."""
    x = np.linspace(0.0, 5e7, 5)
    text = "x_m,y_m,ground_m\n" + "".join(f"{float(a)!r},0,{150 - i}\n" for i, a in enumerate(x))
    files = make_study(study={"route": {"profile": "xy.csv", "fitting": []},
                              "offtake": []}, profile=text)
    result, out = _check(runner, files, tmp_path)
    assert_refused(result, files.profile, "5e+07 m long", "0 to 2e+06 m", written=out)


# --------------------------------------------------------------------------- report --result


@pytest.mark.parametrize(("text", "key"), [
    ('{"status": "optimal", "gap": [1]}', "gap"),
    ('{"status": "optimal", "lower_bound": {}}', "lower_bound"),
    ('{"status": "feasible", "lp_bound": "12"}', "lp_bound"),
    ('{"status": "optimal", "gap": NaN}', "gap"),
    ('{"status": 5}', "status"),
    ('{"status": "optimal", "uniform": "PE DN200"}', "uniform"),
    ('{"status": "optimal", "uniform": {"cost": true}}', "cost"),
    ('{"status": "optimal", "solver": 3}', "solver"),
])
def test_report_result_with_values_design_never_writes_is_refused(study_files, runner,
                                                                  tmp_path, text, key):
    """Section 5: design's result.json holds a status of the contract and numbers or
    null (never nan or inf); anything else is a file design did not write (section 8:
    exit 2 naming the file and the key, nothing written)."""
    result_file = tmp_path / "r.json"
    result_file.write_text(text, encoding="utf-8")
    out = tmp_path / "out"
    result = runner.invoke(app, ["report", str(study_files.study), "--design",
                                 str(study_files.design), "--result", str(result_file),
                                 "--out", str(out)])
    assert_refused(result, result_file, f"key {key}", written=out)


# --------------------------------------------------------------------------- sweep options


@pytest.mark.parametrize(("args", "option", "words"), [
    # section 9: levels -500 to 9,000 m (a sweep's levels are the study's levels)
    (["tradeoff", "--vary", "source-level", "--from", "-1e308", "--to", "200"], "--from",
     ["-500 to 9000 m"]),
    (["tradeoff", "--vary", "required-head", "--from", "170", "--to", "1e9"], "--to",
     ["-500 to 9000 m"]),
    # a count no machine holds (numpy's linspace allocated it: 7 TiB); the cap of 10,000
    # values is ours (common practice, no source)
    (["tradeoff", "--vary", "source-level", "--from", "200", "--to", "201", "--steps",
      str(10 ** 12)], "--steps", ["2 to 10,000"]),
    # section 9: roughness 0 to 100 mm, in the study and the catalogue alike
    (["sensitivity", "--roughness-from", "0", "--roughness-to", "1e300"], "--roughness-to",
     ["0 to 100 mm"]),
    (["sensitivity", "--roughness-from", "0.01", "--roughness-to", "0.1", "--steps",
      str(10 ** 9)], "--steps", ["2 to 10,000"]),
    (["sensitivity", "--roughness-from", "0.01", "--roughness-to", "0.1", "--samples",
      str(10 ** 12)], "--samples", ["1 to 1,000,000"]),
    # section 9: a life of 1 to 200 years; the aged roughness stays within 100 mm (it
    # became infinite and the capacity search never ended)
    (["sensitivity", "--roughness-from", "0.01", "--roughness-to", "0.1", "--samples", "3",
      "--years", "1e308"], "--years", ["0 to 200"]),
    (["sensitivity", "--roughness-from", "0.01", "--roughness-to", "0.1", "--samples", "3",
      "--ageing", "PE=10", "--years", "50"], "--ageing", ["500.1 mm", "0 to 100 mm"]),
])
def test_sweep_options_outside_the_input_ranges_are_refused(study_files, runner, tmp_path,
                                                            args, option, words):
    out = tmp_path / "sweep"
    command = [args[0], str(study_files.study), *args[1:], "--out", str(out)]
    if args[0] == "sensitivity":
        command += ["--design", str(study_files.design), "--no-reoptimise"]
    result = runner.invoke(app, command)
    assert_refused(result, option, *words, written=out)


# --------------------------------------------------------------------------- tank sites


def test_marked_tank_sites_on_a_route_from_coordinates_are_refused(make_study, runner,
                                                                   tmp_path):
    """Section 1, [break_pressure_tanks] sites = "marked": only profile rows marked in
    column tank_site may hold a new tank; a GPX track has no such column, so the marks
    would silently be none (the CSV reader gave up on the GPX file without a word)."""
    east, north, ground = invented_line(11, 3000.0)
    lon, lat = to_lon_lat(east, north)
    files = make_study(study={"route": {"profile": "track.gpx", "fitting": []},
                              "offtake": [],
                              "break_pressure_tanks": {"cost": 1000.0, "sites": "marked"}},
                       profile=gpx_text(lon, lat, ground))
    result, out = _check(runner, files, tmp_path)
    assert_refused(result, files.study, 'sites = "marked"', "track.gpx", written=out)


# --------------------------------------------------------------------------- plan positions


def test_nodes_file_plan_position_of_absurd_magnitude_is_refused(tmp_path, runner):
    """Section 9 (absurd magnitudes are refused): a plan position of 1e308 m is a slip;
    the bound of 1e8 m is ours (map grids keep the earth within it; common practice, no
    source). It used to be drawn in the report's plan without a word."""
    nodes = [dict(node, x_m=100.0 * i, y_m=0.0) for i, node in enumerate(NODES)]
    nodes[2]["x_m"] = 1e308
    files = write_network_scheme(tmp_path, nodes=nodes)
    design = write_scheme_design(files.folder)
    out = tmp_path / "out.json"
    result = runner.invoke(app, ["check", str(files.study), "--design", str(design),
                                 "--json", str(out)])
    assert_refused(result, files.folder / "nodes.csv", "line 4", "x_m",
                   "outside the accepted range", written=out)


# --------------------------------------------------------------------------- names


def test_bill_length_for_a_material_the_catalogue_lacks_is_refused(make_study, runner,
                                                                   tmp_path):
    """Section 1 conventions: unknown keys are errors, so a misspelt key is never silently
    ignored; like [costs.zone_factor] (each name must occur in the profile), the
    materials of [quantities.pipe_length_by_material_m] must be the catalogue's (a
    misspelt one silently took the default pipe length)."""
    files = make_study(study={"quantities": {"pipe_length_by_material_m": {
        "PE": 12.0, "P E": 6.0}}})
    result, out = _check(runner, files, tmp_path)
    assert_refused(result, files.study, "[quantities.pipe_length_by_material_m] P E",
                   "catalogue.csv", written=out)
    assert "] PE:" not in result.output  # the catalogue's own material is accepted


# --------------------------------------------------------------------------- outputs


@pytest.mark.parametrize("which", ["study", "design", "profile"])
def test_an_output_over_an_input_file_is_refused_and_the_input_kept(study_files, runner,
                                                                    which):
    """Section 8: on bad input nothing is written and nothing is lost; `--json` naming
    one of the run's own input files replaced it with the result (common practice, no
    source: a tool never writes over what it reads)."""
    target = getattr(study_files, which)
    before = target.read_bytes()
    result = runner.invoke(app, ["check", str(study_files.study), "--design",
                                 str(study_files.design), "--json", str(target)])
    assert_refused(result, target, "input file")
    assert target.read_bytes() == before
    assert not [p for p in study_files.folder.iterdir() if p.name.startswith(".")]


# --------------------------------------------------------------------------- CSV text


def test_an_unclosed_quote_merging_catalogue_rows_is_refused(make_study, runner, tmp_path):
    """RFC 4180 section 2 (rules 6 and 7): a quoted field may hold line breaks, so a
    stray opening quote swallows the rows after it into one cell; the catalogue then
    silently lost a row and gained a material with a line break in its name. No input
    file of the contract has a line break inside a cell (section 3: one row per option)."""
    text = ("material,dn_mm,internal_diameter_mm,pressure_class,allowable_head_m,"
            "roughness_mm,hazen_williams_c,cost_per_m,note\n"
            '"PE,200,176.2,PN10,102,0.02,150,45,x\n'
            'PE,250,220.4,PN10,102,0.02,150,65,x"\n'
            "PE,160,141,PN10,102,0.02,150,30,x\n")
    files = make_study(catalogue=text)
    result, out = _check(runner, files, tmp_path)
    assert_refused(result, files.catalogue, "lines 2-3", "quote", written=out)


def test_a_nul_byte_in_a_profile_is_refused(make_study, runner, tmp_path):
    """Section 9: every input file is UTF-8 text; UTF-8 text never holds a NUL byte
    (RFC 3629: it is the encoding of U+0000 only, a control character no text editor
    writes), which made a label or a material name with an invisible character."""
    files = make_study()
    lines = files.profile.read_bytes().split(b"\n")
    assert lines[2].startswith(b"800")
    lines[2] = lines[2] + b"\x00"  # into the last cell, a zone: it read as zone "\x00"
    files.profile.write_bytes(b"\n".join(lines))
    result, out = _check(runner, files, tmp_path)
    assert_refused(result, files.profile, "line 3", "NUL", written=out)


def test_required_head_at_a_node_where_no_path_ends_is_refused(tmp_path, runner):
    """Section 10, nodes CSV: required_head_m applies "at a node where a path ends"
    (rule 7 of the conversion); given at an inner node it was silently ignored."""
    nodes = [dict(node) for node in NODES]
    nodes[1]["required_head_m"] = 195.0  # "n800", inside the trunk
    files = write_network_scheme(tmp_path, nodes=nodes)
    design = write_scheme_design(files.folder)
    out = tmp_path / "out.json"
    result = runner.invoke(app, ["check", str(files.study), "--design", str(design),
                                 "--json", str(out)])
    assert_refused(result, files.folder / "nodes.csv", "line 3", "required_head_m", "n800",
                   written=out)


# --------------------------------------------------------------------------- tank places


@pytest.mark.parametrize("chainage_m", [1e-300, 1e-9, 3000.0 - 1e-9])
def test_a_tank_within_a_micrometre_of_a_route_end_is_at_that_end(make_study, runner,
                                                                  tmp_path, chainage_m):
    """Section 1, [[break_pressure_tank]] chainage_m: strictly inside the route, not at
    chainage 0 or the last point. Points closer than 1e-6 m are one node of the route
    (Route.with_nodes), so such a tank stood at the source and the check raised an
    IndexError (found by fuzzing the tank file of check --tanks)."""
    files = make_study(study={"break_pressure_tank": [{"chainage_m": chainage_m}]})
    result, out = _check(runner, files, tmp_path)
    assert_refused(result, files.study, "[[break_pressure_tank]]", "strictly inside",
                   written=out)


# --------------------------------------------------------------------------- tiny sections


@pytest.mark.parametrize("step_m", [1e-300, 1e-9, 5e-4])
def test_profile_points_less_than_a_millimetre_apart_are_refused(make_study, runner,
                                                                 tmp_path, step_m):
    """Section 2: chainage_m strictly increases; section 4: piece ends are matched within
    1 mm, so points closer than that are one point. A section of 1e-9 m passed the
    loader and broke design (argmin of an empty sequence in the check)."""
    profile = [(0.0, 199.0, "intake", ""), (step_m, 199.0, "", ""), (800.0, 190.0, "", ""),
               (1600.0, 160.0, "", "rock"), (2400.0, 128.0, "low point", ""),
               (3000.0, 145.0, "tank", "")]
    files = make_study(profile=profile)
    result, out = _check(runner, files, tmp_path)
    assert_refused(result, files.profile, "line 3", "1 mm", written=out)


def test_a_link_shorter_than_a_millimetre_is_refused(tmp_path, runner):
    """Section 10, links CSV: length_m > 0; a link of 1e-300 m vanished in the sum of
    chainages (129.7 + 1e-300 = 129.7) and the model's own check of the route raised a
    ValueError. 1 mm is the tolerance of section 4 (common practice, no source)."""
    links = [dict(link) for link in LINKS]
    links[1]["length_m"] = 1e-300
    files = write_network_scheme(tmp_path, links=links)
    design = write_scheme_design(files.folder)
    out = tmp_path / "out.json"
    result = runner.invoke(app, ["check", str(files.study), "--design", str(design),
                                 "--json", str(out)])
    assert_refused(result, files.folder / "links.csv", "line 3", "length_m", "1 mm",
                   written=out)
