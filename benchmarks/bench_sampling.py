"""Benchmark: DEM sampling along a 100 km route and the energy line on its points.

A 10,000 x 10,000 float32 DEM (10 m cells, tiled 256 x 256, deflate) is generated once
into benchmarks/_data/.  A 100 km route is sampled at 1 m (100,001 points):

- gravplan's block-wise bilinear sampler (``Dem.sample``) and the whole
  ``sample_profile`` (densify, reproject, sample), against rasterio's
  ``DatasetReader.sample`` (nearest neighbour) on the same points, in the same run;
- bytes read (``/proc/self/io`` rchar) against the file size;
- peak memory (ru_maxrss) of a child process that does only the sampling;
- ``line_energy`` on the 100,001 points.

Each measurement runs in its own child process, three times; medians are reported and
the ratios are what to compare across machines.  Usage::

    python benchmarks/bench_sampling.py            # prints a table
"""

from __future__ import annotations

import json
import statistics
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
DATA = HERE / "_data"
DEM = DATA / "dem_10000.tif"
N = 10_000
CELL = 10.0
E0, N0 = 400_000.0, 9_500_000.0          # UTM 37S; the DEM spans 100 x 100 km
CRS = "EPSG:32737"
#: The same terrain on a geographic grid (EPSG:4326): 10,000 x 10,000 cells of 0.0001
#: degree (about 11 m), with its corner at the projected DEM's south-west corner.
DEM_GEO = DATA / "dem_geo_10000.tif"
GEO_CELL = 1e-4
VERTICES_UV = [(3_000, 5_000), (30_000, 22_000), (45_000, 20_000), (70_000, 52_000),
               (80_000, 75_000), (96_000, 90_000)]


def make_dem() -> None:
    import rasterio
    from rasterio.transform import from_origin
    from rasterio.windows import Window

    if DEM.exists():
        return
    DATA.mkdir(exist_ok=True)
    rng = np.random.default_rng(0)
    tmp = DEM.with_suffix(".part")
    with rasterio.open(tmp, "w", driver="GTiff", width=N, height=N, count=1, dtype="float32",
                       crs=CRS, transform=from_origin(E0, N0 + N * CELL, CELL, CELL),
                       nodata=-9999.0, tiled=True, blockxsize=256, blockysize=256,
                       compress="deflate", predictor=3) as ds:
        step = 1024
        for r in range(0, N, step):
            h = min(step, N - r)
            v = (N - r - np.arange(h)[:, None] - 0.5) * CELL
            u = (np.arange(N)[None, :] + 0.5) * CELL
            z = (1500 + 300 * np.sin(u / 9000) * np.cos(v / 13000) + 40 * np.sin(u / 700 + v / 900)
                 + rng.normal(0, 0.5, (h, N)))
            ds.write(z.astype(np.float32), 1, window=Window(0, r, N, h))
    tmp.rename(DEM)


def make_geo_dem() -> None:
    """The geographic twin of the benchmark DEM (same formula, lon/lat cells)."""
    import rasterio
    from pyproj import Transformer
    from rasterio.transform import from_origin
    from rasterio.windows import Window

    if DEM_GEO.exists():
        return
    DATA.mkdir(exist_ok=True)
    lon0, lat0 = Transformer.from_crs(CRS, "EPSG:4326", always_xy=True).transform(E0, N0)
    to_m = Transformer.from_crs("EPSG:4326", CRS, always_xy=True)
    rng = np.random.default_rng(0)
    tmp = DEM_GEO.with_suffix(".part")
    with rasterio.open(tmp, "w", driver="GTiff", width=N, height=N, count=1, dtype="float32",
                       crs="EPSG:4326",
                       transform=from_origin(lon0, lat0 + N * GEO_CELL, GEO_CELL, GEO_CELL),
                       nodata=-9999.0, tiled=True, blockxsize=256, blockysize=256,
                       compress="deflate", predictor=3) as ds:
        step = 1024
        for r in range(0, N, step):
            h = min(step, N - r)
            lat = lat0 + (N - r - np.arange(h)[:, None] - 0.5) * GEO_CELL
            lon = lon0 + (np.arange(N)[None, :] + 0.5) * GEO_CELL
            x, y = to_m.transform(*np.broadcast_arrays(lon, lat))
            u, v = x - E0, y - N0
            z = (1500 + 300 * np.sin(u / 9000) * np.cos(v / 13000) + 40 * np.sin(u / 700 + v / 900)
                 + rng.normal(0, 0.5, (h, N)))
            ds.write(z.astype(np.float32), 1, window=Window(0, r, N, h))
    tmp.rename(DEM_GEO)


def route():
    from pyproj import Transformer
    from shapely.geometry import LineString

    u, v = np.array(VERTICES_UV, dtype=float).T
    lon, lat = Transformer.from_crs(CRS, "EPSG:4326", always_xy=True).transform(E0 + u, N0 + v)
    line = LineString(np.column_stack([lon, lat]))
    # scale the 1 m spacing so that the route gives exactly 100,001 points
    length = float(np.sum(np.hypot(np.diff(u), np.diff(v))))
    return line, length


def rchar() -> int:
    for line in Path("/proc/self/io").read_text().splitlines():
        if line.startswith("rchar"):
            return int(line.split()[1])
    return 0


def child(kind: str) -> dict:
    sys.path.insert(0, str(HERE.parent))
    from planner.geo.profile import _densify_planar, sample_profile
    from planner.geo.terrain import open_dem

    line, length = route()
    u, v = np.array(VERTICES_UV, dtype=float).T
    spacing = length / 100_000 * (1 + 1e-9)
    xs, ys, _, _ = _densify_planar(E0 + u, N0 + v, spacing)
    out = {"points": int(xs.size)}
    import rasterio
    # imports and opening happen before the clock starts: a live session keeps the DEM
    # open; the block cache is still cold (a fresh process per measurement)
    r0 = rchar()
    t0 = time.perf_counter()
    if kind == "ours":
        dem = open_dem(DEM)
        r0, t0 = rchar(), time.perf_counter()
        z, outside = dem.sample(xs, ys)
        assert not outside.any() and np.isfinite(z).all()
    elif kind == "profile":          # the whole job, opening the DEM included
        p = sample_profile(line, DEM, spacing_m=spacing)
        out["points"] = p.n
    elif kind == "rasterio":
        ds = rasterio.open(DEM)
        r0, t0 = rchar(), time.perf_counter()
        z = np.fromiter((v[0] for v in ds.sample(zip(xs, ys))), dtype=float, count=xs.size)
    elif kind == "profile_geo":      # the whole job on the geographic twin (geodesic)
        p = sample_profile(line, DEM_GEO, spacing_m=spacing)
        out["points"] = p.n
    elif kind == "rasterio_geo":     # rasterio on the same lon/lat points
        p = sample_profile(line, DEM_GEO, spacing_m=spacing)
        ds = rasterio.open(DEM_GEO)
        r0, t0 = rchar(), time.perf_counter()
        z = np.fromiter((v[0] for v in ds.sample(zip(p.lon, p.lat))), dtype=float, count=p.n)
        out["points"] = p.n
    elif kind == "energy":
        from planner.hydraulics.line import FreeSurface, PipeHydraulics, line_energy
        ch = np.linspace(0, 100_000, 100_001)
        zz = 1500 - 0.005 * ch + 5 * np.sin(ch / 300)
        s = np.concatenate([[0], np.cumsum(np.hypot(np.diff(ch), np.diff(zz)))])
        q = np.full(100_000, 0.02)
        pipe = PipeHydraulics(inside_diameter=0.2, roughness=7e-6)
        t0 = time.perf_counter()
        line_energy(s, zz, q, pipe, kinematic_viscosity=1.0e-6,
                    surfaces=[FreeSurface(0, 1501.0, 1500.5)])
    out["seconds"] = time.perf_counter() - t0
    out["bytes_read"] = rchar() - r0
    # VmHWM: this process's own peak (ru_maxrss would include the parent's at fork)
    status = Path("/proc/self/status").read_text().split("\n")
    out["peak_rss_mb"] = next(int(x.split()[1]) for x in status if x.startswith("VmHWM")) / 1024
    return out


def run(kind: str, repeat: int = 3) -> dict:
    runs = []
    for _ in range(repeat):
        res = subprocess.run([sys.executable, __file__, "--child", kind], check=True,
                             capture_output=True, text=True)
        runs.append(json.loads(res.stdout.strip().splitlines()[-1]))
    med = {k: statistics.median(r[k] for r in runs) for k in runs[0]}
    med["runs"] = [round(r["seconds"], 4) for r in runs]
    return med


def main() -> None:
    t = time.perf_counter()
    make_dem()
    make_geo_dem()
    size = DEM.stat().st_size
    print(f"DEM {DEM.name}: {N} x {N} float32, {size / 2**20:.1f} MiB on disk "
          f"(ready in {time.perf_counter() - t:.1f} s)")
    res = {k: run(k) for k in ("ours", "profile", "rasterio", "profile_geo", "rasterio_geo",
                               "energy")}
    n = res["ours"]["points"]
    print(f"{'measurement':<48}{'median s':>10}{'points/s':>12}{'read MiB':>10}{'peak MB':>9}")
    for k, label in (("ours", "Dem.sample (block-wise bilinear)"),
                     ("profile", "sample_profile (open+densify+reproject+sample)"),
                     ("rasterio", "rasterio DatasetReader.sample (nearest)"),
                     ("profile_geo", "sample_profile on the geographic DEM"),
                     ("rasterio_geo", "rasterio sample, geographic DEM"),
                     ("energy", "line_energy on 100,001 points")):
        r = res[k]
        rate = f"{r['points'] / r['seconds']:,.0f}" if k != "energy" else "-"
        print(f"{label:<48}{r['seconds']:>10.4f}{rate:>12}{r['bytes_read'] / 2**20:>10.1f}"
              f"{r['peak_rss_mb']:>9.0f}   runs {r['runs']}")
    print(f"points: {n:,}")
    print(f"speed-up of Dem.sample over rasterio sample: {res['rasterio']['seconds'] / res['ours']['seconds']:.1f}x")
    print(f"speed-up of sample_profile over rasterio sample: "
          f"{res['rasterio']['seconds'] / res['profile']['seconds']:.1f}x")
    print(f"speed-up of sample_profile over rasterio sample, geographic DEM: "
          f"{res['rasterio_geo']['seconds'] / res['profile_geo']['seconds']:.1f}x")
    print(f"bytes read by Dem.sample / file size: {res['ours']['bytes_read'] / size:.3f}")


if __name__ == "__main__":
    if len(sys.argv) == 3 and sys.argv[1] == "--child":
        print(json.dumps(child(sys.argv[2])))
    else:
        main()
