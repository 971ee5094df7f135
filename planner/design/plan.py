"""Orchestration: Scenario -> Profile -> flows -> energy along the line -> checks -> Plan.

Read top to bottom, this is the whole job for one gravity line.  It touches no file
except through ``geo`` (route and DEM); writing results is the report package's job.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from shapely.geometry import LineString, Point
from pyproj import Transformer

from ..errors import InputError
from ..geo.profile import Profile, profile_from_survey, sample_profile
from ..geo.route import WGS84, Survey, read_route
from ..hydraulics import water
from ..hydraulics.line import FreeSurface, LineEnergy, PipeHydraulics, line_energy, segment_flows
from ..scenario import Scenario
from ..units import G
from .checks import Finding, check_line, check_outlet, check_tank, check_yield

SEVERITY_ORDER = {"error": 0, "warning": 1, "note": 2}


@dataclass(frozen=True)
class OutletResult:
    """An outlet as placed on the profile, with its residual pressure at design flow."""

    name: str
    kind: str
    chainage_m: float
    index: int
    flow_m3s: float
    ground_m: float
    pressure_head_m: float
    min_pressure_m: float

    @property
    def ok(self) -> bool:
        return self.pressure_head_m >= self.min_pressure_m


@dataclass(frozen=True)
class TankResult:
    """A break-pressure tank: its water level and the head it takes out of the line."""

    name: str
    chainage_m: float
    index: int
    water_level_m: float
    arrival_hgl_m: float

    @property
    def dissipated_m(self) -> float:
        """Head destroyed in the tank at design flow [m] (negative: tank not reached)."""
        return self.arrival_hgl_m - self.water_level_m


@dataclass(frozen=True)
class Plan:
    """Everything computed for one line; report code reads it and computes nothing."""

    scenario: Scenario
    profile: Profile
    energy: LineEnergy
    outlets: tuple[OutletResult, ...]
    tanks: tuple[TankResult, ...]
    source_top_level_m: float
    source_low_level_m: float
    total_flow_m3s: float
    density: float
    kinematic_viscosity: float
    rating_head_m: float
    findings: tuple[Finding, ...]

    @property
    def errors(self) -> list[Finding]:
        return [f for f in self.findings if f.severity == "error"]


def build_profile(scenario: Scenario, dem=None) -> Profile:
    """The scenario's route profile: sampled from the DEM, or taken from a CSV survey."""
    sc = scenario
    route = read_route(sc.route.file, crs=sc.route.crs)
    if isinstance(route, Survey):
        return profile_from_survey(route, sc.criteria.cover_m,
                                   vertical_datum=sc.terrain.vertical_datum if sc.terrain else None)
    return sample_profile(route, dem if dem is not None else list(sc.terrain.dem),
                          spacing_m=sc.route.spacing_m, cover_m=sc.criteria.cover_m,
                          max_void_m=sc.terrain.max_void_m,
                          vertical_datum=sc.terrain.vertical_datum)


def _chainage_of(profile: Profile, key: str, chainage: float | None, location, tol: float) -> float:
    if chainage is not None:
        if chainage > profile.length_m + tol:
            raise InputError(f"{key}.chainage_m = {chainage:,.0f} m is beyond the end of the "
                             f"line ({profile.length_m:,.0f} m)")
        return min(float(chainage), profile.length_m)
    if not np.all(np.isfinite(profile.x)):
        raise InputError(f"{key}: a location needs a line with coordinates; give chainage_m "
                         "for a survey without x and y")
    tr = Transformer.from_crs(WGS84, profile.crs, always_xy=True)
    px, py = tr.transform(*location)
    line = LineString(np.column_stack([profile.x, profile.y]))
    pt = Point(px, py)
    along = line.project(pt)
    offset = line.distance(pt)
    if offset > tol:
        raise InputError(f"{key}.location {list(location)} is {offset:,.0f} m from the line "
                         f"(more than criteria.snap_tolerance_m = {tol:g} m); check the "
                         "coordinates (longitude first) or extend the route")
    planar = np.concatenate([[0.0], np.cumsum(np.hypot(np.diff(profile.x), np.diff(profile.y)))])
    return float(np.interp(along, planar, profile.chainage_m))


def plan_scenario(scenario: Scenario, *, profile: Profile | None = None, dem=None) -> Plan:
    """Compute heads, pressures and checks for a scenario's line at design flow.

    Parameters
    ----------
    scenario : Scenario
        From :func:`planner.scenario.load_scenario`.
    profile : Profile, optional
        A profile already sampled (e.g. while editing a route); else sampled here.
    dem : Dem, optional
        An open DEM to reuse between calls.

    Returns
    -------
    Plan
    """
    sc = scenario
    prof = profile if profile is not None else build_profile(sc, dem)
    tol = sc.criteria.snap_tolerance_m
    ch = prof.chainage_m

    # the source's free surface
    g0 = float(prof.ground_m[0])
    top = sc.source.top_level_m if sc.source.top_level_m is not None else g0 + sc.source.top_above_ground_m
    low = sc.source.low_level_m if sc.source.low_level_m is not None else g0 + sc.source.low_above_ground_m
    if low > top:
        raise InputError(f"{sc.path}: source low water level {low:.2f} m is above the top "
                         f"water level {top:.2f} m")

    # outlets, tanks and fittings placed on the profile
    placed = []
    for i, o in enumerate(sc.outlets, start=1):
        c = _chainage_of(prof, f"outlets[{i}]", o.chainage_m, o.location, tol)
        placed.append((o, prof.index_at(c)))
    surfaces = [FreeSurface(0, top, low)]
    tank_idx = []
    for i, tk in enumerate(sc.tanks, start=1):
        c = _chainage_of(prof, f"break_pressure_tanks[{i}]", tk.chainage_m, None, tol)
        j = prof.index_at(c)
        if j <= (surfaces[-1].index if surfaces else 0) or j >= prof.n - 1:
            raise InputError(f"break_pressure_tanks[{i}].chainage_m = {tk.chainage_m:,.0f} m: a "
                             "tank must lie inside the line, after the previous tank")
        level = float(prof.ground_m[j] + tk.water_above_ground_m)
        surfaces.append(FreeSurface(j, level, level))
        tank_idx.append((tk, j, level))
    point_k = np.zeros(prof.n)
    for i, f in enumerate(sc.fittings, start=1):
        c = _chainage_of(prof, f"fittings[{i}]", f.chainage_m, None, tol)
        point_k[prof.index_at(c)] += f.k

    # design flows by mass balance along the line, and the energy line
    flows = segment_flows(ch, [(float(ch[j]), o.flow_m3s) for o, j in placed])
    rho = water.density(sc.criteria.temperature_c)
    nu = water.kinematic_viscosity(sc.criteria.temperature_c)
    pipe = PipeHydraulics(inside_diameter=sc.pipe.inside_diameter_m, method=sc.criteria.friction,
                          roughness=sc.pipe.roughness_m, c_factor=sc.pipe.c_factor)
    energy = line_energy(prof.slope_length_m, prof.pipe_m, flows, pipe, kinematic_viscosity=nu,
                         surfaces=surfaces, entrance_k=sc.criteria.entrance_k, point_k=point_k)
    rating_head = sc.pipe.rating_pa / (rho * G)

    # results and checks
    outlets = tuple(OutletResult(
        name=o.name, kind=o.kind, chainage_m=float(ch[j]), index=j, flow_m3s=o.flow_m3s,
        ground_m=float(prof.ground_m[j]), pressure_head_m=float(energy.pressure_head[j]),
        min_pressure_m=o.min_pressure_m) for o, j in placed)
    tanks = tuple(TankResult(name=tk.name, chainage_m=float(ch[j]), index=j, water_level_m=level,
                             arrival_hgl_m=float(energy.arrival_hgl[j]))
                  for tk, j, level in tank_idx)
    total = float(sum(o.flow_m3s for o in sc.outlets))
    findings = check_yield(total, sc.source.yield_m3s)
    findings += check_line(chainage=ch, pressure_head=energy.pressure_head,
                           static_pressure_head=energy.static_pressure_head,
                           velocity=energy.velocity, flowing=energy.flow > 0,
                           rating_head=rating_head, criteria=sc.criteria,
                           surface_index=tuple(f.index for f in surfaces))
    for o in outlets:
        findings += check_outlet(o.name, o.chainage_m, o.pressure_head_m, o.min_pressure_m)
    for t in tanks:
        findings += check_tank(t.name, t.chainage_m, t.arrival_hgl_m, t.water_level_m)
    findings += [Finding("note", "profile", note) for note in prof.notes]
    findings.sort(key=lambda f: (SEVERITY_ORDER[f.severity],
                                 f.chainage_m if f.chainage_m is not None else -1.0))
    return Plan(scenario=sc, profile=prof, energy=energy, outlets=outlets, tanks=tanks,
                source_top_level_m=float(top), source_low_level_m=float(low),
                total_flow_m3s=total, density=float(rho), kinematic_viscosity=float(nu),
                rating_head_m=float(rating_head), findings=tuple(findings))
