"""The route editor page: one self-contained HTML file over a DEM's hillshade and contours.

The same page serves two uses:

- ``gravplan draw`` writes it as a file: the user draws the main line and branches,
  places the source and outlets, and downloads the drawing as GeoJSON (and a starting
  scenario).  No server, no internet.
- ``gravplan serve`` sends it from the local server, which re-plans every edit.

Everything the page needs is inlined: Leaflet and leaflet-draw (vendored from the npm
registry, ``planner/report/assets/``), our own script and style (``static/``), the
hillshade as a PNG ``data:`` URI, the contours, and a decimated elevation grid in
lon/lat for the elevation under the cursor.  Data travel as one JSON block whose
``</`` are escaped, and the script writes user text with ``textContent`` only, so no
name from a scenario or a drawing can become markup.
"""

from __future__ import annotations

import base64
import html
import io
import json
from pathlib import Path

import numpy as np

from ..cautions import CAUTIONS
from ..geo.terrain import Dem, read_overview
from ..report.offline import ASSETS, asset, css_with_data_uris

STATIC = Path(__file__).resolve().parent / "static"
#: Longest side of the hillshade and contour window, and of the cursor grid [pixels].
SHADE_PIXELS = 900
CURSOR_PIXELS = 400

CAUTION = f"{CAUTIONS[0]} {CAUTIONS[-1]}"


def _png_data_uri(rgba: np.ndarray) -> str:
    from PIL import Image

    buf = io.BytesIO()
    Image.fromarray(rgba, mode="RGBA").save(buf, format="PNG", optimize=True)
    return "data:image/png;base64," + base64.b64encode(buf.getvalue()).decode("ascii")


def _cursor_grid(grid: np.ndarray, transform, crs) -> dict:
    """A DEM window resampled onto a lon/lat grid, for the elevation under the cursor.

    The grid's longest side is at most :data:`CURSOR_PIXELS` cells.
    """
    from rasterio.enums import Resampling
    from rasterio.warp import calculate_default_transform, reproject

    h, w = grid.shape
    left, top = transform * (0, 0)
    right, bottom = transform * (w, h)
    box = (left, bottom, right, top)
    dst_t, dw, dh = calculate_default_transform(crs, "EPSG:4326", w, h, *box)
    scale = max(dw, dh) / CURSOR_PIXELS
    if scale > 1:
        dst_t, dw, dh = calculate_default_transform(crs, "EPSG:4326", w, h, *box,
                                                    resolution=(dst_t.a * scale, -dst_t.e * scale))
    ll = np.full((dh, dw), np.nan, dtype=np.float32)
    reproject(grid.astype(np.float32), ll, src_transform=transform, src_crs=crs,
              dst_transform=dst_t, dst_crs="EPSG:4326", resampling=Resampling.bilinear,
              src_nodata=np.nan, dst_nodata=np.nan)
    mid_lat = dst_t.f + dst_t.e * dh / 2
    cell_m = dst_t.a * 111_320.0 * np.cos(np.radians(mid_lat))
    return {"west": dst_t.c, "north": dst_t.f, "dx": dst_t.a, "dy": dst_t.e, "nx": dw, "ny": dh,
            "cell_m": round(float(cell_m), 1),
            "z": base64.b64encode(ll.astype("<f4").tobytes()).decode("ascii")}


def terrain_layers(dem: Dem) -> dict:
    """Hillshade (data URI and bounds), contours and the cursor grid of the whole DEM.

    All three come from one decimated read.
    """
    from ..report.web_map import _overlay, contour_lines

    grid, transform = read_overview(dem, dem.bounds, max_pixels=SHADE_PIXELS)
    rgba, bounds = _overlay(grid, transform, dem.crs)
    contours = contour_lines(grid, transform, dem.crs)
    return {"hillshade": {"url": _png_data_uri(rgba), "bounds": bounds},
            "contours": [{"z": z, "ll": ll} for z, ll in contours],
            "cursor": _cursor_grid(grid, transform, dem.crs), "dem": dem.describe()}


def _script_json(data) -> str:
    return json.dumps(data, separators=(",", ":"), allow_nan=False).replace("</", "<\\/")


def build_page(*, mode: str, title: str, terrain: dict, drawing: dict | None = None,
               markers: list[dict] | None = None, dem_path: str | None = None) -> str:
    """The editor page as one HTML string.

    Parameters
    ----------
    mode : {"draw", "live"}
        ``"draw"``: a file, with GeoJSON and scenario download; ``"live"``: talks to
        ``gravplan serve`` at the same origin.
    title : str
        Shown as text (escaped).
    terrain : dict
        From :func:`terrain_layers`.
    drawing : dict, optional
        GeoJSON FeatureCollection to start from (the scenario's route).
    markers : list of dict, optional
        Fixed points to show: ``{"role", "name", "ll": [lat, lon]}``.
    dem_path : str, optional
        Written into the downloaded scenario's ``[terrain] dem``.
    """
    if mode not in ("draw", "live"):
        raise ValueError(f"mode must be 'draw' or 'live', not {mode!r}")
    data = {"mode": mode, "title": title, "terrain": terrain, "caution": CAUTION,
            "drawing": drawing or {"type": "FeatureCollection", "features": []},
            "markers": markers or [], "dem_path": dem_path}
    leaflet_css = css_with_data_uris(asset("leaflet-1.9.3/leaflet.css"), ASSETS / "leaflet-1.9.3")
    draw_css = css_with_data_uris(asset("leaflet-draw-1.0.4/leaflet.draw.css"),
                                   ASSETS / "leaflet-draw-1.0.4")
    icon = base64.b64encode((ASSETS / "leaflet-1.9.3/images/marker-icon.png").read_bytes()).decode()
    shadow = base64.b64encode((ASSETS / "leaflet-1.9.3/images/marker-shadow.png").read_bytes()).decode()
    scripts = "\n".join(
        "<script>" + text.replace("</script", "<\\/script") + "</script>"
        for text in (asset("leaflet-1.9.3/leaflet.js"),
                     "L.Icon.Default.prototype.options.imagePath='';"
                     f"L.Icon.Default.mergeOptions({{iconUrl:'data:image/png;base64,{icon}',"
                     f"iconRetinaUrl:'data:image/png;base64,{icon}',"
                     f"shadowUrl:'data:image/png;base64,{shadow}'}});",
                     asset("leaflet-draw-1.0.4/leaflet.draw.js"),
                     (STATIC / "app.js").read_text(encoding="utf-8")))
    css = (STATIC / "app.css").read_text(encoding="utf-8")
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>{html.escape(title)}</title>
<style>{leaflet_css}</style><style>{draw_css}</style><style>{css}</style>
</head><body>
<div id="map"></div>
<aside id="side">
  <h1 id="title"></h1>
  <p id="help"></p>
  <div id="tools"></div>
  <div id="status" role="status"></div>
  <div id="error" role="alert" hidden></div>
  <div id="pointform" hidden></div>
  <label id="pathpick" hidden>profile of <select id="path"></select></label>
  <svg id="profile" role="img" aria-label="longitudinal profile"></svg>
  <div id="legend"></div>
  <h2 id="findings-h">Findings</h2>
  <ul id="findings"></ul>
  <p id="caution"></p>
</aside>
<div id="cursor"></div>
<script id="gp-data" type="application/json">{_script_json(data)}</script>
{scripts}
</body></html>
"""
