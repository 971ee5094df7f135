"""Benchmark: the deliverables.

- map.html of a 100 km line (the bench_sampling DEM and route, a point every 10 m):
  file size, and the time headless Chromium takes to render it (median of 3);
- all deliverables of the demo line and of the branched demo (plan computed first).

Usage::

    python benchmarks/bench_outputs.py
"""

from __future__ import annotations

import json
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(HERE))


def render_seconds(page: Path) -> float:
    from planner.report.document import chromium

    with tempfile.TemporaryDirectory() as profile:
        t0 = time.perf_counter()
        subprocess.run([chromium(), "--headless", "--no-sandbox", "--disable-gpu",
                        "--disable-background-networking", "--disable-component-update",
                        "--disable-sync", "--no-first-run", "--disable-quic",
                        "--host-resolver-rules=MAP * ~NOTFOUND", f"--user-data-dir={profile}",
                        "--window-size=1200,900", f"--screenshot={Path(profile) / 'shot.png'}",
                        page.as_uri()], check=True, capture_output=True, timeout=120)
        return time.perf_counter() - t0


def main() -> None:
    import warnings

    warnings.simplefilter("ignore")
    import bench_sampling as bs
    from planner import api
    from planner.report.web_map import write_map

    bs.make_dem()
    line, _ = bs.route()
    with tempfile.TemporaryDirectory() as tmp:
        t = Path(tmp)
        (t / "route.geojson").write_text(json.dumps(
            {"type": "LineString", "coordinates": [list(c) for c in line.coords]}))
        (t / "s.toml").write_text(f"""
[project]
name = "100 km benchmark line"
[terrain]
dem = "{bs.DEM}"
[route]
file = "route.geojson"
spacing_m = 10
[source]
top_water_above_ground_m = 1
low_water_above_ground_m = 0.5
[pipe]
material = "PE100"
inside_diameter_mm = 180
roughness_mm = 0.007
pressure_rating_bar = 16
[[outlets]]
name = "end"
chainage_m = 1
flow_lps = 5
""")
        sc = api.load_scenario(t / "s.toml")
        plan = api.plan(sc)
        t0 = time.perf_counter()
        page = write_map(plan, t / "map.html", terrain=api._terrain_window(plan))
        build = time.perf_counter() - t0
        size = page.stat().st_size / 2**20
        renders = [render_seconds(page) for _ in range(3)]
        print(f"100 km line ({plan.profile.n:,} points): map.html {size:.2f} MiB (target < 5), "
              f"built in {build:.2f} s; headless render median {statistics.median(renders):.2f} s "
              f"(runs {[round(r, 2) for r in renders]}; target < 2 s, Chromium start included)")

        for name in ("scenario.toml", "scenario_network.toml"):
            sc = api.load_scenario(ROOT / "demo_terrain" / name)
            t0 = time.perf_counter()
            pl = api.plan_any(sc)
            plan_s = time.perf_counter() - t0
            t0 = time.perf_counter()
            written = api.write_any(pl, t / name)
            out_s = time.perf_counter() - t0
            print(f"demo {name}: plan {plan_s:.2f} s, {len(written)} deliverables written in "
                  f"{out_s:.2f} s (target < 10 s)")


if __name__ == "__main__":
    main()
