"""Orchestration: Scenario -> Profile -> flows -> tanks -> sizes -> energy -> checks -> Plan.

Read top to bottom, this is the whole job for one gravity line.  Two modes:

- **check**: the scenario gives one pipe ([pipe]); the line is computed and checked.
- **design**: the scenario gives catalogues ([design]); break-pressure tanks are placed
  where static head demands them, sizes and classes are chosen at least cost
  (``sizing``), air valves and washouts are placed (``features``), surge is checked.

It touches no file except through ``geo`` (route, DEM) and ``catalogue`` (pipe
tables); writing results is the report package's job.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field, replace

import numpy as np
from numpy.typing import NDArray
from pyproj import Transformer
from shapely.geometry import LineString, Point

from ..catalogue.pipes import PipeOption, load_options
from ..catalogue.standards import temperature_factor
from ..errors import DesignError, InputError, PlannerError
from ..geo.profile import Profile, pin_profile, profile_from_survey, sample_profile, split_profile
from ..geo.route import WGS84, Survey, read_route
from ..hydraulics import friction as fr
from ..hydraulics import surge as sg
from ..hydraulics import water
from ..hydraulics.line import FreeSurface, LineEnergy, PipeHydraulics, line_energy, segment_flows
from ..hydraulics.network import surge_path_lengths
from ..scenario import Scenario
from ..units import G
from .checks import (Finding, _where, check_line, check_outlet, check_surge, check_tank,
                     check_uncertainty, check_yield, gravity_reachable, stretches as runs)
from .features import Feature, place_features
from .uncertainty import Uncertainty, line_uncertainty, model_for
from .sizing import (ARRIVAL, MAX, SizingInfeasible, SizingProblem, SizingResult,
                     best_single_size, solve_sizing, solve_whole_pieces)
from .tanks import TankSite, place_tanks

SEVERITY_ORDER = {"error": 0, "warning": 1, "note": 2}


def finding_order(f: Finding) -> tuple:
    """How findings are listed, for lines and trees alike: errors first, then by chainage."""
    return (SEVERITY_ORDER[f.severity], f.chainage_m if f.chainage_m is not None else -1.0,
            f.message)


#: Rounds of "solve, build, recheck every point, tighten where short" at most.
RECHECK_ROUNDS = 12


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
    basis: str = "flow given"
    max_pressure_m: float | None = None

    @property
    def ok(self) -> bool:
        return self.pressure_head_m >= self.min_pressure_m - 1e-6


@dataclass(frozen=True)
class TankResult:
    """A break-pressure tank: its water level and the head it takes out of the line."""

    name: str
    chainage_m: float
    index: int
    water_level_m: float
    arrival_hgl_m: float
    rule: str = "placed by the engineer"

    @property
    def dissipated_m(self) -> float:
        """Head destroyed in the tank at design flow [m] (negative: tank not reached)."""
        return self.arrival_hgl_m - self.water_level_m


@dataclass(frozen=True)
class Stretch:
    """A run of one pipe option along the line."""

    option: PipeOption
    start_index: int
    end_index: int
    chainage_m: float
    chainage_end_m: float
    length_m: float                 # along the pipe (3-D)
    cost: float
    rating_head_m: float            # derated rating as head
    max_static_head_m: float
    min_pressure_head_m: float
    max_velocity_mps: float
    surge_head_m: float = float("nan")
    wave_speed_mps: float = float("nan")
    reach_length_m: float = float("nan")   # from the free surface feeding it [m]


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
    rating_head_m: NDArray[np.float64]           # derated rating at each point, as head
    findings: tuple[Finding, ...]
    mode: str = "check"
    stretches: tuple[Stretch, ...] = field(default=())
    features: tuple[Feature, ...] = field(default=())
    sizing: SizingResult | None = None
    single_size_cost: float | None = None
    required_pressure_m: NDArray[np.float64] | None = None
    binding_chainages_m: tuple[float, ...] = field(default=())
    uncertainty: Uncertainty | None = None

    @property
    def errors(self) -> list[Finding]:
        return [f for f in self.findings if f.severity == "error"]

    @property
    def pipe_cost(self) -> float:
        return float(sum(s.cost for s in self.stretches))

    @property
    def max_static(self) -> tuple[float, float]:
        """Highest static pressure head on the line [m] and its chainage [m].

        Includes the pipe arriving at each tank, which still sees the level upstream.
        """
        e, prof = self.energy, self.profile
        heads = list(e.static_pressure_head)
        where = list(prof.chainage_m)
        levels = [self.source_top_level_m] + [t.water_level_m for t in self.tanks]
        for t, level in zip(self.tanks, levels[:-1]):
            heads.append(level - float(prof.pipe_m[t.index]))
            where.append(float(prof.chainage_m[t.index]))
        k = int(np.nanargmax(heads))
        return float(heads[k]), float(where[k])


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
    return sample_profile(route, dem if dem is not None else list(sc.terrain.dem),
                          spacing_m=sc.route.spacing_m, cover_m=sc.criteria.cover_m,
                          max_void_m=sc.terrain.max_void_m,
                          vertical_datum=sc.terrain.vertical_datum)


def _chainage_of(profile: Profile, key: str, chainage: float | None, location, tol: float) -> float:
    if chainage is not None:
        if chainage > profile.length_m + tol:
            raise InputError(f"{key}.chainage_m = {chainage:,.0f} m is beyond the end of the "
                             f"line ({profile.length_m:,.0f} m); check the chainage, or extend "
                             "the route")
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


def _given_pipe(sc: Scenario) -> PipeOption:
    p = sc.pipe
    nan = float("nan")
    od = p.outside_diameter_m if p.outside_diameter_m is not None else nan
    return PipeOption(material=p.material, label=p.label or p.material, outside_diameter=od,
                      inside_diameter=p.inside_diameter_m, wall=(od - p.inside_diameter_m) / 2,
                      rating=p.rating_pa,
                      roughness=p.roughness_m if p.roughness_m is not None else nan,
                      c_factor=p.c_factor if p.c_factor is not None else nan,
                      elastic_modulus=p.elastic_modulus_pa if p.elastic_modulus_pa is not None
                      else nan, cost_per_m=0.0, catalogue="scenario [pipe]")


def _candidate_data(options, flows, rho, nu, method):
    """Velocity, velocity head and friction slope of every option in every segment."""
    d = np.array([o.inside_diameter for o in options])
    v = fr.velocity(flows[:, None], d[None, :])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")      # transition warnings for candidates not chosen
        loss = fr.head_loss(flows[:, None], d[None, :], 1.0, method=method,
                            roughness=np.array([o.roughness for o in options])[None, :],
                            c_factor=np.array([o.c_factor for o in options])[None, :],
                            kinematic_viscosity=nu)
    return np.atleast_2d(v), np.atleast_2d(v) ** 2 / (2 * G), np.atleast_2d(loss)


def _wave_speeds(options, rho):
    out = []
    for o in options:
        if np.isfinite(o.elastic_modulus) and np.isfinite(o.wall) and np.isfinite(o.outside_diameter):
            out.append(sg.wave_speed(o.outside_diameter - o.wall, o.wall, o.elastic_modulus,
                                     density=rho))
        else:
            out.append(float("nan"))
    return np.array(out)


def plan_scenario(scenario: Scenario, *, profile: Profile | None = None, dem=None,
                  compare_single_size: bool = True) -> Plan:
    """Compute (and in design mode, design) a scenario's line at design flow.

    Parameters
    ----------
    scenario : Scenario
        From :func:`planner.scenario.load_scenario`.
    profile : Profile, optional
        A profile already sampled (e.g. while editing a route); else sampled here.
    dem : Dem, optional
        An open DEM to reuse between calls.
    compare_single_size : bool
        Also price the cheapest single size for comparison (the live editor skips it).

    Returns
    -------
    Plan

    Raises
    ------
    DesignError
        In design mode, when no design can meet the limits; the message says where
        and why, in numbers.
    """
    sc = scenario
    cr = sc.criteria
    prof = profile if profile is not None else build_profile(sc, dem)
    tol = cr.snap_tolerance_m
    if sc.survey_points and not prof.pins:
        prof = pin_profile(prof, [(sp.name, _chainage_of(prof, f"survey_points[{i}]", sp.chainage_m,
                                                         sp.location, tol), sp.elevation_m)
                                  for i, sp in enumerate(sc.survey_points, start=1)])
    ch = prof.chainage_m
    n = prof.n

    # -- the source's free surface
    g0 = float(prof.ground_m[0])
    top = sc.source.top_level_m if sc.source.top_level_m is not None else g0 + sc.source.top_above_ground_m
    low = sc.source.low_level_m if sc.source.low_level_m is not None else g0 + sc.source.low_above_ground_m
    if low > top:
        raise InputError(f"{sc.path}: source low water level {low:.2f} m is above the top "
                         f"water level {top:.2f} m")

    # -- outlets, fixed tanks and fittings placed on the profile
    placed = []
    for i, o in enumerate(sc.outlets, start=1):
        placed.append((o, prof.index_at(_chainage_of(prof, f"outlets[{i}]", o.chainage_m,
                                                     o.location, tol))))
    fixed = []
    for i, tk in enumerate(sc.tanks, start=1):
        j = prof.index_at(_chainage_of(prof, f"break_pressure_tanks[{i}]", tk.chainage_m, None, tol))
        if j <= (fixed[-1][0] if fixed else 0) or j >= n - 1:
            raise InputError(f"break_pressure_tanks[{i}].chainage_m = {tk.chainage_m:,.0f} m: a "
                             "tank must lie inside the line, after the previous tank")
        fixed.append((j, float(prof.ground_m[j] + tk.water_above_ground_m), tk.name))
    point_k = np.zeros(n)
    for i, f in enumerate(sc.fittings, start=1):
        point_k[prof.index_at(_chainage_of(prof, f"fittings[{i}]", f.chainage_m, None, tol))] += f.k
    impossible = gravity_reachable(top, float(prof.pipe_m[0]), [
        (o.name, float(ch[j]), float(prof.ground_m[j])) for o, j in placed])
    if impossible:
        raise DesignError("no gravity flow is possible:\n  - " + "\n  - ".join(impossible))

    # -- design flows by mass balance along the line; water properties
    flows = segment_flows(ch, [(float(ch[j]), o.flow_m3s) for o, j in placed])
    rho = water.density(cr.temperature_c)
    nu = water.kinematic_viscosity(cr.temperature_c)

    # -- what may be used, with its rating derated for the wall temperature
    design = sc.design is not None
    options, rating_head = pipe_options(sc, rho)

    # -- break-pressure tanks, then what each segment may be made of
    wave = _wave_speeds(options, rho)
    v_cand, hv_cand, loss_cand = _candidate_data(options, flows, rho, nu, cr.friction)
    names = {j: name for j, _, name in fixed}
    margin = 0.0
    for _ in range(12):
        sites = _tank_sites(sc, prof, options, rating_head, top, fixed, margin)
        surfaces = [FreeSurface(0, top, low)] + [FreeSurface(s.index, s.level, s.level)
                                                 for s in sites]
        bounds = [f.index for f in surfaces] + [n - 1]
        reaches = list(zip(bounds[:-1], bounds[1:]))
        seg_reach = np.searchsorted([f.index for f in surfaces], np.arange(n - 1), side="right") - 1
        seg_level = np.array([surfaces[r].static_level for r in seg_reach])
        seg_static = seg_level - np.minimum(prof.pipe_m[:-1], prof.pipe_m[1:])
        reach_len = surge_path_lengths([prof.slope_length_m], [-1], [[f.index for f in surfaces]])[0]
        surge_cand = np.where(np.isfinite(wave)[None, :],
                              sg.surge_head(reach_len[seg_reach][:, None], v_cand, wave[None, :],
                                            cr.valve_closure_s), 0.0)
        if not design:
            break
        statics_ok = seg_static[:, None] <= rating_head[None, :]
        fits = cr.surge_rating_factor * rating_head[None, :] - seg_static[:, None] - surge_cand
        allowed = statics_ok & (fits >= 0) & (v_cand <= cr.velocity_max_mps)
        pool = _surge_pool(statics_ok & (v_cand <= cr.velocity_max_mps), v_cand,
                           cr.velocity_min_mps)
        short = ~(allowed & pool).any(axis=1) & pool.any(axis=1)
        if not sc.design.auto_tanks or not short.any():
            break
        # surge leaves no class for some segments (or only pipes so wide that the water
        # barely moves): lower the tanks' static limit by the shortfall
        margin += float(np.max(-np.max(np.where(pool, fits, -np.inf), axis=1)[short])) + 1.0
    auto_no = 0
    tank_names = []
    for s in sites:
        if s.fixed:
            tank_names.append(names.get(s.index, "break-pressure tank"))
        else:
            auto_no += 1
            tank_names.append(f"BPT {auto_no} (placed)")
    pt_reach = np.searchsorted([f.index for f in surfaces], np.arange(n), side="right") - 1
    static_p = np.array([surfaces[r].static_level for r in pt_reach]) - prof.pipe_m
    line_required = np.minimum(cr.min_line_pressure_m, np.maximum(static_p, 0.0) / 2.0)
    required = line_required.copy()
    for o, j in placed:
        required[j] = max(required[j], o.min_pressure_m)

    sizing = None
    single_cost = None
    if not design:
        seg_opt = np.zeros(n - 1, dtype=np.int64)
        refined = prof
    else:
        _feasibility(prof, options, allowed, flows, surfaces, reaches, required, point_k,
                     seg_static, rating_head, v_cand, nu, cr)
        splits = _split_points(prof, reaches, placed, point_k, sc.design.split_spacing_m)
        # a sub-stretch admits a candidate only if all its segments do; of each size only
        # the cheapest class it admits can be part of a least-cost design
        allowed_k = _cheapest_per_size(np.logical_and.reduceat(allowed, splits[:-1], axis=0),
                                       options)
        extra = np.zeros(n)
        # an outlet's own maximum pressure is a limit of the design (head burnt in the pipe)
        max_pressure = None
        if any(o.max_pressure_m is not None for o, _ in placed):
            max_pressure = np.full(n, np.inf)
            for o, j in placed:
                if o.max_pressure_m is not None:
                    max_pressure[j] = o.max_pressure_m
        final = ("reach" if sc.design.one_size_per_reach else
                 "pieces" if sc.design.whole_pieces else "lp")
        # the programme carries the velocity heads (exactly for a sub-stretch of one
        # pipe); the built line is rechecked at every point, size changes included, and
        # only where it still falls short (the chord and the mean velocity head of a
        # sub-stretch split between two sizes) is the programme tightened there
        converged = False
        for _ in range(RECHECK_ROUNDS):
            problem = _problem(prof, options, allowed_k, loss_cand[splits[:-1]],
                               hv_cand[splits[:-1]], surfaces, reaches, required + extra,
                               point_k, cr, splits, max_pressure)
            sizing = solve_design(problem, final, lambda i: f"at chainage {ch[i]:,.0f} m")
            refined, seg_opt = _build_line(prof, problem.splits, sizing.lengths, options)
            energy, remap, surfaces_r, req_r = _exact_energy(
                prof, refined, seg_opt, options, surfaces, placed, point_k, required,
                line_required, nu, cr)
            converged = tighten(extra, ch, refined.chainage_m, req_r - energy.pressure_head)
            if converged:
                break
        single_cost = best_single_size(problem)[0] if compare_single_size else None
    if not design:
        energy, remap, surfaces_r, req_r = _exact_energy(
            prof, refined, seg_opt, options, surfaces, placed, point_k, required,
            line_required, nu, cr)
    rch = refined.chainage_m
    seg_rating = rating_head[seg_opt]
    pt_rating = np.minimum(np.append(seg_rating, seg_rating[-1]), np.insert(seg_rating, 0, seg_rating[0]))

    # -- results
    outlets = tuple(OutletResult(
        name=o.name, kind=o.kind, chainage_m=float(ch[j]), index=int(remap[j]), flow_m3s=o.flow_m3s,
        ground_m=float(prof.ground_m[j]), pressure_head_m=float(energy.pressure_head[remap[j]]),
        min_pressure_m=o.min_pressure_m, basis=o.basis,
        max_pressure_m=o.max_pressure_m if o.max_pressure_m is not None
        else cr.max_outlet_pressure_m) for o, j in placed)
    tanks = tuple(TankResult(name=name, chainage_m=float(ch[s.index]), index=int(remap[s.index]),
                             water_level_m=s.level,
                             arrival_hgl_m=float(energy.arrival_hgl[remap[s.index]]), rule=s.rule)
                  for s, name in zip(sites, tank_names))
    stretches = _stretches(refined, energy, seg_opt, options, seg_rating, reaches_r=[
        (int(remap[a]), int(remap[b])) for a, b in reaches], wave=wave, cr=cr, surge_len=reach_len)
    od_pt = np.array([options[j].outside_diameter * 1e3 if np.isfinite(options[j].outside_diameter)
                      else options[j].inside_diameter * 1e3 for j in np.append(seg_opt, seg_opt[-1])])
    features = place_features(rch, refined.pipe_m, energy.hgl, od_pt,
                              [(int(remap[a]), int(remap[b])) for a, b in reaches],
                              prominence_m=cr.feature_prominence_m, grade_change=cr.grade_break,
                              grade_window_m=cr.grade_window_m, spacing_m=cr.air_valve_spacing_m,
                              long_ascent_m=cr.long_ascent_m)

    # -- checks, each at every profile point
    total = float(sum(o.flow_m3s for o in sc.outlets))
    volumes = [o.daily_volume_m3 for o in sc.outlets]
    findings = check_yield(total, sc.source.yield_m3s,
                           sum(volumes) if all(v is not None for v in volumes) else None)
    findings += line_findings(refined, energy, seg_rating, surfaces_r, outlets, tanks,
                              stretches, features, cr)
    if design and not converged:
        findings.append(Finding(
            "warning", "sizing-recheck",
            f"the sized line was rechecked point by point {RECHECK_ROUNDS} times and still "
            "falls short of a limit somewhere (see the other findings)",
            "use split_spacing_m = 0 (a split point at every profile point) or a finer spacing"))
    if design and sizing is not None:
        findings.append(Finding(
            "note", "sizing",
            f"sizes and classes chosen at least cost by the {sizing.summary}"
            + ("" if single_cost is None else
               f"; the cheapest single size would cost {single_cost:,.0f}"
               if np.isfinite(single_cost) else "; no single size meets every limit")))
    findings += [Finding("note", "profile", note) for note in prof.notes]
    findings.sort(key=finding_order)
    plan = Plan(scenario=sc, profile=refined, energy=energy, outlets=outlets, tanks=tanks,
                source_top_level_m=float(top), source_low_level_m=float(low),
                total_flow_m3s=total, density=float(rho), kinematic_viscosity=float(nu),
                rating_head_m=pt_rating, findings=tuple(findings),
                mode="design" if design else "check", stretches=stretches,
                features=tuple(features), sizing=sizing, single_size_cost=single_cost,
                required_pressure_m=req_r,
                binding_chainages_m=tuple(float(ch[i]) for i in sizing.binding) if sizing else ())
    return with_uncertainty(plan)


def with_uncertainty(plan: Plan) -> Plan:
    """The plan with the DEM-error Monte Carlo and its findings (when it applies)."""
    from dataclasses import replace

    sc = plan.scenario
    model = model_for(sc.uncertainty, survey=sc.terrain is None)
    if model is None:
        return plan
    u = line_uncertainty(plan, model, realisations=sc.uncertainty.realisations,
                         seed=sc.uncertainty.seed, source_moves=sc.source.top_level_m is None,
                         pins=[c for _, c, _ in plan.profile.pins],
                         pin_names=tuple(n for n, _, _ in plan.profile.pins))
    found = list(plan.findings) + check_uncertainty(u)
    found.sort(key=finding_order)
    return replace(plan, uncertainty=u, findings=tuple(found))


def _exact_energy(prof, refined, seg_opt, options, surfaces, placed, point_k, required,
                  line_required, nu, cr):
    """The energy line of a built line, exactly, on its (refined) profile.

    Returns the LineEnergy, the map from original to refined points, the free surfaces
    on the refined profile and the pressure required at every refined point: at an
    inserted point, the line's own requirement interpolated along the pipe (an
    outlet's minimum holds at the outlet, not at a size change beside it).
    """
    ch, rch = prof.chainage_m, refined.chainage_m
    remap = np.searchsorted(rch, ch)
    surfaces_r = [FreeSurface(int(remap[f.index]), f.static_level, f.operating_level)
                  for f in surfaces]
    k_r = np.zeros(refined.n)
    k_r[remap] = point_k
    flows_r = segment_flows(rch, [(float(ch[j]), o.flow_m3s) for o, j in placed])
    pipe = PipeHydraulics(
        inside_diameter=np.array([options[j].inside_diameter for j in seg_opt]),
        method=cr.friction,
        roughness=np.array([options[j].roughness for j in seg_opt])
        if cr.friction == "colebrook" else None,
        c_factor=np.array([options[j].c_factor for j in seg_opt])
        if cr.friction == "hazen-williams" else None)
    energy = line_energy(refined.slope_length_m, refined.pipe_m, flows_r, pipe,
                         kinematic_viscosity=nu, surfaces=surfaces_r, entrance_k=cr.entrance_k,
                         point_k=k_r)
    req_r = np.interp(refined.slope_length_m, prof.slope_length_m, line_required)
    req_r[remap] = required
    return energy, remap, surfaces_r, req_r


def line_findings(refined: Profile, energy: LineEnergy, seg_rating: NDArray, surfaces_r,
                  outlets, tanks, stretches, features, cr) -> list[Finding]:
    """Every check of one line (or one link of a tree), at every point.

    ``surfaces_r`` are the free surfaces on the (refined) profile; its first may be a
    junction.  At a tank, the pipe arriving still carries the static head of the level
    upstream, against the rating of the pipe arriving.
    """
    pt_rating = np.minimum(np.append(seg_rating, seg_rating[-1]),
                           np.insert(seg_rating, 0, seg_rating[0]))
    static_check = energy.static_pressure_head.copy()
    for prev, f in zip(surfaces_r[:-1], surfaces_r[1:]):
        static_check[f.index] = prev.static_level - float(refined.pipe_m[f.index])
        pt_rating[f.index] = seg_rating[f.index - 1]
    out = check_line(chainage=refined.chainage_m, pressure_head=energy.pressure_head,
                     static_pressure_head=static_check, velocity=energy.velocity,
                     flowing=energy.flow > 0, rating_head=pt_rating, criteria=cr,
                     elevation=refined.pipe_m, temperature_c=cr.temperature_c,
                     surface_index=tuple(f.index for f in surfaces_r))
    for o in outlets:
        out += check_outlet(o.name, o.chainage_m, o.pressure_head_m, o.min_pressure_m,
                            o.max_pressure_m)
    for t in tanks:
        out += check_tank(t.name, t.chainage_m, t.arrival_hgl_m,
                          t.water_level_m + cr.tank_inlet_head_m)
    out += check_surge(stretches, cr)
    for f in features:
        if f.kind == "air_valve" and energy.pressure_head[f.index] < 0:
            out.append(Finding(
                "error", "air-valve-vacuum",
                f"the air valve at chainage {f.chainage_m:,.0f} m sits where the pressure is "
                f"{energy.pressure_head[f.index]:.1f} m: it would let air in and break the flow",
                "lower the line there, or use a larger pipe upstream", f.chainage_m, f.chainage_m))
    return out


def pipe_options(sc: Scenario, rho: float) -> tuple[list[PipeOption], NDArray[np.float64]]:
    """The pipes that may be used (catalogues, or the scenario's one pipe) and their
    ratings derated for the wall temperature, as head [m]."""
    cr = sc.criteria
    if sc.design is not None:
        d = sc.design
        try:
            options = load_options(d.catalogues, materials=d.materials, min_od_mm=d.min_size_mm,
                                   max_od_mm=d.max_size_mm)
        except PlannerError as exc:
            raise type(exc)(f"{sc.path.name}, design.catalogues: {exc}") from None
    else:
        options = [_given_pipe(sc)]
    try:
        factors = np.array([temperature_factor(o.material, cr.wall_temperature_c) for o in options])
    except ValueError as exc:
        raise InputError(f"criteria.pipe_temperature_c: {exc}") from None
    return options, np.array([o.rating for o in options]) * factors / (rho * G)


def static_limit(sc: Scenario, options, rating_head) -> tuple[float, str]:
    """The static head above which a tank is placed [m], and what that limit is, in words."""
    limit = float(rating_head.max())
    reason = f"the highest class available, {options[int(rating_head.argmax())].label}"
    if sc.design is not None and sc.design.max_static_pressure_m is not None \
            and sc.design.max_static_pressure_m < limit:
        limit, reason = sc.design.max_static_pressure_m, "design.max_static_pressure_m"
    return limit, reason


def _surge_pool(ok: NDArray, velocity: NDArray, velocity_min: float) -> NDArray:
    """The candidates a segment should be able to use once surge is allowed for.

    Those that keep at least the self-cleansing velocity when any does (so that surge
    near a tank's limit is met by moving the tank, not by a pipe so wide that sediment
    settles and air stays; common practice), else every candidate within the limits.
    """
    band = ok & (velocity >= velocity_min)
    return np.where(band.any(axis=1)[:, None], band, ok)


def _tank_sites(sc, prof, options, rating_head, top, fixed, margin) -> list[TankSite]:
    """Tanks: the engineer's, plus (design mode) those the static head demands."""
    ch, n = prof.chainage_m, prof.n
    if sc.design is None or not sc.design.auto_tanks:
        return [TankSite(j, lvl, "placed by the engineer", fixed=True) for j, lvl, _ in fixed]
    limit, reason = static_limit(sc, options, rating_head)
    if margin > 0:
        limit -= margin
        reason += f", less {margin:.0f} m for surge"
    forbidden = np.zeros(n, dtype=bool)
    for a, b in sc.design.no_tank_zones:
        forbidden |= (ch >= a) & (ch <= b)
    return place_tanks(ch, prof.ground_m, prof.pipe_m, source_level=top, limit_head=limit,
                       water_depth=sc.design.tank_water_depth_m,
                       fixed=[(j, lvl) for j, lvl, _ in fixed], forbidden=forbidden,
                       limit_reason=reason)


#: Shortfall of the built line [m] above which the programme is tightened there.
SHORT_TOL_M = 5e-4


def size_groups(options: list[PipeOption]) -> NDArray[np.int64]:
    """The size group of each option: one per (material, outside diameter)."""
    groups: dict = {}
    return np.array([groups.setdefault((o.material, round(o.outside_diameter, 6)), len(groups))
                     for o in options])


def tighten(extra: NDArray, chainage: NDArray, refined_chainage: NDArray, short: NDArray) -> bool:
    """Raise the pressure asked of the programme where the built line fell short.

    ``short`` [m] is per refined point; each shortfall (plus 1 mm) is added to ``extra``
    at the profile point at or after it.  Returns whether nothing was short.
    """
    hit = np.flatnonzero(short > SHORT_TOL_M)
    j = np.minimum(np.searchsorted(chainage, refined_chainage[hit] - 1e-9), chainage.size - 1)
    np.add.at(extra, j, short[hit] + 1e-3)
    return hit.size == 0


def _cheapest_per_size(allowed: NDArray, options: list[PipeOption]) -> NDArray:
    """Keep, per segment and per (material, outside diameter), the cheapest admissible class.

    A higher class of the same size costs more and has a smaller bore, so it can never
    be part of a cheaper design once the lower class is admissible.
    """
    group = size_groups(options)
    out = np.zeros_like(allowed)
    cost = np.array([o.cost_per_m for o in options])
    for g in np.unique(group):
        cols = np.flatnonzero(group == g)
        sub = np.where(allowed[:, cols], cost[cols][None, :], np.inf)
        best = np.argmin(sub, axis=1)
        ok = np.isfinite(sub[np.arange(sub.shape[0]), best])
        out[np.flatnonzero(ok), cols[best[ok]]] = True
    return out


def _feasibility(prof, options, allowed, flows, surfaces, reaches, required, point_k,
                 seg_static, rating_head, v_cand, nu, cr):
    """Explain, in words and numbers, why no design can exist (largest pipes everywhere)."""
    ch = prof.chainage_m
    problems = []
    none = ~allowed.any(axis=1)
    for a, b in runs(none):
        too_static = seg_static[a:b + 1].max() > rating_head.max()
        if too_static:
            problems.append(f"{_where(ch, a, b + 1)} the static head reaches "
                            f"{seg_static[a:b + 1].max():.0f} m, above the highest class available "
                            f"({rating_head.max():.0f} m): allow a break-pressure tank upstream or "
                            "add a higher class")
        else:
            problems.append(f"{_where(ch, a, b + 1)} no pipe in the catalogues keeps the velocity "
                            f"below {cr.velocity_max_mps:g} m/s and the static head plus surge "
                            "within its class: add larger sizes or higher classes")
    if problems:
        raise DesignError("no design is possible:\n  - " + "\n  - ".join(problems))
    ids = np.array([o.inside_diameter for o in options])
    largest = np.argmax(np.where(allowed, ids[None, :], -1.0), axis=1)
    pipe = PipeHydraulics(inside_diameter=ids[largest], method=cr.friction,
                          roughness=np.array([options[j].roughness for j in largest])
                          if cr.friction == "colebrook" else None,
                          c_factor=np.array([options[j].c_factor for j in largest])
                          if cr.friction == "hazen-williams" else None)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        e = line_energy(prof.slope_length_m, prof.pipe_m, flows, pipe, kinematic_viscosity=nu,
                        surfaces=surfaces, entrance_k=cr.entrance_k, point_k=point_k)
    short = e.pressure_head < required - 1e-6
    level = e.static_head
    for a, b in runs(short):
        worst = a + int(np.argmin(e.pressure_head[a:b + 1] - required[a:b + 1]))
        above_static = prof.pipe_m[worst] - level[worst]
        if above_static > 0:
            problems.append(f"at chainage {ch[worst]:,.0f} m the pipe is {above_static:.1f} m above "
                            "the static head line, so no pipe delivers there: re-route, lower the "
                            "line or pump")
        else:
            problems.append(f"{_where(ch, a, b)} even the largest pipes ({options[largest[min(a, largest.size - 1)]].label}) "
                            f"leave {e.pressure_head[worst]:.1f} m of pressure at chainage "
                            f"{ch[worst]:,.0f} m where {required[worst]:.1f} m is needed: allow larger "
                            "sizes, reduce the design flow, or re-route")
    for f in surfaces[1:]:
        need = f.static_level + cr.tank_inlet_head_m
        if e.arrival_hgl[f.index] < need:
            problems.append(f"at design flow the water cannot reach the break-pressure tank at "
                            f"chainage {ch[f.index]:,.0f} m even with the largest pipes (HGL "
                            f"{e.arrival_hgl[f.index]:.1f} m, needed {need:.1f} m): allow larger sizes "
                            "or move the tank")
    if problems:
        raise DesignError("no design is possible:\n  - " + "\n  - ".join(problems))


def _split_points(prof, reaches, placed, point_k, spacing):
    """Profile points where the pipe may change size: reach ends, outlets, fittings, and
    points about ``spacing`` metres apart (every point when spacing is None)."""
    n, ch = prof.n, prof.chainage_m
    if not spacing:
        return np.arange(n)
    pts = {0, n - 1}
    pts |= {a for a, _ in reaches} | {b for _, b in reaches}
    pts |= {j for _, j in placed} | set(np.flatnonzero(point_k > 0).tolist())
    pts |= set(np.searchsorted(ch, np.arange(spacing, ch[-1], spacing)).tolist())
    return np.array(sorted(p for p in pts if 0 <= p < n), dtype=np.int64)


def _problem(prof, options, allowed_k, loss_k, hv_k, surfaces, reaches, required, point_k,
             cr, splits, max_pressure=None):
    """The sizing programme of this line (see sizing.py).

    ``loss_k`` and ``hv_k`` are the friction slope and the velocity head of every
    candidate in every piece [m/m, m]; the programme carries the velocity heads itself.
    """
    arrival = np.array([surfaces[r + 1].static_level + cr.tank_inlet_head_m + 1e-3
                        if r + 1 < len(surfaces) else -np.inf for r in range(len(reaches))])
    return SizingProblem(
        splits=splits, position=prof.slope_length_m, unit_loss=np.nan_to_num(loss_k, nan=0.0),
        velocity_head=np.nan_to_num(hv_k, nan=0.0),
        allowed=allowed_k, cost=np.array([o.cost_per_m for o in options]), group=size_groups(options),
        reaches=reaches, start_level=np.array([f.operating_level for f in surfaces]),
        start_k=np.array([cr.entrance_k + point_k[f.index] for f in surfaces]),
        # 1 mm above each limit, so that rounding never shows a designed point as short
        min_head=prof.pipe_m + required + 1e-3, arrival_min_head=arrival, point_k=point_k,
        max_head=None if max_pressure is None else prof.pipe_m + max_pressure)


def _build_line(prof: Profile, splits: NDArray, lengths: NDArray, options: list[PipeOption]):
    """Insert size changes into the profile; return it with the option of each segment.

    Within a sub-stretch made of several pipes, the larger bore goes upstream, so that
    the HGL is concave there and lies above the chord the programme checked.
    """
    pos, ch = prof.slope_length_m, prof.chainage_m
    ids = np.array([o.inside_diameter for o in options])
    cuts_pos, seq = [], []
    for k in range(lengths.shape[0]):
        u = splits[k]
        total = lengths[k].sum()
        used = np.flatnonzero(lengths[k] > 1e-6 * max(total, 1e-9))
        if used.size == 0:
            used = np.array([int(np.argmax(lengths[k]))])
        used = used[np.argsort(-ids[used])]
        share = lengths[k, used] / lengths[k, used].sum()
        bounds = pos[u] + np.cumsum(share) * (pos[splits[k + 1]] - pos[u])
        cuts_pos.extend(bounds[:-1])
        seq.append((bounds, used))
    refined, _ = split_profile(prof, np.interp(cuts_pos, pos, ch))
    rpos = refined.slope_length_m
    mid = (rpos[:-1] + rpos[1:]) / 2
    k_of = np.clip(np.searchsorted(pos[splits], mid, side="right") - 1, 0, len(seq) - 1)
    seg_opt = np.empty(refined.n - 1, dtype=np.int64)
    for i, (k, m) in enumerate(zip(k_of, mid)):
        bounds, used = seq[k]
        seg_opt[i] = used[min(int(np.searchsorted(bounds, m)), used.size - 1)]
    return refined, seg_opt


def _stretches(prof, energy, seg_opt, options, seg_rating, *, reaches_r, wave, cr, surge_len):
    """Runs of one option, with their cost, ratings, pressures and surge.

    ``surge_len`` is the wave's path length of each reach [m]
    (:func:`~planner.hydraulics.network.surge_path_lengths`).
    """
    out = []
    sl, ch = prof.slope_length_m, prof.chainage_m
    reach_of = np.zeros(prof.n - 1, dtype=np.int64)
    for r, (a, b) in enumerate(reaches_r):
        reach_of[a:b] = r
    breaks = set(a for a, _ in reaches_r)
    start = 0
    for s in range(1, seg_opt.size + 1):
        if s < seg_opt.size and seg_opt[s] == seg_opt[start] and s not in breaks:
            continue
        j = int(seg_opt[start])
        o = options[j]
        a, b = start, s
        length = float(sl[b] - sl[a])
        r = int(reach_of[a])
        v = float(np.max(energy.velocity[a:b]))
        surge = float(sg.surge_head(surge_len[r], v, wave[j], cr.valve_closure_s)) \
            if np.isfinite(wave[j]) else float("nan")
        out.append(Stretch(option=o, start_index=a, end_index=b, chainage_m=float(ch[a]),
                           chainage_end_m=float(ch[b]), length_m=length,
                           cost=length * o.cost_per_m, rating_head_m=float(seg_rating[a]),
                           max_static_head_m=float(np.max(energy.static_head[a]
                                                          - prof.pipe_m[a:b + 1])),
                           min_pressure_head_m=float(np.min(energy.pressure_head[a:b + 1])),
                           max_velocity_mps=v, surge_head_m=surge, wave_speed_mps=float(wave[j]),
                           reach_length_m=float(surge_len[r])))
        start = s
    return tuple(out)


def solve_design(problem: SizingProblem, final: str, where) -> SizingResult:
    """Solve a line's or a tree's programme by the final method the scenario asks for.

    ``final`` is ``"lp"`` (split pipes), ``"pieces"`` (one pipe per sub-stretch) or
    ``"reach"`` (one size per reach); ``where(point)`` words a point of the programme
    ("at chainage 1,200 m") for the explanation when no design exists.
    """
    try:
        if final == "pieces":
            return solve_whole_pieces(problem)
        lp = solve_sizing(problem)
        if final == "lp":
            return lp
        return replace(solve_sizing(problem, whole="reach"), split_pipe_cost=lp.cost)
    except SizingInfeasible as exc:
        raise explain_infeasible(exc, where) from None


def explain_infeasible(exc: SizingInfeasible, where) -> DesignError:
    """The message for a programme with no solution: which limits, where, by how much."""
    parts = []
    for point, kind, metres in sorted(exc.violations, key=lambda v: -v[2])[:6]:
        at = where(point)
        if kind == MAX:
            parts.append(f"{at} the pressure would exceed the outlet's maximum by {metres:.2f} m")
        elif kind == ARRIVAL:
            parts.append(f"{at} the water would arrive {metres:.2f} m too low to enter the "
                         "break-pressure tank")
        else:
            parts.append(f"{at} the pressure would fall {metres:.2f} m short of its minimum")
    if not parts:
        return DesignError(f"{exc}: every limit can be met on its own, but not with the whole "
                           "choices asked for: allow size changes within a reach or sub-stretch")
    return DesignError(f"{exc}: no choice of the pipes allowed meets every limit at once; the "
                       "least the limits would have to give:\n  - " + "\n  - ".join(parts)
                       + "\n  allow larger sizes or higher classes, lower an outlet's minimum "
                       "pressure or raise its maximum, move a tank, or re-route")
