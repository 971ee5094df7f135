"""Orchestration for a branched system: the tree of links designed as one.

Scenario (with ``route.network = true``) -> tree of links (geo.network) -> a profile per
link -> outlets placed on links -> flows by accumulation towards the source -> tanks on
every branch -> one sizing programme for the whole tree (a head per split point, the
branches starting from their junction's head) -> the energy lines recomputed exactly on
the tree -> valves, checks -> NetworkPlan.

It reuses the single line's pieces (``plan``): candidate filtering, split points,
rebuilding a link with its size changes, stretches and the checks.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import NDArray
from shapely.geometry import LineString, Point
from pyproj import Transformer

from ..errors import DesignError, InputError, InputFileError
from ..geo.network import RouteNetwork, build_tree, read_lines
from ..geo.profile import Profile
from ..geo.route import WGS84, Route
from ..geo.terrain import open_dem
from ..hydraulics import surge as sg
from ..hydraulics import water
from ..hydraulics.line import FreeSurface, LineEnergy, PipeHydraulics, segment_flows
from ..hydraulics.network import LinkData, accumulate_flows, surge_path_lengths, tree_energy
from ..scenario import Scenario
from .checks import Finding, check_uncertainty, check_yield, gravity_reachable
from .uncertainty import Uncertainty, line_uncertainty, model_for
from .features import Feature, place_features
from .plan import (RECHECK_ROUNDS, finding_order, OutletResult, Stretch, TankResult,
                   _build_line, _surge_pool, size_groups, solve_design, tighten,
                   build_profile,
                   _candidate_data, _cheapest_per_size, _split_points, _stretches,
                   _wave_speeds, line_findings, pipe_options, static_limit)
from .sizing import SizingProblem, SizingResult, best_single_size
from .tanks import TankSite, place_tanks


@dataclass(frozen=True)
class LinkPlan:
    """One link of a designed tree."""

    id: int
    name: str
    parent: int                      # upstream link, -1 from the source
    profile: Profile
    energy: LineEnergy
    stretches: tuple[Stretch, ...]
    features: tuple[Feature, ...]
    tanks: tuple[TankResult, ...]
    outlets: tuple[OutletResult, ...]
    rating_head_m: NDArray[np.float64]
    required_pressure_m: NDArray[np.float64]


@dataclass(frozen=True)
class NetworkPlan:
    """Everything computed for a branched system."""

    scenario: Scenario
    network: RouteNetwork
    links: tuple[LinkPlan, ...]
    source_top_level_m: float
    source_low_level_m: float
    total_flow_m3s: float
    density: float
    kinematic_viscosity: float
    findings: tuple[Finding, ...]
    sizing: SizingResult | None = None
    single_size_cost: float | None = None
    mode: str = "design"
    link_flow_m3s: tuple[float, ...] = field(default=())
    #: the DEM-error Monte Carlo along each path from the source to a branch end
    uncertainty: tuple[tuple[str, Uncertainty], ...] = field(default=())

    @property
    def errors(self) -> list[Finding]:
        return [f for f in self.findings if f.severity == "error"]

    @property
    def pipe_cost(self) -> float:
        return float(sum(s.cost for lk in self.links for s in lk.stretches))

    @property
    def outlets(self) -> list[OutletResult]:
        return [o for lk in self.links for o in lk.outlets]

    def path(self, link: int) -> list[int]:
        """Links from the source down to ``link``, in flow order."""
        out = []
        while link >= 0:
            out.append(link)
            link = self.links[link].parent
        return out[::-1]

    @property
    def ends(self) -> list[int]:
        """Links no other link hangs from: each path from the source ends at one."""
        return [k for k in range(len(self.links)) if not any(lk.parent == k for lk in self.links)]

    def path_name(self, link: int) -> str:
        """The names of the links from the source to ``link``, e.g. "main > school branch"."""
        return " > ".join(dict.fromkeys(self.links[i].name for i in self.path(link)))

    @property
    def outlet_risk(self) -> dict[str, tuple[float, float]]:
        """Outlet name -> (chance below its minimum, 95 % fall [m]), from the first path
        through it (see :func:`_with_uncertainty`)."""
        risk: dict[str, tuple[float, float]] = {}
        for _, u in self.uncertainty:
            for name, p, fall in u.outlets:
                risk.setdefault(name, (p, fall))
        return risk


def _link_name(net_link, k):
    return net_link.name or f"link {k + 1}"


def _on_link(net, profiles, names, line, chainage, key, tol):
    """(link, point index) of a chainage along a drawn line (split into links at tees)."""
    hits = [k for k, lk in enumerate(net.links) if lk.name == line or names[k] == line]
    if not hits:
        known = ", ".join(sorted({lk.name for lk in net.links if lk.name}))
        raise InputError(f"{key}.link = {line!r}: no line of that name; lines: {known}")
    hits.sort(key=lambda k: net.links[k].offset_m)
    k = next((k for k in hits if chainage <= net.links[k].offset_m + profiles[k].length_m + 1e-6),
             hits[-1])
    local = chainage - net.links[k].offset_m
    if local > profiles[k].length_m + tol:
        raise InputError(f"{key}.chainage_m = {chainage:,.0f} m is beyond the end of the line "
                         f"{line!r}")
    return k, profiles[k].index_at(min(max(local, 0.0), profiles[k].length_m))


def _place_outlets(sc, net, profiles, names, tol):
    """(outlet, link, point index) for every outlet: by link name and chainage, or location."""
    placed = []
    for i, o in enumerate(sc.outlets, start=1):
        key = f"outlets[{i}]"
        if o.link is not None:
            if o.chainage_m is None:
                raise InputError(f"{key}: give chainage_m along the line {o.link!r}")
            placed.append((o, *_on_link(net, profiles, names, o.link, o.chainage_m, key, tol)))
            continue
        if o.location is None:
            raise InputError(f"{key}: on a network, give location = [lon, lat], or link and chainage_m")
        best = None
        for k, prof in enumerate(profiles):
            tr = Transformer.from_crs(WGS84, prof.crs, always_xy=True)
            pt = Point(*tr.transform(*o.location))
            line = LineString(np.column_stack([prof.x, prof.y]))
            d = line.distance(pt)
            if best is None or d < best[0]:
                along = line.project(pt)
                planar = np.concatenate([[0.0], np.cumsum(np.hypot(np.diff(prof.x), np.diff(prof.y)))])
                best = (d, k, prof.index_at(float(np.interp(along, planar, prof.chainage_m))))
        if best[0] > tol:
            raise InputError(f"{key}.location {list(o.location)} is {best[0]:,.0f} m from the "
                             f"nearest link (more than criteria.snap_tolerance_m = {tol:g} m)")
        placed.append((o, best[1], best[2]))
    return placed


def plan_network(scenario: Scenario, *, lines=None, dem=None) -> NetworkPlan:
    """Design a branched system (see the module docstring).

    ``lines`` (lon/lat ``(LineString, name)`` pairs) replaces the scenario's route file
    and ``dem`` (an open :class:`~planner.geo.terrain.Dem`) its DEM paths, for the live
    editor, which keeps one DEM open between edits.
    """
    sc, cr = scenario, scenario.criteria
    design = sc.design is not None
    try:
        net = build_tree(read_lines(sc.route.file) if lines is None else lines,
                         source=sc.source.location, snap_tolerance_m=sc.route.join_tolerance_m)
    except InputFileError:
        raise
    except InputError as exc:
        raise InputError(f"{sc.route.file if lines is None else 'the drawing'}: {exc}") from None
    links = net.links
    L = len(links)
    names = [_link_name(lk, k) for k, lk in enumerate(links)]
    for nm in set(names):                       # a drawn line split at tees: number its parts
        parts = sorted((lk.offset_m, k) for k, lk in enumerate(links) if names[k] == nm)
        if len(parts) > 1:
            for i, (_, k) in enumerate(parts, start=1):
                names[k] = f"{nm}, part {i}"
    into = {lk.downstream: k for k, lk in enumerate(links)}
    parents = [into.get(lk.upstream, -1) for lk in links]
    label = sc.route.file.name if lines is None else "the drawing"
    grid = open_dem(dem if dem is not None else list(sc.terrain.dem))
    try:
        profiles = [build_profile(sc, grid, Route(line=lk.line, source=f"{label} ({names[k]})"))
                    for k, lk in enumerate(links)]
    finally:
        if dem is None:
            grid.close()
    root_link = next(k for k in range(L) if parents[k] < 0)
    g0 = float(profiles[root_link].ground_m[0])
    top = sc.source.top_level_m if sc.source.top_level_m is not None else g0 + sc.source.top_above_ground_m
    low = sc.source.low_level_m if sc.source.low_level_m is not None else g0 + sc.source.low_above_ground_m

    placed = _place_outlets(sc, net, profiles, names, cr.snap_tolerance_m)
    impossible = gravity_reachable(top, float(profiles[root_link].pipe_m[0]), [
        (o.name, float(profiles[k].chainage_m[j]), float(profiles[k].ground_m[j]))
        for o, k, j in placed])
    if impossible:
        raise DesignError("no gravity flow is possible:\n  - " + "\n  - ".join(impossible))
    fixed = [[] for _ in range(L)]
    for i, tk in enumerate(sc.tanks, start=1):
        k, j = _on_link(net, profiles, names, tk.link, tk.chainage_m,
                        f"break_pressure_tanks[{i}]", cr.snap_tolerance_m)
        if j <= 0 or j >= profiles[k].n - 1:
            raise InputError(f"break_pressure_tanks[{i}]: a tank must lie inside a link, not at "
                             "a junction or an end")
        fixed[k].append((j, float(profiles[k].ground_m[j] + tk.water_above_ground_m), tk.name))
    point_k = [np.zeros(p.n) for p in profiles]
    for i, f in enumerate(sc.fittings, start=1):
        k, j = _on_link(net, profiles, names, f.link, f.chainage_m, f"fittings[{i}]",
                        cr.snap_tolerance_m)
        point_k[k][j] += f.k
    own = [sum(o.flow_m3s for o, k, _ in placed if k == kk) for kk in range(L)]
    total_in = accumulate_flows(parents, own)
    children = [[c for c in range(L) if parents[c] == k] for k in range(L)]
    flows = []
    for k, prof in enumerate(profiles):
        draws = [(float(prof.chainage_m[j]), o.flow_m3s) for o, kk, j in placed if kk == k]
        down = sum(total_in[c] for c in children[k])
        if down > 0:
            draws.append((prof.length_m, down))
        flows.append(segment_flows(prof.chainage_m, draws))

    rho = water.density(cr.temperature_c)
    nu = water.kinematic_viscosity(cr.temperature_c)
    d = sc.design
    options, rating_head = pipe_options(sc, rho)
    wave = _wave_speeds(options, rho)
    cand = [_candidate_data(options, q, rho, nu, cr.friction) for q in flows]

    # -- tanks on every branch (the static level runs on through junctions), then candidates
    limit, reason = static_limit(sc, options, rating_head)
    auto = design and d.auto_tanks
    margin = 0.0
    for _ in range(12):
        sites, allowed, surfaces, gaps = [], [], [], []
        for k, prof in enumerate(profiles):
            lvl = top if parents[k] < 0 else surfaces[parents[k]][-1].static_level
            if auto:
                s_k = place_tanks(prof.chainage_m, prof.ground_m, prof.pipe_m, source_level=lvl,
                                  limit_head=limit - margin, water_depth=d.tank_water_depth_m,
                                  fixed=[(j, level) for j, level, _ in fixed[k]],
                                  limit_reason=reason + (f", less {margin:.0f} m for surge"
                                                         if margin else ""))
            else:
                s_k = [TankSite(j, level, "placed by the engineer", fixed=True)
                       for j, level, _ in sorted(fixed[k])]
            sites.append(s_k)
            surfaces.append([FreeSurface(0, lvl, np.nan)]
                            + [FreeSurface(s.index, s.level, s.level) for s in s_k])
        # the wave's path from the free surface feeding each reach (for surge)
        surge_len = surge_path_lengths([p.slope_length_m for p in profiles], parents,
                                       [[f.index for f in surf] for surf in surfaces])
        for k, prof in enumerate(profiles):
            surf = surfaces[k]
            seg_r = np.searchsorted([f.index for f in surf], np.arange(prof.n - 1), side="right") - 1
            level = np.array([surf[r].static_level for r in seg_r])
            static = level - np.minimum(prof.pipe_m[:-1], prof.pipe_m[1:])
            v, hv, loss = cand[k]
            surge = np.where(np.isfinite(wave)[None, :],
                             sg.surge_head(surge_len[k][seg_r][:, None], v, wave[None, :],
                                           cr.valve_closure_s), 0.0)
            ok_static = static[:, None] <= rating_head[None, :]
            fits = cr.surge_rating_factor * rating_head[None, :] - static[:, None] - surge
            slow = v <= cr.velocity_max_mps
            allowed.append(ok_static & (fits >= 0) & slow)
            # segments that surge leaves without a class, or only with pipes too wide to
            # carry sediment and air: how far short they are
            pool = _surge_pool(ok_static & slow, v, cr.velocity_min_mps)
            short = ~(allowed[-1] & pool).any(axis=1) & pool.any(axis=1)
            gaps.append(-np.max(np.where(pool, fits, -np.inf), axis=1)[short])
        shortfall = max((float(g.max()) for g in gaps if g.size), default=0.0)
        if shortfall <= 0 or not auto:
            break
        margin += shortfall + 1.0
    for k, a in enumerate(allowed if design else []):
        none = ~a.any(axis=1)
        if none.any():
            i = int(np.flatnonzero(none)[0])
            raise DesignError(f"no design is possible: on {names[k]} at chainage "
                              f"{profiles[k].chainage_m[i]:,.0f} m no pipe in the catalogues keeps "
                              f"the velocity below {cr.velocity_max_mps:g} m/s and the static head "
                              "plus surge within its class: add larger sizes or higher classes")

    # -- one programme for the whole tree
    reaches_local = [[(a, b) for a, b in zip([f.index for f in surf], [f.index for f in surf][1:] + [prof.n - 1])]
                     for surf, prof in zip(surfaces, profiles)]
    required, line_req = [], []
    for k, prof in enumerate(profiles):
        idx = [f.index for f in surfaces[k]]
        pr = np.searchsorted(idx, np.arange(prof.n), side="right") - 1
        static_p = np.array([surfaces[k][r].static_level for r in pr]) - prof.pipe_m
        req = np.minimum(cr.min_line_pressure_m, np.maximum(static_p, 0.0) / 2.0)
        line_req.append(req.copy())
        for o, kk, j in placed:
            if kk == k:
                req[j] = max(req[j], o.min_pressure_m)
        required.append(req)
    offsets = np.concatenate([[0], np.cumsum([p.n for p in profiles])])
    if not design:
        built = [(prof, np.zeros(prof.n - 1, dtype=np.int64)) for prof in profiles]
        energies, remaps, req_r = _tree_exact(profiles, built, parents, surfaces, placed, children,
                                              total_in, options, required, line_req, top, low,
                                              nu, cr, point_k)
        sizing, single, converged = None, np.inf, True
        return _results(sc, net, names, parents, children, profiles, built, energies, remaps,
                        req_r, sites, surfaces, placed, options, rating_head, wave, sizing, single,
                        converged, top, low, rho, nu, total_in, surge_len, fixed)
    splits_local = [_split_points(prof, reaches_local[k], [(o, j) for o, kk, j in placed if kk == k],
                                  point_k[k], d.split_spacing_m)
                    for k, prof in enumerate(profiles)]
    allowed_k = [_cheapest_per_size(np.logical_and.reduceat(a, sp[:-1], axis=0), options)
                 for a, sp in zip(allowed, splits_local)]
    extra = [np.zeros(p.n) for p in profiles]
    # an outlet's own maximum pressure is a limit of the design
    caps = [np.full(p.n, np.inf) for p in profiles]
    for o, kk, j in placed:
        if o.max_pressure_m is not None:
            caps[kk][j] = o.max_pressure_m
    final = "reach" if d.one_size_per_reach else "pieces" if d.whole_pieces else "lp"
    converged = False
    for _ in range(RECHECK_ROUNDS):
        problem, piece_rows = _tree_problem(profiles, parents, surfaces, reaches_local,
                                            splits_local, allowed_k, cand, required, extra,
                                            offsets, options, low, cr, caps, point_k)
        sizing = solve_design(problem, final, lambda i: _where_point(i, offsets, profiles, names))
        built = [_build_line(prof, sp, sizing.lengths[rows], options)
                 for prof, sp, rows in zip(profiles, splits_local, piece_rows)]
        energies, remaps, req_r = _tree_exact(profiles, built, parents, surfaces, placed,
                                              children, total_in, options, required, line_req,
                                              top, low, nu, cr, point_k)
        converged = all([tighten(extra[k], profiles[k].chainage_m, built[k][0].chainage_m,
                                 req_r[k] - energies[k].pressure_head) for k in range(L)])
        if converged:
            break
    single = best_single_size(problem)[0]
    return _results(sc, net, names, parents, children, profiles, built, energies, remaps, req_r,
                    sites, surfaces, placed, options, rating_head, wave, sizing, single,
                    converged, top, low, rho, nu, total_in, surge_len, fixed)


def _results(sc, net, names, parents, children, profiles, built, energies, remaps, req_r, sites,
             surfaces, placed, options, rating_head, wave, sizing, single, converged, top, low,
             rho, nu, total_in, surge_len, fixed) -> NetworkPlan:
    """Per-link results, checks and the NetworkPlan (design or check mode)."""
    cr = sc.criteria
    L = len(profiles)
    # -- results per link
    link_plans, findings = [], []
    total = float(sum(o.flow_m3s for o in sc.outlets))
    volumes = [o.daily_volume_m3 for o in sc.outlets]
    findings += check_yield(total, sc.source.yield_m3s,
                            sum(volumes) if all(v is not None for v in volumes) else None)
    auto_no = 0
    for k in range(L):
        refined, seg_opt = built[k]
        e, remap = energies[k], remaps[k]
        seg_rating = rating_head[seg_opt]
        pt_rating = np.minimum(np.append(seg_rating, seg_rating[-1]),
                               np.insert(seg_rating, 0, seg_rating[0]))
        surf_r = [int(remap[f.index]) for f in surfaces[k]]
        reaches_r = list(zip(surf_r, surf_r[1:] + [refined.n - 1]))
        stretches = _stretches(refined, e, seg_opt, options, seg_rating, reaches_r=reaches_r,
                               surge_len=surge_len[k],
                               wave=wave, cr=cr)
        od = np.array([(o.outside_diameter if np.isfinite(o.outside_diameter) else o.inside_diameter)
                       * 1e3 for o in (options[j] for j in np.append(seg_opt, seg_opt[-1]))])
        feats = tuple(place_features(refined.chainage_m, refined.pipe_m, e.hgl, od, reaches_r,
                                     prominence_m=cr.feature_prominence_m,
                                     grade_change=cr.grade_break, grade_window_m=cr.grade_window_m,
                                     spacing_m=cr.air_valve_spacing_m, long_ascent_m=cr.long_ascent_m))
        tanks = []
        for s in sites[k]:
            if s.fixed:
                name = next(nm for j, _, nm in fixed[k] if j == s.index)
            else:
                auto_no += 1
                name = f"BPT {auto_no} (placed)"
            tanks.append(TankResult(name=name, chainage_m=float(profiles[k].chainage_m[s.index]),
                                    index=int(remap[s.index]), water_level_m=s.level,
                                    arrival_hgl_m=float(e.arrival_hgl[remap[s.index]]), rule=s.rule))
        outs = tuple(OutletResult(
            name=o.name, kind=o.kind, chainage_m=float(profiles[k].chainage_m[j]), index=int(remap[j]),
            flow_m3s=o.flow_m3s, ground_m=float(profiles[k].ground_m[j]),
            pressure_head_m=float(e.pressure_head[remap[j]]), min_pressure_m=o.min_pressure_m,
            basis=o.basis, max_pressure_m=o.max_pressure_m if o.max_pressure_m is not None
            else cr.max_outlet_pressure_m) for o, kk, j in placed if kk == k)
        surfaces_r = [FreeSurface(int(remap[f.index]), f.static_level, f.operating_level)
                      for f in surfaces[k]]
        local = line_findings(refined, e, seg_rating, surfaces_r, outs, tanks, stretches, feats, cr)
        findings += [Finding(f.severity, f.code, f"{names[k]}: {f.message}", f.remedy,
                             f.chainage_m, f.chainage_end_m) for f in local]
        findings += [Finding("note", "profile", f"{names[k]}: {n}") for n in profiles[k].notes]
        link_plans.append(LinkPlan(id=k, name=names[k], parent=parents[k], profile=refined,
                                   energy=e, stretches=stretches, features=feats,
                                   tanks=tuple(tanks), outlets=outs, rating_head_m=pt_rating,
                                   required_pressure_m=req_r[k]))
    findings += [Finding("note", "network", n) for n in net.notes]
    for k, lk in enumerate(link_plans):
        if not children[k] and not lk.outlets:
            findings.append(Finding(
                "warning", "dangling-end",
                f"{lk.name} ends with no outlet: the water in it stands still (stale water, "
                "sediment)", "remove the line, or add the outlet it is meant to serve",
                lk.profile.length_m, lk.profile.length_m))
    if not converged:
        findings.append(Finding("warning", "sizing-recheck", "the sized tree still falls short of "
                                f"a limit after {RECHECK_ROUNDS} rechecks (see the other findings)",
                                "use a finer design.split_spacing_m"))
    if sizing is not None:
        findings.append(Finding(
            "note", "sizing", f"sizes and classes chosen at least cost by the {sizing.summary}; "
            + (f"the cheapest single size would cost {single:,.0f}" if np.isfinite(single)
               else "no single size meets every limit")))
    findings.sort(key=finding_order)
    return _with_uncertainty(NetworkPlan(scenario=sc, network=net, links=tuple(link_plans),
                       source_top_level_m=float(top), source_low_level_m=float(low),
                       total_flow_m3s=total, density=float(rho), kinematic_viscosity=float(nu),
                       findings=tuple(findings), sizing=sizing,
                       mode="design" if sizing is not None else "check",
                       single_size_cost=single if np.isfinite(single) else None,
                       link_flow_m3s=tuple(float(x) for x in total_in)))


def _where_point(i: int, offsets, profiles, names) -> str:
    """A point of the tree's programme in words: its link and chainage."""
    k = int(np.searchsorted(offsets, i, side="right") - 1)
    return f"on {names[k]} at chainage {profiles[k].chainage_m[i - offsets[k]]:,.0f} m"


def _tree_problem(profiles, parents, surfaces, reaches_local, splits_local, allowed_k, cand,
                  required, extra, offsets, options, low, cr, caps, point_k):
    """The sizing programme of the whole tree: links numbered one after another."""
    J = len(options)
    split_g, allowed_rows, loss_rows, hv_rows, rows_of = [], [], [], [], []
    reaches, start, start_k, arrival, parent_pt = [], [], [], [], []
    min_h, pos, pk, max_h = [], [], [], []
    row = 0
    for k, prof in enumerate(profiles):
        sp = splits_local[k]
        if k > 0:                                   # the piece joining two links: in no reach
            allowed_rows.append(np.zeros((1, J), dtype=bool))
            loss_rows.append(np.zeros((1, J)))
            hv_rows.append(np.zeros((1, J)))
            row += 1
        split_g.append(sp + offsets[k])
        allowed_rows.append(allowed_k[k])
        loss_rows.append(np.nan_to_num(cand[k][2][sp[:-1]], nan=0.0))
        hv_rows.append(np.nan_to_num(cand[k][1][sp[:-1]], nan=0.0))
        rows_of.append(np.arange(row, row + sp.size - 1))
        row += sp.size - 1
        # 1 mm above each limit, so that rounding never shows a designed point as short
        min_h.append(prof.pipe_m + required[k] + extra[k] + 1e-3)
        max_h.append(prof.pipe_m + caps[k])
        pos.append(prof.slope_length_m)
        pk.append(point_k[k])
        surf = surfaces[k]
        for r, (a, b) in enumerate(reaches_local[k]):
            reaches.append((int(a + offsets[k]), int(b + offsets[k])))
            if r == 0 and parents[k] >= 0:
                parent_pt.append(int(offsets[parents[k]] + profiles[parents[k]].n - 1))
                start.append(np.nan)
                start_k.append(point_k[k][a])
            else:
                parent_pt.append(-1)
                start.append(low if (r == 0 and parents[k] < 0) else surf[r].operating_level)
                start_k.append(cr.entrance_k + point_k[k][a])
            arrival.append(surf[r + 1].static_level + cr.tank_inlet_head_m + 1e-3
                           if r + 1 < len(surf) else -np.inf)
    problem = SizingProblem(
        splits=np.concatenate(split_g), position=np.concatenate(pos),
        unit_loss=np.vstack(loss_rows), velocity_head=np.vstack(hv_rows),
        allowed=np.vstack(allowed_rows), cost=np.array([o.cost_per_m for o in options]),
        group=size_groups(options), reaches=reaches, start_level=np.array(start), start_k=np.array(start_k),
        min_head=np.concatenate(min_h), arrival_min_head=np.array(arrival),
        point_k=np.concatenate(pk), parent_point=np.array(parent_pt, dtype=np.int64),
        max_head=np.concatenate(max_h))
    return problem, rows_of


def _tree_exact(profiles, built, parents, surfaces, placed, children, total_in, options,
                required, line_req, top, low, nu, cr, point_k):
    """Energy lines of the built tree, exactly, and the pressure required at every point
    (at a size change, the line's requirement interpolated; outlets at their points)."""
    datas, remaps, reqs = [], [], []
    for k, (prof, (refined, seg_opt)) in enumerate(zip(profiles, built)):
        ch, rch = prof.chainage_m, refined.chainage_m
        remap = np.searchsorted(rch, ch)
        draws = [(float(ch[j]), o.flow_m3s) for o, kk, j in placed if kk == k]
        down = sum(total_in[c] for c in children[k])
        if down > 0:
            draws.append((refined.length_m, down))
        flows = segment_flows(rch, draws)
        tanks = [FreeSurface(int(remap[f.index]), f.static_level, f.operating_level)
                 for f in surfaces[k][1:]]
        pipe = PipeHydraulics(
            inside_diameter=np.array([options[j].inside_diameter for j in seg_opt]),
            method=cr.friction,
            roughness=np.array([options[j].roughness for j in seg_opt]) if cr.friction == "colebrook" else None,
            c_factor=np.array([options[j].c_factor for j in seg_opt]) if cr.friction == "hazen-williams" else None)
        k_r = np.zeros(refined.n)
        k_r[remap] = point_k[k]
        datas.append(LinkData(refined.slope_length_m, refined.pipe_m, flows, pipe,
                              parent=parents[k], tanks=tanks, point_k=k_r))
        req = np.interp(refined.slope_length_m, prof.slope_length_m, line_req[k])
        req[remap] = required[k]
        remaps.append(remap)
        reqs.append(req)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        energies = tree_energy(datas, FreeSurface(0, top, low), kinematic_viscosity=nu,
                               entrance_k=cr.entrance_k)
    return energies, remaps, reqs


def _shift(items, di, dch):
    from dataclasses import replace

    out = []
    for it in items:
        fields = {}
        for name in ("index", "start_index", "end_index"):
            if hasattr(it, name):
                fields[name] = getattr(it, name) + di
        for name in ("chainage_m", "chainage_end_m"):
            if hasattr(it, name) and getattr(it, name) is not None:
                fields[name] = getattr(it, name) + dch
        out.append(replace(it, **fields))
    return out


def as_line_plan(plan: NetworkPlan, link_ids: list[int]):
    """A chain of links (e.g. the path from the source to an outlet) as one line's Plan.

    Only re-indexing: arrays are joined at the junctions (the branch's first point, the
    junction itself, is dropped), chainages run on, indices shift.  Report code can then
    draw and write it like a single line.
    """
    from dataclasses import replace

    from .plan import Plan

    parts = [plan.links[k] for k in link_ids]
    keys_p = ("chainage_m", "slope_length_m", "x", "y", "lon", "lat", "ground_m", "pipe_m", "filled")
    keys_e = ("flow", "velocity", "static_head", "energy", "hgl", "pressure_head",
              "static_pressure_head", "friction_loss", "reynolds", "arrival_hgl")
    cols_p = {k: [] for k in keys_p}
    cols_e = {k: [] for k in keys_e}
    rating, required, inserted, vidx = [], [], [], []
    stretches, features, tanks, outlets, reaches = [], [], [], [], []
    di, dch, dsl, fric = 0, 0.0, 0.0, 0.0
    for n, lk in enumerate(parts):
        p, e = lk.profile, lk.energy
        cut = 0 if n == 0 else 1                 # the junction is the parent's last point
        for k in keys_p:
            a = np.asarray(getattr(p, k))[cut:]
            cols_p[k].append(a + dch if k == "chainage_m" else a + dsl if k == "slope_length_m" else a)
        for k in keys_e:
            a = np.asarray(getattr(e, k))[cut:]
            cols_e[k].append(a + fric if k == "friction_loss" else a)
        rating.append(lk.rating_head_m[cut:])
        required.append(lk.required_pressure_m[cut:])
        inserted.append((p.inserted if p.inserted is not None else np.zeros(p.n, bool))[cut:])
        vidx.append(p.vertex_index[p.vertex_index >= cut] - cut + di)
        shift = di - cut
        stretches += _shift(lk.stretches, shift, dch)
        features += _shift(lk.features, shift, dch)
        tanks += _shift(lk.tanks, shift, dch)
        outlets += _shift(lk.outlets, shift, dch)
        reaches += [replace(r, start_index=r.start_index + shift, end_index=r.end_index + shift)
                    for r in e.reaches]
        di += p.n - cut
        dch += p.length_m
        dsl += float(p.slope_length_m[-1])
        fric += float(e.friction_loss[-1])
    prof0 = parts[0].profile
    profile = Profile(**{k: np.concatenate(v) for k, v in cols_p.items()},
                      vertex_index=np.unique(np.concatenate(vidx)).astype(np.int64),
                      crs=prof0.crs, spacing_m=prof0.spacing_m, cover_m=prof0.cover_m,
                      elevation_source=prof0.elevation_source, vertical_datum=prof0.vertical_datum,
                      notes=tuple(n for lk in parts for n in lk.profile.notes),
                      inserted=np.concatenate(inserted))
    energy = LineEnergy(**{k: np.concatenate(v) for k, v in cols_e.items()}, reaches=tuple(reaches))
    names = " > ".join(dict.fromkeys(lk.name for lk in parts))
    sc = replace(plan.scenario, project=replace(plan.scenario.project,
                                                name=f"{plan.scenario.project.name}: {names}"))
    return Plan(scenario=sc, profile=profile, energy=energy, outlets=tuple(outlets),
                tanks=tuple(tanks), source_top_level_m=plan.source_top_level_m,
                source_low_level_m=plan.source_low_level_m,
                total_flow_m3s=plan.link_flow_m3s[link_ids[0]], density=plan.density,
                kinematic_viscosity=plan.kinematic_viscosity,
                rating_head_m=np.concatenate(rating), findings=(), mode="design",
                stretches=tuple(stretches), features=tuple(features), sizing=plan.sizing,
                single_size_cost=plan.single_size_cost,
                required_pressure_m=np.concatenate(required))


def _with_uncertainty(plan: NetworkPlan) -> NetworkPlan:
    """The DEM-error Monte Carlo along every path from the source to a branch end.

    Each path is simulated on its own (the error along shared links is then drawn
    again for each path, which leaves each path's probabilities exact); an outlet's
    figures are those of the first path through it.
    """
    from dataclasses import replace

    sc = plan.scenario
    spec = sc.uncertainty
    model = model_for(spec)
    if model is None:
        return plan
    out, found, seen = [], list(plan.findings), {f.message for f in plan.findings}
    for k in plan.ends:
        path = as_line_plan(plan, plan.path(k))
        u = line_uncertainty(path, model, realisations=spec.realisations, seed=spec.seed,
                             source_moves=sc.source.top_level_m is None)
        name = plan.path_name(k)
        out.append((name, u))
        for f in check_uncertainty(u, path=name):
            if f.message not in seen:                 # an outlet on several paths: once
                seen.add(f.message)
                found.append(f)
    found.sort(key=finding_order)
    return replace(plan, uncertainty=tuple(out), findings=tuple(found))
