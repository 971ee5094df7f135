"""The public Python API of gravplan.

Example (from the repository root)::

    from planner import api
    sc = api.load_scenario("demo_terrain/scenario.toml")
    plan = api.plan(sc)
    api.write_outputs(plan, "outputs/demo")
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
from pyproj import Transformer

from .design.plan import Plan, build_profile, plan_scenario
from .geo.profile import Profile, profile_from_survey, sample_profile
from .geo.route import WGS84, read_route
from .geo.terrain import open_dem, read_overview
from .report.plan_json import write_plan_json
from .report.profile_csv import write_profile_csv
from .report.profile_plot import write_profile_png
from .report.web_map import write_map
from .scenario import Scenario, load_scenario

__all__ = ["load_scenario", "read_route", "sample_profile", "profile_from_survey",
           "build_profile", "plan", "write_outputs", "Plan", "Profile", "Scenario"]

plan = plan_scenario


def _terrain_window(plan_: Plan, margin_m: float = 1500.0):
    """A decimated DEM window around the route, for the map's hillshade."""
    sc, prof = plan_.scenario, plan_.profile
    if sc.terrain is None or not np.all(np.isfinite(prof.lon)):
        return None
    with open_dem(list(sc.terrain.dem)) as dem:
        x, y = Transformer.from_crs(WGS84, dem.crs, always_xy=True).transform(prof.lon, prof.lat)
        unit = 1.0 if dem.is_geographic else (dem.crs.axis_info[0].unit_conversion_factor or 1.0)
        pad = margin_m / (111_320.0 if dem.is_geographic else unit)
        bounds = (np.min(x) - pad, np.min(y) - pad, np.max(x) + pad, np.max(y) + pad)
        grid, transform = read_overview(dem, bounds)
        return grid, transform, dem.crs.to_wkt()


def write_outputs(plan_: Plan, out_dir: str | Path) -> dict[str, Path]:
    """Write plan.json, profile.csv, profile.png and map.html into ``out_dir``.

    Each file is written atomically, so an interrupted run leaves the previous
    file of that name intact.
    """
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    terrain = _terrain_window(plan_)
    written = {
        "plan.json": write_plan_json(plan_, out / "plan.json"),
        "profile.csv": write_profile_csv(plan_.profile, out / "profile.csv"),
        "profile.png": write_profile_png(plan_, out / "profile.png"),
    }
    if np.all(np.isfinite(plan_.profile.lat)):
        written["map.html"] = write_map(plan_, out / "map.html", terrain=terrain)
    return written
