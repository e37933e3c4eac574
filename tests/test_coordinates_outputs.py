"""`design --out` for a route with coordinates: design.geojson (RFC 7946, read back by a
GIS library), profile_points.csv, the plan view in report.html; bad coordinate files
exit 2 naming the file (contract sections 6 and 11). Routes are invented
(``geo_builders``)."""

from __future__ import annotations

import csv
import itertools
import json

import numpy as np
import pyogrio.raw
import pyproj
import pytest
import shapely
from geo_builders import UTM, geojson_text, gpx_text, invented_line, to_lon_lat
from geo_builders import write_plane_raster as write_raster
from typer.testing import CliRunner

from optimiser.cli import app

DESIGN_STUDY = {"rules": {"max_changes": 2, "min_piece_length_m": 200.0},
                "solver": {"mip_gap": 1e-3}}


def run(*args):
    return CliRunner().invoke(app, [str(a) for a in args])


@pytest.fixture()
def gps_design(make_study, tmp_path):
    east, north, ground = invented_line(61)
    lon, lat = to_lon_lat(east, north)
    files = make_study(study={"route": {"profile": "track.gpx"}, **DESIGN_STUDY},
                       profile=gpx_text(lon, lat, ground))
    out = tmp_path / "out"
    result = run("design", files.study, "--out", out)
    assert result.exit_code == 0, result.output
    (out / "study-path.txt").write_text(str(files.study))
    return out


def _positions(geometry: dict) -> list:
    return [geometry["coordinates"]] if geometry["type"] == "Point" \
        else geometry["coordinates"]


def test_design_geojson_is_rfc7946(gps_design):
    """IETF RFC 7946 (2016), The GeoJSON Format: a FeatureCollection of Features; positions
    [longitude, latitude] in WGS 84 (section 3.1.1, 4); no "crs" member (section 4);
    LineStrings of two or more positions (3.1.4). Exact."""
    data = json.loads((gps_design / "design.geojson").read_text())
    assert data["type"] == "FeatureCollection" and "crs" not in data
    assert isinstance(data["features"], list) and data["features"]
    kinds = set()
    for feature in data["features"]:
        assert feature["type"] == "Feature" and isinstance(feature["properties"], dict)
        geometry = feature["geometry"]
        assert geometry["type"] in ("LineString", "Point")
        if geometry["type"] == "LineString":
            assert len(geometry["coordinates"]) >= 2
        for position in _positions(geometry):
            assert len(position) == 2
            lon, lat = position
            assert -180.0 <= lon <= 180.0 and -90.0 <= lat <= 90.0
            assert -130.2 < lon < -129.9 and -40.6 < lat < -40.4  # lon first: not swapped
        kinds.add(feature["properties"]["kind"])
    assert {"pipe piece", "source", "outlet", "offtake", "fitting"} <= kinds
    assert data["cautions"] and "licensed engineer" in " ".join(data["cautions"])


def test_a_gis_library_reads_back_pieces_lengths_and_costs(gps_design):
    """pyogrio (GDAL's GeoJSON driver) as an independent reader; shapely decodes its
    geometries. Pieces, lengths and costs equal design.csv; the geodesic length of each
    piece's line (pyproj.Geod, Karney 2013) equals its chainage length to 1 mm per km
    plus the 8-decimal rounding of positions (about 1 mm per vertex)."""
    meta, _, geometry, fields = pyogrio.raw.read(gps_design / "design.geojson")
    assert meta["crs"] in ("EPSG:4326", "OGC:CRS84")
    columns = {name: values for name, values in zip(meta["fields"], fields, strict=True)}
    shapes = shapely.from_wkb(geometry)
    pieces = [i for i, kind in enumerate(columns["kind"]) if kind == "pipe piece"]
    with open(gps_design / "design.csv", newline="") as handle:
        rows = list(csv.DictReader(handle))
    assert len(pieces) == len(rows)
    geod = pyproj.Geod(ellps="WGS84")
    for i, row in zip(pieces, rows, strict=True):
        # design.csv gives lengths to 0.001 m and costs to 0.01
        assert columns["length_m"][i] == pytest.approx(float(row["length_m"]), abs=6e-4)
        assert columns["cost"][i] == pytest.approx(float(row["cost"]), abs=6e-3)
        assert columns["dn_mm"][i] == pytest.approx(float(row["dn_mm"]))
        assert columns["pressure_class"][i] == row["pressure_class"]
        chainage = float(row["to_m"]) - float(row["from_m"])
        line = shapes[i]
        assert line.geom_type == "LineString"
        geodesic = geod.geometry_length(line)
        assert geodesic == pytest.approx(chainage, abs=1e-3 * chainage / 1000
                                         + 1e-3 * len(line.coords))


def test_profile_points_give_every_node_with_its_origin(gps_design):
    """The chainage of every profile point is written back (common practice, no source:
    a survey is checked point by point)."""
    with open(gps_design / "profile_points.csv", newline="") as handle:
        rows = list(csv.DictReader(handle))
    assert len(rows) == 61 + 2  # the survey points, the offtake and the fitting
    assert rows[0]["from_file"] == "point 1" and rows[-1]["from_file"] == "point 61"
    assert sum(r["from_file"].startswith("inserted") for r in rows) == 2
    chainage = np.array([float(r["chainage_m"]) for r in rows])
    assert np.all(np.diff(chainage) > 0)


def test_report_has_the_plan_view_and_survey_notes(gps_design):
    text = (gps_design / "report.html").read_text()
    assert "<h2>Plan</h2>" in text and 'id="plot-plan"' in text
    assert "geodesic distance on the WGS 84 ellipsoid" in text
    assert "ground not smoothed" in text
    assert "https://" not in text.split("<h2>Plan</h2>")[1].split("</div>")[0]  # no tiles


def test_chainage_profile_writes_no_geometry_files(study_files, tmp_path):
    out = tmp_path / "out"
    result = run("design", study_files.study, "--out", out)
    assert result.exit_code == 0, result.output
    assert not (out / "design.geojson").exists() and not (out / "profile_points.csv").exists()
    assert "<h2>Plan</h2>" not in (out / "report.html").read_text()


def test_local_grid_gets_a_plan_but_no_geojson(make_study, tmp_path):
    text = ("x_m,y_m,ground_m\n0,0,199\n600,800,190\n1600,800,160\n1600,2200,128\n"
            "2200,2200,145\n")
    files = make_study(study={"route": {"profile": "p.csv"}, **DESIGN_STUDY}, profile=text)
    out = tmp_path / "out"
    result = run("design", files.study, "--out", out)
    assert result.exit_code == 0, result.output
    assert not (out / "design.geojson").exists() and (out / "profile_points.csv").exists()
    assert "<h2>Plan</h2>" in (out / "report.html").read_text()


def _bad(make_study, tmp_path, name, text, **route):
    files = make_study(study={"route": {"profile": name, **route}}, profile=text)
    out = tmp_path / "bad-out"
    result = run("design", files.study, "--out", out)
    return files, result, out


def _squash(text: str) -> str:
    return "".join(text.split())


@pytest.mark.parametrize("case", ["empty track", "no track", "not gpx", "no elevations",
                                  "one point", "lon out of range"])
def test_bad_coordinate_files_exit_2_naming_the_file(make_study, tmp_path, case):
    east, north, ground = invented_line(11)
    lon, lat = to_lon_lat(east, north)
    name, text, expect = {
        "empty track": ("t.gpx", gpx_text([], [], None), "no track or route"),
        "no track": ("t.gpx", '<?xml version="1.0"?><gpx version="1.1" '
                     'xmlns="http://www.topografix.com/GPX/1/1"></gpx>', "no track or route"),
        "not gpx": ("t.gpx", "this is not xml", "not a readable GPX file"),
        "no elevations": ("t.gpx", gpx_text(lon, lat, None), "have no elevation"),
        "one point": ("t.gpx", gpx_text(lon[:1], lat[:1], ground[:1]), "two distinct"),
        "lon out of range": ("l.geojson", geojson_text(east, north, ground),
                             "is not a longitude, latitude"),
    }[case]
    files, result, out = _bad(make_study, tmp_path, name, text)
    assert result.exit_code == 2, result.output
    assert str(files.folder / name) in _squash(result.output) and expect in result.output
    assert "Traceback" not in result.output and not out.exists()


def test_a_crs_that_does_not_exist_exits_2(make_study, tmp_path):
    east, north, ground = invented_line(11)
    files, result, _ = _bad(make_study, tmp_path, "l.geojson",
                            geojson_text(east, north, ground), crs="EPSG:999999")
    assert result.exit_code == 2
    assert str(files.study) in _squash(result.output)
    assert "no such coordinate reference system" in result.output


def test_a_route_outside_the_raster_exits_2(make_study, tmp_path):
    east, north, _ = invented_line(11)
    files = make_study(study={"route": {"profile": "l.geojson", "crs": UTM,
                                        "ground_raster": "dem.tif"}},
                       profile=geojson_text(east, north, None))
    # a raster 1 km square covering only the start of the 3 km line
    write_raster(files.folder / "dem.tif", UTM, 411_500.0, 5_512_500.0, 10.0, (100, 100),
                 lambda x, y: 0.0 * x + 150.0)
    result = run("design", files.study)
    assert result.exit_code == 2
    assert str(files.folder / "dem.tif") in _squash(result.output)
    assert "lie outside the raster" in result.output


def test_a_missing_raster_exits_2(make_study):
    east, north, _ = invented_line(11)
    files = make_study(study={"route": {"profile": "l.geojson", "crs": UTM,
                                        "ground_raster": "none.tif"}},
                       profile=geojson_text(east, north, None))
    result = run("design", files.study)
    assert result.exit_code == 2 and "ground raster not found" in result.output


def test_plan_view_colours_by_size_and_ticks_every_km_like_the_long_section(gps_design):
    """Plan and long section linked by chainage (the issue's requirement): km marks every
    1,000 m, labels at the long section's axis ticks; one trace per option, a darker
    colour for a larger DN (common practice, no source)."""
    from plotly.colors import hex_to_rgb, unlabel_rgb

    from optimiser.analysis import check_design
    from optimiser.analysis.appurtenances import schedule
    from optimiser.io import load_design, load_study
    from optimiser.reports.charts import chainage_ticks
    from optimiser.reports.plan_view import plan_figure

    study = load_study((gps_design / "study-path.txt").read_text())
    result = check_design(study, load_design(gps_design / "design.csv", study))
    figure = plan_figure(result, schedule(result))
    names = [t.name for t in figure.data]
    options = {f"DN{r.dn_mm:g} {r.material} {r.pressure_class}"
               for r in result.pieces.itertuples()}
    assert options <= set(names)
    marks = next(t for t in figure.data if t.name == "chainage every 1 km")
    assert len(marks.x) == int(study.route.total_chainage_m // 1000) + 1
    labels = next(t for t in figure.data if t.mode == "text")
    assert list(labels.text) == chainage_ticks(study.route.total_chainage_m)[1]

    def darkness(colour: str) -> float:
        rgb = unlabel_rgb(colour) if colour.startswith("rgb") else hex_to_rgb(colour)
        return -sum(rgb)

    by_dn = {float(t.name.split()[0][2:]): darkness(t.line.color) for t in figure.data
             if t.name in options}
    sizes = sorted(by_dn)
    assert all(by_dn[a] < by_dn[b] for a, b in itertools.pairwise(sizes))
