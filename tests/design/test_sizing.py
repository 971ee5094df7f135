"""Least-cost sizing on small cases against exhaustive enumeration."""

import itertools

import numpy as np
import pytest

from planner.design.sizing import SizingProblem, best_single_size, solve_sizing
from planner.design.whole import solve_whole, solve_whole_pieces
from planner.errors import DesignError


def small_problem(seed, nseg=4, nopt=3, reaches=None, feasible=False):
    """A random line: descending ground, candidates with losses falling as cost rises."""
    rng = np.random.default_rng(seed)
    length = rng.uniform(80, 200, nseg)
    position = np.concatenate([[0.0], np.cumsum(length)])
    ground = 100 - np.concatenate([[0.0], np.cumsum(rng.uniform(-2, 8, nseg))])
    loss = np.sort(rng.uniform(0.002, 0.08, nopt))[::-1]            # m/m, big pipe last
    cost = np.sort(rng.uniform(1, 10, nopt))
    unit_loss = np.tile(loss, (nseg, 1)) * rng.uniform(0.8, 1.2, (nseg, 1))
    need = ground + 2.0
    start = 101.0
    if feasible:     # enough head for the largest pipe everywhere, not for the smallest
        reach_big = np.concatenate([[0.0], np.cumsum(unit_loss[:, -1] * length)])
        start = float(np.max(need + reach_big)) + 0.5
    reaches = reaches or [(0, nseg)]
    return SizingProblem(
        splits=np.arange(nseg + 1), position=position, unit_loss=unit_loss,
        allowed=np.ones((nseg, nopt), dtype=bool), cost=cost, group=np.arange(nopt),
        reaches=reaches, start_level=np.array([start for _ in reaches]),
        min_head=need, arrival_min_head=np.full(len(reaches), -np.inf),
        point_k=np.zeros(nseg + 1), velocity_head=np.zeros_like(unit_loss), start_k=np.zeros(len(reaches)))


def enumerate_best(p):
    """Cheapest one-pipe-per-segment design, by trying every combination (heads by hand)."""
    nseg, nopt = p.allowed.shape
    best = np.inf
    for combo in itertools.product(range(nopt), repeat=nseg):
        h = p.start_level[0] - np.concatenate(
            [[0.0], np.cumsum([p.unit_loss[s, j] * p.piece_length[s] for s, j in enumerate(combo)])])
        if np.all(h[1:] >= p.min_head[1:] - 1e-9):
            best = min(best, sum(p.cost[j] * p.piece_length[s] for s, j in enumerate(combo)))
    return best


def against_enumeration(p, exhaustive):
    """The one-pipe-per-piece MILP equals enumeration; the LP bounds it. Returns (lp, milp)."""
    if not np.isfinite(exhaustive):
        with pytest.raises(DesignError):
            solve_whole(p, "piece")
        return None, None
    milp = solve_whole(p, "piece", mip_rel_gap=0.0)
    assert milp.cost == pytest.approx(exhaustive, rel=1e-7)
    lp = solve_sizing(p)
    assert lp.cost <= milp.cost + 1e-7                  # the split-pipe optimum is a bound
    assert lp.cost <= best_single_size(p)[0] + 1e-7
    return lp, milp


@pytest.mark.parametrize("seed", range(12))
def test_one_size_per_piece_equals_enumeration_and_lp_is_a_bound(seed):
    p = small_problem(seed)
    lp, milp = against_enumeration(p, enumerate_best(p))
    if lp is None:
        return
    single, _ = best_single_size(p)
    assert lp.cost <= single + 1e-7 and milp.cost <= single + 1e-7
    tidy = solve_whole_pieces(p)
    assert lp.cost - 1e-7 <= tidy.cost <= milp.cost + 1e-6
    assert ((tidy.lengths > 1e-6).sum(axis=1) == 1).all()   # no sub-stretch split


def test_lp_design_meets_every_limit_when_rechecked():
    p = small_problem(3, nseg=8, nopt=4, feasible=True)
    res = solve_sizing(p)
    np.testing.assert_allclose(res.lengths.sum(axis=1), p.piece_length)
    h = p.start_level[0] - np.concatenate([[0.0], np.cumsum((res.lengths * p.unit_loss).sum(axis=1))])
    assert np.all(h[1:] >= p.min_head[1:] - 1e-7)
    # the LP uses at most two candidates in a segment, adjacent in size (a vertex property)
    assert ((res.lengths > 1e-6).sum(axis=1) <= 2).all()


def test_chord_constraint_inside_coarse_pieces():
    p = small_problem(5, nseg=6, nopt=3, feasible=True)
    loss = np.tile(p.unit_loss[0], (6, 1))                  # one flow along the line
    big = np.concatenate([[0.0], np.cumsum(loss[:, -1] * p.piece_length)])
    start = np.array([float(np.max(p.min_head + big)) + 0.5])
    fine = SizingProblem(**{**p.__dict__, "unit_loss": loss, "start_level": start})
    coarse = SizingProblem(**{**fine.__dict__, "splits": np.array([0, 3, 6]),
                              "unit_loss": loss[[0, 3]], "allowed": p.allowed[[0, 3]]})
    f, c = solve_sizing(fine), solve_sizing(coarse)
    assert c.cost >= f.cost - 1e-7                     # fewer split points cannot be cheaper
    # the coarse design, laid larger bore first, meets every point's limit (the HGL is
    # concave within a piece and lies above the chord the programme checked)
    for k in range(2):
        used = np.flatnonzero(c.lengths[k] > 1e-9)
        used = used[np.argsort(loss[0, used])]          # larger bore (smaller loss) first
        u = coarse.splits[k]
        h0 = start[0] - np.sum(c.lengths[:k] * loss[[0, 3]][:k])
        for i in range(u + 1, coarse.splits[k + 1] + 1):
            d = p.position[i] - p.position[u]
            run, h = 0.0, h0
            for j in used:
                take = min(c.lengths[k, j], max(d - run, 0.0))
                h -= loss[0, j] * take
                run += c.lengths[k, j]
            assert h >= p.min_head[i] - 1e-7


def test_infeasible_is_reported():
    p = small_problem(1)
    impossible = SizingProblem(**{**p.__dict__, "min_head": p.min_head + 50})
    with pytest.raises(DesignError, match="no solution"):
        solve_sizing(impossible)


def small_tree(seed, nopt=3):
    """A Y: a main of two pieces to a junction, then two branches of two pieces each.

    Points of each link are numbered one after another (main 0-2, branch A 3-5,
    branch B 6-8); the pieces 2-3 and 5-6 join different links and belong to no reach.
    """
    rng = np.random.default_rng(seed)
    L = rng.uniform(100, 300, 9)
    position = np.zeros(9)
    for block in ((0, 1, 2), (3, 4, 5), (6, 7, 8)):
        position[list(block)] = np.concatenate([[0.0], np.cumsum(L[list(block[1:])])])
    ground = np.empty(9)
    ground[:3] = 100 - np.array([0, 6, 14])
    ground[3:6] = ground[2] - np.array([0, rng.uniform(0, 10), rng.uniform(5, 20)])
    ground[6:9] = ground[2] - np.array([0, rng.uniform(-3, 6), rng.uniform(0, 12)])
    loss = np.sort(rng.uniform(0.003, 0.06, nopt))[::-1]
    flow_scale = np.array([2.0, 2.0, 1.0, 1.0, 1.0, 1.0, 0.6, 0.6])   # main carries both branches
    unit_loss = np.outer(flow_scale ** 1.85, loss)
    allowed = np.ones((8, nopt), dtype=bool)
    allowed[[2, 5]] = False
    # enough head for the largest pipe on every path (the smallest will not do)
    length = np.diff(position)
    big = unit_loss[:, -1] * length
    main = np.array([0, big[0], big[0] + big[1]])
    need = max(np.max(ground[:3] + 2 + main),
               *(np.max(ground[a:a + 3] + 2 + main[2] + np.array([0, big[a], big[a] + big[a + 1]]))
                 for a in (3, 6)))
    start = float(need) + 0.3
    return SizingProblem(
        splits=np.arange(9), position=position, unit_loss=unit_loss, allowed=allowed,
        cost=np.sort(rng.uniform(1, 10, nopt)) * 1.0, group=np.arange(nopt),
        reaches=[(0, 2), (3, 5), (6, 8)], start_level=np.array([start, np.nan, np.nan]),
        min_head=ground + 2.0, arrival_min_head=np.full(3, -np.inf),
        point_k=np.zeros(9), velocity_head=np.zeros_like(unit_loss), start_k=np.zeros(3), parent_point=np.array([-1, 2, 2]))


def enumerate_tree(p):
    real = [0, 1, 3, 4, 6, 7]
    best = np.inf
    length = p.piece_length
    for combo in itertools.product(range(p.cost.size), repeat=len(real)):
        pick = dict(zip(real, combo))
        h = np.full(9, np.nan)
        h[0] = p.start_level[0]
        h[1] = h[0] - p.unit_loss[0, pick[0]] * length[0]
        h[2] = h[1] - p.unit_loss[1, pick[1]] * length[1]
        for a in (3, 6):                                   # each branch starts at the junction
            h[a] = h[2]
            h[a + 1] = h[a] - p.unit_loss[a, pick[a]] * length[a]
            h[a + 2] = h[a + 1] - p.unit_loss[a + 1, pick[a + 1]] * length[a + 1]
        if np.all(h[[1, 2, 4, 5, 7, 8]] >= p.min_head[[1, 2, 4, 5, 7, 8]] - 1e-9):
            best = min(best, sum(p.cost[j] * length[k] for k, j in pick.items()))
    return best


@pytest.mark.parametrize("seed", range(8))
def test_tree_sizing_equals_enumeration(seed):
    p = small_tree(seed)
    lp, _ = against_enumeration(p, enumerate_tree(p))
    assert lp is not None                               # every Y here has a design
    # the junction head is shared: both branches start where the main ends
    x = lp.lengths
    h_junction = p.start_level[0] - sum((x[k] * p.unit_loss[k]).sum() for k in (0, 1))
    for a in (3, 6):
        h_end = h_junction - sum((x[k] * p.unit_loss[k]).sum() for k in (a, a + 1))
        assert h_end >= p.min_head[a + 2] - 1e-7
