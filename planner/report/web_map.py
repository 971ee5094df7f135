"""The interactive map (folium/Leaflet): route over a hillshade, coloured by pressure.

Every user-supplied text shown in the page is HTML-escaped.  The page is
self-contained: Leaflet and d3 are inlined from the vendored copies (see
``offline.py``), there is no tile layer, and the terrain is a hillshade computed from
the DEM, so it works with no internet.
"""

from __future__ import annotations

import html
from pathlib import Path
from typing import cast

import numpy as np

from ..cautions import SHORT_CAUTION
from .mpl import pyplot
from .files import write_text
from .offline import make_offline

#: Most points drawn for the route line; the profile keeps them all.
MAX_MAP_POINTS = 5000


def hillshade(z: np.ndarray, cell_x: float, cell_y: float, *, azimuth_deg: float = 315.0,
              altitude_deg: float = 45.0) -> np.ndarray:
    """Shaded relief in 0..1 from an elevation grid (north-up, rows from the north).

    Parameters
    ----------
    z : ndarray
        Elevations [m]; NaN stays NaN.
    cell_x, cell_y : float
        Pixel size [m].
    azimuth_deg, altitude_deg : float
        Direction and height of the light [degrees].

    Notes
    -----
    Lambertian shading of the surface normal, after Horn, "Hill shading and the
    reflectance map", Proc. IEEE 69(1), 1981 (with central differences).
    """
    dzdy, dzdx = np.gradient(z, cell_y, cell_x)
    dzdy = -dzdy                                    # rows run southwards
    az, alt = np.radians(360.0 - azimuth_deg + 90.0), np.radians(altitude_deg)
    slope = np.arctan(np.hypot(dzdx, dzdy))
    aspect = np.arctan2(dzdy, -dzdx)
    shade = np.sin(alt) * np.cos(slope) + np.cos(alt) * np.sin(slope) * np.cos(az - aspect)
    return np.clip(shade, 0.0, 1.0)


def _overlay(grid: np.ndarray, transform, crs):
    """RGBA image and lat/lon bounds of a hillshade warped to Web Mercator."""
    from rasterio.warp import calculate_default_transform, reproject, transform_bounds
    from rasterio.enums import Resampling

    h, w = grid.shape
    left, top = transform * (0, 0)
    right, bottom = transform * (w, h)
    dst_crs = "EPSG:3857"
    dst_t, dw, dh = calculate_default_transform(crs, dst_crs, w, h, left, bottom, right, top)
    merc = np.full((dh, dw), np.nan)
    reproject(grid, merc, src_transform=transform, src_crs=crs, dst_transform=dst_t,
              dst_crs=dst_crs, resampling=Resampling.bilinear, src_nodata=np.nan,
              dst_nodata=np.nan)
    # relief exaggerated 3x so that gentle slopes still read on the map
    shade = hillshade(3.0 * merc, abs(dst_t.a), abs(dst_t.e))
    grey = (40 + 215 * np.nan_to_num(shade, nan=1.0)).astype(np.uint8)
    rgba = np.dstack([grey, grey, grey, np.where(np.isfinite(merc), 255, 0).astype(np.uint8)])
    west, south, east, north = transform_bounds(dst_crs, "EPSG:4326", dst_t.c,
                                                dst_t.f + dst_t.e * dh, dst_t.c + dst_t.a * dw,
                                                dst_t.f)
    return rgba, [[south, west], [north, east]]


def contour_lines(grid: np.ndarray, transform, crs, *, target: int = 25):
    """Contours of a DEM window as (level, [[lat, lon], ...]) lines, at a round interval.

    The interval is the round number (1, 2, 5 x 10^k m) that gives about ``target``
    levels over the window's relief.
    """
    plt = pyplot()
    from pyproj import Transformer

    z = np.asarray(grid, dtype=float)
    if not np.isfinite(z).any():
        return []
    relief = float(np.nanmax(z) - np.nanmin(z))
    raw = max(relief / target, 1e-9)
    mag = 10 ** np.floor(np.log10(raw))
    step = next(m * mag for m in (1, 2, 5, 10) if m * mag >= raw)
    levels = np.arange(np.ceil(np.nanmin(z) / step) * step, np.nanmax(z), step)
    h, w = z.shape
    cols = np.arange(w) + 0.5
    rows = np.arange(h) + 0.5
    fig, ax = plt.subplots()
    try:
        cs = ax.contour(cols, rows, np.ma.masked_invalid(z), levels=levels)
        out = []
        to_ll = Transformer.from_crs(crs, "EPSG:4326", always_xy=True)
        from shapely import LineString, simplify

        for level, segs in zip(cs.levels, cs.allsegs):
            for seg in segs:
                if len(seg) < 2:
                    continue
                # display geometry: drop vertices closer than a third of a pixel to the line
                seg = np.asarray(simplify(LineString(seg), 0.33).coords)
                if len(seg) < 2:
                    continue
                x, y = transform * (seg[:, 0], seg[:, 1])
                lon, lat = to_ll.transform(np.asarray(x), np.asarray(y))
                out.append((float(level), np.column_stack([lat, lon]).round(5).tolist()))
        return out
    finally:
        plt.close(fig)


def build_map(plan, *, terrain=None, title: str | None = None, outlet_risk=None):
    """The folium Map of a plan, or of several line plans (the links of a tree).

    Parameters
    ----------
    plan : Plan or list of Plan
        The first plan's start is the source.
    terrain : tuple, optional
        ``(grid, transform, crs)`` of a DEM window for the hillshade, from
        :func:`planner.geo.terrain.read_overview`.
    title : str, optional
        Heading of the page (default: the first plan's project name).
    outlet_risk : dict, optional
        Outlet name -> (probability below its minimum, 95 % fall [m]) from the DEM-error
        Monte Carlo; default the plan's own.
    """
    import folium

    plans = list(plan) if isinstance(plan, (list, tuple)) else [plan]
    if outlet_risk is None:
        outlet_risk = {n: (p, f) for pl in plans if pl.uncertainty is not None
                       for n, p, f in pl.uncertainty.outlets}
    for pl in plans:
        if not np.all(np.isfinite(pl.profile.lat)):
            raise ValueError("the line has no coordinates to map")
    lats = np.concatenate([pl.profile.lat for pl in plans])
    lons = np.concatenate([pl.profile.lon for pl in plans])
    m = folium.Map(location=[float(lats.mean()), float(lons.mean())], tiles=None,
                   control_scale=True, zoom_start=14)
    folium.TileLayer("OpenStreetMap", name="OpenStreetMap (needs internet)", show=False,
                     overlay=False, control=True).add_to(m)
    if terrain is not None:
        _add_terrain(m, terrain)
    cmap = _pressure_colormap(plans)
    route = folium.FeatureGroup(name="pipeline (pressure head)")
    by_size = folium.FeatureGroup(name="pipeline (size and class)", show=False)
    labels = sorted({st.option.label for pl in plans for st in pl.stretches})
    marks = folium.FeatureGroup(name="source, tanks, outlets")
    valves = folium.FeatureGroup(name="air valves and washouts")
    for n, pl in enumerate(plans):
        _add_line(pl, cmap, labels, route, by_size)
        _add_marks(pl, marks, outlet_risk, with_source=n == 0)
        _add_features(pl, valves)
    route.add_to(m)
    if labels:
        by_size.add_to(m)
    cmap.add_to(m)
    marks.add_to(m)
    if any(pl.features for pl in plans):
        valves.add_to(m)
    folium.LayerControl(position="bottomright", collapsed=False).add_to(m)
    m.fit_bounds([[float(lats.min()), float(lons.min())], [float(lats.max()), float(lons.max())]],
                 padding=(40, 40))
    _add_heading_and_legend(m, title or plans[0].scenario.project.name)
    return m


def _add_terrain(m, terrain) -> None:
    """Add the DEM's hillshade and its contour lines (labelled in m) to a folium Map.

    Parameters
    ----------
    m : folium.Map
    terrain : tuple
        ``(grid, transform, crs)`` of a DEM window.
    """
    import folium

    rgba, bounds = _overlay(*terrain)
    folium.raster_layers.ImageOverlay(rgba, bounds=bounds, name="hillshade (DEM)",
                                      opacity=0.9, mercator_project=False).add_to(m)
    contours = folium.FeatureGroup(name="contours (DEM)")
    for level, line in contour_lines(*terrain):
        folium.PolyLine(line, color="#7a5c2e", weight=0.8, opacity=0.8,
                        tooltip=f"{level:,.0f} m", class_name="contour").add_to(contours)
    contours.add_to(m)


def _pressure_colormap(plans):
    """The colour scale of pressure head [m], from the lowest (or 0) to the highest rating or static head."""
    import branca.colormap as cm

    vmax = float(max(max(np.nanmax(pl.rating_head_m), np.nanmax(pl.energy.static_pressure_head))
                     for pl in plans))
    vmin = float(min(0.0, min(np.nanmin(pl.energy.pressure_head) for pl in plans)))
    return cm.LinearColormap(["#b2182b", "#f4a582", "#92c5de", "#2166ac", "#053061"],
                             vmin=vmin, vmax=vmax, caption="pressure head at design flow [m]")


#: Colours of the pipe options on the size-and-class layer, in order of label.
_PALETTE = ["#1b9e77", "#d95f02", "#7570b3", "#e7298a", "#66a61e", "#e6ab02", "#a6761d",
            "#666666", "#1f78b4", "#b2df8a", "#fb9a99", "#cab2d6", "#ff7f00", "#6a3d9a"]


def _add_line(pl, cmap, labels: list[str], route, by_size) -> None:
    """Add a plan's route, coloured by pressure head [m], and its stretches by pipe option.

    Parameters
    ----------
    pl : Plan
    cmap : branca.colormap.LinearColormap
        Pressure head colour scale [m].
    labels : list of str
        All pipe option labels on the map, sorted; they pick the stretches' colours.
    route, by_size : folium.FeatureGroup
        The layers by pressure head, and by size and class.
    """
    import folium

    prof, e = pl.profile, pl.energy
    step = max(1, prof.n // MAX_MAP_POINTS)
    idx = np.unique(np.concatenate([np.arange(0, prof.n, step), [prof.n - 1]]))
    folium.ColorLine(np.column_stack([prof.lat[idx], prof.lon[idx]]).tolist(),
                     colors=e.pressure_head[idx][:-1].tolist(), colormap=cmap,
                     weight=6).add_to(route)
    for st in pl.stretches:
        seg = slice(st.start_index, st.end_index + 1)
        folium.PolyLine(np.column_stack([prof.lat[seg], prof.lon[seg]]).tolist(), weight=6,
                        color=_PALETTE[labels.index(st.option.label) % len(_PALETTE)],
                        tooltip=_as_text(f"{st.option.label}: {st.chainage_m:,.0f} to "
                                            f"{st.chainage_end_m:,.0f} m, {st.length_m:,.0f} m"),
                        class_name="pipe-stretch").add_to(by_size)


def _as_text(text: str) -> str:
    """User text as inert HTML for a tooltip or popup.

    folium puts tooltip and popup HTML inside JavaScript template literals (backquoted
    strings), where HTML escaping alone leaves a backquote, ``${...}`` and a backslash
    live; they become character references here, shown as themselves.
    """
    return (html.escape(str(text), quote=True).replace("\\", "&#92;").replace("`", "&#96;")
            .replace("$", "&#36;"))


def _add_marker(marks, prof, i: int, label: str, popup: str, colour: str, radius: int = 8) -> None:
    """Add a circle marker at profile point ``i`` to the marks layer (``radius`` in pixels)."""
    import folium

    folium.CircleMarker([float(prof.lat[i]), float(prof.lon[i])], radius=radius,
                        color="black", weight=2, fill=True, fill_color=colour,
                        fill_opacity=0.95, tooltip=_as_text(label),
                        popup=folium.Popup(popup, max_width=320),
                        class_name="plan-marker").add_to(marks)


def _add_marks(pl, marks, outlet_risk: dict, *, with_source: bool) -> None:
    """Add markers for the source (if ``with_source``), a plan's tanks and its outlets.

    Parameters
    ----------
    pl : Plan
    marks : folium.FeatureGroup
        The layer of source, tanks and outlets.
    outlet_risk : dict
        Outlet name -> (probability below its minimum, 95 % fall [m]).
    with_source : bool
        Whether this plan starts at the source (the first plan).
    """
    esc = _as_text
    prof = pl.profile
    if with_source:
        source_name = pl.scenario.source.name
        _add_marker(marks, prof, 0, source_name,
                    f"<b>{esc(source_name)}</b><br>top water level "
                    f"{pl.source_top_level_m:.1f} m<br>low water level {pl.source_low_level_m:.1f} m",
                    "#1f4e9c", 10)
    for t in pl.tanks:
        _add_marker(marks, prof, t.index, t.name,
                    f"<b>{esc(t.name)}</b> (break-pressure tank)<br>chainage "
                    f"{t.chainage_m:,.0f} m<br>water level {t.water_level_m:.1f} m<br>head "
                    f"dissipated {t.dissipated_m:.1f} m<br>{esc(t.rule)}", "#ffffff")
    for o in pl.outlets:
        risk = outlet_risk.get(o.name)
        _add_marker(marks, prof, o.index, o.name,
                    f"<b>{esc(o.name)}</b> ({esc(o.kind)})<br>chainage "
                    f"{o.chainage_m:,.0f} m<br>flow {o.flow_m3s * 1e3:.2f} L/s<br>residual pressure "
                    f"{o.pressure_head_m:.1f} m (min {o.min_pressure_m:g} m)"
                    + (f"<br>DEM error: {risk[0]:.0%} chance of less than the minimum; add "
                       f"{risk[1]:.1f} m to be 95 % sure" if risk else ""),
                    "#2e8b57" if o.ok else "#c0392b")


#: Fill colours of the feature markers, by kind.
_FEATURE_COLOURS = {"air_valve": "#f1c40f", "washout": "#8e44ad"}


def _add_features(pl, valves) -> None:
    """Add a marker for each of a plan's air valves and washouts, with its rule and sizes [mm, m]."""
    import folium

    esc = _as_text
    prof = pl.profile
    crest_risk = dict(pl.uncertainty.crests) if pl.uncertainty is not None else {}
    for f in pl.features:
        kind = f.kind.replace("_", " ")
        size = f" DN{f.size_mm:.0f}" if f.size_mm else ""
        risk = crest_risk.get(float(f.chainage_m))
        risk_text = (f"<br>DEM error: {risk:.0%} chance that this point rises above the HGL"
                     if risk is not None else "")
        folium.CircleMarker(
            [float(prof.lat[f.index]), float(prof.lon[f.index])], radius=5, color="black",
            weight=1, fill=True, fill_color=_FEATURE_COLOURS.get(f.kind, "#999999"), fill_opacity=1.0,
            tooltip=esc(f"{kind} at {f.chainage_m:,.0f} m"), class_name=f"plan-feature {f.kind}",
            popup=folium.Popup(f"<b>{esc(kind)}{esc(size)}</b><br>chainage {f.chainage_m:,.0f} m"
                               f"<br>pipe elevation {f.elevation_m:.1f} m<br>rule: {esc(f.rule)}"
                               f"<br>source: {esc(f.source)}<br>{esc(f.detail)}{risk_text}",
                               max_width=340)).add_to(valves)


def _add_heading_and_legend(m, heading_text: str) -> None:
    """Add the page's heading (with the short caution) and the legend of the markers to a Map."""
    import folium
    from branca.element import Figure

    esc = _as_text
    heading = (f"<div style='position:fixed;top:10px;left:60px;z-index:1000;background:white;"
               f"padding:6px 10px;border:1px solid #888;font:13px sans-serif;max-width:60%'>"
               f"<b>{esc(heading_text)}</b><br>{esc(SHORT_CAUTION)}</div>")
    root = cast(Figure, m.get_root())         # a folium Map's root is always its Figure
    root.html.add_child(folium.Element(heading))
    dot = ("<span style='display:inline-block;width:11px;height:11px;border-radius:6px;"
           "border:1px solid #000;background:{};margin-right:5px'></span>{}<br>")
    legend = "".join(dot.format(c, esc(t)) for c, t in (
        ("#1f4e9c", "source"), ("#ffffff", "break-pressure tank"),
        ("#2e8b57", "outlet, pressure met"), ("#c0392b", "outlet, pressure short"),
        ("#f1c40f", "air valve"), ("#8e44ad", "washout")))
    root.html.add_child(folium.Element(
        "<div id='plan-legend' style='position:fixed;bottom:64px;left:10px;z-index:1000;"
        "background:white;padding:6px 10px;border:1px solid #888;font:12px sans-serif'>"
        f"{legend}</div>"))


def write_map(plan, path: str | Path, *, terrain=None, title: str | None = None,
              outlet_risk=None) -> Path:
    """Write map.html atomically (one plan, or a list of link plans)."""
    m = build_map(plan, terrain=terrain, title=title, outlet_risk=outlet_risk)
    return write_text(path, make_offline(m.get_root().render()))
