"""Routes from coordinates (contract section 11): chainage, reprojection, ground from an
elevation model, survey clean-up. The routes are invented (``geo_builders``); check
values come from the reference libraries and sources named beside each check."""

from __future__ import annotations

import numpy as np
import pyproj
import pytest
import shapely
from geo_builders import (
    UTM,
    geojson_text,
    gpx_text,
    invented_line,
    to_lon_lat,
    write_plane_raster,
)
from geographiclib.geodesic import Geodesic

from optimiser.io import InputError, load_study
from optimiser.io.geometry.plan import transform


def _study(make_study, profile_name: str, profile_text: str, **route):
    files = make_study(study={"route": {"profile": profile_name, **route}},
                       profile=profile_text)
    return files, load_study(files.study)


def _track(n_points=41, length_m=3000.0, seed=7):
    east, north, ground = invented_line(n_points, length_m, seed)
    lon, lat = to_lon_lat(east, north)
    return lon, lat, ground


def test_gpx_chainage_is_the_geodesic_length_on_wgs84(make_study):
    """Karney, C.F.F. (2013), Algorithms for geodesics, J. Geodesy 87: 43-55; pyproj.Geod
    and geographiclib (Karney's own implementation) as reference libraries: 1 mm per km."""
    lon, lat, ground = _track(201, 12_000.0)
    _, study = _study(make_study, "track.gpx", gpx_text(lon, lat, ground),
                      fitting=[], min_pressure_m=-10.0)
    geod = pyproj.Geod(ellps="WGS84")
    _, _, steps = geod.inv(lon[:-1], lat[:-1], lon[1:], lat[1:])
    expected = np.concatenate([[0.0], np.cumsum(steps)])
    reference = np.concatenate([[0.0], np.cumsum([
        Geodesic.WGS84.Inverse(lat[i], lon[i], lat[i + 1], lon[i + 1])["s12"]
        for i in range(len(lon) - 1)])])
    route = study.route
    chainage = route.coordinates.chainage_m  # the surveyed points (offtake nodes come later)
    assert set(chainage) <= set(route.chainage_m)
    assert len(chainage) == len(lon)
    tolerance = 1e-3 * expected / 1000.0 + 1e-9
    assert np.all(np.abs(chainage - expected) <= tolerance)
    assert np.all(np.abs(chainage - reference) <= tolerance)
    assert route.total_chainage_m == pytest.approx(geod.line_length(lon, lat), abs=0.012)


def test_gpx_route_points_are_read_like_a_track(make_study):
    """GPX 1.1 (TopoGrafix 2004): <rte>/<rtept> carries points like <trk>/<trkpt>."""
    lon, lat, ground = _track()
    _, track = _study(make_study, "a.gpx", gpx_text(lon, lat, ground))
    _, route = _study(make_study, "b.gpx", gpx_text(lon, lat, ground, route=True))
    assert np.array_equal(track.route.chainage_m, route.route.chainage_m)


def test_projected_geojson_chainage_is_the_planar_length(make_study):
    """Planar length in a projected CRS, shapely (GEOS) as reference library: exact up
    to the order of floating-point summation (rel 1e-12)."""
    east, north, ground = invented_line(61)
    _, study = _study(make_study, "line.geojson", geojson_text(east, north, ground), crs=UTM)
    coordinates = study.route.coordinates
    assert coordinates.crs == UTM
    line = shapely.LineString(np.column_stack([east, north]))
    assert study.route.total_chainage_m == pytest.approx(line.length, rel=1e-12)
    for k in (1, 17, 42, 60):
        partial = shapely.LineString(np.column_stack([east[:k + 1], north[:k + 1]])).length
        assert coordinates.chainage_m[k] == pytest.approx(partial, rel=1e-12)
    assert np.array_equal(coordinates.x_m, east) and np.array_equal(coordinates.y_m, north)


def test_reprojection_round_trip_moves_no_vertex_more_than_a_millimetre(make_study):
    """WGS 84 -> UTM -> WGS 84 through pyproj (PROJ); the displacement measured as the
    geodesic distance (pyproj.Geod, Karney 2013). Tolerance 1 mm from the issue."""
    lon, lat, ground = _track(101, 8000.0)
    _, study = _study(make_study, "track.gpx", gpx_text(lon, lat, ground))
    coordinates = study.route.coordinates
    assert coordinates.crs == "EPSG:32709"  # the UTM zone of the route, from EPSG's database
    x, y = coordinates.xy_at(coordinates.chainage_m)
    back_lon, back_lat = transform(x, y, coordinates.crs, "EPSG:4326")
    _, _, moved = pyproj.Geod(ellps="WGS84").inv(lon, lat, back_lon, back_lat)
    assert np.max(np.abs(moved)) <= 1e-3


def test_xy_csv_chainage_labels_zones_and_inserted_nodes(make_study):
    """Contract sections 2 and 11: chainage is the cumulative horizontal distance; a zone
    applies to the section starting at its row; offtakes get interpolated positions."""
    text = ("x_m,y_m,ground_m,label,zone\n0,0,199,intake,\n600,800,190,,\n"
            "1600,800,160,,rock\n1600,2200,128,low point,\n2200,2200,145,tank,\n")
    _, study = _study(make_study, "profile.csv", text)
    route = study.route
    assert list(route.chainage_m) == [0.0, 1000.0, 1500.0, 2000.0, 2200.0, 3400.0, 4000.0]
    assert route.zones[2:5] == ["", "rock", "rock"]  # the rock section split by the offtake
    assert route.labels[0] == "intake" and route.labels[-1] == "tank"
    x, y = route.coordinates.xy_at(np.array([1500.0, 2200.0]))
    assert list(x) == [1100.0, 1600.0] and list(y) == [800.0, 1000.0]
    assert route.coordinates.crs is None  # a local grid without [route] crs


@pytest.mark.parametrize("tile", [512, 16])
def test_ground_from_a_plane_raster_bilinear_is_exact(make_study, monkeypatch, tile):
    """Bilinear interpolation reproduces a plane exactly (common practice, no source);
    sampled every sample_spacing_m and at every vertex (contract section 11); the same
    read in one window or in many small tiles."""
    monkeypatch.setattr("optimiser.io.geometry.raster.TILE", tile)
    east, north, _ = invented_line(21)
    def plane(x, y):
        return 150.0 + 0.01 * (x - 412_000.0) - 0.004 * (y - 5_512_000.0)
    files = make_study(study={"route": {"profile": "line.geojson", "crs": UTM,
                                        "ground_raster": "dem.tif", "sample_spacing_m": 25.0,
                                        "fitting": []}, "offtake": []},
                       profile=geojson_text(east, north, None))
    write_plane_raster(files.folder / "dem.tif", UTM, 411_000.0, 5_516_000.0, 10.0,
                       (600, 600), plane)
    route = load_study(files.study).route
    x, y = route.coordinates.xy_at(route.chainage_m)
    assert np.max(np.abs(route.ground_m - plane(x, y))) < 1e-6
    vertices = route.coordinates.chainage_m[[r != "sample" for r in
                                             route.coordinates.point_refs]]
    assert len(vertices) == 21 and set(vertices) <= set(route.chainage_m)
    samples = set(np.round(route.chainage_m, 6)) - set(np.round(vertices, 6))
    assert all(abs(c / 25.0 - round(c / 25.0)) < 1e-9 for c in samples)
    assert len(samples) == int(route.total_chainage_m // 25.0) - \
        sum(abs(v / 25.0 - round(v / 25.0)) < 4e-5 for v in vertices[1:])


@pytest.mark.parametrize("method", ["bilinear", "nearest"])
def test_ground_from_a_curved_surface_within_interpolation_error(make_study, method):
    """Error bounds of interpolation on a grid of spacing h (common practice, no source;
    from memory): bilinear |e| <= h^2/8 (max|f_xx| + max|f_yy|); nearest pixel
    |e| <= max|grad f| * h / sqrt(2)."""
    east, north, _ = invented_line(21)
    h = 20.0
    def surface(x, y):
        return 150.0 + 40.0 * np.sin((x - 411_000.0) / 700.0) * np.cos((y - 5_511_000.0)
                                                                       / 900.0)
    files = make_study(study={"route": {"profile": "line.geojson", "crs": UTM,
                                        "ground_raster": "dem.tif",
                                        "raster_interpolation": method}},
                       profile=geojson_text(east, north, None))
    write_plane_raster(files.folder / "dem.tif", UTM, 411_000.0, 5_516_000.0, h,
                       (300, 300), surface)
    route = load_study(files.study).route
    x, y = route.coordinates.xy_at(route.chainage_m)
    error = np.max(np.abs(route.ground_m - surface(x, y)))
    if method == "bilinear":
        bound = h**2 / 8 * (40.0 / 700.0**2 + 40.0 / 900.0**2)
    else:
        bound = np.hypot(40.0 / 700.0, 40.0 / 900.0) * h / np.sqrt(2)
    assert error <= bound
    assert error > 0.0  # the surface is curved: the check can fail


def test_raster_in_geographic_coordinates_is_sampled_after_reprojection(make_study):
    """A DEM in WGS 84 longitude/latitude, the route in UTM: the route is transformed to
    the raster's CRS by pyproj; a surface linear in lon, lat is reproduced to rounding."""
    east, north, _ = invented_line(21)
    lon, lat = to_lon_lat(east, north)
    def surface(x, y):
        return 100.0 + 500.0 * (x + 130.1) + 300.0 * (y + 40.6)
    files = make_study(study={"route": {"profile": "line.geojson", "crs": UTM,
                                        "ground_raster": "dem.tif"}},
                       profile=geojson_text(east, north, None))
    write_plane_raster(files.folder / "dem.tif", "EPSG:4326", -130.1, -40.4, 0.0005,
                       (400, 400), surface)
    route = load_study(files.study).route
    x, y = route.coordinates.xy_at(route.chainage_m)
    lon, lat = transform(x, y, UTM, "EPSG:4326")
    assert np.max(np.abs(route.ground_m - surface(lon, lat))) < 1e-6


def test_duplicates_dropped_and_counted_vertices_kept(make_study):
    """Clean-up (common practice, no source): repeated points are dropped with a count,
    every other vertex stays, so the high point of the survey is kept exactly."""
    lon, lat, ground = _track(41)
    ground = ground.copy()
    ground[20] += 7.5  # a sharp invented crest on one vertex
    index = np.repeat(np.arange(41), [1] * 10 + [3] + [1] * 29 + [2])
    _, study = _study(make_study, "track.gpx",
                      gpx_text(lon[index], lat[index], ground[index]))
    coordinates = study.route.coordinates
    assert len(coordinates.chainage_m) == 41
    assert any("3 point(s) dropped" in n and "point 12, point 13" in n
               for n in coordinates.notes)
    assert study.route.ground_m.max() == pytest.approx(ground.max(), abs=1e-9)
    assert any("not smoothed" in n for n in coordinates.notes)
    assert coordinates.point_refs[-1] == "point 44"  # the route ends where the file ends


def test_smoothing_is_a_stated_centred_moving_average(make_study):
    """Centred moving average over the window (common practice, no source), by hand."""
    text = "x_m,y_m,ground_m\n" + "".join(f"{10.0 * i},0,{100.0 + (i % 2) * 2.0}\n"
                                          for i in range(301))
    _, study = _study(make_study, "p.csv", text, smoothing_window_m=20.0, fitting=[])
    route = study.route
    # interior points: the window holds points i-1, i, i+1
    i = 100
    node = int(np.flatnonzero(route.chainage_m == 10.0 * i)[0])
    raw = [100.0 + (j % 2) * 2.0 for j in (i - 1, i, i + 1)]
    assert route.ground_m[node] == pytest.approx(np.mean(raw), abs=1e-12)
    assert any("smoothing_window_m = 20" in n and "lowered by up to" in n
               for n in route.coordinates.notes)


def test_warnings_for_far_apart_points_and_steep_grades(make_study):
    """Warnings with their stated limits (common practice, no source)."""
    text = "x_m,y_m,ground_m\n0,0,199\n50,0,198\n400,0,190\n410,0,180\n3000,0,145\n"
    _, study = _study(make_study, "p.csv", text)
    notes = " ".join(study.route.coordinates.notes)
    assert "2 gap(s) longer than 100 m" in notes and "350.0 m (line 3)" not in notes
    assert "50.0 m (line 3)" in notes
    assert "1 step(s) steeper than 50 %" in notes and "400.0 m (line 4)" in notes


def test_coordinate_keys_with_a_chainage_profile_are_an_error(make_study):
    files = make_study(study={"route": {"crs": UTM}})
    with pytest.raises(InputError) as error:
        load_study(files.study)
    assert str(files.study) in str(error.value) and "[route] crs" in str(error.value)


def test_a_track_that_doubles_back_keeps_chainage_increasing(make_study):
    """Points a few mm apart that walk out and back are dropped until every kept point is
    at least min_point_spacing_m from the one before it (common practice, no source)."""
    text = ("x_m,y_m,ground_m,label\n0,0,199,start\n0.006,0,199,\n0.0002,0,199,here\n"
            "1000,0,170,\n3000,0,145,\n")
    _, study = _study(make_study, "p.csv", text)
    coordinates = study.route.coordinates
    assert list(coordinates.chainage_m) == [0.0, 1000.0, 3000.0]
    assert study.route.labels[0] == "start / here"
    assert any("2 point(s) dropped" in n for n in coordinates.notes)
