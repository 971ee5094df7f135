"""The system laid on the ground: link profiles, their tree, and what stands on them.

A line is a tree of one link.  This module turns a scenario (and its route or network
file, or a line drawn in the editor) into a :class:`Layout`: a profile per link, each
link's upstream link, the source's water levels, and the outlets, engineer's tanks,
fittings, survey pins and no-tank zones placed at points of the links, by chainage, by
link name and chainage, or by location (snapped within ``criteria.snap_tolerance_m``).
The design engine (:mod:`planner.design.engine`) reads nothing else.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property

import numpy as np
from numpy.typing import NDArray
from pyproj import Transformer
from shapely.geometry import LineString, Point

from ..errors import InputError, InputFileError
from ..geo.network import RouteNetwork, build_tree, read_lines
from ..geo.profile import Profile, pin_profile, profile_from_survey, sample_profile
from ..geo.route import WGS84, Route, Survey, read_route
from ..geo.terrain import open_dem
from ..scenario import Outlet, Scenario


@dataclass(frozen=True)
class Layout:
    """A system on its profiles, before anything is sized (SI units)."""

    profiles: tuple[Profile, ...]
    parents: tuple[int, ...]                 # upstream link of each link, -1 at the source
    names: tuple[str, ...]
    top_level_m: float                       # the source's top water level
    low_level_m: float                       # and its low water level (the design level)
    placed: tuple[tuple[Outlet, int, int], ...]          # (outlet, link, point)
    fixed: tuple[tuple[tuple[int, float, str], ...], ...]  # per link: (point, level, name)
    point_k: tuple[NDArray[np.float64], ...]             # fittings' K at each point
    no_tank: tuple[NDArray[np.bool_], ...]               # points where no tank may stand
    network: RouteNetwork | None = None
    notes: tuple[str, ...] = field(default=())

    @cached_property
    def children(self) -> list[list[int]]:
        """The links hanging from each link's end."""
        out: list[list[int]] = [[] for _ in self.parents]
        for c, p in enumerate(self.parents):
            if p >= 0:
                out[p].append(c)
        return out

    @property
    def root(self) -> int:
        """The link leaving the source."""
        return self.parents.index(-1)


def build_profile(scenario: Scenario, dem=None, route=None) -> Profile:
    """The scenario's route profile: sampled from the DEM, or taken from a CSV survey.

    ``route`` (a :class:`~planner.geo.route.Route`) stands in for the scenario's route
    file: a line drawn in the editor, or one link of a tree.
    """
    sc = scenario
    if route is None:
        route = read_route(sc.route.file, crs=sc.route.crs)
    if isinstance(route, Survey):
        return profile_from_survey(route, sc.criteria.cover_m,
                                   vertical_datum=sc.terrain.vertical_datum if sc.terrain else None)
    assert sc.terrain is not None, "a route file without levels needs [terrain]"
    return sample_profile(route, dem if dem is not None else list(sc.terrain.dem),
                          spacing_m=sc.route.spacing_m, cover_m=sc.criteria.cover_m,
                          max_void_m=sc.terrain.max_void_m,
                          vertical_datum=sc.terrain.vertical_datum)


class _Placer:
    """Finds the link and the local chainage of a thing given by chainage or location."""

    def __init__(self, profiles, names, tol, network=None):
        self.profiles, self.names, self.tol, self.net = profiles, names, tol, network

    def at(self, key: str, link: str | None, chainage: float | None, location) -> tuple[int, float]:
        """(link, chainage along it [m]) of a thing; a clear InputError when it is off."""
        if link is not None and self.net is not None:
            return self._on_link(key, link, chainage)
        if chainage is not None:
            if self.net is not None:
                raise InputError(f"{key}: on a network, a chainage needs the link (the name of "
                                 "the drawn line) it is along")
            prof = self.profiles[0]
            if chainage > prof.length_m + self.tol:
                raise InputError(f"{key}.chainage_m = {chainage:,.0f} m is beyond the end of the "
                                 f"line ({prof.length_m:,.0f} m); check the chainage, or extend "
                                 "the route")
            return 0, min(float(chainage), prof.length_m)
        if location is None:
            raise InputError(f"{key}: give location = [lon, lat]"
                             + (", or link and chainage_m" if self.net is not None else
                                " or chainage_m"))
        return self._nearest(key, location)

    def _on_link(self, key, line, chainage):
        net, profiles = self.net, self.profiles
        if chainage is None:
            raise InputError(f"{key}: give chainage_m along the line {line!r}")
        hits = [k for k, lk in enumerate(net.links) if lk.name == line or self.names[k] == line]
        if not hits:
            known = ", ".join(sorted({lk.name for lk in net.links if lk.name}))
            raise InputError(f"{key}.link = {line!r}: no line of that name; lines: {known}")
        hits.sort(key=lambda k: net.links[k].offset_m)
        k = next((k for k in hits
                  if chainage <= net.links[k].offset_m + profiles[k].length_m + 1e-6), hits[-1])
        local = chainage - net.links[k].offset_m
        if local > profiles[k].length_m + self.tol:
            raise InputError(f"{key}.chainage_m = {chainage:,.0f} m is beyond the end of the "
                             f"line {line!r}")
        return k, min(max(local, 0.0), profiles[k].length_m)

    def _nearest(self, key, location):
        best = None
        for k, prof in enumerate(self.profiles):
            if not np.all(np.isfinite(prof.x)):
                raise InputError(f"{key}: a location needs a line with coordinates; give "
                                 "chainage_m for a survey without x and y")
            tr = Transformer.from_crs(WGS84, prof.crs, always_xy=True)
            pt = Point(*tr.transform(*location))
            line = LineString(np.column_stack([prof.x, prof.y]))
            d = line.distance(pt)
            if best is None or d < best[0]:
                planar = np.concatenate([[0.0], np.cumsum(np.hypot(np.diff(prof.x),
                                                                   np.diff(prof.y)))])
                best = (d, k, float(np.interp(line.project(pt), planar, prof.chainage_m)))
        if best[0] > self.tol:
            what = "the nearest link" if self.net is not None else "the line"
            raise InputError(f"{key}.location {list(location)} is {best[0]:,.0f} m from {what} "
                             f"(more than criteria.snap_tolerance_m = {self.tol:g} m); check the "
                             "coordinates (longitude first) or extend the route")
        return best[1], best[2]


def line_layout(sc: Scenario, profile: Profile | None = None, dem=None) -> Layout:
    """The scenario's single line as a tree of one link (``profile`` reused if given)."""
    prof = profile if profile is not None else build_profile(sc, dem)
    return _lay(sc, [prof], [-1], [sc.project.name], None)


def tree_layout(sc: Scenario, lines=None, dem=None) -> Layout:
    """The scenario's network joined into a tree from the source, each link on the DEM.

    ``lines`` (lon/lat ``(LineString, name)`` pairs drawn in the editor) stand in for
    the network file; ``dem`` (an open :class:`~planner.geo.terrain.Dem`) is reused
    when given.
    """
    label = "the drawing" if lines is not None else sc.route.file.name
    try:
        net = build_tree(read_lines(sc.route.file) if lines is None else lines,
                         source=sc.source.location, snap_tolerance_m=sc.route.join_tolerance_m)
    except InputFileError:
        raise
    except InputError as exc:
        raise InputError(f"{sc.route.file if lines is None else 'the drawing'}: {exc}") from None
    names = [lk.name or f"link {k + 1}" for k, lk in enumerate(net.links)]
    for nm in set(names):                       # a drawn line split at tees: number its parts
        parts = sorted((lk.offset_m, k) for k, lk in enumerate(net.links) if names[k] == nm)
        if len(parts) > 1:
            for i, (_, k) in enumerate(parts, start=1):
                names[k] = f"{nm}, part {i}"
    into = {lk.downstream: k for k, lk in enumerate(net.links)}
    parents = [into.get(lk.upstream, -1) for lk in net.links]
    if dem is None:
        assert sc.terrain is not None, "a network needs [terrain]"
        dem_paths = list(sc.terrain.dem)
    grid = open_dem(dem if dem is not None else dem_paths)
    try:
        profiles = [build_profile(sc, grid, Route(line=lk.line, source=f"{label} ({names[k]})",
                                                  gps_elevation_m=lk.gps_elevation_m))
                    for k, lk in enumerate(net.links)]
    finally:
        if dem is None:
            grid.close()
    return _lay(sc, profiles, parents, names, net)


def _lay(sc: Scenario, profiles, parents, names, net) -> Layout:
    """Place the source levels, pins, outlets, tanks, fittings and no-tank zones."""
    cr = sc.criteria
    place = _Placer(profiles, names, cr.snap_tolerance_m, net)
    profiles = _pinned(sc, place, list(profiles))
    place.profiles = profiles
    root = parents.index(-1)
    g0 = float(profiles[root].ground_m[0])
    src = sc.source
    top = src.top_level_m if src.top_level_m is not None else g0 + (src.top_above_ground_m or 0.0)
    low = src.low_level_m if src.low_level_m is not None else g0 + (src.low_above_ground_m or 0.0)
    if low > top:
        raise InputError(f"{sc.path}: source low water level {low:.2f} m is above the top "
                         f"water level {top:.2f} m")
    placed = []
    for i, o in enumerate(sc.outlets, start=1):
        k, c = place.at(f"outlets[{i}]", o.link, o.chainage_m, o.location)
        placed.append((o, k, profiles[k].index_at(c)))
    fixed: list[list] = [[] for _ in profiles]
    for i, tk in enumerate(sc.tanks, start=1):
        key = f"break_pressure_tanks[{i}]"
        k, c = place.at(key, tk.link, tk.chainage_m, None)
        j = profiles[k].index_at(c)
        if j <= 0 or j >= profiles[k].n - 1 or any(j == jj for jj, _, _ in fixed[k]):
            raise InputError(f"{key}.chainage_m = {tk.chainage_m:,.0f} m: a tank must lie inside "
                             "a line, not at its start, a junction or an end, and apart from "
                             "the other tanks")
        fixed[k].append((j, float(profiles[k].ground_m[j] + tk.water_above_ground_m), tk.name))
    point_k = [np.zeros(p.n) for p in profiles]
    for i, f in enumerate(sc.fittings, start=1):
        k, c = place.at(f"fittings[{i}]", f.link, f.chainage_m, None)
        point_k[k][profiles[k].index_at(c)] += f.k
    no_tank = [np.zeros(p.n, dtype=bool) for p in profiles]
    if sc.design is not None:
        for i, (a, b) in enumerate(sc.design.no_tank_zones, start=1):
            if net is not None:
                raise InputError(f"design.no_tank_zones[{i}]: on a network, a zone needs the "
                                 "line it is along; not yet supported: place the tanks by hand "
                                 "(break_pressure_tanks with link and chainage_m)")
            no_tank[0] |= (profiles[0].chainage_m >= a) & (profiles[0].chainage_m <= b)
    return Layout(profiles=tuple(profiles), parents=tuple(parents), names=tuple(names),
                  top_level_m=float(top), low_level_m=float(low), placed=tuple(placed),
                  fixed=tuple(tuple(sorted(f)) for f in fixed), point_k=tuple(point_k),
                  no_tank=tuple(no_tank), network=net,
                  notes=net.notes if net is not None else ())


def _pinned(sc: Scenario, place: _Placer, profiles: list[Profile]) -> list[Profile]:
    """Each link's profile pinned to the surveyed levels that lie on it."""
    pins: list[list] = [[] for _ in profiles]
    for i, sp in enumerate(sc.survey_points, start=1):
        k, c = place.at(f"survey_points[{i}]", sp.link, sp.chainage_m, sp.location)
        pins[k].append((sp.name, c, sp.elevation_m))
    return [pin_profile(p, pk) if pk and not p.pins else p for p, pk in zip(profiles, pins)]
