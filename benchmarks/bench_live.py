"""Benchmark: the live editor's recompute of a 20 km line at 10 m spacing.

A 24 x 6 km DEM (10 m cells, UTM 37S) is
generated once into benchmarks/_data/ (it falls 2 % eastwards, hills included, so a
gravity line down it needs break-pressure tanks), with a 20 km meandering route and a
design scenario (PE100, an outlet at the end drawing 4 L/s).  ``gravplan serve`` is
started on it in a child process; the route is POSTed to ``/api/plan`` 20 times with
one vertex moved by up to 30 m each time, as when a user drags a vertex.  Reported:
median and 90th percentile of the round trip (the target is under 300 ms), the
server's own compute time, and the ratio of the first (cold) request to the median
(warm: DEM blocks cached), and the time of the whole `gravplan plan` design of the
same line for comparison.  Usage::

    python benchmarks/bench_live.py
"""

from __future__ import annotations

import json
import socket
import statistics
import subprocess
import sys
import time
import urllib.request
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
DATA = HERE / "_data" / "live"
W, H, CELL = 2400, 600, 10.0
E0, N0, CRS = 300_000.0, 9_600_000.0, "EPSG:32737"


def make_case() -> Path:
    """Write the DEM, the route and the scenario (once); return the scenario path."""
    import rasterio
    from pyproj import Transformer
    from rasterio.transform import from_origin

    DATA.mkdir(parents=True, exist_ok=True)
    dem = DATA / "dem.tif"
    if not (DATA / "v2").exists():
        u = (np.arange(W) + 0.5) * CELL
        v = (H - np.arange(H) - 0.5)[:, None] * CELL
        z = (1600 - 0.02 * u + 6 * np.sin(u / 900) * np.cos(v / 700)
             + 1 * np.sin(u / 170 + v / 230)).astype("float32")
        with rasterio.open(dem, "w", driver="GTiff", width=W, height=H, count=1,
                           dtype="float32", crs=CRS, transform=from_origin(E0, N0 + H * CELL, CELL, CELL),
                           tiled=True, blockxsize=256, blockysize=256, compress="deflate") as ds:
            ds.write(z, 1)
        (DATA / "v2").touch()
    tr = Transformer.from_crs(CRS, "EPSG:4326", always_xy=True)
    t = np.linspace(0, 1, 60)
    x = E0 + 800 + 17_000 * t
    y = N0 + 3000 + 1200 * np.sin(2 * np.pi * 2 * t)
    lon, lat = tr.transform(x, y)
    route = {"type": "FeatureCollection", "features": [{"type": "Feature", "properties": {"name": "main"},
             "geometry": {"type": "LineString", "coordinates": np.column_stack([lon, lat]).round(7).tolist()}}]}
    (DATA / "route.geojson").write_text(json.dumps(route))
    (DATA / "scenario.toml").write_text(f"""
[project]
name = "live benchmark (synthetic terrain)"
[terrain]
dem = "dem.tif"
[route]
file = "route.geojson"
spacing_m = 10
[source]
name = "benchmark spring"
top_water_above_ground_m = 1.0
low_water_above_ground_m = 0.5
[design]
catalogues = ["pe100"]
max_static_pressure_m = 100
[[outlets]]
name = "end"
location = [{lon[-1]:.7f}, {lat[-1]:.7f}]
flow_lps = 4
min_pressure_m = 10
""")
    return DATA / "scenario.toml"


def _port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def main() -> None:
    scenario = make_case()
    port = _port()
    exe = Path(sys.executable).with_name("gravplan")
    proc = subprocess.Popen([str(exe), "serve", str(scenario), "--port", str(port)],
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        url = f"http://127.0.0.1:{port}"
        for _ in range(100):
            try:
                urllib.request.urlopen(url + "/api/state", timeout=1).read()
                break
            except OSError:
                time.sleep(0.1)
        route = json.loads((DATA / "route.geojson").read_text())
        coords = route["features"][0]["geometry"]["coordinates"]
        rng = np.random.default_rng(1)
        trips, computes, length, n_err = [], [], None, 0
        for i in range(21):
            j = 1 + i % (len(coords) - 2)
            moved = [list(c) for c in coords]
            moved[j] = [moved[j][0] + rng.uniform(-2.5e-4, 2.5e-4), moved[j][1] + rng.uniform(-2.5e-4, 2.5e-4)]
            body = json.dumps({"type": "FeatureCollection", "features": [{"type": "Feature",
                               "properties": {}, "geometry": {"type": "LineString", "coordinates": moved}}]})
            req = urllib.request.Request(url + "/api/plan", data=body.encode(),
                                         headers={"Content-Type": "application/json"})
            t = time.perf_counter()
            answer = json.loads(urllib.request.urlopen(req, timeout=30).read())
            trips.append(1e3 * (time.perf_counter() - t))
            computes.append(answer["ms"])
            n_err += not answer.get("ok")
            length = answer.get("length_m", length)
    finally:
        proc.terminate()
        proc.wait(10)
    # the buildable design of the same line (whole pieces, MILP), as `gravplan plan` does it
    from planner import api
    sc = api.load_scenario(scenario)
    t = time.perf_counter()
    full = api.plan(sc)
    full_ms = 1e3 * (time.perf_counter() - t)
    cold, warm = trips[0], trips[1:]
    med = statistics.median(warm)
    p90 = sorted(warm)[int(0.9 * len(warm)) - 1]
    print(f"line length {length / 1e3:.2f} km, {int(length / 10) + 1} profile points; "
          f"{n_err} answers with an error")
    print(f"round trip, warm: median {med:.0f} ms, p90 {p90:.0f} ms (target < 300 ms); "
          f"server compute median {statistics.median(computes[1:]):.0f} ms")
    print(f"cold / warm median = {cold / med:.2f}; warm median / 300 ms target = {med / 300:.2f}")
    print(f"`gravplan plan` design of the same line (whole pieces): {full_ms:.0f} ms, "
          f"{full_ms / med:.1f}x the live recompute; cost {full.pipe_cost:,.0f} against the live "
          f"{answer['cost']:,.0f} (split-pipe optimum of the last edit)")


if __name__ == "__main__":
    main()
