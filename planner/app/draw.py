"""``gravplan draw``: write the offline drawing page for a DEM (I/O at the edge)."""

from __future__ import annotations

from pathlib import Path

from ..geo.terrain import open_dem
from ..report.files import write_text
from .page import build_page, terrain_layers


def _scenario_drawing(scenario_path: Path) -> tuple[dict, str]:
    """A scenario's route, source and located outlets as an editable drawing."""
    from ..scenario import load_scenario
    from ..units import LPS
    from .server import route_drawing

    sc = load_scenario(scenario_path)
    fc = route_drawing(sc)
    first = fc["features"][0]["geometry"]["coordinates"][0] if fc["features"] else None
    src = sc.source.location or (first[:2] if first else None)
    if src is not None:
        fc["features"].append({"type": "Feature", "geometry": {"type": "Point", "coordinates": list(src)},
                               "properties": {"role": "source", "name": sc.source.name}})
    for o in sc.outlets:
        if o.location is not None:
            fc["features"].append({"type": "Feature",
                                   "geometry": {"type": "Point", "coordinates": list(o.location)},
                                   "properties": {"role": "outlet", "name": o.name,
                                                  "flow_lps": round(o.flow_m3s / LPS, 3),
                                                  "min_pressure_m": o.min_pressure_m}})
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
