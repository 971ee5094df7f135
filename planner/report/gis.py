"""GIS layers of a plan: one GeoPackage (and GeoJSON files) for a GIS or a field tablet.

Layers: ``stretches`` (lines: pipe, size, class, flow, velocity, pressures), ``features``
(air valves, washouts: points with the rule that placed them), ``outlets``, ``tanks`` and
``profile_points`` (every profile point with its heads).  The GeoPackage is in the
plan's working metric CRS; GeoJSON is WGS84, as RFC 7946 requires.  Reads results only.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from .files import atomic_path


def layers(plans) -> dict:
    """The layers as GeoDataFrames in the working CRS."""
    import geopandas as gpd
    from shapely.geometry import LineString, Point

    plans = list(plans) if isinstance(plans, (list, tuple)) else [plans]
    crs = plans[0].profile.crs
    rows: dict[str, list[dict]] = {"stretches": [], "features": [], "outlets": [], "tanks": [],
                                   "profile_points": []}
    for n, pl in enumerate(plans):
        prof, e = pl.profile, pl.energy
        for st in pl.stretches:
            a, b = st.start_index, st.end_index
            rows["stretches"].append({
                "line": n, "label": st.option.label, "material": st.option.material,
                "od_mm": round(st.option.outside_diameter * 1e3, 1),
                "id_mm": round(st.option.inside_diameter * 1e3, 2),
                "pn_bar": round(st.option.rating / 1e5, 1),
                "from_ch_m": round(st.chainage_m, 2), "to_ch_m": round(st.chainage_end_m, 2),
                "length_m": round(st.length_m, 2),
                "flow_lps": round(float(np.max(e.flow[a:b])) * 1e3, 3),
                "vel_mps": round(st.max_velocity_mps, 3),
                "p_min_m": round(st.min_pressure_head_m, 2),
                "p_max_m": round(float(np.max(e.pressure_head[a:b + 1])), 2),
                "static_m": round(st.max_static_head_m, 2), "cost": round(st.cost, 2),
                "geometry": LineString(np.column_stack([prof.x[a:b + 1], prof.y[a:b + 1]]))})
        for f in pl.features:
            rows["features"].append({
                "line": n, "kind": f.kind, "chainage_m": round(f.chainage_m, 2),
                "size_mm": f.size_mm, "rule": f.rule, "source": f.source, "detail": f.detail,
                "elev_m": round(f.elevation_m, 2),
                "geometry": Point(prof.x[f.index], prof.y[f.index])})
        for o in pl.outlets:
            rows["outlets"].append({
                "line": n, "name": o.name, "kind": o.kind, "chainage_m": round(o.chainage_m, 2),
                "flow_lps": round(o.flow_m3s * 1e3, 3), "p_res_m": round(o.pressure_head_m, 2),
                "p_min_m": o.min_pressure_m, "ok": bool(o.ok),
                "geometry": Point(prof.x[o.index], prof.y[o.index])})
        for t in pl.tanks:
            rows["tanks"].append({
                "line": n, "name": t.name, "chainage_m": round(t.chainage_m, 2),
                "level_m": round(t.water_level_m, 2), "rule": t.rule,
                "geometry": Point(prof.x[t.index], prof.y[t.index])})
        for i in range(prof.n):
            rows["profile_points"].append({
                "line": n, "chainage_m": round(float(prof.chainage_m[i]), 2),
                "ground_m": round(float(prof.ground_m[i]), 3), "pipe_m": round(float(prof.pipe_m[i]), 3),
                "hgl_m": round(float(e.hgl[i]), 3), "static_m": round(float(e.static_head[i]), 3),
                "p_m": round(float(e.pressure_head[i]), 3),
                "geometry": Point(prof.x[i], prof.y[i])})
    return {name: gpd.GeoDataFrame(r, geometry="geometry", crs=crs) if r else
            gpd.GeoDataFrame({"geometry": []}, geometry="geometry", crs=crs)
            for name, r in rows.items()}


def write_layers(plans, folder: str | Path) -> dict[str, Path]:
    """Write design.gpkg (all layers) and one GeoJSON per layer, each atomically."""
    folder = Path(folder)
    out = {}
    frames = layers(plans)
    with atomic_path(folder / "design.gpkg", suffix=".gpkg") as tmp:
        tmp.unlink()                                 # GDAL creates the file itself
        for name, frame in frames.items():
            frame.to_file(tmp, layer=name, driver="GPKG")
    out["design.gpkg"] = folder / "design.gpkg"
    for name, frame in frames.items():
        target = folder / f"{name}.geojson"
        with atomic_path(target, suffix=".geojson") as tmp:
            tmp.unlink()
            frame.to_crs(4326).to_file(tmp, driver="GeoJSON")
        out[f"{name}.geojson"] = target
    return out
