"""Drawings: a scenario's route and points as GeoJSON, and the ``gravplan draw`` page.

I/O at the edge: reads the scenario's route file and writes the page; the editor's
server uses the same GeoJSON for its starting drawing and for Save.
"""

from __future__ import annotations

from pathlib import Path

from ..errors import PlannerError
from ..geo.terrain import open_dem
from ..report.files import write_text
from ..units import LPS
from .page import build_page, terrain_layers


def lines_geojson(pairs) -> dict:
    """A FeatureCollection of lon/lat ``(LineString, name)`` pairs."""
    from shapely.geometry import mapping

    return {"type": "FeatureCollection",
            "features": [{"type": "Feature", "properties": {"name": name or f"line {k + 1}"},
                          "geometry": mapping(line)} for k, (line, name) in enumerate(pairs)]}


def route_drawing(scenario) -> dict:
    """The scenario's route file as a FeatureCollection of its lines."""
    if scenario.route.network:
        from ..geo.network import read_lines
        return lines_geojson(read_lines(scenario.route.file))
    from ..geo.route import Survey, read_route
    route = read_route(scenario.route.file, crs=scenario.route.crs)
    if isinstance(route, Survey):
        raise PlannerError(f"{scenario.route.file}: a CSV survey has no map coordinates to "
                           "edit; draw the route with `gravplan draw DEM` instead")
    return lines_geojson([(route.line, "main")])


def scenario_points(scenario, drawing: dict) -> list[dict]:
    """Point features for the source and for every outlet given by location.

    The source is at its location, else at the first line's start; each feature carries
    the properties the page edits.
    """
    feats = drawing["features"]
    src = scenario.source.location or (feats[0]["geometry"]["coordinates"][0][:2] if feats else None)
    out = []
    if src is not None:
        out.append({"type": "Feature", "geometry": {"type": "Point", "coordinates": list(src)},
                    "properties": {"role": "source", "name": scenario.source.name}})
    for o in scenario.outlets:
        if o.location is not None:
            out.append({"type": "Feature", "geometry": {"type": "Point", "coordinates": list(o.location)},
                        "properties": {"role": "outlet", "name": o.name,
                                       "flow_lps": round(o.flow_m3s / LPS, 3),
                                       "min_pressure_m": o.min_pressure_m}})
    return out


def _scenario_drawing(scenario_path: Path) -> tuple[dict, str]:
    """A scenario's route, source and located outlets as an editable drawing."""
    from ..scenario import load_scenario

    sc = load_scenario(scenario_path)
    fc = route_drawing(sc)
    fc["features"] += scenario_points(sc, fc)
    return fc, sc.project.name


def write_draw_page(dem_path: str | Path, out: str | Path, *, scenario: str | Path | None = None) -> Path:
    """Write the drawing page for ``dem_path`` to ``out`` (atomically); return ``out``."""
    from ..errors import InputFileError

    dem_path = Path(dem_path)
    if not dem_path.is_file():
        raise InputFileError(f"{dem_path}: DEM file not found")
    drawing, title = (None, f"Draw a gravity line over {dem_path.name}")
    if scenario is not None:
        drawing, name = _scenario_drawing(Path(scenario))
        title = f"Draw: {name}"
    with open_dem(dem_path) as dem:
        page = build_page(mode="draw", title=title, terrain=terrain_layers(dem), drawing=drawing,
                          dem_path=str(dem_path.resolve()))
    return write_text(out, page)
