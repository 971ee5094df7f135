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

from .design.plan import build_profile, plan_network, plan_scenario
from .design.results import NetworkPlan, Plan, as_line_plan
from .geo.profile import Profile, profile_from_survey, sample_profile
from .geo.route import WGS84, read_route
from .geo.terrain import open_dem, read_overview
from .report.plan_json import write_plan_json
from .report.profile_csv import write_profile_csv
from .report.profile_plot import write_profile_png
from .report.web_map import write_map
from .scenario import Scenario, load_scenario

__all__ = ["load_scenario", "read_route", "sample_profile", "profile_from_survey",
           "build_profile", "plan", "plan_any", "write_outputs", "Plan", "Profile", "Scenario"]

plan = plan_scenario


def _terrain_window(plans, margin_m: float = 1500.0):
    """A decimated DEM window around the route(s), for the map's hillshade."""
    plans = plans if isinstance(plans, (list, tuple)) else [plans]
    sc = plans[0].scenario
    lon = np.concatenate([p.profile.lon for p in plans])
    lat = np.concatenate([p.profile.lat for p in plans])
    if sc.terrain is None or not np.all(np.isfinite(lon)):
        return None
    with open_dem(list(sc.terrain.dem)) as dem:
        x, y = Transformer.from_crs(WGS84, dem.crs, always_xy=True).transform(lon, lat)
        unit = 1.0 if dem.is_geographic else (dem.crs.axis_info[0].unit_conversion_factor or 1.0)
        pad = margin_m / (111_320.0 if dem.is_geographic else unit)
        bounds = (np.min(x) - pad, np.min(y) - pad, np.max(x) + pad, np.max(y) + pad)
        grid, transform = read_overview(dem, bounds)
        return grid, transform, dem.crs.to_wkt()


def write_outputs(plan_, out_dir: str | Path, *, beside: dict | None = None) -> dict[str, Path]:
    """Write a line's or a branched system's deliverables as one result set in ``out_dir``.

    The set is written into a staging folder beside ``out_dir`` and swapped in whole
    (:func:`planner.report.files.output_set`): the folder holds this run's files or
    the previous run's, never a mix, and a second run into it meanwhile is refused.
    ``beside`` maps subfolder names to further plans written into the same set (the
    demo's branched system).  Returns each file's final path by name.
    """
    from .report.files import output_set

    out = Path(out_dir)
    with output_set(out) as stage:
        written = _write_plan(plan_, stage)
        for name, other in (beside or {}).items():
            written.update({f"{name}/{k}": v
                            for k, v in _write_plan(other, stage / name).items()})
    return {k: out / v.relative_to(stage) for k, v in written.items()}


def _write_plan(plan_, out: Path) -> dict[str, Path]:
    out.mkdir(parents=True, exist_ok=True)
    if isinstance(plan_, NetworkPlan):
        return _write_network(plan_, out)
    return _write_line(plan_, out)


def _write_line(plan_: Plan, out: Path) -> dict[str, Path]:
    """A line's deliverables (see :func:`_write_set`)."""
    mapped = bool(np.all(np.isfinite(plan_.profile.lat)))
    return _write_set(out, drawings=[(plan_, "profile")],
                      map_job=(plan_, {"terrain": _terrain_window(plan_)}) if mapped else None,
                      write_json=lambda path: write_plan_json(plan_, path),
                      extra={"profile.csv": write_profile_csv(plan_.profile, out / "profile.csv")},
                      bill_plans=[plan_], junctions=0)


def _write_set(out: Path, *, drawings, map_job, write_json, extra, bill_plans,
               junctions: int) -> dict[str, Path]:
    """The one list of deliverables, for a line and a tree alike.

    The profile drawing and the permit sheets of each ``(plan, stem)`` in ``drawings``
    and the map (``map_job``: its plans and options, or None without coordinates),
    drawn side by side on spare cores; then plan.json (``write_json(path)``), the
    ``extra`` files already written, the bill of quantities and GIS layers of
    ``bill_plans``, and the report.
    """
    jobs: list[tuple] = [(kind, p, out, stem, {}) for p, stem in drawings
                         for kind in ("png", "sheets")]
    if map_job is not None:
        jobs.append(("map", map_job[0], out, "", map_job[1]))
    written: dict[str, Path] = {}
    for part in _in_parallel(_drawing, jobs):
        written.update(part)
    written["plan.json"] = write_json(out / "plan.json")
    written.update(extra)
    written.update(_deliverables(bill_plans, out, junctions=junctions))
    written.update(_report(out, [out / f"{stem}.png" for _, stem in drawings]))
    return written


def _report(out: Path, drawings: list[Path]) -> dict[str, Path]:
    """The HTML (and PDF) report, from the files just written."""
    import csv
    import json

    from .report.document import write_report

    data = json.loads((out / "plan.json").read_text(encoding="utf-8"))
    with (out / "quantities.csv").open(encoding="utf-8") as fh:
        rows = [r for r in csv.reader(fh)][1:]
    return write_report(data, drawings, rows, out)


def _sheets(plan_, out: Path, stem: str) -> dict[str, Path]:
    """The permit drawing sheets (PDF and SVG) of a line."""
    from .report.sheets import write_sheets

    d = plan_.scenario.drawing
    return write_sheets(plan_, out, stem=stem, sheet=d.sheet, km_per_sheet=d.km_per_sheet,
                        revision=d.revision, date=d.date)


def _deliverables(plans, out: Path, *, junctions: int) -> dict[str, Path]:
    """Bill of quantities and GIS layers."""
    from .report.gis import write_layers
    from .report.quantities import bill, write_bill

    written = write_bill(bill(plans, junctions=junctions), out)
    if all(np.all(np.isfinite(p.profile.x)) for p in plans):
        written.update(write_layers(plans, out))
    return written


def plan_any(scenario: Scenario):
    """Plan a scenario: a single line, or a branched system when ``route.network`` is set."""
    if scenario.route.network:
        return plan_network(scenario)
    return plan_scenario(scenario)


def _drawing(kind: str, plans, out: Path, stem: str, map_kw: dict) -> dict[str, Path]:
    """One deliverable that needs nothing from the others.

    A profile PNG named ``stem``, the permit sheets named ``stem``, or the map.
    """
    if kind == "png":
        return {f"{stem}.png": write_profile_png(plans, out / f"{stem}.png")}
    if kind == "sheets":
        return _sheets(plans, out, stem)
    return {"map.html": write_map(plans, out / "map.html", **map_kw)}


def _in_parallel(fn, jobs: list[tuple]) -> list:
    """``fn(*job)`` for each job, in forked processes when there are cores to spare.

    Drawing is CPU-bound matplotlib work that threads cannot share; each job writes its
    own files atomically, so a failure in one leaves no partial file behind, and the
    error is raised here as if the job had run in this process.
    """
    import multiprocessing as mp
    import os
    import threading

    workers = min(len(jobs), os.cpu_count() or 1)
    # forking a process that runs other threads can copy a held lock: draw in turn then
    if workers < 2 or "fork" not in mp.get_all_start_methods() or threading.active_count() > 1:
        return [fn(*job) for job in jobs]
    from concurrent.futures import ProcessPoolExecutor

    with ProcessPoolExecutor(max_workers=workers, mp_context=mp.get_context("fork"),
                             initializer=_exit_with, initargs=(os.getpid(),)) as pool:
        return list(pool.map(fn, *zip(*jobs)))


def _exit_with(parent: int) -> None:
    """In a drawing worker: exit as soon as ``parent`` is gone (even after SIGKILL).

    A killed parent closes no pipe the workers would notice (each holds copies of the
    pool's pipes), so a thread watches whether the worker has been re-parented.
    """
    import os
    import threading
    import time

    def watch():
        while os.getppid() == parent:
            time.sleep(0.2)
        os._exit(1)

    threading.Thread(target=watch, daemon=True, name="exit-with-parent").start()


def _write_network(plan_: NetworkPlan, out: Path) -> dict[str, Path]:
    """A branched system's deliverables (see :func:`_write_set`).

    There is one profile drawing per path from the source to each branch end.
    """
    import re

    from .report.plan_json import write_network_json

    link_plans = [as_line_plan(plan_, [k]) for k in range(len(plan_.links))]
    drawings: list[dict] = []
    paths = []
    for k in plan_.ends:
        path_plan = as_line_plan(plan_, plan_.path(k))
        last = path_plan.outlets[-1].name if path_plan.outlets else plan_.links[k].name
        stem = "profile_" + (re.sub(r"[^a-z0-9]+", "-", last.lower()).strip("-") or f"path-{k}")
        paths.append((path_plan, stem))
        drawings.append({"file": f"{stem}.png", "links": plan_.path(k), "to": last})
    junctions = sum(1 for k in range(len(plan_.links))
                    if sum(lk.parent == k for lk in plan_.links) >= 1)
    return _write_set(
        out, drawings=paths,
        map_job=(link_plans, {"terrain": _terrain_window(link_plans),
                              "title": plan_.scenario.project.name,
                              "outlet_risk": plan_.outlet_risk}),
        write_json=lambda path: write_network_json(plan_, link_plans, drawings, path),
        extra={}, bill_plans=link_plans, junctions=junctions)

