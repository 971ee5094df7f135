"""DEM sampling: bilinear against scipy, tiles, voids, edges, striped files."""

import numpy as np
import pytest
from scipy.interpolate import RegularGridInterpolator

from planner.errors import TerrainError, TerrainWarning
from planner.geo.terrain import open_dem
from tests.conftest import E0, N0, write_raster

CELL = 10.0


def random_dem(h=300, w=400, seed=3):
    rng = np.random.default_rng(seed)
    return (1000 + 50 * rng.standard_normal((h, w))).astype(np.float32)


def reference(z, xs, ys, left=E0, top=N0 + 2000.0):
    """scipy's RegularGridInterpolator (linear) on the pixel centres of the same raster."""
    h, w = z.shape
    xc = left + (np.arange(w) + 0.5) * CELL
    yc = top - (np.arange(h) + 0.5) * CELL
    rgi = RegularGridInterpolator((yc[::-1], xc), z[::-1].astype(np.float64), method="linear")
    return rgi(np.column_stack([ys, xs]))


def interior_points(z, n=5000, seed=1, left=E0, top=N0 + 2000.0):
    h, w = z.shape
    rng = np.random.default_rng(seed)
    xs = left + rng.uniform(0.5 * CELL, (w - 0.5) * CELL, n)
    ys = top - rng.uniform(0.5 * CELL, (h - 0.5) * CELL, n)
    return xs, ys


def test_bilinear_matches_scipy_regular_grid_interpolator(tmp_path):
    z = random_dem()
    path = write_raster(tmp_path / "r.tif", z, block=64)      # many blocks
    xs, ys = interior_points(z)
    with open_dem(path) as dem:
        got, outside = dem.sample(xs, ys)
    assert not outside.any()
    np.testing.assert_allclose(got, reference(z, xs, ys), rtol=0, atol=1e-7)


def test_tiles_give_the_same_values_as_one_file(tmp_path):
    z = random_dem()
    one = write_raster(tmp_path / "one.tif", z, block=64)
    west = write_raster(tmp_path / "w.tif", z[:, :200], block=64)
    east = write_raster(tmp_path / "e.tif", z[:, 200:], left=E0 + 200 * CELL, block=64)
    xs, ys = interior_points(z)
    # make sure many points fall in the half-pixel seam between the tiles
    xs[:200] = E0 + 200 * CELL + np.linspace(-4.9, 4.9, 200)
    with open_dem(one) as dem:
        a, _ = dem.sample(xs, ys)
    with open_dem([west, east]) as dem:
        b, outside = dem.sample(xs, ys)
    assert not outside.any()
    np.testing.assert_allclose(b, a, atol=1e-6)


def test_nodata_neighbour_gives_nan_and_off_raster_is_outside(tmp_path):
    z = random_dem(50, 50)
    z[20, 20] = -9999.0
    path = write_raster(tmp_path / "v.tif", z)
    cx, cy = E0 + 20.5 * CELL, N0 + 2000.0 - 20.5 * CELL
    with open_dem(path) as dem:
        got, outside = dem.sample(np.array([cx + 3, cx + 30, E0 - 100.0]),
                                  np.array([cy - 3, cy, cy]))
    assert np.isnan(got[0]) and np.isfinite(got[1])
    assert outside.tolist() == [False, False, True]
    assert np.isnan(got[2])            # never 0 m off the raster


def test_striped_file_warns_and_samples_the_same(tmp_path):
    z = random_dem(200, 200)
    tiled = write_raster(tmp_path / "t.tif", z, block=64)
    striped = write_raster(tmp_path / "s.tif", z, tiled=False)
    xs, ys = interior_points(z, 500)
    with open_dem(tiled) as dem:
        a, _ = dem.sample(xs, ys)
    with pytest.warns(TerrainWarning, match="striped"):
        dem = open_dem(striped)
    with dem:
        b, _ = dem.sample(xs, ys)
    np.testing.assert_allclose(a, b)


def test_dem_without_crs_is_refused(tmp_path):
    path = write_raster(tmp_path / "nocrs.tif", random_dem(20, 20), crs=None)
    with pytest.raises(TerrainError, match="no coordinate reference system"):
        open_dem(path)


def test_integer_dem_with_nodata(tmp_path):
    # SRTM-style int16 tiles with nodata -32768
    import rasterio
    from rasterio.transform import from_origin

    z = (np.arange(100 * 100).reshape(100, 100) % 997).astype(np.int16)
    z[40, 40] = -32768
    path = tmp_path / "i16.tif"
    with rasterio.open(path, "w", driver="GTiff", width=100, height=100, count=1, dtype="int16",
                       crs="EPSG:32737", transform=from_origin(E0, N0 + 1000, CELL, CELL),
                       nodata=-32768, tiled=True, blockxsize=64, blockysize=64) as ds:
        ds.write(z, 1)
    xs, ys = interior_points(z.astype(np.float32), 2000, top=N0 + 1000)
    with open_dem(path) as dem:
        got, _ = dem.sample(xs, ys)
    ref = reference(np.where(z == -32768, np.nan, z).astype(np.float64), xs, ys, top=N0 + 1000)
    np.testing.assert_allclose(got, ref, atol=1e-7)       # NaN where a neighbour is void
    assert np.isnan(got).any() and np.isfinite(got).sum() > 1900
