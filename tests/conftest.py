"""Shared fixtures: tiny synthetic DEMs written in tmp_path, and the demo terrain.

Synthetic rasters are planes or ramps so that the expected profile is exact.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

import numpy as np
import pytest
import rasterio
from rasterio.transform import from_origin

ROOT = Path(__file__).resolve().parent.parent
UTM = "EPSG:32737"
E0, N0 = 500_000.0, 9_600_000.0      # near the zone's central meridian: no distortion


def write_raster(path, z, *, crs=UTM, left=E0, top=N0 + 2000.0, cell=10.0, nodata=-9999.0,
                 tiled=True, block=256):
    """Write ``z`` (rows from the north) as a GeoTIFF; return the path."""
    h, w = z.shape
    profile = dict(driver="GTiff", width=w, height=h, count=1, dtype="float32",
                   transform=from_origin(left, top, cell, cell), nodata=nodata,
                   compress="deflate")
    if crs is not None:
        profile["crs"] = crs
    if tiled:
        profile.update(tiled=True, blockxsize=block, blockysize=block)
    with rasterio.open(path, "w", **profile) as ds:
        ds.write(z.astype(np.float32), 1)
    return Path(path)


def plane(h=200, w=300, *, z0=1000.0, gx=0.01, gy=-0.02, cell=10.0):
    """z = z0 + gx * easting_offset + gy * northing_offset, at pixel centres."""
    cols = (np.arange(w) + 0.5) * cell
    rows = (np.arange(h) + 0.5) * cell          # distance south of the top edge
    u, d = np.meshgrid(cols, rows)
    north = h * cell - d
    return z0 + gx * u + gy * north


def lonlat(e, n, crs=UTM):
    from pyproj import Transformer
    return Transformer.from_crs(crs, "EPSG:4326", always_xy=True).transform(e, n)


@pytest.fixture
def plane_dem(tmp_path):
    return write_raster(tmp_path / "plane.tif", plane())


@pytest.fixture
def write_geojson(tmp_path):
    def _write(coords_utm=None, *, name="route.geojson", geometry=None):
        if geometry is None:
            lon, lat = lonlat(*np.array(coords_utm, dtype=float).T)
            geometry = {"type": "LineString", "coordinates": np.column_stack([lon, lat]).tolist()}
        path = tmp_path / name
        path.write_text(json.dumps({"type": "Feature", "properties": {}, "geometry": geometry}))
        return path
    return _write


@pytest.fixture(scope="session")
def demo_folder(tmp_path_factory):
    """The demo terrain generated into a temporary folder, with the demo scenario."""
    import shutil
    sys.path.insert(0, str(ROOT / "demo_terrain"))
    try:
        import generate
    finally:
        sys.path.pop(0)
    folder = tmp_path_factory.mktemp("demo")
    generate.write_demo(folder)
    for name in ("scenario.toml", "scenario_given_pipe.toml", "scenario_network.toml"):
        shutil.copy(ROOT / "demo_terrain" / name, folder / name)
    return folder


@pytest.fixture(scope="session")
def demo_run(demo_folder, tmp_path_factory):
    """``demo_run(name)`` -> (output folder, printed output): ``gravplan plan`` of a demo
    scenario, run once per test session and shared.  Tests only read these files."""
    from click.testing import CliRunner

    from planner.cli import main

    done = {}

    def run(name):
        if name not in done:
            out = tmp_path_factory.mktemp("run_" + name.replace(".toml", ""))
            res = CliRunner().invoke(main, ["plan", str(demo_folder / name), "--out", str(out),
                                            "--overwrite"])
            assert res.exit_code == 0, res.output
            done[name] = (out, res.output)
        return done[name]

    return run
