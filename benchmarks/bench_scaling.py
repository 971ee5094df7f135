"""Benchmark: how the whole design scales with the length of a line and the size of a tree.

Invented terrain, written into a temporary folder: a long valley (UTM 37S, 30 m cells,
float32 GeoTIFF, no nodata) falling 1.5-2 % (the grade itself wanders), with a gentle
meander, a broad floor, sides rising some tens of metres to walls, and hills of tens of
metres (Gaussian-smoothed noise at 1.2 km, 400 m and 90 m), damped on the valley floor
as a stream grades it.  The DEM is a strip about 3.6 km wide that follows the valley.

Cases, all in design mode (catalogue PE100, ``max_static_pressure_m = 100`` so that
break-pressure tanks are placed, split points every 50 m and whole pieces, the
defaults), profile points every 20 m (``spacing_m = 20``), and the DEM-uncertainty
Monte Carlo off (``[uncertainty] enabled = false``) so that the design alone is timed:

- lines of 5, 20, 50 and 100 km down the valley floor (a vertex every 200-450 m, with
  wiggles of some tens of metres), an outlet about every 5 km (0.5-2 L/s, 10 m minimum
  pressure) and one at the end; each shorter line is the start of the longer ones;
- trees of 100 and 500 links (``route.network = true``; each link 100-600 m): a main down
  the valley, a distribution line on each side of it, branches and sub-branches off
  those, all running down the valley on lanes 260 m apart (see :func:`tree`); an outlet
  (``link`` and ``chainage_m``) at every branch end, 0.5-2 L/s, 10 m minimum pressure.

Every case must plan, so the cases are laid out as an engineer would lay them where the
design's tanks will go (:func:`tank_walk` repeats gravplan's rule): no outlet stands just
below a break-pressure tank (no pipe could give it 10 m there; the 5 km marks move by up
to 800 m), and no link of a tree starts just where a tank is needed (gravplan looks for
a tank's place within the link, and stops).

Each case runs three times, each in a fresh process (imports, GDAL's block cache and
every other cache start cold).  Reported per case, as medians: the wall time of
``api.plan_any`` (sampling the profile, tanks, sizing, valves, checks; loading the
scenario is timed apart), the time inside the sizing (``plan.sizing.seconds``), profile
points, tanks, cost, the sizing summary, and the peak memory of the process
(``ru_maxrss``; ``VmHWM`` beside it, which is the child's own: ``ru_maxrss`` can carry
the parent's peak over the fork and exec, which is why the parent here imports only the
standard library), and the part of ``plan_any`` spent importing modules on its first
call (from ``-X importtime``).  Then the ratios of the line times 20/5, 50/20 and 100/20 km, the
power of time against length (least squares in log-log), and a cProfile top 15 (by
cumulative time) of one extra run of the 20 km line and of the 500-link tree.

A case whose first run takes more than 10 minutes is run only once (and says so).
Usage::

    python benchmarks/bench_scaling.py            # everything (about 5 minutes here)
    python benchmarks/bench_scaling.py --quick    # 5 and 20 km and the 100-link tree, once
    python benchmarks/bench_scaling.py --keep DIR # and keep the cases in DIR
"""

from __future__ import annotations

import argparse
import json
import math
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent

CRS = "EPSG:32737"                  # WGS 84 / UTM zone 37S
E0, N0 = 300_000.0, 9_500_000.0     # south-west corner of the strip [m]
CELL = 30.0
HALF = 1800.0                       # half-width of the strip [m]
SPACING_M = 20
LINES_KM = (5, 20, 50, 100)
TREES = (100, 500)
LANES = (260.0, 520.0, 780.0)       # offsets of the branch lanes from the valley axis [m]
CLIMB_M = 3.0                       # a branch climbs at most this above its lowest ground [m]
MAX_STATIC_M, COVER_M, TANK_DEPTH_M, SOURCE_ABOVE_M = 100.0, 0.8, 1.0, 1.0   # design, defaults
MARK = "bench_scaling:plan"
SLOW_S = 600.0                      # a first run slower than this is not repeated


# --------------------------------------------------------------------------- terrain

def axis(u):
    """Cross-valley position of the valley axis [m] at ``u`` metres down the strip."""
    import numpy as np

    return 350.0 * np.sin(2 * np.pi * u / 11_000.0) + 150.0 * np.sin(2 * np.pi * u / 4_300.0 + 1.0)


def valley(length_m: float, seed: int = 3):
    """The ground of the valley strip, ``length_m`` long: (rows, cols) float32, north up."""
    import numpy as np
    from scipy.ndimage import gaussian_filter

    rng = np.random.default_rng(seed)
    ncol, nrow = int(math.ceil(length_m / CELL)), int(2 * HALF / CELL)
    u = (np.arange(ncol) + 0.5) * CELL
    v = (HALF - (np.arange(nrow) + 0.5) * CELL)[:, None]

    def smooth(shape, sigma_m):
        g = gaussian_filter(rng.standard_normal(shape), sigma_m / CELL, mode="reflect")
        return g / g.std()

    grade = np.clip(0.0165 + 0.0025 * smooth(ncol, 4_000.0), 0.012, 0.023)   # 1.5-2 %, wandering
    floor = 2300.0 - np.cumsum(grade * CELL)
    d = v - axis(u)[None, :]                                    # across the valley, from the axis
    side = (0.015 * (np.sqrt(d**2 + 50.0**2) - 50.0) + 15.0 * (d / 1000.0) ** 2
            + 0.12 * np.clip(np.abs(d) - 1250.0, 0.0, None))    # broad floor, then the walls
    hills = (20.0 * smooth((nrow, ncol), 1200.0) + 8.0 * smooth((nrow, ncol), 400.0)
             + 1.5 * smooth((nrow, ncol), 90.0))
    damp = 0.5 + 0.5 * (1.0 - np.exp(-((d / 400.0) ** 2)))      # the stream grades its floor
    return (floor[None, :] + side + damp * hills).astype("float32"), float((damp * hills).std())


def ground_at(z):
    """A function (u, v) -> ground [m], bilinear in the grid ``z`` of :func:`valley`."""
    import numpy as np
    from scipy.ndimage import map_coordinates

    def at(u, v):
        rc = np.vstack([(HALF - np.asarray(v, float)) / CELL - 0.5, np.asarray(u, float) / CELL - 0.5])
        return map_coordinates(z, rc, order=1, mode="nearest")
    return at


def write_dem(path: Path, z, hill_sd: float) -> dict:
    """Write the valley strip as a GeoTIFF; return its statistics."""
    import rasterio
    from rasterio.transform import from_origin

    nrow, ncol = z.shape
    with rasterio.open(path, "w", driver="GTiff", width=ncol, height=nrow, count=1,
                       dtype="float32", crs=CRS,
                       transform=from_origin(E0, N0 + 2 * HALF, CELL, CELL),
                       tiled=True, blockxsize=256, blockysize=256, compress="deflate",
                       predictor=3) as ds:
        ds.write(z, 1)
        ds.update_tags(1, UNITS="metre")
        ds.update_tags(DESCRIPTION="Invented valley for gravplan's scaling benchmark")
    return {"cols": ncol, "rows": nrow, "z_min": float(z.min()), "z_max": float(z.max()),
            "hill_sd_m": hill_sd, "mb": path.stat().st_size / 1e6}


# --------------------------------------------------------------------------- routes

def _lonlat(pts):
    """(u, v) metres in the strip -> [[lon, lat], ...]."""
    import numpy as np
    from pyproj import Transformer

    tr = Transformer.from_crs(CRS, "EPSG:4326", always_xy=True)
    p = np.asarray(pts, dtype=float)
    lon, lat = tr.transform(E0 + p[:, 0], N0 + HALF + p[:, 1])
    return np.column_stack([lon, lat]).round(7).tolist()


def _length(pts) -> float:
    return sum(math.dist(a, b) for a, b in zip(pts, pts[1:]))


def valley_line(rng, length_m: float) -> list[tuple[float, float]]:
    """Vertices (u, v) down the valley floor with small wiggles, ``length_m`` long."""
    u = 600.0
    pts = [(u, float(axis(u)))]
    total = 0.0
    while True:
        u += rng.uniform(200.0, 450.0)
        nxt = (u, float(axis(u)) + float(min(max(rng.normal(0.0, 30.0), -80.0), 80.0)))
        seg = math.dist(pts[-1], nxt)
        if total + seg >= length_m:
            t = (length_m - total) / seg
            pts.append((pts[-1][0] + t * (nxt[0] - pts[-1][0]), pts[-1][1] + t * (nxt[1] - pts[-1][1])))
            return pts
        pts.append(nxt)
        total += seg


def prefix(pts, length_m: float):
    """The first ``length_m`` metres of a polyline."""
    out, total = [pts[0]], 0.0
    for a, b in zip(pts, pts[1:]):
        seg = math.dist(a, b)
        if total + seg >= length_m:
            t = (length_m - total) / seg
            out.append((a[0] + t * (b[0] - a[0]), a[1] + t * (b[1] - a[1])))
            return out
        out.append(b)
        total += seg
    return out


def tank_walk(z, level: float):
    """The level of the free surface serving each point of ground ``z`` [m] (~20 m apart).

    As gravplan places break-pressure tanks, walking down from a free surface at
    ``level``: where the static head on the pipe (0.8 m below the ground) would exceed
    100 m, a tank goes at the point before, its water 1 m above the ground.  Used to keep
    outlets off the stretch just below a tank, where no pipe could give them 10 m.
    """
    out = []
    prev = None
    for zi in z:
        if level - (zi - COVER_M) > MAX_STATIC_M and prev is not None:
            level = prev + TANK_DEPTH_M
            out[-1] = level
        out.append(level)
        prev = zi
    return out


def head_ok(level: float, z: float, low: float = 14.0) -> bool:
    """Whether an outlet on ground ``z`` under a free surface at ``level`` gets its 10 m.

    At least ``low`` metres of static head, and not so close to the next tank's place
    that gravplan's tank could come just above it instead.
    """
    return low <= level - z <= MAX_STATIC_M - COVER_M - 2.0


def tree(rng, n_links: int, ground) -> list[dict]:
    """Links {name, pts (u, v), parent} of a tree of ``n_links``, parents first.

    A main runs down the valley axis.  On each side a distribution line leaves it for a
    lane 260 m off the axis and runs down the valley on it; branches leave that for a
    lane 520 m off, and sub-branches those for one 780 m off; each leaves at 20 degrees to
    the valley.  A lane is used again only past the end of its last line, so no two
    lines cross.  As an engineer would, a line is laid only where the ground
    (``ground(u, v)``) lets the water run: each vertex goes within 60 m of its lane where
    the ground falls best, and the line stops before it would climb more than 3 m above
    the lowest ground it has passed (a blocked distribution line starts again from the
    main further down); a line whose end is not at least 12 m below where it left is not
    laid (its outlet needs 10 m of pressure).  The links are those of a larger such tree
    nearest the source, with the branch ends pruned that fall too little, or that would
    stand just below a tank the design will place (:func:`tank_walk`): gravplan places a
    tank where the static head would exceed the limit whatever lies just below it, so an
    outlet there could not get its 10 m.
    """
    import numpy as np

    def z_along(pts_ud):
        """Ground every ~20 m along a link given by (u, d) vertices (not at its start)."""
        xy = [(a, float(axis(a)) + b) for a, b in pts_ud]
        u, v = [], []
        for (u0, v0), (u1, v1) in zip(xy, xy[1:]):
            t = np.linspace(0.0, 1.0, max(2, int(math.dist((u0, v0), (u1, v1)) / 20.0) + 1))[1:]
            u.append(u0 + t * (u1 - u0))
            v.append(v0 + t * (v1 - v0))
        return ground(np.concatenate(u), np.concatenate(v))

    def climbs(z, low):
        return bool(np.any(z > np.minimum.accumulate(np.minimum(z, low)) + CLIMB_M))

    def walk(pts_ud, level):
        """Ground along a link, the free surface at its end, and whether it is fit.

        Fit: gravplan can place its tanks.  A link whose first point already needs a
        tank cannot have one (gravplan looks for a tank's place within the link), so no
        link may end, or start, within 3 m (of static head) of where a tank is needed;
        the margin covers gravplan's tanks standing up to a profile point from these.
        """
        z = z_along(pts_ud)
        end = tank_walk(z, level)[-1]
        ok = (level - (z[0] - COVER_M) <= MAX_STATIC_M - 2.0
              and end - (z[-1] - COVER_M) <= MAX_STATIC_M - 3.0)
        return z, end, ok

    def grow(u_max):
        links: list[dict] = []

        def lay(start, parent, lane, side, u_stop, kind):
            """A line from ``start`` (u, d) to the lane and down it; the nodes laid."""
            d_lane = side * LANES[lane]
            u, d = start
            z_ref = low = float(ground([u], [float(axis(u)) + d])[0])
            level = links[parent]["level"]
            du = 2.75 * abs(d_lane - d)                          # 20 degrees off the valley
            plan = [[(u, d), (u + du / 4, d + (d_lane - d) / 4 + rng.normal(0, 5)),
                     (u + du / 2, (d + d_lane) / 2)],
                    [(u + du / 2, (d + d_lane) / 2), (u + du, d_lane)]]
            ends = []
            for pts_ud in plan:
                z, level, ok = walk(pts_ud, level)
                if climbs(z, low) or not ok:
                    return [], u
                low, z_end = min(low, float(z.min())), float(z[-1])
                ends.append((level, z_end))
            u, d = u + du, d_lane
            while u_stop - u >= 100.0:
                step = min(rng.uniform(150.0, 450.0), u_stop - u)
                if u_stop - (u + step) < 100.0:
                    step = u_stop - u
                best = None              # the end offset (near the lane) that runs down best
                for off in rng.permutation([0.0, -20.0, 20.0, -40.0, 40.0, -60.0, 60.0]):
                    pts_ud = [(u, d)] + ([(u + step / 2, (d + d_lane + off) / 2)]
                                         if step > 300 else []) + [(u + step, d_lane + off)]
                    z, end, ok = walk(pts_ud, level)
                    if ok and not climbs(z, low):
                        key = (float(z[-1]) + 0.02 * abs(off), pts_ud, z, end)
                        best = key if best is None or key[0] < best[0] else best
                if best is None:
                    break
                plan.append(best[1])
                low, z_end, level = min(low, float(best[2].min())), float(best[2][-1]), best[3]
                ends.append((level, z_end))
                u, d = best[1][-1]
            if z_ref - z_end < 12.0:
                return [], u
            nodes, k = [], parent
            for pts_ud, (lv, ze) in zip(plan, ends):
                links.append({"kind": kind, "ud": pts_ud, "parent": k, "z_ref": z_ref,
                              "level": lv, "z_end": ze})
                k = len(links) - 1
                nodes.append((k, pts_ud[-1]))
            return nodes, u

        def off_shoots(nodes, lane, side, cursor):
            """Branches from the nodes of a line on ``lane - 1`` out to ``lane``."""
            for k, (u, d) in nodes[2:-1]:
                if u < cursor[lane] or rng.random() > 0.7:
                    continue
                sub, u_end = lay((u, d), k, lane, side,
                                 u + rng.uniform(*((500, 1500), (300, 1000))[lane - 1]), "branch")
                if sub:
                    cursor[lane] = u_end + 150.0
                    if lane + 1 < len(LANES):
                        off_shoots(sub, lane + 1, side, cursor)

        u, d, main = 600.0, 0.0, []
        z_src = float(ground([u], [float(axis(u))])[0])
        level = z_src + SOURCE_ABOVE_M
        while u < u_max:
            for _ in range(50):          # a main link that leaves its tanks a place
                step = rng.uniform(150.0, 450.0)
                d1 = float(min(max(rng.normal(0.0, 15.0), -40.0), 40.0))
                mid = [(u + step / 2, float(min(max(rng.normal(0.0, 15.0), -40.0), 40.0)))] \
                    if step > 300 else []
                pts_ud = [(u, d)] + mid + [(u + step, d1)]
                z, end, ok = walk(pts_ud, level)
                if ok:
                    break
            links.append({"kind": "main", "ud": pts_ud, "parent": len(links) - 1,
                          "z_ref": z_src, "level": end, "z_end": float(z[-1])})
            u, d, level = u + step, d1, end
            main.append((len(links) - 1, (u, d)))
        for side, feed in ((1.0, 1500.0), (-1.0, 2200.0)):
            cursor = [0.0] * len(LANES)
            for k, (u, d) in main:
                if u < feed:
                    continue
                nodes, u_end = lay((u, d), k, 0, side, u_max, "side")
                feed = u_end + 600.0
                if nodes:
                    off_shoots(nodes, 1, side, cursor)
        return links

    u_max = 150.0 * n_links
    while True:
        links = grow(u_max)
        order = sorted(range(len(links)), key=lambda k: links[k]["ud"][0][0])
        for m in range(n_links, len(links) + 1):
            keep = set(order[:m])
            while True:                  # prune branch ends that fall too little
                parents = {links[k]["parent"] for k in keep}
                bad = {k for k in keep if k not in parents
                       and ((links[k]["kind"] != "main" and links[k]["z_ref"] - links[k]["z_end"] < 12.0)
                            or not head_ok(links[k]["level"], links[k]["z_end"]))}
                if not bad:
                    break
                keep -= bad
            if len(keep) == n_links:
                break
        if len(keep) == n_links:
            break
        u_max *= 1.3
    chosen = sorted(keep, key=lambda k: links[k]["ud"][0][0])
    index = {k: i for i, k in enumerate(chosen)}
    out = []
    for i, k in enumerate(chosen):
        lk = links[k]
        out.append({"name": f"{lk['kind']}-{i + 1:03d}",
                    "pts": [(a, float(axis(a)) + b) for a, b in lk["ud"]],
                    "parent": index.get(lk["parent"], -1)})
    return out


# --------------------------------------------------------------------------- scenarios

def _scenario(name: str, route: str, outlets: list[dict], network: bool) -> str:
    flow = sum(o["flow_lps"] for o in outlets)
    text = f"""# Invented scaling-benchmark case (bench_scaling.py): {name}
[project]
name = "scaling benchmark: {name} (invented terrain)"
[terrain]
dem = "dem.tif"
vertical_datum = "invented (metres)"
[route]
file = "{route}"
spacing_m = {SPACING_M}
network = {str(network).lower()}
[source]
name = "benchmark spring"
top_water_above_ground_m = {SOURCE_ABOVE_M}
low_water_above_ground_m = 0.5
yield_lps = {math.ceil(flow * 1.2 + 1)}
[design]
catalogues = ["pe100"]
max_static_pressure_m = {MAX_STATIC_M:g}
[uncertainty]
enabled = false
"""
    for o in outlets:
        text += "\n[[outlets]]\n" + "".join(
            f"{k} = {json.dumps(v)}\n" for k, v in o.items())
    return text


def make_cases(folder: Path, quick: bool) -> dict:
    """Write the DEM, the routes and the scenarios into ``folder``."""
    import numpy as np

    folder.mkdir(parents=True, exist_ok=True)

    rng = np.random.default_rng(11)
    lines = LINES_KM[:2] if quick else LINES_KM
    trees = TREES[:1] if quick else TREES
    master = valley_line(rng, max(LINES_KM) * 1000.0)
    stops, c = [], 0.0                     # outlets about every 5 km along the longest line
    while c < max(LINES_KM) * 1000.0:
        c = 5000.0 * (len(stops) + 1) + rng.uniform(-400.0, 400.0)
        stops.append((round(c, 1), round(float(rng.uniform(0.5, 2.0)), 1)))
    cases = []
    u_max = max(p[0] for p in master) + 1500.0
    z, hill_sd = valley(u_max)
    ground = ground_at(z)
    # ground along the longest line every ~20 m, and the free surfaces of the tanks to come
    dense = [master[0]]
    for a, b in zip(master, master[1:]):
        k = max(1, math.ceil(math.dist(a, b) / SPACING_M))
        dense += [(a[0] + (b[0] - a[0]) * i / k, a[1] + (b[1] - a[1]) * i / k) for i in range(1, k + 1)]
    chain = np.concatenate([[0.0], np.cumsum(np.hypot(*np.diff(np.array(dense), axis=0).T))])
    z_line = ground(*np.array(dense).T)
    level_line = tank_walk(z_line, float(z_line[0]) + SOURCE_ABOVE_M)
    relief = {"fall_pct": float((z_line[0] - z_line[-1]) / chain[-1] * 100),
              "rises_pct": float(np.mean(np.diff(z_line) > 0) * 100),
              "climb_m": float(np.max(z_line - np.minimum.accumulate(z_line)))}

    def ok_at(ch, low=14.0):
        i = int(np.searchsorted(chain, ch))
        return all(head_ok(level_line[j], z_line[j], low) for j in {max(i - 1, 0), min(i, len(chain) - 1)})

    # an outlet just below a tank to come could not get its pressure: move it (up to
    # 800 m) to where the static head is at least 20 m, as an engineer would site a tap
    for i, (ch, q) in enumerate(stops):
        near = sorted(np.arange(ch - 800.0, ch + 800.1, 20.0), key=lambda c: abs(c - ch))
        stops[i] = (round(float(next(c for c in near if ok_at(c, 20.0))), 1), q)
    for km in lines:
        length = km * 1000.0
        pts = prefix(master, length)
        route = {"type": "FeatureCollection", "features": [{
            "type": "Feature", "properties": {"name": f"valley line {km} km"},
            "geometry": {"type": "LineString", "coordinates": _lonlat(pts)}}]}
        (folder / f"line_{km}km.geojson").write_text(json.dumps(route))
        outs = [{"name": f"outlet at {ch / 1000:.1f} km", "chainage_m": ch, "flow_lps": q,
                 "min_pressure_m": 10} for ch, q in stops if ch < length - 1000.0]
        assert ok_at(length - 1.0), f"the {km} km line ends just below a tank: change the seed"
        outs.append({"name": "end of the line", "chainage_m": length,
                     "flow_lps": round(float(rng.uniform(0.5, 2.0)), 1), "min_pressure_m": 10})
        path = folder / f"line_{km}km.toml"
        path.write_text(_scenario(f"{km} km line", route=f"line_{km}km.geojson", outlets=outs,
                                  network=False))
        cases.append({"case": f"line {km} km", "kind": "line", "km": km, "scenario": str(path),
                      "vertices": len(pts), "outlets": len(outs)})
    for n in trees:
        links = tree(np.random.default_rng(100 + n), n, ground)
        assert max(p[0] for lk in links for p in lk["pts"]) < u_max - 300.0, "tree off the DEM"
        feats = [{"type": "Feature", "properties": {"name": lk["name"]},
                  "geometry": {"type": "LineString", "coordinates": _lonlat(lk["pts"])}}
                 for lk in links]
        (folder / f"tree_{n}.geojson").write_text(
            json.dumps({"type": "FeatureCollection", "features": feats}))
        has_child = {lk["parent"] for lk in links}
        outs = [{"name": f"end of {lk['name']}", "link": lk["name"],
                 "chainage_m": round(_length(lk["pts"]), 1),
                 "flow_lps": round(float(rng.uniform(0.5, 2.0)), 1), "min_pressure_m": 10}
                for k, lk in enumerate(links) if k not in has_child]
        path = folder / f"tree_{n}.toml"
        path.write_text(_scenario(f"tree of {n} links", route=f"tree_{n}.geojson", outlets=outs,
                                  network=True))
        lengths = [_length(lk["pts"]) for lk in links]
        cases.append({"case": f"tree {n} links", "kind": "tree", "links": n, "scenario": str(path),
                      "outlets": len(outs), "pipe_km": sum(lengths) / 1000.0,
                      "link_m": [min(lengths), max(lengths)],
                      "main_km": sum(m for m, lk in zip(lengths, links)
                                     if lk["name"].startswith("main")) / 1000.0})
    dem = write_dem(folder / "dem.tif", z, hill_sd)
    return {"dem": dem, "relief": relief, "cases": cases}


# --------------------------------------------------------------------------- child

def _vm_hwm_mb() -> float:
    for line in Path("/proc/self/status").read_text().splitlines():
        if line.startswith("VmHWM:"):
            return int(line.split()[1]) / 1024.0
    return float("nan")


def run_case(scenario: str, profile: bool) -> dict:
    """Load and plan one scenario in this (fresh) process; the measurements."""
    import resource
    import warnings

    warnings.simplefilter("ignore")
    sys.path.insert(0, str(ROOT))
    t0 = time.perf_counter()
    from planner import api
    from planner.errors import PlannerError

    t_import = time.perf_counter() - t0
    out: dict = {"import_s": t_import}
    try:
        t0 = time.perf_counter()
        sc = api.load_scenario(scenario)
        out["load_s"] = time.perf_counter() - t0
        if profile:
            import cProfile
            import io
            import pstats

            prof = cProfile.Profile()
            prof.enable()
        print(MARK, "start", file=sys.stderr, flush=True)   # modules imported in the plan
        t0 = time.perf_counter()
        plan = api.plan_any(sc)
        out["plan_s"] = time.perf_counter() - t0
        print(MARK, "end", file=sys.stderr, flush=True)
        if profile:
            prof.disable()
            buf = io.StringIO()
            pstats.Stats(prof, stream=buf).sort_stats("cumulative").print_stats(15)
            # paths shortened by hand: strip_dirs would merge every package's __init__.py
            import numpy

            site = str(Path(numpy.__file__).parent.parent) + "/"
            out["profile"] = buf.getvalue().replace(site, "").replace(str(ROOT) + "/", "")
    except PlannerError as exc:           # DesignError, InputError: the case is wrong
        out["error"] = f"{type(exc).__name__}: {exc}"
        return out
    parts = plan.links if hasattr(plan, "links") else [plan]
    out.update({
        "points": sum(len(p.profile.chainage_m) for p in parts),
        "length_km": sum(p.profile.length_m for p in parts) / 1000.0,
        "tanks": sum(len(p.tanks) for p in parts),
        "links": len(parts),
        "stretches": sum(len(p.stretches) for p in parts),
        "cost": plan.pipe_cost,
        "sizing_s": plan.sizing.seconds,
        "summary": plan.sizing.summary,
        "variables": plan.sizing.variables,
        "errors": len(plan.errors),
        "maxrss_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0,
        "hwm_mb": _vm_hwm_mb(),
    })
    return out


def _child(args: list[str], timeout: float = 3600.0) -> dict:
    """Run this script in a fresh process; its JSON answer.

    A planning run goes with ``-X importtime``: the modules ``plan_any`` imports on its
    first call (scipy.optimize, HiGHS...) are timed from its report, to be told apart
    from the design's own time.
    """
    t0 = time.perf_counter()
    flags = ["-X", "importtime"] if args[0] == "--run" else []
    r = subprocess.run([sys.executable, *flags, __file__, *args], capture_output=True,
                       text=True, timeout=timeout)
    if r.returncode != 0:
        raise RuntimeError(f"child {args} failed ({r.returncode}):\n{r.stderr[-3000:]}")
    out = json.loads(r.stdout.strip().splitlines()[-1])
    out["process_s"] = time.perf_counter() - t0
    if flags:
        inside, us = False, 0
        for line in r.stderr.splitlines():
            if line.startswith(MARK):
                inside = line.endswith("start")
            elif inside and line.startswith("import time:") and "|" in line:
                field = line[len("import time:"):].split("|")[0].strip()
                us += int(field) if field.isdigit() else 0
        out["plan_import_s"] = us / 1e6
    return out


# --------------------------------------------------------------------------- parent

def _fit_power(xs, ys) -> float:
    lx, ly = [math.log(x) for x in xs], [math.log(y) for y in ys]
    mx, my = statistics.fmean(lx), statistics.fmean(ly)
    return (sum((a - mx) * (b - my) for a, b in zip(lx, ly))
            / sum((a - mx) ** 2 for a in lx))


def main() -> None:
    """Make the cases, run each in fresh processes, print the table, ratios and profiles."""
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--quick", action="store_true",
                    help="only the 5 and 20 km lines and the 100-link tree, once each")
    ap.add_argument("--keep", metavar="FOLDER",
                    help="write the cases into FOLDER (kept) instead of a temporary folder")
    a = ap.parse_args()
    runs = 1 if a.quick else 3
    with tempfile.TemporaryDirectory(prefix="gravplan-scaling-") as tmp:
        folder = Path(a.keep) if a.keep else Path(tmp)
        folder.mkdir(parents=True, exist_ok=True)
        made = _child(["--make", str(folder)] + (["--quick"] if a.quick else []))
        dem = made["dem"]
        print(f"DEM: {dem['cols']} x {dem['rows']} cells of {CELL:.0f} m "
              f"({dem['cols'] * CELL / 1000:.1f} x {dem['rows'] * CELL / 1000:.1f} km, UTM 37S, "
              f"float32, {dem['mb']:.1f} MB), {dem['z_max']:.0f} to {dem['z_min']:.0f} m, "
              f"hills sd {dem['hill_sd_m']:.1f} m")
        rel = made["relief"]
        print(f"the 100 km line falls {rel['fall_pct']:.2f} % on average; its ground rises over "
              f"{rel['rises_pct']:.0f} % of its 20 m steps, by up to {rel['climb_m']:.1f} m at a time")
        print(f"design: pe100, max static 100 m, split points 50 m, whole pieces; "
              f"spacing_m = {SPACING_M}; uncertainty off; {runs} run(s) per case, fresh processes")
        results = {}
        for case in made["cases"]:
            rs = []
            for i in range(runs):
                r = _child(["--run", case["scenario"]])
                rs.append(r)
                print(f"  {case['case']}: run {i + 1}: "
                      + (r["error"] if "error" in r else
                         f"plan {r['plan_s']:.2f} s, sizing {r['sizing_s']:.2f} s"), flush=True)
                if "error" in r or r["plan_s"] > SLOW_S:
                    break
            results[case["case"]] = (case, rs)
        profiles = {}
        for name in ("line 20 km", "tree 500 links"):
            if name in results and "error" not in results[name][1][0]:
                profiles[name] = _child(["--run", results[name][0]["scenario"], "--profile"])

    def med(rs, key):
        return statistics.median(r[key] for r in rs)

    for rs in (rs for _, rs in results.values()):
        for r in rs:
            if "plan_s" in r:
                r["design_s"] = r["plan_s"] - r["plan_import_s"]
    print()
    head = (f"{'case':<15}{'runs':>5}{'plan s':>9}{'imports s':>10}{'sizing s':>10}{'load s':>8}"
            f"{'points':>8}{'links':>7}{'tanks':>6}{'cost':>11}{'maxrss MB':>10}{'VmHWM MB':>9}"
            "  plan s of each run")
    print(head)
    print("-" * len(head))
    ok = {}
    for name, (case, rs) in results.items():
        if "error" in rs[0]:
            print(f"{name:<15} FAILED: {rs[0]['error']}")
            continue
        ok[name] = rs
        print(f"{name:<15}{len(rs):>5}{med(rs, 'plan_s'):>9.2f}{med(rs, 'plan_import_s'):>10.2f}"
              f"{med(rs, 'sizing_s'):>10.2f}{med(rs, 'load_s'):>8.3f}{rs[0]['points']:>8,}"
              f"{rs[0]['links']:>7}{rs[0]['tanks']:>6}{rs[0]['cost']:>11,.0f}"
              f"{med(rs, 'maxrss_mb'):>10.0f}{med(rs, 'hwm_mb'):>9.0f}  "
              + ", ".join(f"{r['plan_s']:.2f}" for r in rs))
    print("plan s: wall time of api.plan_any, medians; imports s: modules it imported on its "
          "first call, included in plan s")
    print()
    for name, rs in ok.items():
        case = results[name][0]
        extra = (f"{case['pipe_km']:.1f} km of pipe, main {case['main_km']:.1f} km, links "
                 f"{case['link_m'][0]:.0f}-{case['link_m'][1]:.0f} m, " if case["kind"] == "tree"
                 else f"{case['vertices']} vertices, ")
        print(f"{name}: {extra}{case['outlets']} outlets, {rs[0]['stretches']} stretches, "
              f"{rs[0]['variables']:,} variables, {rs[0]['errors']} error findings in the plan")
        print(f"    {rs[0]['summary']}")
    lines = {results[n][0]["km"]: ok[n] for n in ok if results[n][0]["kind"] == "line"}
    keys = (("plan_s", "plan"), ("design_s", "plan less imports"), ("sizing_s", "sizing"))
    print()
    for a_, b_ in ((20, 5), (50, 20), (100, 20)):
        if a_ in lines and b_ in lines:
            print(f"{a_} km / {b_} km (length x{a_ / b_:g}): " + ", ".join(
                f"{label} x{med(lines[a_], key) / med(lines[b_], key):.2f}" for key, label in keys))
    if len(lines) >= 2:
        kms = sorted(lines)
        print(f"fitted power, time ~ length^p (log-log least squares over "
              f"{', '.join(map(str, kms))} km): " + ", ".join(
                  f"{label} p = {_fit_power(kms, [med(lines[k], key) for k in kms]):.2f}"
                  for key, label in keys))
    trees = {results[n][0]["links"]: ok[n] for n in ok if results[n][0]["kind"] == "tree"}
    if 100 in trees and 500 in trees:
        print("tree 500 / 100 links: " + ", ".join(
            f"{label} x{med(trees[500], key) / med(trees[100], key):.2f}" for key, label in keys))
    for name, p in profiles.items():
        print(f"\ncProfile of one more run of the {name} (plan {p.get('plan_s', float('nan')):.2f} s "
              "under the profiler), top 15 by cumulative time:")
        text = p.get("profile") or p.get("error", "")
        body = text[text.find("ncalls"):] if "ncalls" in text else text
        print(body.rstrip())


if __name__ == "__main__":
    if len(sys.argv) >= 3 and sys.argv[1] == "--make":
        print(json.dumps(make_cases(Path(sys.argv[2]), "--quick" in sys.argv[3:])))
    elif len(sys.argv) >= 3 and sys.argv[1] == "--run":
        print(json.dumps(run_case(sys.argv[2], "--profile" in sys.argv[3:])))
    else:
        main()
