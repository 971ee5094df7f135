"""Route readers: GeoJSON variants, KML, GPX tracks and routes, CSV surveys."""

import json

import numpy as np
import pytest

from planner.errors import InputError, InputFileError
from planner.geo.route import Route, Survey, read_route

LINE = [[36.80, -3.50], [36.81, -3.51], [36.82, -3.515]]


def write(tmp_path, name, text):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


@pytest.mark.parametrize("wrap", ["geometry", "feature", "collection", "multi"])
def test_geojson_forms(tmp_path, wrap):
    geom = {"type": "LineString", "coordinates": LINE}
    if wrap == "multi":
        geom = {"type": "MultiLineString", "coordinates": [LINE[:2], LINE[1:]]}
    doc = {"geometry": geom, "feature": {"type": "Feature", "properties": {}, "geometry": geom},
           "collection": {"type": "FeatureCollection", "features": [
               {"type": "Feature", "properties": {}, "geometry": geom}]},
           "multi": {"type": "Feature", "properties": {}, "geometry": geom}}[wrap]
    r = read_route(write(tmp_path, "r.geojson", json.dumps(doc)))
    assert isinstance(r, Route)
    np.testing.assert_allclose(np.asarray(r.line.coords), LINE)


def test_lines_that_do_not_join_are_refused(tmp_path):
    geom = {"type": "MultiLineString", "coordinates": [LINE[:2], [[37.0, -3.6], [37.1, -3.7]]]}
    with pytest.raises(InputFileError, match="2 lines that do not join"):
        read_route(write(tmp_path, "r.geojson", json.dumps({"type": "Feature", "properties": {},
                                                            "geometry": geom})))


def test_kml(tmp_path):
    coords = " ".join(f"{x},{y},0" for x, y in LINE)
    kml = ('<?xml version="1.0" encoding="UTF-8"?><kml xmlns="http://www.opengis.net/kml/2.2">'
           f"<Document><Placemark><LineString><coordinates>{coords}</coordinates></LineString>"
           "</Placemark></Document></kml>")
    r = read_route(write(tmp_path, "r.kml", kml))
    np.testing.assert_allclose(np.asarray(r.line.coords), LINE)


@pytest.mark.parametrize("kind", ["trk", "rte"])
def test_gpx_track_and_route_with_elevations(tmp_path, kind):
    pts = "".join(f'<{kind}pt lat="{y}" lon="{x}"><ele>{1500 - 10 * i}</ele></{kind}pt>'
                  for i, (x, y) in enumerate(LINE))
    body = f"<trk><trkseg>{pts}</trkseg></trk>" if kind == "trk" else f"<rte>{pts}</rte>"
    gpx = ('<?xml version="1.0"?><gpx version="1.1" creator="t" '
           f'xmlns="http://www.topografix.com/GPX/1/1">{body}</gpx>')
    r = read_route(write(tmp_path, "walk.gpx", gpx))
    np.testing.assert_allclose(np.asarray(r.line.coords), LINE)
    np.testing.assert_allclose(r.gps_elevation_m, [1500, 1490, 1480])


def test_csv_survey(tmp_path):
    p = write(tmp_path, "s.csv", "# surveyed with an Abney level\nChainage,Elevation\n0,1500\n"
                                 "120.5,1490.2\n250,1470\n")
    s = read_route(p)
    assert isinstance(s, Survey)
    np.testing.assert_allclose(s.chainage_m, [0, 120.5, 250])
    assert s.x is None


def test_csv_survey_with_coordinates_needs_a_crs(tmp_path):
    p = write(tmp_path, "s.csv", "chainage_m,elevation_m,x,y\n0,1500,500000,9600000\n"
                                 "100,1490,500100,9600000\n")
    with pytest.raises(InputError, match="say their CRS"):
        read_route(p)
    s = read_route(p, crs="EPSG:32737")
    assert s.crs.to_epsg() == 32737


@pytest.mark.parametrize("text, match", [
    ("chainage,height\n0,1\n1,2\n", "needs columns elevation_m"),
    ("chainage,elevation\n0,1\n0,2\n", "chainage must increase; row 3"),
    ("chainage,elevation\n0,1\n5,x\n", "row 3, column 'elevation' is empty or not a number"),
    ("chainage,elevation\n0,1\n", "at least two rows"),
])
def test_bad_surveys(tmp_path, text, match):
    with pytest.raises(InputFileError, match=match):
        read_route(write(tmp_path, "s.csv", text))


@pytest.mark.parametrize("coords, match", [
    ([[36.8, -3.5]], "fewer than two distinct points"),
    ([[36.8, -3.5], [36.8, -3.5]], "fewer than two distinct points"),
    ([[360.8, -3.5], [36.9, -3.6]], "vertex 1 .* not a longitude/latitude"),
])
def test_bad_lines(tmp_path, coords, match):
    doc = {"type": "Feature", "properties": {}, "geometry": {"type": "LineString",
                                                             "coordinates": coords}}
    with pytest.raises((InputError, InputFileError), match=match):
        read_route(write(tmp_path, "r.geojson", json.dumps(doc)))


def test_repeated_vertices_are_dropped(tmp_path):
    doc = {"type": "LineString", "coordinates": [LINE[0], LINE[0], LINE[1], LINE[2]]}
    r = read_route(write(tmp_path, "r.geojson", json.dumps(doc)))
    assert len(r.line.coords) == 3


@pytest.mark.parametrize("name, text, match", [
    ("r.geojson", "{not json", "cannot read"),
    ("r.shp", "", "unknown route format"),
    ("missing.geojson", None, "not found"),
    ("p.geojson", json.dumps({"type": "Point", "coordinates": [36.8, -3.5]}), "no LineString"),
])
def test_bad_files(tmp_path, name, text, match):
    p = tmp_path / name if text is None else write(tmp_path, name, text)
    with pytest.raises(InputFileError, match=match):
        read_route(p)


def test_parts_listed_out_of_order_keep_the_drawn_direction(tmp_path):
    # the route starts where the first part starts; later parts drawn backwards are turned
    geom = {"type": "MultiLineString", "coordinates": [[LINE[2], LINE[1]], LINE[:2]]}
    r = read_route(write(tmp_path, "r.geojson", json.dumps(geom)))
    np.testing.assert_allclose(np.asarray(r.line.coords), LINE[::-1])
    geom = {"type": "MultiLineString", "coordinates": [LINE[:2], [LINE[2], LINE[1]]]}
    r = read_route(write(tmp_path, "r2.geojson", json.dumps(geom)))
    np.testing.assert_allclose(np.asarray(r.line.coords), LINE)


def test_self_crossing_route_stays_one_line(tmp_path):
    coords = [[36.80, -3.50], [36.82, -3.50], [36.82, -3.52], [36.81, -3.49]]
    r = read_route(write(tmp_path, "r.geojson", json.dumps({"type": "LineString",
                                                             "coordinates": coords})))
    np.testing.assert_allclose(np.asarray(r.line.coords), coords)


def test_a_route_of_very_many_vertices_is_thinned_or_refused_at_once():
    """Above MAX_ROUTE_VERTICES: thinned within THIN_TOLERANCE_M (Douglas-Peucker via
    shapely) with a warning, GPS heights following their vertices; refused when thinning
    cannot bring it under the limit (benchmarks/bench_large_route.py measures the bound)."""
    import time
    import warnings

    from shapely.geometry import LineString

    from planner.errors import InputError
    from planner.geo.route import (MAX_ROUTE_VERTICES, THIN_PIECE, THIN_TOLERANCE_M,
                                    route_from_line)

    n = MAX_ROUTE_VERTICES + 50_000
    lon = np.linspace(36.0, 36.05, n)                  # about 5.5 km east along 1 deg S
    lat = np.full(n, -1.0)
    lat[n // 2] += 1e-4                                # one real bend of 11 m
    heights = np.arange(n, dtype=float)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        r = route_from_line(LineString(np.column_stack([lon, lat])), "dense.geojson",
                            gps_elevation_m=heights)
    xy = np.asarray(r.line.coords)
    m = n // 2               # the ends, the spike and its neighbours, and the pieces' ends
    assert len(xy) <= 5 + n // THIN_PIECE + 1 and lat[m] in xy[:, 1]
    index = r.gps_elevation_m.astype(int)                  # heights follow their vertices
    assert {0, m - 1, m, m + 1, n - 1} <= set(index)
    assert np.array_equal(xy, np.column_stack([lon, lat])[index])
    assert any(f"thinned to {len(xy)}" in str(w.message) and "150,000" in str(w.message)
               for w in caught)

    wiggle = lat + np.where(np.arange(n) % 2, 1, -1) * 3 * THIN_TOLERANCE_M / 110_574.0
    t0 = time.perf_counter()
    with pytest.raises(InputError, match=r"150,000 vertices.*at most 100,000"):
        route_from_line(LineString(np.column_stack([lon, wiggle])), "wiggly.geojson")
    assert time.perf_counter() - t0 < 10.0                 # at once, not after sizing
