"""The optimiser's claims of an optimum, proven against exhaustive enumeration.

Each random small line is assembled into a programme by the planner's own assembly
(``plan._problem``); every combination of one pipe per sub-stretch (or one size per
reach) is then built and computed with the tool's hydraulics (``line_energy``: the
Colebrook-White friction, velocity heads, entrance and fitting losses of every point),
and the cheapest that meets every limit at every point is compared with the MILP's
answer: equal cost within 0.01 %, as issue 11 asks.
"""

import itertools
from types import SimpleNamespace

import numpy as np
import pytest

from planner.catalogue.pipes import load_options
from planner.design.explain import explain_infeasible
from planner.design.problem import tree_problem
from planner.design.sizing import SizingInfeasible, solve_sizing
from planner.design.whole import solve_whole, solve_whole_pieces
from planner.errors import DesignError
from planner.hydraulics import friction as fr
from planner.hydraulics.line import FreeSurface, PipeHydraulics, line_energy
from planner.scenario import Criteria

NU = 1.0034e-6         # water at 20 degC [m^2/s] (IAPWS-95 density, IAPWS 2008 viscosity)
MARGIN = 1e-3          # the programme's stated margin above each limit [m]
CR = Criteria()


def _options():
    """Four PE100 sizes, one class each (the planner keeps one class per size and piece)."""
    opts = load_options(("pe100",), min_od_mm=40, max_od_mm=75)
    keep = {}
    for o in opts:
        if o.rating >= 1.0e6:                       # PN10 and up: the cheapest such class
            keep.setdefault(o.outside_diameter, o)
    return list(keep.values())


def random_line(seed, tank=False):
    """A 9-point line of 800 m: an outlet half way and at the end, a fitting, maybe a tank."""
    rng = np.random.default_rng(seed)
    n = 9
    ch = np.linspace(0.0, 800.0, n)
    pipe = 100.0 - np.concatenate([[0.0], np.cumsum(rng.uniform(-2.0, 7.0, n - 1))])
    sl = np.concatenate([[0.0], np.cumsum(np.hypot(np.diff(ch), np.diff(pipe)))])
    q_mid, q_end = rng.uniform(0.3e-3, 1.5e-3), rng.uniform(0.5e-3, 2.0e-3)
    flows = np.where(np.arange(n - 1) < 4, q_mid + q_end, q_end)
    point_k = np.zeros(n)
    point_k[2] = 2.0                                 # a valve or bend at point 2
    top = pipe[0] + 1.2
    surfaces = [FreeSurface(0, top, top - 0.2)]
    if tank:
        level = pipe[4] + rng.uniform(3.0, 8.0)
        surfaces.append(FreeSurface(4, level, level))
    reaches = [(0, 4), (4, 8)] if tank else [(0, 8)]
    level_at = np.array([surfaces[-1 if (tank and i >= 4) else 0].static_level for i in range(n)])
    required = np.minimum(CR.min_line_pressure_m, np.maximum(level_at - pipe, 0.0) / 2.0)
    required[4] = max(required[4], rng.uniform(1.0, 8.0))     # the outlets' minimums
    required[8] = max(required[8], rng.uniform(2.0, 12.0))
    return SimpleNamespace(n=n, ch=ch, pipe=pipe, sl=sl, flows=flows, point_k=point_k,
                           surfaces=surfaces, reaches=reaches, required=required,
                           splits=np.arange(0, n, 2))


def programme(line, opts):
    d = np.array([o.inside_diameter for o in opts])
    rough = np.array([o.roughness for o in opts])
    v = fr.velocity(line.flows[:, None], d[None, :])
    loss = fr.head_loss(line.flows[:, None], d[None, :], 1.0, method="colebrook",
                        roughness=rough[None, :], kinematic_viscosity=NU)
    n = line.n
    prof = SimpleNamespace(n=n, slope_length_m=line.sl, pipe_m=line.pipe)
    allowed = np.ones((line.splits.size - 1, len(opts)), dtype=bool)
    p, _ = tree_problem([prof], [-1], [line.surfaces], [line.reaches], [line.splits], [allowed],
                        [(v, fr.velocity_head(v), loss)], [line.required], [np.zeros(n)],
                        np.array([0, n]), opts, line.surfaces[0].operating_level, CR,
                        [np.full(n, np.inf)], [line.point_k])
    return p


def physics(line, opts, choice):
    """Cost and whether every point meets its limit, for one pipe per piece."""
    seg_piece = np.searchsorted(line.splits, np.arange(line.n - 1), side="right") - 1
    seg_opt = np.array([choice[p] for p in seg_piece])
    pipe = PipeHydraulics(inside_diameter=np.array([opts[j].inside_diameter for j in seg_opt]),
                          method="colebrook", roughness=np.array([opts[j].roughness for j in seg_opt]))
    e = line_energy(line.sl, line.pipe, line.flows, pipe, kinematic_viscosity=NU,
                    surfaces=line.surfaces, entrance_k=CR.entrance_k, point_k=line.point_k)
    free = {f.index for f in line.surfaces}
    ok = all(e.pressure_head[i] >= line.required[i] + MARGIN - 1e-9
             for i in range(line.n) if i not in free)
    for f in line.surfaces[1:]:                      # water must enter each tank
        ok &= e.arrival_hgl[f.index] >= f.static_level + CR.tank_inlet_head_m + MARGIN - 1e-9
    cost = sum(opts[j].cost_per_m * (line.sl[s + 1] - line.sl[s]) for s, j in enumerate(seg_opt))
    return cost, bool(ok)


def best_by_enumeration(line, opts, per_reach=False):
    npieces = line.splits.size - 1
    best = np.inf
    if per_reach:
        piece_reach = [0 if line.splits[p] < (line.reaches[0][1]) else 1 for p in range(npieces)]
        combos = (tuple(c[r] for r in piece_reach)
                  for c in itertools.product(range(len(opts)), repeat=len(line.reaches)))
    else:
        combos = itertools.product(range(len(opts)), repeat=npieces)
    for choice in combos:
        cost, ok = physics(line, opts, choice)
        if ok:
            best = min(best, cost)
    return best


def chosen(p, res):
    return [int(np.argmax(res.lengths[k])) for k in range(p.allowed.shape[0])]


CASES = [(seed, tank) for seed in range(14) for tank in (False, True)]


@pytest.mark.parametrize("seed,tank", CASES)
@pytest.mark.parametrize("whole", ["piece", "reach"])
def test_whole_choice_milp_equals_enumeration(seed, tank, whole):
    opts = _options()
    line = random_line(seed, tank)
    p = programme(line, opts)
    best = best_by_enumeration(line, opts, per_reach=whole == "reach")
    if not np.isfinite(best):
        with pytest.raises(DesignError):
            solve_whole(p, whole, mip_rel_gap=0.0)
        return
    res = solve_whole(p, whole, mip_rel_gap=0.0)
    cost, ok = physics(line, opts, chosen(p, res))
    assert ok, "the MILP's design fails a limit when built and computed point by point"
    assert cost == pytest.approx(best, rel=1e-4)
    assert res.cost == pytest.approx(cost, rel=1e-9)     # the programme prices what is built


@pytest.mark.parametrize("seed", range(10))
def test_whole_pieces_rounds_reach_the_all_whole_optimum(seed):
    """The rounds (only the pieces the LP split made whole) end at the optimum of
    forcing every piece whole, proven by enumeration, and below it lies the LP."""
    opts = _options()
    line = random_line(seed, tank=seed % 2 == 1)
    p = programme(line, opts)
    best = best_by_enumeration(line, opts)
    if not np.isfinite(best):
        with pytest.raises(DesignError):
            solve_whole_pieces(p)
        return
    res = solve_whole_pieces(p, rounds=1)
    assert ((res.lengths > 1e-6).sum(axis=1) == 1).all()
    assert res.cost == pytest.approx(best, rel=1e-4)
    assert res.split_pipe_cost <= res.cost + 1e-7


@pytest.mark.parametrize("seed", range(10))
def test_split_pipe_optimum_uses_two_adjacent_sizes_at_most(seed):
    """Karmeli, Gadish & Meyers (1968): with friction only, the least-cost split of a
    link uses at most two diameters, neighbours on the lower convex hull of (friction
    slope, cost) of the candidates; velocity heads are set to zero for that setting."""
    from dataclasses import replace

    opts = _options()
    line = random_line(seed)
    p = programme(line, opts)
    p = replace(p, velocity_head=np.zeros_like(p.velocity_head), point_k=np.zeros_like(p.point_k),
                start_k=np.zeros_like(p.start_k))
    try:
        res = solve_sizing(p)
    except SizingInfeasible:
        return
    for k in range(p.allowed.shape[0]):
        used = np.flatnonzero(res.lengths[k] > 1e-6 * p.piece_length[k])
        assert used.size <= 2
        if used.size == 2:
            hull = _lower_hull(p.unit_loss[k], p.cost)
            a, b = sorted(hull.index(j) for j in used)
            assert b - a == 1, "the two sizes are not neighbours on the hull"


def _lower_hull(slope, cost):
    """Candidates on the lower convex hull of (friction slope, cost), by slope."""
    order = list(np.argsort(slope))
    hull = []
    for j in order:
        while len(hull) >= 2:
            (x1, y1), (x2, y2) = [(slope[i], cost[i]) for i in hull[-2:]]
            if (x2 - x1) * (cost[j] - y1) - (y2 - y1) * (slope[j] - x1) <= 0:
                hull.pop()
            else:
                break
        hull.append(int(j))
    # keep the falling part: a dearer pipe must lose less
    out = [hull[0]]
    for j in hull[1:]:
        if cost[j] < cost[out[-1]]:
            out.append(j)
    return out


def test_infeasible_programme_names_the_limit_in_metres():
    opts = _options()
    line = random_line(3)
    line.required[8] = 200.0                         # an outlet that no pipe can serve
    p = programme(line, opts)
    with pytest.raises(SizingInfeasible) as info:
        solve_sizing(p)
    points = {pt for pt, _, _ in info.value.violations}
    assert 8 in points
    msg = str(explain_infeasible(info.value, lambda i: f"at chainage {line.ch[i]:,.0f} m"))
    assert "at chainage 800 m" in msg and " m short of its minimum" in msg
    assert "HiGHS" not in msg and "Status" not in msg


def random_tree(seed):
    """A Y of three links (main, two branches) of 3 points each, an outlet at each end."""
    rng = np.random.default_rng(seed)
    links = []
    z_junction = None
    for k in range(3):
        ch = np.linspace(0.0, rng.uniform(300.0, 600.0), 3)
        z0 = 100.0 if k == 0 else z_junction
        pipe = z0 - np.concatenate([[0.0], np.cumsum(rng.uniform(-1.0, 8.0, 2))])
        if k == 0:
            z_junction = pipe[-1]
        sl = np.concatenate([[0.0], np.cumsum(np.hypot(np.diff(ch), np.diff(pipe)))])
        links.append(SimpleNamespace(ch=ch, pipe=pipe, sl=sl))
    q = [rng.uniform(0.4e-3, 1.5e-3), rng.uniform(0.4e-3, 1.5e-3)]
    flows = [np.full(2, q[0] + q[1]), np.full(2, q[0]), np.full(2, q[1])]
    top = links[0].pipe[0] + 1.2
    req = []
    for k, lk in enumerate(links):
        r = np.minimum(CR.min_line_pressure_m, np.maximum(top - lk.pipe, 0.0) / 2.0)
        if k > 0:
            r[-1] = max(r[-1], rng.uniform(2.0, 12.0))
        req.append(r)
    return SimpleNamespace(links=links, flows=flows, top=top, low=top - 0.2, req=req,
                           parents=[-1, 0, 0])


def tree_programme(tree, opts):

    d = np.array([o.inside_diameter for o in opts])
    rough = np.array([o.roughness for o in opts])
    profiles, cand = [], []
    for lk, q in zip(tree.links, tree.flows):
        profiles.append(SimpleNamespace(n=3, slope_length_m=lk.sl, pipe_m=lk.pipe))
        v = fr.velocity(q[:, None], d[None, :])
        loss = fr.head_loss(q[:, None], d[None, :], 1.0, method="colebrook",
                            roughness=rough[None, :], kinematic_viscosity=NU)
        cand.append((v, fr.velocity_head(v), loss))
    surfaces = [[FreeSurface(0, tree.top, np.nan)]] * 3
    splits = [np.arange(3)] * 3
    allowed = [np.ones((2, len(opts)), dtype=bool)] * 3
    p, rows = tree_problem(profiles, tree.parents, surfaces, [[(0, 2)]] * 3, splits, allowed,
                            cand, tree.req, [np.zeros(3)] * 3, np.array([0, 3, 6, 9]), opts,
                            tree.low, CR, [np.full(3, np.inf)] * 3, [np.zeros(3)] * 3)
    return p, rows


def tree_physics(tree, opts, choice):
    """Cost and feasibility of one pipe per segment (6 segments), by the tool's tree hydraulics."""
    from planner.hydraulics.network import LinkData, tree_energy

    datas, cost = [], 0.0
    for k, lk in enumerate(tree.links):
        js = choice[2 * k:2 * k + 2]
        pipe = PipeHydraulics(inside_diameter=np.array([opts[j].inside_diameter for j in js]),
                              method="colebrook", roughness=np.array([opts[j].roughness for j in js]))
        datas.append(LinkData(lk.sl, lk.pipe, tree.flows[k], pipe, parent=tree.parents[k]))
        cost += sum(opts[j].cost_per_m * (lk.sl[s + 1] - lk.sl[s]) for s, j in enumerate(js))
    es = tree_energy(datas, FreeSurface(0, tree.top, tree.low), kinematic_viscosity=NU,
                     entrance_k=CR.entrance_k)
    ok = all(np.all(e.pressure_head[(1 if k == 0 else 0):] >= r[(1 if k == 0 else 0):] + MARGIN - 1e-9)
             for k, (e, r) in enumerate(zip(es, tree.req)))
    return cost, bool(ok)


@pytest.mark.parametrize("seed", range(12))
def test_tree_whole_pieces_equal_enumeration(seed):
    """Every combination of one pipe per segment on a Y (3^6 = 729), computed on the
    tree by the tool's hydraulics (heads handed on at the junction), against the MILP."""
    opts = _options()[:3]
    tree = random_tree(seed)
    p, rows = tree_programme(tree, opts)
    best = np.inf
    for choice in itertools.product(range(len(opts)), repeat=6):
        cost, ok = tree_physics(tree, opts, choice)
        if ok:
            best = min(best, cost)
    if not np.isfinite(best):
        with pytest.raises(DesignError):
            solve_whole(p, "piece", mip_rel_gap=0.0)
        return
    res = solve_whole(p, "piece", mip_rel_gap=0.0)
    choice = [int(np.argmax(res.lengths[r])) for rr in rows for r in rr]
    cost, ok = tree_physics(tree, opts, choice)
    assert ok and cost == pytest.approx(best, rel=1e-4)


@pytest.mark.parametrize("seed", range(16))
def test_parts_below_each_tank_solved_apart_equal_enumeration(seed):
    """A break-pressure tank restarts the energy line: the programme splits into parts
    (whole.parts), solved one by one; their sum is still the optimum of one pipe per
    piece over the whole line, by exhaustive enumeration."""
    from planner.design.whole import parts, solve_whole_parts

    opts = _options()
    line = random_line(seed, tank=True)
    p = programme(line, opts)
    assert len(parts(p)) == 2
    best = best_by_enumeration(line, opts)
    if not np.isfinite(best):
        with pytest.raises(DesignError):
            solve_whole_parts(p, mip_rel_gap=0.0)
        return
    res = solve_whole_parts(p, mip_rel_gap=0.0)
    cost, ok = physics(line, opts, chosen(p, res))
    assert ok and cost == pytest.approx(best, rel=1e-6)
    assert res.lower_bound <= res.cost + 1e-9 and res.split_pipe_cost <= res.cost + 1e-7
