"""Write the invented demo landscape: a DEM (GeoTIFF) and the demo route (GeoJSON).

Everything here is invented for the demo: the place names, the terrain and the
demands.  The landscape, from west to east: a spring high on a hillside (Varo
spring), a spur to cross, the valley of a stream (the Kelu), a bench where the
village of Tamsel stands, and fields below (Orun fields).  One small nodata void
sits on the route, as real DEMs have.

Deterministic: the same files every run (fixed random seed).  Run it as
``python demo_terrain/generate.py [FOLDER]``.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

import numpy as np

#: Projected CRS of the DEM: WGS 84 / UTM zone 37S.
CRS = "EPSG:32737"
#: South-west corner of the DEM [m] and its size.
ORIGIN_E, ORIGIN_N = 310_000.0, 9_620_000.0
CELL_M = 10.0
WIDTH, HEIGHT = 720, 480
NODATA = -9999.0
#: The demo route's vertices, in metres from the DEM's south-west corner.
ROUTE_UV = [(780, 2600), (1350, 2560), (1900, 2380), (2300, 2300), (2800, 2250),
            (3350, 2150), (3650, 2120), (4050, 2180), (4600, 2260), (5150, 2200),
            (5800, 2050), (6500, 1900)]
#: Branches off the main for the branched demo (network.geojson): name -> vertices.
BRANCHES = {
    "Tamsel school branch": [(4600, 2260), (4640, 2500), (4700, 2760)],
    "Orun irrigation branch": [(5800, 2050), (5950, 1800), (6150, 1550)],
}
#: The void: centre [m from the corner] and radius [m].
VOID = ((5470, 2130), 30.0)


def elevation(u: np.ndarray, v: np.ndarray, seed: int = 7) -> np.ndarray:
    """Ground elevation of the invented landscape [m] at (u, v) metres from the corner."""
    from scipy.ndimage import gaussian_filter

    uk, vk = u / 1000.0, v / 1000.0
    z = 1705.0 - 46.0 * uk + 6.0 * np.sin(vk * 1.3)                    # regional fall to the east
    z += 42.0 * np.exp(-(((uk - 2.25) / 0.38) ** 2)) * (0.8 + 0.2 * np.cos(vk))   # the spur
    valley_u = 3.62 + 0.08 * np.sin(vk * 2.0)
    z -= 62.0 * np.exp(-(((uk - valley_u) / 0.33) ** 2))              # the Kelu valley
    bench = 1492.0 + 3.0 * (vk - 2.2)
    w = np.exp(-(((uk - 4.75) / 0.45) ** 4))                          # the village bench
    z = (1 - w) * z + w * np.maximum(bench, z - 8.0)
    rng = np.random.default_rng(seed)
    noise = gaussian_filter(rng.standard_normal(u.shape), sigma=4.0)
    return z + 9.0 * noise


def write_demo(folder: str | Path) -> dict[str, Path]:
    """Write dem.tif and route.geojson into ``folder``; return their paths."""
    import rasterio
    from pyproj import Transformer
    from rasterio.transform import from_origin

    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    cols = (np.arange(WIDTH) + 0.5) * CELL_M
    rows = (HEIGHT - np.arange(HEIGHT) - 0.5) * CELL_M
    u, v = np.meshgrid(cols, rows)
    z = elevation(u, v).astype(np.float32)
    (cu, cv), radius = VOID
    z[(u - cu) ** 2 + (v - cv) ** 2 <= radius**2] = NODATA
    transform = from_origin(ORIGIN_E, ORIGIN_N + HEIGHT * CELL_M, CELL_M, CELL_M)
    dem = folder / "dem.tif"
    tmp = dem.with_suffix(".tif.part")
    with rasterio.open(tmp, "w", driver="GTiff", width=WIDTH, height=HEIGHT, count=1,
                       dtype="float32", crs=CRS, transform=transform, nodata=NODATA,
                       tiled=True, blockxsize=256, blockysize=256, compress="deflate",
                       predictor=3) as ds:
        ds.write(z, 1)
        ds.update_tags(1, UNITS="metre")
        ds.update_tags(DESCRIPTION="Invented demo terrain for gravplan (not a real place)")
    tmp.replace(dem)

    to_lonlat = Transformer.from_crs(CRS, "EPSG:4326", always_xy=True)
    lon, lat = to_lonlat.transform([ORIGIN_E + a for a, _ in ROUTE_UV],
                                   [ORIGIN_N + b for _, b in ROUTE_UV])
    route = {"type": "FeatureCollection", "features": [{
        "type": "Feature",
        "properties": {"name": "Varo spring to Orun fields (invented demo route)"},
        "geometry": {"type": "LineString",
                     "coordinates": [[round(x, 7), round(y, 7)] for x, y in zip(lon, lat)]},
    }]}
    path = folder / "route.geojson"
    path.write_text(json.dumps(route, indent=1) + "\n", encoding="utf-8")

    def feature(name, uv):
        lo, la = to_lonlat.transform([ORIGIN_E + a for a, _ in uv], [ORIGIN_N + b for _, b in uv])
        return {"type": "Feature", "properties": {"name": name},
                "geometry": {"type": "LineString",
                             "coordinates": [[round(x, 7), round(y, 7)] for x, y in zip(lo, la)]}}

    network = {"type": "FeatureCollection",
               "features": [feature("main", ROUTE_UV)]
               + [feature(name, uv) for name, uv in BRANCHES.items()]}
    npath = folder / "network.geojson"
    npath.write_text(json.dumps(network, indent=1) + "\n", encoding="utf-8")
    return {"dem": dem, "route": path, "network": npath}


if __name__ == "__main__":
    out = write_demo(sys.argv[1] if len(sys.argv) > 1 else Path(__file__).parent)
    for name, p in out.items():
        print(f"wrote {name}: {p} ({p.stat().st_size / 1e6:.2f} MB)")
