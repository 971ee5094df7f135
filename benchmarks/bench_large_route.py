"""Benchmark: routes with very many vertices are bounded in time and memory.

Uses the 20 km valley line of bench_scaling.py (its invented terrain and scenario) and
gives it many more vertices along the same line:

- ``100k on the line``: 100,000 vertices (the most a route may have,
  ``planner.geo.route.MAX_ROUTE_VERTICES``), each displaced 5 cm to alternate sides so
  that none can be dropped: every vertex becomes a profile point;
- ``1M on the line``: 1,000,000 vertices exactly on the line: thinned to the line's own
  vertices (with a warning) and planned;
- ``1M wiggling``: 1,000,000 vertices 0.5 m to alternate sides: still too many after
  thinning, refused at once.

Each case is loaded and planned in a fresh process (bench_scaling.run_case); reported:
the wall time of loading plus planning, the peak memory (VmHWM), profile points, the
cost, or the message of the refusal.  Usage::

    python benchmarks/bench_large_route.py
"""

from __future__ import annotations

import json
import math
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

import bench_scaling as bs  # noqa: E402  (the scaling benchmark's terrain and cases)

CASES = {"100k on the line": (100_000, 0.05), "1M on the line": (1_000_000, 0.0),
         "1M wiggling": (1_000_000, 0.5)}


def dense(pts, n: int, offset_m: float):
    """``n`` points along the polyline ``pts`` (metres), every other one ``offset_m`` aside."""
    import numpy as np

    p = np.asarray(pts, dtype=float)
    along = np.concatenate([[0.0], np.cumsum(np.hypot(*np.diff(p, axis=0).T))])
    t = np.linspace(0.0, along[-1], n)
    x, y = np.interp(t, along, p[:, 0]), np.interp(t, along, p[:, 1])
    k = np.clip(np.searchsorted(along, t, side="right") - 1, 0, len(p) - 2)
    d = p[k + 1] - p[k]
    normal = np.column_stack([-d[:, 1], d[:, 0]]) / np.hypot(d[:, 0], d[:, 1])[:, None]
    side = np.where(np.arange(n) % 2 == 0, 1.0, -1.0) * offset_m
    side[[0, -1]] = 0.0
    return list(zip(x + normal[:, 0] * side, y + normal[:, 1] * side))


def child(scenario: str) -> None:
    """In a fresh process: load and plan, print the measurements as JSON."""
    t0 = time.perf_counter()
    out = bs.run_case(scenario, profile=False)
    out["wall_s"] = time.perf_counter() - t0
    out["hwm_mb"] = bs._vm_hwm_mb()
    out.pop("profile", None)
    print(json.dumps(out, default=str))


def main() -> None:
    """Make the cases, run each in a fresh process, print the table."""
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        made = bs.make_cases(folder, quick=True)
        base = next(c for c in made["cases"] if c.get("km") == 20)
        text = Path(base["scenario"]).read_text()
        master = bs.prefix(bs.valley_line(__import__("numpy").random.default_rng(11),
                                          max(bs.LINES_KM) * 1000.0), 20_000.0)
        print(f"{'case':<18}{'vertices':>11}{'points':>9}{'wall s':>8}{'peak MB':>9}  result")
        for name, (n, offset) in CASES.items():
            stem = name.replace(" ", "_")
            route = {"type": "FeatureCollection", "features": [{
                "type": "Feature", "properties": {"name": name},
                "geometry": {"type": "LineString",
                             "coordinates": bs._lonlat(dense(master, n, offset))}}]}
            (folder / f"{stem}.geojson").write_text(json.dumps(route))
            sc = folder / f"{stem}.toml"
            sc.write_text(text.replace('file = "line_20km.geojson"', f'file = "{stem}.geojson"'))
            r = subprocess.run([sys.executable, __file__, "--child", str(sc)],
                               capture_output=True, text=True, timeout=1800)
            if r.returncode:
                print(f"{name:<18}{n:>11,}  failed: {r.stderr[-800:]}")
                continue
            out = json.loads(r.stdout.strip().splitlines()[-1])
            result = out.get("error") or f"cost {out['cost']:,.0f}, {out['tanks']} tanks"
            points = out.get("points", math.nan)
            print(f"{name:<18}{n:>11,}{points:>9,.0f}{out['wall_s']:>8.1f}"
                  f"{out['hwm_mb']:>9.0f}  {result[:150]}")


if __name__ == "__main__":
    if len(sys.argv) > 2 and sys.argv[1] == "--child":
        child(sys.argv[2])
    else:
        main()
