"""Profiles: exact planes, geodesic chainage, voids, leaving the DEM, distortion."""

import numpy as np
import pytest
from pyproj import Geod
from shapely.geometry import LineString

from planner.errors import InputError, NoDataWarning, TerrainError, TerrainWarning
from planner.geo.profile import sample_profile
from tests.conftest import E0, N0, lonlat, plane, write_raster


def utm_line(*pts):
    lon, lat = lonlat(*np.array(pts, dtype=float).T)
    return LineString(np.column_stack([lon, lat]))


def test_plane_profile_is_exact(plane_dem):
    route = utm_line((E0 + 100, N0 + 500), (E0 + 1300, N0 + 900), (E0 + 2500, N0 + 1500))
    p = sample_profile(route, plane_dem, spacing_m=7.0, cover_m=1.0)
    # the plane: z = 1000 + 0.01 (E - E0) - 0.02 (N - N0), N measured from the DEM's south edge
    expected = 1000 + 0.01 * (p.x - E0) - 0.02 * (p.y - N0)
    np.testing.assert_allclose(p.ground_m, expected, atol=2e-3)
    np.testing.assert_allclose(p.pipe_m, p.ground_m - 1.0)
    # vertices are kept, spacing is respected, chainage is planar in the DEM's metric
    assert np.all(np.diff(p.chainage_m) <= 7.0 + 1e-6)
    np.testing.assert_allclose(p.x[p.vertex_index], [E0 + 100, E0 + 1300, E0 + 2500], atol=1e-3)
    length = np.hypot(1200, 400) + np.hypot(1200, 600)
    assert p.length_m == pytest.approx(length, abs=1e-3)
    slope = np.sum(np.hypot(np.diff(p.chainage_m), np.diff(p.pipe_m)))
    assert p.slope_length_m[-1] == pytest.approx(slope)
    assert p.slope_length_m[-1] > p.length_m


def test_default_spacing_is_the_cell_size(plane_dem):
    p = sample_profile(utm_line((E0 + 100, N0 + 500), (E0 + 1100, N0 + 500)), plane_dem)
    assert p.spacing_m == 10.0 and p.n == 101


def test_geodesic_chainage_published_value(tmp_path):
    # Vincenty (1975) test line as worked in the Geoscience Australia GDA94 Technical
    # Manual (coordinates and distance from memory; pyproj's Geod agrees below):
    # Flinders Peak (-37 57 03.72030, 144 25 29.52440) to Buninyong
    # (-37 39 10.15610, 143 55 35.38390) on GRS80/WGS84: s = 54 972.271 m.
    lat1 = -(37 + 57 / 60 + 3.72030 / 3600)
    lon1 = 144 + 25 / 60 + 29.52440 / 3600
    lat2 = -(37 + 39 / 60 + 10.15610 / 3600)
    lon2 = 143 + 55 / 60 + 35.38390 / 3600
    z = np.full((60, 80), 500.0)
    dem = write_raster(tmp_path / "geo.tif", z, crs="EPSG:4326", left=143.8, top=-37.5, cell=0.01)
    p = sample_profile(LineString([(lon1, lat1), (lon2, lat2)]), dem, spacing_m=100.0)
    assert p.length_m == pytest.approx(54972.271, abs=0.001)
    assert p.length_m == pytest.approx(Geod(ellps="WGS84").line_length([lon1, lon2], [lat1, lat2]),
                                       abs=1e-6)
    assert p.crs == "EPSG:32755"                    # x, y in the UTM zone of the line
    np.testing.assert_allclose(p.ground_m, 500.0)


def test_route_leaving_the_dem_names_the_chainage(plane_dem):
    route = utm_line((E0 + 100, N0 + 500), (E0 + 4000, N0 + 500))   # DEM is 3 km wide
    with pytest.raises(TerrainError, match=r"leaves the DEM plane.tif between chainage 2,9\d\d and 3,900 m"):
        sample_profile(route, plane_dem)


def test_short_void_is_bridged_and_reported(tmp_path):
    z = plane()
    z[100, 100:104] = -9999.0                       # a 40 m void across the line
    dem = write_raster(tmp_path / "void.tif", z)
    y = N0 + 2000 - 100.5 * 10
    with pytest.warns(NoDataWarning, match="bridged"):
        p = sample_profile(utm_line((E0 + 500, y), (E0 + 1500, y)), dem)
    assert p.filled.sum() >= 4
    expected = 1000 + 0.01 * (p.x - E0) - 0.02 * (p.y - N0)
    np.testing.assert_allclose(p.ground_m, expected, atol=2e-3)    # a plane is bridged exactly
    assert any("void" in n for n in p.notes)


def test_long_void_is_an_error(tmp_path):
    z = plane()
    z[90:110, 100:130] = -9999.0                    # 300 m wide
    dem = write_raster(tmp_path / "void.tif", z)
    y = N0 + 2000 - 100.5 * 10
    with pytest.raises(TerrainError, match=r"void from chainage 4\d\d to 8\d\d m"):
        sample_profile(utm_line((E0 + 500, y), (E0 + 1500, y)), dem)


def test_distorted_projection_is_reported(tmp_path):
    # 400 km west of UTM zone 37's central meridian the scale factor is about 1.0016
    left = 100_000.0
    dem = write_raster(tmp_path / "far.tif", plane(), left=left)
    with pytest.warns(TerrainWarning, match="distorts lengths by up to 0.1[5-9] %"):
        sample_profile(utm_line((left + 100, N0 + 500), (left + 1000, N0 + 600)), dem)


def test_bad_arguments(plane_dem):
    route = utm_line((E0 + 100, N0 + 500), (E0 + 200, N0 + 500))
    with pytest.raises(InputError, match="cover"):
        sample_profile(route, plane_dem, cover_m=-1)
    with pytest.raises(InputError, match="spacing"):
        sample_profile(route, plane_dem, spacing_m=-5)


def test_public_api_entry_point(plane_dem):
    import planner

    route = utm_line((E0 + 100, N0 + 500), (E0 + 300, N0 + 500))
    p = planner.sample_profile(route, plane_dem, spacing_m=None, cover_m=0.8)
    assert p.n == 21 and p.cover_m == 0.8


def test_utm_zone_by_formula_agrees_with_pyprojs_database():
    """The zone rule (6 degrees from 180 W; EPSG 326zz/327zz, NGA DMA TM 8358.2) against
    pyproj's CRS database query, on 60 random points (each query takes about 50 ms)."""
    from pyproj.aoi import AreaOfInterest
    from pyproj.database import query_utm_crs_info

    from planner.geo.geodesy import utm_crs_for

    rng = np.random.default_rng(7)
    for lon, lat in zip(rng.uniform(-180, 180, 60), rng.uniform(-80, 84, 60)):
        info = query_utm_crs_info(datum_name="WGS 84",
                                  area_of_interest=AreaOfInterest(lon, lat, lon, lat))
        assert utm_crs_for(lon, lat).to_epsg() == int(info[0].code), (lon, lat)


def test_geodesic_densifying_stays_on_pyprojs_geodesic():
    """Points interpolated between geodesic stations every 100 m lie within 0.1 mm of the
    exact geodesic points (pyproj's Geod.fwd, Karney 2013), and chainage is exact."""
    from pyproj import Geod

    from planner.geo.geodesy import densify_geodesic

    g = Geod(ellps="WGS84")
    lon = np.array([36.0, 36.3, 36.31, 37.0])
    lat = np.array([-4.5, -4.2, -4.2, -4.9])
    x, y, chain, vidx = densify_geodesic(lon, lat, 5.0)
    az, _, seg = (np.asarray(a) for a in g.inv(lon[:-1], lat[:-1], lon[1:], lat[1:]))
    k = np.searchsorted(np.concatenate([[0.0], np.cumsum(seg)]), chain[:-1], side="right") - 1
    along = chain[:-1] - np.concatenate([[0.0], np.cumsum(seg)])[k]
    ex, ey, _ = g.fwd(lon[k], lat[k], az[k], along)
    _, _, off = g.inv(x[:-1], y[:-1], ex, ey)
    assert np.max(off) < 1e-4
    assert chain[-1] == pytest.approx(seg.sum(), abs=1e-6)
    np.testing.assert_allclose(x[vidx], lon, atol=1e-12)
    np.testing.assert_allclose(y[vidx], lat, atol=1e-12)
