"""Whole choices in the sizing programme: one size per reach, one pipe per sub-stretch.

The split-pipe programme of :mod:`planner.design.sizing` with integer variables
(mixed-integer linear programmes, HiGHS branch and bound through scipy's ``milp``):
``whole="reach"`` gives one diameter per reach between free surfaces, ``whole="piece"``
one candidate per piece (sub-stretch).  Both substitute the lengths by binaries times
the piece lengths (:func:`solve_whole`), and :func:`solve_whole_pieces` proves the
optimum of "one pipe per sub-stretch" from the split-pipe optimum with small MILPs
over the pieces it splits first.
"""

from __future__ import annotations

import time
from dataclasses import replace

import numpy as np
from numpy.typing import NDArray
from scipy.optimize import Bounds, LinearConstraint, milp
from scipy.sparse import coo_matrix, hstack

from ..errors import DesignError
from .sizing import (SizingProblem, SizingResult, _built, _infeasible, _lengths, _reach_pieces,
                     is_feasible, solve_sizing)

#: Relative gap at which the MILPs stop [-]: 0.1 %, far inside the uncertainty of pipe
#: prices (a choice of ours); the gap reached is always reported.
MIP_GAP = 1e-3
#: Time limit of one MILP [s]: a safety stop, reported when it is hit.
MIP_TIME_LIMIT = 60.0


def solve_whole(p: SizingProblem, whole: str, *, pieces: NDArray | None = None,
                time_limit: float = MIP_TIME_LIMIT, mip_rel_gap: float = MIP_GAP) -> SizingResult:
    """Solve the programme with whole choices; raise ``SizingInfeasible`` if none exists.

    Parameters
    ----------
    p : SizingProblem
    whole : {"reach", "piece"}
        One diameter per reach between free surfaces, or one candidate per piece.
    pieces : ndarray of bool, optional
        With ``whole="piece"``: only these pieces must be of one candidate.
    time_limit : float
        HiGHS time limit [s].
    mip_rel_gap : float
        Relative gap at which the MILP stops [-].
    """
    if whole not in ("reach", "piece"):
        raise ValueError(f"whole must be 'reach' or 'piece', got {whole!r}")
    return _whole_milp(p, _built(p), whole, pieces, time_limit, mip_rel_gap, time.perf_counter())


def _whole_milp(p, m, whole, pieces, time_limit, mip_rel_gap, t0) -> SizingResult:
    """Whole choices: the same programme with the lengths written as ``x = T z``.

    With a unit's size fixed (a reach for ``whole="reach"``, a piece for ``"piece"``),
    every piece of it takes that size's one admissible candidate for its whole length,
    so ``x[k, j] = L_k y[u, g(j)]`` with binaries ``y``; the lengths of pieces in no
    unit stay free (``x[k, j]`` itself).  Substituting leaves binaries, free lengths
    and heads only: the compact form, far quicker on large systems than linking the
    lengths to binaries by ``x <= L y``, with the same LP relaxation; the rules stay
    those of :func:`_build`.
    """
    groups = np.unique(p.group)
    gpos = np.searchsorted(groups, p.group)
    unit, n_units = _units(p, whole, pieces)
    piece_idx, opt_idx, nx, nv = m["piece_idx"], m["opt_idx"], m["nx"], m["nvar"]
    ny = n_units * groups.size
    # of several candidates of one size in a piece (classes), the cheapest is taken: a
    # higher class of the same size costs more and has a smaller bore
    order = np.lexsort((p.cost[opt_idx], gpos[opt_idx], piece_idx))
    key = np.stack([piece_idx[order], gpos[opt_idx[order]]])
    first = np.ones(nx, dtype=bool)
    first[1:] = np.any(key[:, 1:] != key[:, :-1], axis=0)
    cheapest = np.zeros(nx, dtype=bool)
    cheapest[order[first]] = True
    tied = unit[piece_idx] >= 0
    live = tied & cheapest
    free = np.flatnonzero(~tied)
    nf = free.size
    rows = np.concatenate([np.flatnonzero(live), free])
    cols = np.concatenate([unit[piece_idx[live]] * groups.size + gpos[opt_idx[live]],
                           ny + np.arange(nf)])
    vals = np.concatenate([p.piece_length[piece_idx[live]], np.ones(nf)])
    T = coo_matrix((vals, (rows, cols)), shape=(nx, ny + nf)).tocsr()
    nh = nv - nx

    def substitute(A):
        return hstack([A[:, :nx] @ T, A[:, nx:]]).tocsr()

    one = coo_matrix((np.ones(ny), (np.repeat(np.arange(n_units), groups.size), np.arange(ny))),
                     shape=(n_units, ny + nf + nh)).tocsr()
    cons = [LinearConstraint(substitute(m["A_eq"]), m["b_eq"], m["b_eq"]),
            LinearConstraint(one, 1.0, 1.0)]
    if m["A_ub"] is not None:
        cons.append(LinearConstraint(substitute(m["A_ub"]), -np.inf, m["b_ub"]))
    yub = _open_sizes(p, unit, n_units, gpos, groups.size)
    c = np.concatenate([T.T @ m["c"][:nx], np.zeros(nh)])
    res = milp(c, constraints=cons,
               bounds=Bounds(np.concatenate([np.zeros(ny + nf), np.full(nh, -np.inf)]),
                             np.concatenate([yub.ravel(), np.full(nf + nh, np.inf)])),
               integrality=np.concatenate([np.ones(ny), np.zeros(nf + nh)]),
               options=dict(time_limit=time_limit, mip_rel_gap=mip_rel_gap))
    what = "one pipe size per reach" if whole == "reach" else "one pipe per sub-stretch"
    if res.x is None:
        if res.status == 1:
            raise DesignError(
                f"no design with {what} was found within the time limit of {time_limit:g} s: "
                + ("allow size changes (design.one_size_per_reach = false)" if whole == "reach"
                   else "allow size changes (design.one_size_per_reach = false) or a coarser "
                   "design.split_spacing_m"))
        raise _infeasible(p, m, f"a design with {what}")
    z = res.x[:ny + nf].copy()
    z[:ny] = np.round(z[:ny])
    xv = T @ z
    bound = getattr(res, "mip_dual_bound", None)
    cost = float(res.fun)
    return SizingResult(lengths=_lengths(p, m, xv), cost=cost, method=f"MILP, {what}",
                        status="optimal" if res.status == 0 else "time limit (best found)",
                        gap=float(getattr(res, "mip_gap", 0.0) or 0.0),
                        lower_bound=float(bound if bound is not None else cost),
                        split_pipe_cost=float("nan"), seconds=time.perf_counter() - t0,
                        variables=ny + nf + nh, constraints=sum(k.A.shape[0] for k in cons))


def _units(p: SizingProblem, whole: str, pieces) -> tuple[NDArray, int]:
    """The unit (reach, or chosen piece) each piece belongs to, -1 for none; and their number."""
    K = p.allowed.shape[0]
    unit = np.full(K, -1, dtype=np.int64)
    if whole == "reach":
        for ri, ks in enumerate(_reach_pieces(p)):
            unit[ks] = ri
        return unit, len(p.reaches)
    chosen = np.zeros(K, dtype=bool)
    for ks in _reach_pieces(p):
        chosen[ks] = True
    if pieces is not None:
        chosen &= np.asarray(pieces, dtype=bool)
    unit[chosen] = np.arange(int(chosen.sum()))
    return unit, int(chosen.sum())


def _open_sizes(p: SizingProblem, unit: NDArray, n_units: int, gpos: NDArray,
                ngroups: int) -> NDArray:
    """1 where a size is open to a unit: only where every piece of the unit admits it."""
    yub = np.ones((n_units, ngroups))
    for gi in range(ngroups):
        ok = p.allowed[:, gpos == gi].any(axis=1)
        yub[np.unique(unit[(unit >= 0) & ~ok]), gi] = 0.0
    return yub


def _split(p: SizingProblem, lengths: NDArray) -> NDArray:
    """Which pieces (of the reaches: not the joins between links) use several pipes."""
    in_reach = np.zeros(p.allowed.shape[0], dtype=bool)
    in_reach[np.concatenate(_reach_pieces(p))] = True
    return in_reach & ((lengths > 1e-6 * p.piece_length[:, None]).sum(axis=1) > 1)


def _rounded_up(p: SizingProblem, lengths: NDArray) -> NDArray:
    """The design with each split piece made wholly of its larger pipe.

    Of the candidates a piece uses, the one with the least friction slope (the larger
    bore) takes the whole piece.  With fixed flows that only raises the heads
    downstream, so every minimum still holds; a maximum may not, which
    :func:`~planner.design.sizing.is_feasible` checks.
    """
    used = lengths > 1e-6 * p.piece_length[:, None]
    out = lengths.copy()
    for k in np.flatnonzero(_split(p, lengths)):
        cols = np.flatnonzero(used[k])
        out[k] = 0.0
        out[k, cols[np.argmin(p.unit_loss[k, cols])]] = p.piece_length[k]
    return out


def _fixed_by_reduced_cost(p: SizingProblem, lp: SizingResult) -> tuple[SizingProblem, int]:
    """The problem less the candidates no cheaper whole design can use (reduced costs).

    Returns the problem and how many candidates were removed.

    For any feasible design, cost >= LP optimum + sum(reduced cost x length) (LP duality:
    e.g. Nemhauser & Wolsey, "Integer and Combinatorial Optimization", 1988, II.2). A
    known whole design (the LP's split pieces rounded up to their larger pipe) costs U;
    a candidate whose reduced cost times its piece's length exceeds U - LP cannot be in
    any design cheaper than U, so the optimum (at most U) is unchanged without it.
    """
    if lp.reduced_cost is None:
        return p, 0
    up = _rounded_up(p, lp.lengths)
    if not is_feasible(p, up):
        return p, 0
    room = float(np.sum(up * p.cost[None, :])) - lp.cost
    drop = p.allowed & (lp.reduced_cost * p.piece_length[:, None] > room * (1 + 1e-9) + 1e-6)
    drop &= lp.lengths <= 1e-6 * p.piece_length[:, None]      # never what the LP uses
    if not drop.any():
        return p, 0
    return replace(p, allowed=p.allowed & ~drop), int(drop.sum())


def parts(p: SizingProblem) -> list[list[int]]:
    """The reaches of each independent part of the programme, in the problem's order.

    A free surface (the source, a break-pressure tank) restarts the energy line, so the
    reaches below it depend on nothing above it: a part is a free surface's reach with
    the reaches that branch from it through junctions.  The programme is the sum of its
    parts' programmes (no row or variable is shared between parts).
    """
    ends = {int(p.splits[ks[-1] + 1]): ri for ri, ks in enumerate(_reach_pieces(p)) if ks.size}
    root = list(range(len(p.reaches)))
    for ri in range(len(p.reaches)):
        parent = p.linked(ri)
        if parent >= 0 and parent in ends:
            root[ri] = root[ends[parent]]
    out: dict[int, list[int]] = {}
    for ri, r in enumerate(root):
        out.setdefault(r, []).append(ri)
    return list(out.values())


def _part(p: SizingProblem, reaches: list[int]) -> SizingProblem:
    """The programme of some reaches alone (the other pieces admit no pipe)."""
    keep = np.zeros(p.allowed.shape[0], dtype=bool)
    pieces_of = _reach_pieces(p)
    for ri in reaches:
        keep[pieces_of[ri]] = True
    idx = np.array(reaches, dtype=np.int64)
    return replace(p, reaches=[p.reaches[i] for i in reaches], allowed=p.allowed & keep[:, None],
                   start_level=p.start_level[idx], start_k=p.start_k[idx],
                   arrival_min_head=p.arrival_min_head[idx],
                   parent_point=None if p.parent_point is None else p.parent_point[idx])


def _set_aside_note(count: int) -> str:
    return (f"{count:,} candidate lengths that no cheaper whole design can use were set aside "
            "by the LP's reduced costs")


def solve_whole_parts(p: SizingProblem, *, time_limit: float = MIP_TIME_LIMIT,
                      mip_rel_gap: float = MIP_GAP) -> SizingResult:
    """:func:`solve_whole_pieces` on each independent part (:func:`parts`), summed.

    Each part's optimum is proven within ``mip_rel_gap`` of its own bound, so the sum is
    within the same gap of the sum of the bounds.  Many small MILPs instead of one large
    one: branch and bound grows faster than the size of the programme.
    """
    groups = parts(p)
    if len(groups) == 1:
        return solve_whole_pieces(p, time_limit=time_limit, mip_rel_gap=mip_rel_gap)
    results = [solve_whole_pieces(_part(p, g), time_limit=time_limit, mip_rel_gap=mip_rel_gap)
               for g in groups]
    cost = float(sum(r.cost for r in results))
    bound = float(sum(r.lower_bound for r in results))
    whole = [r for r in results if r.method != "split-pipe LP"]
    notes = [f"solved as {len(groups)} independent parts, one per free surface and the "
             "reaches it feeds"]
    set_aside = sum(r.set_aside for r in results)
    if set_aside:
        notes.append(_set_aside_note(set_aside))
    statuses = {r.status for r in results}
    return SizingResult(
        lengths=np.sum([r.lengths for r in results], axis=0), cost=cost,
        method=whole[0].method if whole else "split-pipe LP",
        status="optimal" if statuses == {"optimal"} else "time limit (best found)",
        gap=max((cost - bound) / cost, 0.0) if cost > 0 else 0.0, lower_bound=bound,
        split_pipe_cost=float(sum(r.split_pipe_cost for r in results)),
        binding=tuple(sorted({b for r in results for b in r.binding})),
        seconds=float(sum(r.seconds for r in results)),
        variables=int(sum(r.variables for r in results)),
        constraints=int(sum(r.constraints for r in results)), notes=tuple(notes))


def solve_whole_pieces(p: SizingProblem, *, rounds: int = 0, time_limit: float = MIP_TIME_LIMIT,
                       mip_rel_gap: float = MIP_GAP) -> SizingResult:
    """The split-pipe optimum, then the optimum of one candidate per piece (sub-stretch).

    When the LP splits a piece, candidates that no design of one pipe per piece cheaper
    than a known one can use are set aside by their reduced costs
    (:func:`_fixed_by_reduced_cost`, exact), and one MILP makes every piece whole.  With
    ``rounds`` > 0, MILPs over only the pieces split so far come first, repeated while
    the answer splits others (forcing some pieces whole is a relaxation of forcing all,
    so if no piece is left split the answer is the same optimum); on the benchmark
    systems they never ended there and only added time, hence none by default.
    """
    lp = solve_sizing(p)
    res, mask = lp, np.zeros(p.allowed.shape[0], dtype=bool)
    notes = []
    bound = lp.cost
    lengths, cost, status = lp.lengths, lp.cost, lp.status
    set_aside = 0
    if _split(p, lp.lengths).any():
        p, set_aside = _fixed_by_reduced_cost(p, lp)
        if set_aside:
            notes.append(_set_aside_note(set_aside))
    for r in range(rounds + 1):
        split = _split(p, res.lengths)
        lengths, cost, status = res.lengths, res.cost, res.status
        if not split.any():
            break
        mask = np.ones_like(mask) if r == rounds else mask | split
        if r == rounds and rounds > 0:
            notes.append(f"after {rounds} rounds over the split sub-stretches, every sub-stretch "
                         "was made one pipe in one programme")
        res = solve_whole(p, "piece", pieces=mask, time_limit=time_limit, mip_rel_gap=mip_rel_gap)
        bound = max(bound, res.lower_bound)
        lengths, cost, status = res.lengths, res.cost, res.status
    gap = (cost - bound) / cost if cost > 0 else 0.0
    return SizingResult(lengths=lengths, cost=cost,
                        method="split-pipe LP, then one pipe per sub-stretch (MILP)"
                        if mask.any() else "split-pipe LP", status=status,
                        gap=max(gap, 0.0), lower_bound=bound, split_pipe_cost=lp.cost,
                        binding=lp.binding,
                        seconds=lp.seconds + (0.0 if res is lp else res.seconds),
                        variables=res.variables, constraints=res.constraints, notes=tuple(notes),
                        set_aside=set_aside)
