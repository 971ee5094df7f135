"""The sizing programme of a system, assembled from its link profiles; and the built design.

Everything the designer needs between "the system laid on the ground" and "the sized
pipes": the pipes that may be used and their derated ratings, each candidate's velocity,
velocity head and friction slope in every segment, which candidates each piece admits
(static head, surge, velocity), the split points, the programme of
:mod:`planner.design.sizing` for a tree of links (a line is a tree of one link), the
line rebuilt with its size changes, and the exact energy lines of the built tree.
"""

from __future__ import annotations

import warnings
from dataclasses import replace
from typing import TYPE_CHECKING

import numpy as np
from numpy.typing import NDArray

from ..catalogue.pipes import PipeOption, load_options
from ..catalogue.standards import temperature_factor
from ..errors import InputError, PlannerError
from ..geo.profile import Profile, split_profile
from ..hydraulics import friction as fr
from ..hydraulics import surge as sg
from ..hydraulics.line import FreeSurface, PipeHydraulics, segment_flows
from ..hydraulics.network import LinkData, tree_energy
from ..units import MM, G
from .explain import explain_infeasible
from .results import Stretch
from .sizing import SizingInfeasible, SizingProblem, SizingResult, solve_sizing
from .whole import solve_whole, solve_whole_parts

if TYPE_CHECKING:                        # type names only: the scenario is read elsewhere
    from ..scenario import Scenario

#: Rounds of "solve, build, recheck every point, tighten where short" at most.
RECHECK_ROUNDS = 12


def given_pipe(sc: Scenario) -> PipeOption:
    """The scenario's one pipe (``[pipe]``, check mode) as a pipe option, SI units."""
    p = sc.pipe
    assert p is not None, "check mode needs [pipe]"
    nan = float("nan")
    od = p.outside_diameter_m if p.outside_diameter_m is not None else nan
    return PipeOption(material=p.material, label=p.label or p.material, outside_diameter=od,
                      inside_diameter=p.inside_diameter_m, wall=(od - p.inside_diameter_m) / 2,
                      rating=p.rating_pa,
                      roughness=p.roughness_m if p.roughness_m is not None else nan,
                      c_factor=p.c_factor if p.c_factor is not None else nan,
                      elastic_modulus=p.elastic_modulus_pa if p.elastic_modulus_pa is not None
                      else nan, cost_per_m=0.0, catalogue="scenario [pipe]")


def candidate_data(options, flows, rho, nu, method):
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


def wave_speeds(options, rho, bulk_modulus):
    """Pressure-wave speed of each option [m/s] (NaN where its wall is not known).

    Korteweg's thin-wall form (:func:`~planner.hydraulics.surge.wave_speed`) with the
    mean wall that the bore is computed from, ``e = (OD - ID) / 2``, and the diameter
    at mid-wall ``OD - e``, and the water's adiabatic bulk modulus at the design
    temperature [Pa] (:func:`~planner.hydraulics.water.bulk_modulus`).  The mean wall
    rather than the catalogue's minimum: it is the pipe's likely wall, the same one the
    friction sees, and gives the (higher, so safer) wave speed of a stiffer pipe.
    """
    out = []
    for o in options:
        wall = (o.outside_diameter - o.inside_diameter) / 2
        if np.isfinite(o.elastic_modulus) and np.isfinite(wall) and wall > 0:
            out.append(sg.wave_speed(o.outside_diameter - wall, wall, o.elastic_modulus,
                                     density=rho, bulk_modulus=bulk_modulus))
        else:
            out.append(float("nan"))
    return np.array(out)


def pipe_options(sc: Scenario, rho: float) -> tuple[list[PipeOption], NDArray[np.float64]]:
    """The pipes that may be used, and their ratings derated for temperature, as head [m].

    The catalogues of ``[design]``, or the scenario's one pipe; the rating is derated
    for the wall temperature (:func:`~planner.catalogue.standards.temperature_factor`).
    """
    cr = sc.criteria
    if sc.design is not None:
        d = sc.design
        try:
            options = load_options(d.catalogues, materials=d.materials,
                                   min_od_mm=None if d.min_size_m is None else d.min_size_m / MM,
                                   max_od_mm=None if d.max_size_m is None else d.max_size_m / MM)
        except PlannerError as exc:
            raise type(exc)(f"{sc.path.name}, design.catalogues: {exc}") from None
    else:
        options = [given_pipe(sc)]
    try:
        factors = np.array([temperature_factor(o, cr.wall_temperature_c) for o in options])
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


def surge_pool(ok: NDArray, velocity: NDArray, velocity_min: float) -> NDArray:
    """The candidates a segment should be able to use once surge is allowed for.

    Those that keep at least the self-cleansing velocity when any does (so that surge
    near a tank's limit is met by moving the tank, not by a pipe so wide that sediment
    settles and air stays; common practice), else every candidate within the limits.
    """
    band = ok & (velocity >= velocity_min)
    return np.where(band.any(axis=1, keepdims=True), band, ok)


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


def cheapest_per_size(allowed: NDArray, options: list[PipeOption]) -> NDArray:
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


def split_points(prof, reaches, placed, point_k, spacing):
    """Profile points where the pipe may change size.

    Reach ends, outlets, fittings, and points about ``spacing`` metres apart (every
    point when spacing is None or 0).
    """
    n, ch = prof.n, prof.chainage_m
    if not spacing:
        return np.arange(n)
    pts = {0, n - 1}
    pts |= {a for a, _ in reaches} | {b for _, b in reaches}
    pts |= {j for _, j in placed} | set(np.flatnonzero(point_k > 0).tolist())
    pts |= set(np.searchsorted(ch, np.arange(spacing, ch[-1], spacing)).tolist())
    return np.array(sorted(p for p in pts if 0 <= p < n), dtype=np.int64)


def build_line(prof: Profile, splits: NDArray, lengths: NDArray, options: list[PipeOption]):
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


def reach_equivalents(prof, seg_opt, velocity, reaches_r, wave):
    """Each reach's pipes as built, as one equivalent pipe for the pressure wave.

    Returns the equivalent wave speeds [m/s] and velocities [m/s] of the reaches
    (:func:`~planner.hydraulics.surge.equivalent_pipe`), from the segments' options
    ``seg_opt``, the options' wave speeds ``wave`` and the velocity at each segment's
    start [m/s].  On a tree, the pipes of the link's own reach stand for the wave's
    whole path.
    """
    seg_len = np.diff(prof.slope_length_m)
    pairs = [sg.equivalent_pipe(seg_len[a:b], wave[seg_opt[a:b]], velocity[a:b])
             for a, b in reaches_r]
    return np.array([p[0] for p in pairs]), np.array([p[1] for p in pairs])


def stretches(prof, energy, seg_opt, options, seg_rating, *, reaches_r, wave, cr, surge_len):
    """Runs of one option, with their cost, ratings, pressures and surge.

    ``surge_len`` is the wave's path length of each reach [m]
    (:func:`~planner.hydraulics.network.surge_path_lengths`).  The surge of a stretch
    is :func:`~planner.hydraulics.surge.series_surge_head`: its own pipe's Joukowsky
    rise, capped for slow closures by the rigid-column rise of the reach's water, with
    the reach's pipes as one equivalent pipe (travel time and momentum kept).
    """
    out = []
    sl, ch = prof.slope_length_m, prof.chainage_m
    reach_of = np.zeros(prof.n - 1, dtype=np.int64)
    for r, (a, b) in enumerate(reaches_r):
        reach_of[a:b] = r
    breaks = set(a for a, _ in reaches_r)
    path = list(zip(*reach_equivalents(prof, seg_opt, energy.velocity, reaches_r, wave)))
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
        a_e, v_e = path[r]
        surge = float(sg.series_surge_head(surge_len[r], v, wave[j], cr.valve_closure_s,
                                           a_e, v_e)) if np.isfinite(wave[j]) else float("nan")
        # each segment's static head (its lower end) plus the surge of its own velocity
        seg_static = energy.static_head[a:b] - np.minimum(prof.pipe_m[a:b], prof.pipe_m[a + 1:b + 1])
        seg_surge = (sg.series_surge_head(surge_len[r], energy.velocity[a:b], wave[j],
                                          cr.valve_closure_s, a_e, v_e)
                     if np.isfinite(wave[j]) else np.full(b - a, np.nan))
        worst = int(np.argmax(np.nan_to_num(seg_static + seg_surge, nan=-np.inf)))
        out.append(Stretch(option=o, start_index=a, end_index=b, chainage_m=float(ch[a]),
                           chainage_end_m=float(ch[b]), length_m=length,
                           cost=length * o.cost_per_m, rating_head_m=float(seg_rating[a]),
                           max_static_head_m=float(np.max(energy.static_head[a]
                                                          - prof.pipe_m[a:b + 1])),
                           min_pressure_head_m=float(np.min(energy.pressure_head[a:b + 1])),
                           max_velocity_mps=v, surge_head_m=surge, wave_speed_mps=float(wave[j]),
                           reach_length_m=float(surge_len[r]),
                           surge_check_static_m=float(seg_static[worst]),
                           surge_check_surge_m=float(seg_surge[worst])))
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
            return solve_whole_parts(problem)
        lp = solve_sizing(problem)
        if final == "lp":
            return lp
        return replace(solve_whole(problem, "reach"), split_pipe_cost=lp.cost)
    except SizingInfeasible as exc:
        raise explain_infeasible(exc, where) from None


def tree_problem(profiles, parents, surfaces, reaches_local, splits_local, allowed_k, cand,
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


def tree_exact(profiles, built, parents, surfaces, draws, options,
               required, line_req, top, low, nu, cr, point_k):
    """Energy lines of the built tree, exactly, and the pressure required at every point.

    ``draws`` holds, per link, the (chainage [m], flow [m^3/s]) drawn off it.  At a size
    change the line's requirement is interpolated; an outlet's minimum holds at the
    outlet only.
    """
    datas, remaps, reqs = [], [], []
    for k, (prof, (refined, seg_opt)) in enumerate(zip(profiles, built)):
        ch, rch = prof.chainage_m, refined.chainage_m
        remap = np.searchsorted(rch, ch)
        flows = segment_flows(rch, draws[k])
        tanks = [FreeSurface(int(remap[f.index]), f.static_level, f.operating_level)
                 for f in surfaces[k][1:]]
        pipe = PipeHydraulics(
            inside_diameter=np.array([options[j].inside_diameter for j in seg_opt]),
            method=cr.friction,
            roughness=np.array([options[j].roughness for j in seg_opt])
            if cr.friction == "colebrook" else None,
            c_factor=np.array([options[j].c_factor for j in seg_opt])
            if cr.friction == "hazen-williams" else None)
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


