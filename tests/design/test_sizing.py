"""Least-cost sizing on small cases against exhaustive enumeration."""

import itertools

import numpy as np
import pytest

from planner.design.sizing import (SizingProblem, best_single_size, solve_sizing,
                                   solve_whole_pieces)
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
        reaches=reaches, start_energy=np.array([start for _ in reaches]),
        min_energy=need, arrival_min_energy=np.full(len(reaches), -np.inf),
        fitting_loss=np.zeros(nseg + 1))


def enumerate_best(p):
    """Cheapest one-pipe-per-segment design, by trying every combination (heads by hand)."""
    nseg, nopt = p.allowed.shape
    best = np.inf
    for combo in itertools.product(range(nopt), repeat=nseg):
        h = p.start_energy[0] - np.concatenate(
            [[0.0], np.cumsum([p.unit_loss[s, j] * p.piece_length[s] for s, j in enumerate(combo)])])
        if np.all(h[1:] >= p.min_energy[1:] - 1e-9):
            best = min(best, sum(p.cost[j] * p.piece_length[s] for s, j in enumerate(combo)))
    return best


@pytest.mark.parametrize("seed", range(12))
def test_one_size_per_piece_equals_enumeration_and_lp_is_a_bound(seed):
    p = small_problem(seed)
    exhaustive = enumerate_best(p)
    if not np.isfinite(exhaustive):
        with pytest.raises(DesignError):
            solve_sizing(p, whole="piece")
        return
    milp = solve_sizing(p, whole="piece", mip_rel_gap=0.0)
    assert milp.cost == pytest.approx(exhaustive, rel=1e-7)
    lp = solve_sizing(p)
    assert lp.cost <= milp.cost + 1e-7                  # the split-pipe optimum is a bound
    single, _ = best_single_size(p)
    assert lp.cost <= single + 1e-7 and milp.cost <= single + 1e-7
    tidy = solve_whole_pieces(p)
    assert lp.cost - 1e-7 <= tidy.cost <= milp.cost + 1e-6
    assert ((tidy.lengths > 1e-6).sum(axis=1) == 1).all()   # no sub-stretch split


def test_lp_design_meets_every_limit_when_rechecked():
    p = small_problem(3, nseg=8, nopt=4, feasible=True)
    res = solve_sizing(p)
    np.testing.assert_allclose(res.lengths.sum(axis=1), p.piece_length)
    h = p.start_energy[0] - np.concatenate([[0.0], np.cumsum((res.lengths * p.unit_loss).sum(axis=1))])
    assert np.all(h[1:] >= p.min_energy[1:] - 1e-7)
    # the LP uses at most two candidates in a segment, adjacent in size (a vertex property)
    assert ((res.lengths > 1e-6).sum(axis=1) <= 2).all()


def test_chord_constraint_inside_coarse_pieces():
    p = small_problem(5, nseg=6, nopt=3, feasible=True)
    loss = np.tile(p.unit_loss[0], (6, 1))                  # one flow along the line
    big = np.concatenate([[0.0], np.cumsum(loss[:, -1] * p.piece_length)])
    start = np.array([float(np.max(p.min_energy + big)) + 0.5])
    fine = SizingProblem(**{**p.__dict__, "unit_loss": loss, "start_energy": start})
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
            assert h >= p.min_energy[i] - 1e-7


def test_infeasible_is_reported():
    p = small_problem(1)
    impossible = SizingProblem(**{**p.__dict__, "min_energy": p.min_energy + 50})
    with pytest.raises(DesignError, match="no solution"):
        solve_sizing(impossible)
