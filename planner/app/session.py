"""Re-plan a scenario for a route drawn in the browser, fast enough to follow the mouse.

A :class:`LiveSession` holds one scenario and its DEM open between edits (the DEM's
blocks stay in GDAL's cache, so a small move of one vertex reads almost nothing
new).  Each call of :meth:`LiveSession.replan` takes the drawing as GeoJSON, checks it,
samples the profile, plans it exactly as ``gravplan plan`` would, and returns a small
JSON-ready summary for the page: a decimated profile, the route in pieces coloured by
pressure, the features, the outlets, the findings and the cost.

One difference from ``gravplan plan``, stated in every answer (``"basis"``): while
editing, a design is the split-pipe optimum (the linear programme), because the
whole-piece rounding (a MILP) takes seconds.  ``gravplan plan`` on the saved route
gives the buildable design.

Everything here is pure apart from the DEM reads; the HTTP side is in
:mod:`planner.app.server`.
"""

from __future__ import annotations

import math
import threading
import time
import warnings
from dataclasses import replace

import numpy as np
from shapely.geometry import LineString

from ..errors import InputError, PlannerError
from ..geo.route import route_from_line
from ..design.plan import build_profile, plan_network, plan_scenario
from ..design.results import NetworkPlan, as_line_plan
from ..geo.terrain import open_dem
from ..report.plan_json import json_number
from ..units import LPS

#: Most vertices a drawing may have (a 100 km line with a vertex every 5 m).
MAX_VERTICES = 20_000
#: Most lines a drawing may have.
MAX_LINES = 200
#: Points of the profile panel and pieces of the coloured route sent to the page.
PANEL_POINTS = 1_200
ROUTE_PIECES = 300
#: Monte Carlo size of the DEM-uncertainty estimate while editing.
LIVE_REALISATIONS = 200

LIVE_BASIS = (f"live: split-pipe optimum (linear programme), DEM uncertainty from "
              f"{LIVE_REALISATIONS} realisations; `gravplan plan` on the saved route rounds it "
              "to whole pieces")


class DrawingError(PlannerError):
    """The drawing sent by the page is not a usable route."""


def _coords(raw, where: str) -> np.ndarray:
    try:
        xy = np.asarray(raw, dtype=float)
    except (TypeError, ValueError):
        raise DrawingError(f"{where}: coordinates must be [longitude, latitude] numbers") from None
    if xy.ndim != 2 or xy.shape[1] < 2:
        raise DrawingError(f"{where}: coordinates must be a list of [longitude, latitude] pairs")
    xy = xy[:, :2]
    bad = ~np.all(np.isfinite(xy), axis=1)
    if bad.any():
        raise DrawingError(f"{where}, vertex {int(np.argmax(bad)) + 1}: coordinates are not "
                           "finite numbers")
    return xy


def parse_drawing(obj) -> tuple[list[tuple[LineString, str]], list[dict]]:
    """The lines and points of a drawing sent as GeoJSON.

    Parameters
    ----------
    obj : dict
        A FeatureCollection, a Feature or a bare LineString / MultiLineString / Point
        geometry, in lon/lat (RFC 7946).

    Returns
    -------
    lines : list of (LineString, name)
    points : list of dict
        ``{"lon", "lat", "role", "name"}`` plus the feature's other properties.

    Raises
    ------
    DrawingError
        With the feature and vertex at fault and what to do.
    """
    feats = _features(obj)
    lines: list[tuple[LineString, str]] = []
    points: list[dict] = []
    vertices = 0
    for i, f in enumerate(feats, start=1):
        if not isinstance(f, dict) or not isinstance(f.get("geometry"), dict):
            raise DrawingError(f"feature {i} has no geometry")
        g, props = f["geometry"], f.get("properties") or {}
        if not isinstance(props, dict):
            props = {}
        name = str(props.get("name") or "")[:120]
        kind = g.get("type")
        if kind == "LineString":
            parts = [g.get("coordinates")]
        elif kind == "MultiLineString":
            parts = g.get("coordinates") or []
        elif kind == "Point":
            points.append(_point(g, props, name, i))
            continue
        else:
            raise DrawingError(f"feature {i} is a {kind}; draw lines (and points for the source "
                               "and outlets) only")
        for part in parts:
            vertices = _add_line(lines, part, f"feature {i}" + (f" ({name})" if name else ""),
                                 name, vertices)
    if len(lines) > MAX_LINES:
        raise DrawingError(f"the drawing has {len(lines)} lines; at most {MAX_LINES} are accepted")
    if not lines:
        raise DrawingError("the drawing has no line yet: draw the route from the source")
    return lines, points


def _features(obj) -> list:
    """The features of a GeoJSON object; a bare geometry becomes one feature."""
    if not isinstance(obj, dict) or "type" not in obj:
        raise DrawingError("the drawing is not GeoJSON: expected a FeatureCollection of lines")
    if obj["type"] == "FeatureCollection":
        feats = obj.get("features")
        if not isinstance(feats, list):
            raise DrawingError("the FeatureCollection has no list of features")
        return feats
    if obj["type"] == "Feature":
        return [obj]
    return [{"type": "Feature", "geometry": obj, "properties": {}}]


def _point(g: dict, props: dict, name: str, i: int) -> dict:
    """A drawn point (feature ``i``): ``{"lon", "lat", "role", "name"}`` and its properties.

    Only the properties that are text or numbers are kept.
    """
    xy = _coords([g.get("coordinates")], f"feature {i} (point)")
    return {**{k: v for k, v in props.items() if isinstance(v, (str, int, float))},
            "lon": float(xy[0, 0]), "lat": float(xy[0, 1]),
            "role": str(props.get("role") or "point"), "name": name}


def _add_line(lines: list[tuple[LineString, str]], part, where: str, name: str,
              vertices: int) -> int:
    """Check one drawn line and append it to ``lines``; the vertex count so far, with it."""
    xy = _coords(part, where)
    if len(xy) < 2:
        raise DrawingError(f"{where}: the line has fewer than two distinct points; "
                           "finish it with at least a start and an end")
    vertices += len(xy)
    if vertices > MAX_VERTICES:
        raise DrawingError(f"the drawing has more than {MAX_VERTICES:,} vertices; "
                           "simplify it or plan it from a file with `gravplan plan`")
    try:
        route = route_from_line(LineString(xy), source=where)
    except InputError as exc:
        raise DrawingError(str(exc)) from None
    lines.append((route.line, name))
    return vertices


def _take(n: int, keep, most: int) -> np.ndarray:
    """Indices of at most ``most`` evenly spaced points, always with ``keep`` and the ends."""
    step = max(1, int(math.ceil(n / most)))
    idx = np.union1d(np.arange(0, n, step), np.asarray(list(keep) + [0, n - 1], dtype=int))
    return idx[(idx >= 0) & (idx < n)]


def _pieces(plan, most: int) -> list[dict]:
    """The route in at most ``most`` pieces, each with its lowest pressure and its pipe."""
    prof, e = plan.profile, plan.energy
    n = prof.n
    if not np.all(np.isfinite(prof.lat)):
        return []
    bounds = np.unique(np.concatenate([np.linspace(0, n - 1, min(most, n - 1) + 1).round(),
                                       [s.start_index for s in plan.stretches]]).astype(int))
    label = np.full(n, "", dtype=object)
    for s in plan.stretches:
        label[s.start_index:s.end_index + 1] = s.option.label
    out = []
    for a, b in zip(bounds[:-1], bounds[1:]):
        if b <= a:
            continue
        out.append({"ll": np.column_stack([prof.lat[a:b + 1], prof.lon[a:b + 1]]).round(6).tolist(),
                    "p": json_number(np.nanmin(e.pressure_head[a:b + 1]), 2),
                    "ps": json_number(np.nanmax(e.static_pressure_head[a:b + 1]), 2),
                    "pipe": label[a], "ch": json_number(prof.chainage_m[a], 0)})
    return out


def _profile_panel(plan) -> dict:
    prof, e = plan.profile, plan.energy
    keep = [f.index for f in plan.features] + [t.index for t in plan.tanks] \
        + [o.index for o in plan.outlets]
    idx = _take(prof.n, keep, PANEL_POINTS)

    def col(a):
        return [json_number(v, 2) for v in np.asarray(a)[idx]]
    return {"chainage": col(prof.chainage_m), "ground": col(prof.ground_m),
            "pipe": col(prof.pipe_m), "static": col(e.static_head), "hgl": col(e.hgl),
            "pressure": col(e.pressure_head)}


def _points(plan) -> list[dict]:
    prof = plan.profile

    def ll(i):
        return [json_number(prof.lat[i], 6), json_number(prof.lon[i], 6)]
    pts = [{"kind": f.kind, "chainage": json_number(f.chainage_m, 0), "z": json_number(f.elevation_m, 1),
            "rule": f.rule, "ll": ll(f.index)} for f in plan.features
           if f.kind != "break_pressure_tank"]
    pts += [{"kind": "break_pressure_tank", "chainage": json_number(t.chainage_m, 0),
             "z": json_number(t.water_level_m, 1), "rule": t.rule, "ll": ll(t.index), "name": t.name}
            for t in plan.tanks]
    pts += [{"kind": "outlet", "name": o.name, "chainage": json_number(o.chainage_m, 0),
             "z": json_number(o.ground_m, 1), "residual": json_number(o.pressure_head_m, 1),
             "min": json_number(o.min_pressure_m, 1), "ok": bool(o.ok), "ll": ll(o.index)}
            for o in plan.outlets]
    return pts


def _findings(findings) -> list[dict]:
    return [{"severity": f.severity, "code": f.code, "message": f.message, "remedy": f.remedy,
             "chainage": None if f.chainage_m is None else json_number(f.chainage_m, 0)}
            for f in findings]


def _line_summary(plan) -> dict:
    return {"length_m": json_number(plan.profile.length_m, 1), "profile": _profile_panel(plan),
            "points": _points(plan),
            "stretches": [{"from": json_number(s.chainage_m, 0), "to": json_number(s.chainage_end_m, 0),
                           "pipe": s.option.label} for s in plan.stretches]}


def summarise(plan) -> dict:
    """A JSON-ready digest of a line's or a network's plan for the live page."""
    if isinstance(plan, NetworkPlan):
        L = len(plan.links)
        paths = [{"name": plan.path_name(k), **_line_summary(as_line_plan(plan, plan.path(k)))}
                 for k in plan.ends]
        pieces, points = [], []
        for k in range(L):
            lp = as_line_plan(plan, [k])
            pieces += _pieces(lp, max(20, ROUTE_PIECES // L))
            points += _points(lp)
        findings, length = plan.findings, sum(lk.profile.length_m for lk in plan.links)
    else:
        paths = [{"name": plan.scenario.project.name, **_line_summary(plan)}]
        pieces, points, findings = _pieces(plan, ROUTE_PIECES), _points(plan), plan.findings
        length = plan.profile.length_m
    sizing = plan.sizing
    return {"ok": True, "mode": plan.mode, "length_m": json_number(length, 1),
            "cost": json_number(plan.pipe_cost, 0) if plan.mode == "design" else None,
            "bound": json_number(sizing.lower_bound, 0) if sizing is not None else None,
            "flow_lps": json_number(plan.total_flow_m3s / LPS, 2),
            "errors": sum(f.severity == "error" for f in findings),
            "warnings": sum(f.severity == "warning" for f in findings),
            "findings": _findings(findings), "pieces": pieces, "points": points,
            "paths": paths, "basis": LIVE_BASIS if plan.mode == "design" else
            "check of the scenario's given pipe"}


class LiveSession:
    """One scenario, its DEM kept open, re-planned for each drawing.

    Parameters
    ----------
    scenario : Scenario
        As loaded by :func:`planner.scenario.load_scenario`; its route file is only
        the starting drawing.
    """

    def __init__(self, scenario):
        if scenario.terrain is None:
            raise PlannerError(f"{scenario.route.file}: live editing needs a DEM ([terrain] dem); "
                               "a CSV survey has no map to draw on")
        design = scenario.design
        if design is not None:
            design = replace(design, whole_pieces=False, one_size_per_reach=False)
        # while editing, 200 realisations give each probability to about +-3.5 %
        # (binomial standard error at 50 %); `gravplan plan` runs the scenario's number
        unc = replace(scenario.uncertainty,
                      realisations=min(scenario.uncertainty.realisations, LIVE_REALISATIONS))
        self.scenario = replace(scenario, design=design, uncertainty=unc)
        self.dem = open_dem(list(scenario.terrain.dem))
        # rasterio datasets are not thread-safe; one handle behind a lock keeps the
        # block cache warm between requests
        self._lock = threading.Lock()

    def close(self) -> None:
        """Close the scenario's DEM."""
        self.dem.close()

    def replan(self, drawing) -> dict:
        """Plan the drawing; a user error comes back as ``{"ok": False, "error": ...}``."""
        t0 = time.perf_counter()
        try:
            lines, _points = parse_drawing(drawing)
            with self._lock, warnings.catch_warnings(record=True) as caught:
                warnings.simplefilter("always")
                plan = self._plan(lines)
            out = summarise(plan)
            said = [f["message"] for f in out["findings"]]
            out["notes"] = [t for t in dict.fromkeys(str(w.message) for w in caught)
                            if not any(m in t for m in said)]
        except PlannerError as exc:
            out = {"ok": False, "error": str(exc)}
        out["ms"] = round(1e3 * (time.perf_counter() - t0), 1)
        return out

    def _plan(self, lines):
        sc = self.scenario
        if sc.route.network:
            return plan_network(sc, lines=lines, dem=self.dem)
        if len(lines) > 1:
            raise DrawingError(f"{len(lines)} lines are drawn, but this scenario is one line; "
                               "delete the extra lines, or set [route] network = true")
        prof = build_profile(sc, self.dem, route_from_line(lines[0][0], source="the drawn line"))
        return plan_scenario(sc, profile=prof, dem=self.dem, compare_single_size=False)
