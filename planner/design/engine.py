"""The design engine: one set of steps for a line and a tree (a line is a tree of one link).

Layout (:mod:`planner.design.layout`) -> flows by accumulation towards the source ->
break-pressure tanks on every link (the static level runs on through junctions) and the
candidates each segment admits (static head, surge, velocity: :mod:`planner.design.admission`)
-> a pre-check with the largest pipes -> one sizing programme for the whole system
(:mod:`planner.design.problem`, :mod:`planner.design.sizing`), rechecked point by point
on the built pipes, and sized again where the built reaches' surge asks for it -> valves,
checks, the DEM-error estimate -> :class:`~planner.design.results.NetworkPlan`.

Two modes: **check** (the scenario gives one pipe, ``[pipe]``: the system is computed
and checked) and **design** (the scenario gives catalogues, ``[design]``: tanks placed
where static head demands them, sizes and classes chosen at least cost).  It touches no
file; writing results is the report package's job.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
from numpy.typing import NDArray

from ..errors import DesignError, InputError
from ..hydraulics import water
from ..hydraulics.line import FreeSurface, segment_flows
from ..hydraulics.network import accumulate_flows, surge_path_lengths
from ..scenario import Scenario
from .admission import SURGE_ROUNDS, System, admissible, surge_paths
from .checks import (Finding, check_line, check_outlet, check_surge, check_tank,
                     check_uncertainty, check_yield, gravity_reachable)
from .explain import no_design, no_pipe_fits, short_with_largest
from .features import place_features
from .layout import Layout
from .problem import (RECHECK_ROUNDS, build_line, candidate_data, cheapest_per_size, pipe_options,
                      solve_design, split_points, static_limit, stretches, tighten,
                      tree_exact, tree_problem, wave_speeds)
from .results import LinkPlan, NetworkPlan, OutletResult, TankResult, as_line_plan, finding_order
from .sizing import best_single_size
from .tanks import TankSite, place_tanks
from .uncertainty import deviation_sd, line_uncertainty, model_for


#: Most profile points a plan may hold, all links together [-]: 100,000 took 1.3 GB and
#: 22 s here (benchmarks/bench_large_route.py), and memory grows in proportion, so
#: this keeps a plan near 1.6 GB.  A choice of ours.
MAX_DESIGN_POINTS = 120_000


def design_layout(sc: Scenario, lay: Layout, *, compare_single_size: bool = True) -> NetworkPlan:
    """Compute (and in design mode, design) a laid-out system at design flow.

    Parameters
    ----------
    sc : Scenario
    lay : Layout
        From :func:`~planner.design.layout.line_layout` or
        :func:`~planner.design.layout.tree_layout`.
    compare_single_size : bool
        Also price the cheapest single size for comparison (the live editor skips it).

    Raises
    ------
    DesignError
        When gravity cannot deliver, or (design mode) when no design meets the limits;
        the message says where and why, in metres and chainages.
    """
    points = sum(p.n for p in lay.profiles)
    if points > MAX_DESIGN_POINTS:
        raise InputError(f"{sc.path.name}: the system's profiles hold {points:,} points, more than "
                         f"the {MAX_DESIGN_POINTS:,} a plan may have (memory); raise "
                         "route.spacing_m, simplify the route, or split the system")
    s = _prepare(sc, lay)
    _tanks_and_candidates(s)
    required, line_req = _requirements(s)
    if sc.design is None:
        built = [(p, np.zeros(p.n - 1, dtype=np.int64)) for p in lay.profiles]
        energies, remaps, req_r = _exact(s, built, required, line_req)
        return _results(s, built, energies, remaps, req_r, None, None, True)
    _precheck(s, required, line_req)
    sizing, built, energies, remaps, req_r, converged, problem = _size(s, required, line_req)
    for _ in range(SURGE_ROUNDS):
        if not surge_paths(s, built, energies, remaps):
            break
        sizing, built, energies, remaps, req_r, converged, problem = _size(s, required, line_req)
    single = best_single_size(problem)[0] if compare_single_size else None
    return _results(s, built, energies, remaps, req_r, sizing, single, converged)


def _prepare(sc: Scenario, lay: Layout) -> System:
    """Gravity at all, the flow in every segment, water properties and the candidates."""
    cr = sc.criteria
    profiles, root = lay.profiles, lay.root
    impossible = gravity_reachable(lay.top_level_m, float(profiles[root].pipe_m[0]), [
        (o.name, float(profiles[k].chainage_m[j]), float(profiles[k].ground_m[j]))
        for o, k, j in lay.placed])
    if impossible:
        raise DesignError("no gravity flow is possible:\n  - " + "\n  - ".join(impossible))
    own = [sum(o.flow_m3s for o, k, _ in lay.placed if k == kk) for kk in range(len(profiles))]
    total_in = np.asarray(accumulate_flows(list(lay.parents), own), dtype=float)
    draws = [_draws(lay, k, prof.chainage_m, prof.length_m, total_in)
             for k, prof in enumerate(profiles)]
    flows = [segment_flows(prof.chainage_m, d) for prof, d in zip(profiles, draws)]
    rho = water.density(cr.temperature_c)
    nu = water.kinematic_viscosity(cr.temperature_c)
    options, rating_head = pipe_options(sc, rho)
    cand = [candidate_data(options, q, rho, nu, cr.friction) for q in flows]
    return System(sc=sc, lay=lay, draws=draws, flows=flows, total_in=total_in, options=options,
                   rating_head=rating_head,
                   wave=wave_speeds(options, rho, water.bulk_modulus(cr.temperature_c)), cand=cand,
                   nu=float(nu), rho=float(rho))


def _draws(lay: Layout, k: int, chainage: NDArray, length: float, total_in) -> list:
    """(chainage, flow) drawn off link ``k``: its outlets, and its children at its end."""
    draws = [(float(chainage[j]), o.flow_m3s) for o, kk, j in lay.placed if kk == k]
    down = sum(total_in[c] for c in lay.children[k])
    if down > 0:
        draws.append((length, down))
    return draws


def _tanks_and_candidates(s: System) -> None:
    """Tanks on every link, then what each segment may be made of (static, surge, speed).

    Where surge leaves a segment no class (or only pipes so wide that the water barely
    moves), the tanks' static limit is lowered by the shortfall and they are placed again.
    """
    sc, lay = s.sc, s.lay
    d = sc.design
    auto = d is not None and d.auto_tanks
    limit, reason = static_limit(sc, s.options, s.rating_head)
    margin = 0.0
    for _ in range(12):
        s.sites, s.surfaces = [], []
        for k, prof in enumerate(lay.profiles):
            lvl = (lay.top_level_m if lay.parents[k] < 0
                   else s.surfaces[lay.parents[k]][-1].static_level)
            if auto and d is not None:
                sites = place_tanks(
                    prof.chainage_m, prof.ground_m, prof.pipe_m, source_level=lvl,
                    limit_head=limit - margin, water_depth=d.tank_water_depth_m,
                    fixed=[(j, level) for j, level, _ in lay.fixed[k]], forbidden=lay.no_tank[k],
                    limit_reason=reason + (f", less {margin:.0f} m for surge" if margin else ""))
            else:
                sites = [TankSite(j, level, "placed by the engineer", fixed=True)
                         for j, level, _ in lay.fixed[k]]
            s.sites.append(sites)
            first = FreeSurface(0, lvl, lay.low_level_m if lay.parents[k] < 0 else np.nan)
            s.surfaces.append([first] + [FreeSurface(t.index, t.level, t.level) for t in sites])
        _confidence_margins(s)
        s.surge_len = surge_path_lengths([p.slope_length_m for p in lay.profiles],
                                         list(lay.parents),
                                         [[f.index for f in surf] for surf in s.surfaces])
        s.allowed, s.seg_static, gaps = [], [], []
        for k, prof in enumerate(lay.profiles):
            allowed, static, gap = admissible(s, k, prof)
            s.allowed.append(allowed)
            s.seg_static.append(static)
            gaps.append(gap)
        shortfall = max((float(g.max()) for g in gaps if g.size), default=0.0)
        if shortfall <= 0 or not auto:
            break
        margin += shortfall + 1.0


def _exact(s: System, built, required, line_req):
    """The exact energy lines of the system built as ``built`` (see :func:`tree_exact`)."""
    lay = s.lay
    return tree_exact(lay.profiles, built, lay.parents, s.surfaces, s.draws, s.options,
                      required, line_req, lay.top_level_m, lay.low_level_m, s.nu,
                      s.sc.criteria, lay.point_k)


def _requirements(s: System):
    """Pressure required at every point: the line's rule, and outlets at their points.

    The line's rule is ``criteria.min_line_pressure_m``, or half the static pressure
    where that is less (near a free surface; common practice).  With confidence margins
    (:func:`_confidence_margins`) an outlet's minimum is raised by its margin, and the
    line's rule is at least the margin: the grade line stays above the pipe (at crests
    above all) with the design confidence.
    """
    cr, lay = s.sc.criteria, s.lay
    required, line_req = [], []
    for k, prof in enumerate(lay.profiles):
        idx = [f.index for f in s.surfaces[k]]
        pr = np.searchsorted(idx, np.arange(prof.n), side="right") - 1
        static_p = np.array([s.surfaces[k][r].static_level for r in pr]) - prof.pipe_m
        line = np.minimum(cr.min_line_pressure_m, np.maximum(static_p, 0.0) / 2.0)
        if s.margin:            # the grade line above the pipe at the design confidence
            line = np.maximum(line, s.margin[k])
        req = line.copy()
        for o, kk, j in lay.placed:
            if kk == k:
                req[j] = max(req[j], o.min_pressure_m + (s.margin[k][j] if s.margin else 0.0))
        line_req.append(line)
        required.append(req)
    return required, line_req


def _design_confidence(sc: Scenario) -> float | None:
    """The confidence the design is held to, or None (check mode, 0.5, DEM not named)."""
    spec, d = sc.uncertainty, sc.design
    if d is None or d.confidence <= 0.5 or not spec.enabled \
            or (spec.product is None and spec.sigma_m is None):
        return None
    return d.confidence


def _confidence_margins(s: System) -> None:
    """The margins that hold the design to ``design.confidence`` [m], per link and point.

    ``z_c`` times the standard deviation of the DEM-error deviation of the pressure
    (:func:`~planner.design.uncertainty.deviation_sd`, exact for the exponential error
    model) along every path from the source; a point on several paths takes the largest.
    Set only in design mode when the scenario names its DEM (``uncertainty.product`` or
    ``sigma_m``): a guessed DEM is not a basis for margins.
    """
    from scipy.stats import norm

    sc, lay = s.sc, s.lay
    s.margin = []
    confidence = _design_confidence(sc)
    model = model_for(sc.uncertainty, survey=sc.terrain is None)
    if confidence is None or model is None:
        return
    z = float(norm.ppf(confidence))
    off = np.zeros(len(lay.profiles))                    # path chainage of each link's start
    for k, par in enumerate(lay.parents):
        if par >= 0:
            off[k] = off[par] + lay.profiles[par].chainage_m[-1]
    sd = [np.zeros(p.n) for p in lay.profiles]
    for end in (k for k, below in enumerate(lay.children) if not below):
        path = [end]
        while lay.parents[path[-1]] >= 0:
            path.append(int(lay.parents[path[-1]]))
        path.reverse()
        ch = np.concatenate([lay.profiles[k].chainage_m + off[k] for k in path])
        first = np.concatenate([[0], np.cumsum([lay.profiles[k].n for k in path])])
        starts = sorted({int(first[i] + f.index) for i, k in enumerate(path)
                         for r, f in enumerate(s.surfaces[k]) if r > 0 or lay.parents[k] < 0})
        pins = [off[k] + c for k in path for _, c, _ in lay.profiles[k].pins]
        dev = deviation_sd(ch, starts, model, source_moves=sc.source.top_level_m is None,
                           pins=pins)
        for i, k in enumerate(path):
            sd[k] = np.maximum(sd[k], dev[first[i]:first[i + 1]])
    s.margin = [z * x for x in sd]


def _precheck(s: System, required, line_req) -> None:
    """Explain, in words and numbers, why no design can exist.

    Either no pipe fits a segment, or even the largest pipe each segment admits cannot
    deliver the pressure or fill a tank.
    """
    lay, cr = s.lay, s.sc.criteria
    problems = []
    for k, prof in enumerate(lay.profiles):
        problems += [s.on(k) + m for m in no_pipe_fits(prof.chainage_m, s.allowed[k],
                                                       s.seg_static[k], float(s.rating_head.max()),
                                                       cr.velocity_max_mps)]
    if problems:
        raise no_design(problems)
    ids = np.array([o.inside_diameter for o in s.options])
    largest = [np.argmax(np.where(a, ids[None, :], -1.0), axis=1) for a in s.allowed]
    built = [(p, big) for p, big in zip(lay.profiles, largest)]
    energies, _, _ = _exact(s, built, required, line_req)
    for k, prof in enumerate(lay.profiles):
        label = s.options[int(largest[k][0])].label
        problems += [s.on(k) + m for m in short_with_largest(
            prof.chainage_m, prof.pipe_m, energies[k], required[k], label, s.surfaces[k][1:],
            cr.tank_inlet_head_m, s.margin[k] if s.margin else None,
            s.sc.design.confidence if s.sc.design is not None else 0.5)]
    if problems:
        raise no_design(problems)


def _size(s: System, required, line_req):
    """Solve the programme, build the pipes, recheck every point, tighten where short.

    The programme carries the velocity heads (exactly for a sub-stretch of one pipe);
    only where the built system still falls short (the chord and the mean velocity head
    of a sub-stretch split between two sizes) is the programme tightened there.
    """
    lay, cr, d = s.lay, s.sc.criteria, s.sc.design
    assert d is not None, "sizing needs [design]"
    profiles = lay.profiles
    reaches = [list(zip([f.index for f in surf], [f.index for f in surf][1:] + [prof.n - 1]))
               for surf, prof in zip(s.surfaces, profiles)]
    splits = [split_points(prof, reaches[k], [(o, j) for o, kk, j in lay.placed if kk == k],
                           lay.point_k[k], d.split_spacing_m) for k, prof in enumerate(profiles)]
    # a sub-stretch admits a candidate only if all its segments do; of each size only the
    # cheapest class it admits can be part of a least-cost design
    allowed_k = [cheapest_per_size(np.logical_and.reduceat(a, sp[:-1], axis=0), s.options)
                 for a, sp in zip(s.allowed, splits)]
    extra = [np.zeros(p.n) for p in profiles]
    caps = [np.full(p.n, np.inf) for p in profiles]      # an outlet's own maximum pressure
    for o, kk, j in lay.placed:
        if o.max_pressure_m is not None:
            caps[kk][j] = o.max_pressure_m
    offsets = np.concatenate([[0], np.cumsum([p.n for p in profiles])])
    final = "reach" if d.one_size_per_reach else "pieces" if d.whole_pieces else "lp"
    converged = False
    for _ in range(RECHECK_ROUNDS):
        problem, rows = tree_problem(profiles, lay.parents, s.surfaces, reaches, splits,
                                     allowed_k, s.cand, required, extra, offsets, s.options,
                                     lay.low_level_m, cr, caps, lay.point_k)
        sizing = solve_design(problem, final, lambda i: _where_point(s, offsets, i))
        built = [build_line(prof, sp, sizing.lengths[r], s.options)
                 for prof, sp, r in zip(profiles, splits, rows)]
        energies, remaps, req_r = _exact(s, built, required, line_req)
        converged = all([tighten(extra[k], profiles[k].chainage_m, built[k][0].chainage_m,
                                 req_r[k] - energies[k].pressure_head)
                         for k in range(len(profiles))])
        if converged:
            break
    sizing = replace(sizing, binding=tuple(int(i) for i in sizing.binding))
    return sizing, built, energies, remaps, req_r, converged, problem


def _where_point(s: System, offsets, i: int) -> str:
    """A point of the system's programme in words: its link and chainage."""
    k = int(np.searchsorted(offsets, i, side="right") - 1)
    ch = s.lay.profiles[k].chainage_m[i - offsets[k]]
    return (f"on {s.lay.names[k]} " if len(s.lay.profiles) > 1 else "") + f"at chainage {ch:,.0f} m"


def _results(s: System, built, energies, remaps, req_r, sizing, single, converged) -> NetworkPlan:
    """Per-link results, checks and the plan (design or check mode)."""
    sc, lay = s.sc, s.lay
    total = float(sum(o.flow_m3s for o in sc.outlets))
    volumes = [o.daily_volume_m3 for o in sc.outlets]
    known = [v for v in volumes if v is not None]
    findings = check_yield(total, sc.source.yield_m3s,
                           sum(known) if len(known) == len(volumes) else None)
    links, auto_no = [], 0
    for k in range(len(lay.profiles)):
        link, auto_no = _link_result(s, k, built[k], energies[k], remaps[k], req_r[k], auto_no)
        links.append(link)
        seg_rating = s.rating_head[built[k][1]]
        findings += [replace(f, message=s.on(k) + f.message)
                     for f in _link_findings(s, k, link, seg_rating)]
        findings += [Finding("note", "profile", s.on(k) + n) for n in lay.profiles[k].notes]
    findings += [Finding("note", "network", n) for n in lay.notes]
    findings += _system_findings(s, links, sizing, single, converged)
    findings.sort(key=finding_order)
    offsets = np.concatenate([[0], np.cumsum([p.n for p in lay.profiles])])
    binding: tuple[tuple[int, float], ...] = ()
    if sizing is not None:
        binding = tuple((int(k), float(lay.profiles[k].chainage_m[i - offsets[k]]))
                        for i in sizing.binding
                        for k in [int(np.searchsorted(offsets, i, side="right") - 1)])
    plan = NetworkPlan(scenario=sc, network=lay.network, links=tuple(links),
                       source_top_level_m=lay.top_level_m, source_low_level_m=lay.low_level_m,
                       total_flow_m3s=total, density=s.rho, kinematic_viscosity=s.nu,
                       findings=tuple(findings), sizing=sizing, single_size_cost=single,
                       mode="design" if sc.design is not None else "check",
                       link_flow_m3s=tuple(float(x) for x in s.total_in), binding=binding)
    return _with_uncertainty(plan)


def _link_result(s: System, k: int, built, e, remap, req, auto_no: int):
    """The LinkPlan of link ``k``: stretches, valves, tanks and outlets on the built pipes."""
    lay, cr = s.lay, s.sc.criteria
    prof = lay.profiles[k]
    refined, seg_opt = built
    seg_rating = s.rating_head[seg_opt]
    pt_rating = np.minimum(np.append(seg_rating, seg_rating[-1]),
                           np.insert(seg_rating, 0, seg_rating[0]))
    surf_r = [int(remap[f.index]) for f in s.surfaces[k]]
    reaches_r = list(zip(surf_r, surf_r[1:] + [refined.n - 1]))
    runs = stretches(refined, e, seg_opt, s.options, seg_rating, reaches_r=reaches_r,
                     surge_len=s.surge_len[k], wave=s.wave, cr=cr)
    od = np.array([(o.outside_diameter if np.isfinite(o.outside_diameter) else o.inside_diameter)
                   * 1e3 for o in (s.options[j] for j in np.append(seg_opt, seg_opt[-1]))])
    feats = tuple(place_features(refined.chainage_m, refined.pipe_m, e.hgl, od, reaches_r,
                                 prominence_m=cr.feature_prominence_m, grade_change=cr.grade_break,
                                 grade_window_m=cr.grade_window_m,
                                 spacing_m=cr.air_valve_spacing_m, long_ascent_m=cr.long_ascent_m))
    names = {j: nm for j, _, nm in lay.fixed[k]}
    tanks = []
    for t in s.sites[k]:
        if t.fixed:
            name = names.get(t.index, "break-pressure tank")
        else:
            auto_no += 1
            name = f"BPT {auto_no} (placed)"
        tanks.append(TankResult(name=name, chainage_m=float(prof.chainage_m[t.index]),
                                index=int(remap[t.index]), water_level_m=t.level,
                                arrival_hgl_m=float(e.arrival_hgl[remap[t.index]]), rule=t.rule))
    outs = tuple(OutletResult(
        name=o.name, kind=o.kind, chainage_m=float(prof.chainage_m[j]), index=int(remap[j]),
        flow_m3s=o.flow_m3s, ground_m=float(prof.ground_m[j]),
        pressure_head_m=float(e.pressure_head[remap[j]]), min_pressure_m=o.min_pressure_m,
        basis=o.basis, max_pressure_m=o.max_pressure_m if o.max_pressure_m is not None
        else cr.max_outlet_pressure_m) for o, kk, j in lay.placed if kk == k)
    link = LinkPlan(id=k, name=lay.names[k], parent=lay.parents[k], profile=refined, energy=e,
                    stretches=runs, features=feats, tanks=tuple(tanks), outlets=outs,
                    rating_head_m=pt_rating, required_pressure_m=req)
    return link, auto_no


def _link_findings(s: System, k: int, link: LinkPlan, seg_rating: NDArray) -> list[Finding]:
    """Every check of one link, at every point.

    At a tank, the pipe arriving still carries the static head of the level upstream,
    against the rating of the pipe arriving.
    """
    cr, refined, energy = s.sc.criteria, link.profile, link.energy
    remap = np.searchsorted(refined.chainage_m, s.lay.profiles[k].chainage_m)
    surfaces_r = [FreeSurface(int(remap[f.index]), f.static_level, f.operating_level)
                  for f in s.surfaces[k]]
    pt_rating = link.rating_head_m.copy()
    static_check = energy.static_pressure_head.copy()
    for prev, f in zip(surfaces_r[:-1], surfaces_r[1:]):
        static_check[f.index] = prev.static_level - float(refined.pipe_m[f.index])
        pt_rating[f.index] = seg_rating[f.index - 1]
    out = check_line(chainage=refined.chainage_m, pressure_head=energy.pressure_head,
                     static_pressure_head=static_check, velocity=energy.velocity,
                     flowing=energy.flow > 0, rating_head=pt_rating, criteria=cr,
                     elevation=refined.pipe_m, temperature_c=cr.temperature_c,
                     surface_index=tuple(f.index for f in surfaces_r))
    for o in link.outlets:
        out += check_outlet(o.name, o.chainage_m, o.pressure_head_m, o.min_pressure_m,
                            o.max_pressure_m)
    for t in link.tanks:
        out += check_tank(t.name, t.chainage_m, t.arrival_hgl_m,
                          t.water_level_m + cr.tank_inlet_head_m)
    out += check_surge(link.stretches, cr)
    for feat in link.features:
        if feat.kind == "air_valve" and energy.pressure_head[feat.index] < 0:
            out.append(Finding(
                "error", "air-valve-vacuum",
                f"the air valve at chainage {feat.chainage_m:,.0f} m sits where the pressure is "
                f"{energy.pressure_head[feat.index]:.1f} m: it would let air in and break the flow",
                "lower the line there, or use a larger pipe upstream", feat.chainage_m,
                feat.chainage_m))
    return out


def _system_findings(s: System, links, sizing, single, converged) -> list[Finding]:
    """Findings about the system as a whole: dead ends, the recheck, the sizing method."""
    out = []
    children = s.lay.children
    for k, lk in enumerate(links):
        if not children[k] and not lk.outlets:
            out.append(Finding(
                "warning", "dangling-end",
                f"{lk.name} ends with no outlet: the water in it stands still (stale water, "
                "sediment)", "remove the line, or add the outlet it is meant to serve",
                lk.profile.length_m, lk.profile.length_m))
    if not converged:
        out.append(Finding(
            "warning", "sizing-recheck",
            f"the sized system was rechecked point by point {RECHECK_ROUNDS} times and still "
            "falls short of a limit somewhere (see the other findings)",
            "use split_spacing_m = 0 (a split point at every profile point) or a finer spacing"))
    if sizing is not None:
        out.append(Finding(
            "note", "sizing", f"sizes and classes chosen at least cost by the {sizing.summary}"
            + ("" if single is None else
               f"; the cheapest single size would cost {single:,.0f}" if np.isfinite(single)
               else "; no single size meets every limit")))
    return out


def _with_uncertainty(plan: NetworkPlan) -> NetworkPlan:
    """The DEM-error Monte Carlo along every path from the source to a branch end.

    Each path is simulated on its own (the error along shared links is then drawn again
    for each path, which leaves each path's probabilities exact); an outlet's figures are
    those of the first path through it.  Survey pins hold the error at their points.
    """
    sc = plan.scenario
    spec = sc.uncertainty
    model = model_for(spec, survey=sc.terrain is None)
    if model is None:
        return plan
    confidence = _design_confidence(sc)
    out, found, seen = [], list(plan.findings), {f.message for f in plan.findings}
    single = len(plan.links) == 1
    for k in plan.ends:
        path = as_line_plan(plan, plan.path(k))
        pins = path.profile.pins
        u = line_uncertainty(path, model, realisations=spec.realisations, seed=spec.seed,
                             source_moves=sc.source.top_level_m is None,
                             pins=[c for _, c, _ in pins], pin_names=tuple(n for n, _, _ in pins))
        if confidence is not None:
            u = replace(u, design_confidence=confidence)
        name = plan.path_name(k)
        out.append((name, u))
        for f in check_uncertainty(u, path=None if single else name):
            if f.message not in seen:                 # an outlet on several paths: once
                seen.add(f.message)
                found.append(f)
    found.sort(key=finding_order)
    return replace(plan, uncertainty=tuple(out), findings=tuple(found))
