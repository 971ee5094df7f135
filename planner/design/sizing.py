"""Least-cost pipe sizes and classes for a gravity line: the split-pipe linear programme.

The line is cut at candidate split points into sub-stretches; each sub-stretch may be
made of several candidate pipes.  The unknowns are the lengths ``x[k, j]`` of candidate
``j`` in sub-stretch ``k`` (continuous) and the energy head ``h`` at every split point.
The formulation is the classical one for least-cost gravity mains (Karmeli, Gadish &
Meyers, "Design of optimal water distribution networks", J. Pipeline Div. ASCE 94, 1968;
Alperovits & Shamir, Water Resour. Res. 13(6), 1977), written with a head variable per
split point so that the matrix stays sparse::

    minimise     sum_k sum_j cost_j x[k, j]
    subject to   sum_j x[k, j] = L_k                               (each sub-stretch is built)
                 h[w] = h[u] - sum_j loss[k, j] x[k, j] - m[w]     (energy over sub-stretch u..w)
                 h[split] >= h_min[split]                          (pressure at split points)
                 (1 - t) h[u] + t h[w] >= h_min[i]                 (pressure inside, t = s_i / L_k)
                 x >= 0

``loss[k, j]`` is the friction slope of candidate ``j`` at the sub-stretch's design flow
and ``m`` the fitting losses.  Inside a sub-stretch the pipes are laid with the larger
bore upstream, so the hydraulic grade line is concave there and lies above its chord:
the chord constraint is sufficient.  With a split point at every profile point there
are no interior points and the programme is exact at every point.  It is a linear
programme, solved to its optimum by HiGHS through scipy (Huangfu & Hall, Math. Prog.
Comp. 10, 2018).  Candidates that break a rule independent of the sizes (pressure class
below the static head or surge, velocity above the limit) are removed before solving,
so the class is not a decision of its own: it is the cheapest class the static head
allows.

Only where a rule needs a whole choice is an integer variable used: ``whole="reach"``
gives one diameter per reach between free surfaces, ``whole="piece"`` one candidate
per sub-stretch (both MILPs).
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import NDArray
from scipy.optimize import Bounds, LinearConstraint, linprog, milp
from scipy.sparse import coo_matrix, csr_matrix, hstack

from ..errors import DesignError


@dataclass(frozen=True)
class SizingProblem:
    """The data of one line's sizing problem (SI units).

    Attributes
    ----------
    splits : ndarray of int, shape (K + 1,)
        Profile points where the pipe may change; includes every reach's ends.
    position : ndarray, shape (n,)
        Pipe length from the line's start to every profile point [m].
    unit_loss : ndarray, shape (K, J)
        Friction slope of each candidate in each sub-stretch [m/m].
    allowed : ndarray of bool, shape (K, J)
        Candidates admissible in each sub-stretch.
    cost : ndarray, shape (J,)
        Price per metre of each candidate.
    group : ndarray of int, shape (J,)
        Diameter group of each candidate (for one size per reach).
    reaches : list of (int, int)
        First and last point of each reach between free surfaces (both are splits).  For
        a tree, the points of all links are numbered one after another, each link's ends
        are splits, and reaches are listed parents first.
    start_energy : ndarray, shape (R,)
        Energy head at each reach's first point [m] (ignored where ``parent_point`` links
        the reach to another).
    min_energy : ndarray, shape (n,)
        Lowest energy head allowed at each point [m] (pipe + pressure + velocity head).
    arrival_min_energy : ndarray, shape (R,)
        Lowest energy head arriving at the end of each reach but the last [m] (a tank's
        level plus its inlet head and velocity head).
    fitting_loss : ndarray, shape (n,)
        Head lost in fittings at each split point [m] (fittings sit at split points).
    parent_point : ndarray of int, shape (R,), optional
        For a branch of a tree: the point (the last point of an earlier reach) whose
        energy head the reach starts from, at a junction with no free surface; -1 where
        the reach starts at a free surface (``start_energy``).
    """

    splits: NDArray[np.int64]
    position: NDArray[np.float64]
    unit_loss: NDArray[np.float64]
    allowed: NDArray[np.bool_]
    cost: NDArray[np.float64]
    group: NDArray[np.int64]
    reaches: list[tuple[int, int]]
    start_energy: NDArray[np.float64]
    min_energy: NDArray[np.float64]
    arrival_min_energy: NDArray[np.float64]
    fitting_loss: NDArray[np.float64]
    parent_point: NDArray[np.int64] | None = None
    #: Highest energy head allowed at each point [m] (an outlet's maximum pressure); None: no limit.
    max_energy: NDArray[np.float64] | None = None

    def linked(self, ri: int) -> int:
        """The junction point a reach starts from, or -1 for a free surface."""
        return -1 if self.parent_point is None else int(self.parent_point[ri])

    @property
    def piece_length(self) -> NDArray[np.float64]:
        """Pipe length of each sub-stretch [m]."""
        return np.diff(self.position[self.splits])


@dataclass(frozen=True)
class SizingResult:
    """The optimum: lengths per sub-stretch and candidate, cost and diagnostics."""

    lengths: NDArray[np.float64]          # (K, J) [m]
    cost: float
    method: str
    status: str
    gap: float                            # relative optimality gap (0 for the LP)
    lower_bound: float
    binding: tuple[int, ...] = field(default=())   # points whose pressure limit binds
    seconds: float = 0.0
    variables: int = 0
    constraints: int = 0


def _ends_at_tank(p: SizingProblem, ri: int) -> bool:
    """Whether a reach ends at a free surface (it has an arrival requirement)."""
    return bool(np.isfinite(p.arrival_min_energy[ri]))


def _reach_pieces(p: SizingProblem):
    """For each reach: indices of its sub-stretches (into splits)."""
    out = []
    for a, b in p.reaches:
        k0 = int(np.searchsorted(p.splits, a))
        k1 = int(np.searchsorted(p.splits, b))
        out.append(np.arange(k0, k1))
    return out


def _build(p: SizingProblem):
    """Sparse constraint matrices, bounds and variable maps of the programme."""
    K, J = p.allowed.shape
    piece_idx, opt_idx = np.nonzero(p.allowed)
    nx = piece_idx.size
    order = np.argsort(piece_idx, kind="stable")
    first = np.searchsorted(piece_idx[order], np.arange(K))
    last = np.searchsorted(piece_idx[order], np.arange(K), side="right")
    pieces_of = _reach_pieces(p)
    in_reach = np.zeros(K, dtype=bool)
    for ks in pieces_of:
        in_reach[ks] = True
    head_of = []
    end_var = {}
    offset = nx
    for ri, (ks, (a, b)) in enumerate(zip(pieces_of, p.reaches)):
        parent = p.linked(ri)
        if parent >= 0:
            if parent not in end_var:
                raise ValueError(f"reach {ri} starts from point {parent}, which ends no earlier reach")
            heads = np.concatenate([[end_var[parent]], offset + np.arange(ks.size)])
            offset += ks.size
        else:
            heads = offset + np.arange(ks.size + 1)     # split points of this reach
            offset += ks.size + 1
        head_of.append(heads)
        end_var[b] = int(heads[-1])
    nvar = offset
    lb, ub = np.full(nvar, -np.inf), np.full(nvar, np.inf)
    lb[:nx] = 0.0
    eq_r, eq_c, eq_v, eq_b = [], [], [], []
    in_r, in_c, in_v, in_b, in_point = [], [], [], [], []
    # each sub-stretch is built
    built = np.flatnonzero(in_reach[piece_idx])
    rows_built = np.cumsum(in_reach) - 1
    eq_r.append(rows_built[piece_idx[built]])
    eq_c.append(built)
    eq_v.append(np.ones(built.size))
    eq_b.append(p.piece_length[in_reach])
    row = int(in_reach.sum())
    irow = 0
    head_point = np.full(nvar - nx, -1, dtype=np.int64)
    for ri, ks in enumerate(pieces_of):
        heads = head_of[ri]
        pts = p.splits[ks[0]:ks[-1] + 2]
        head_point[heads - nx] = pts
        for kk, k in enumerate(ks):
            u, w = p.splits[k], p.splits[k + 1]
            sel = order[first[k]:last[k]]
            eq_r += [np.full(sel.size + 2, row)]
            eq_c += [np.concatenate([sel, [heads[kk + 1], heads[kk]]])]
            eq_v += [np.concatenate([p.unit_loss[k, opt_idx[sel]], [1.0, -1.0]])]
            m = p.fitting_loss[w] if (not _ends_at_tank(p, ri) or kk < ks.size - 1) else 0.0
            eq_b.append(np.array([-m]))
            row += 1
            # pressure inside the sub-stretch, on the chord of the HGL
            inner = np.arange(u + 1, w)
            if inner.size:
                t = (p.position[inner] - p.position[u]) / (p.position[w] - p.position[u])
                for i, ti in zip(inner, t):
                    in_r += [irow, irow]
                    in_c += [heads[kk], heads[kk + 1]]
                    in_v += [-(1.0 - ti), -ti]
                    in_b.append(-p.min_energy[i])
                    in_point.append(i)
                    irow += 1
        own = heads[1:] if p.linked(ri) >= 0 else heads
        lb[own] = p.min_energy[pts[-own.size:]]
        if _ends_at_tank(p, ri):
            lb[heads[-1]] = max(p.min_energy[pts[-1]], p.arrival_min_energy[ri])
        if p.max_energy is not None:
            cap = p.max_energy[pts[-own.size:]]
            ub[own] = np.minimum(ub[own], cap)
        if p.linked(ri) < 0:
            lb[heads[0]] = ub[heads[0]] = p.start_energy[ri]
    A_eq = csr_matrix((np.concatenate(eq_v), (np.concatenate(eq_r), np.concatenate(eq_c))),
                      shape=(row, nvar))
    b_eq = np.concatenate(eq_b)
    A_ub = csr_matrix((np.array(in_v), (np.array(in_r, dtype=np.int64), np.array(in_c, dtype=np.int64))),
                      shape=(irow, nvar)) if irow else None
    b_ub = np.array(in_b) if irow else None
    c = np.zeros(nvar)
    c[:nx] = p.cost[opt_idx]
    return dict(A_eq=A_eq, b_eq=b_eq, A_ub=A_ub, b_ub=b_ub, c=c, lb=lb, ub=ub,
                piece_idx=piece_idx, opt_idx=opt_idx, nx=nx, head_point=head_point,
                in_point=np.array(in_point, dtype=np.int64))


def solve_sizing(p: SizingProblem, *, whole: str | None = None, pieces: NDArray | None = None,
                 time_limit: float = 60.0, mip_rel_gap: float = 1e-4) -> SizingResult:
    """Solve the sizing problem; raise DesignError if it has no solution.

    Parameters
    ----------
    p : SizingProblem
    whole : {None, "reach", "piece"}
        None: free splits (the LP).  ``"reach"``: one diameter per reach between free
        surfaces; ``"piece"``: one candidate per sub-stretch (both MILPs).
    pieces : ndarray of bool, optional
        With ``whole="piece"``: only these sub-stretches must be of one candidate.
    time_limit : float
        HiGHS time limit [s] (MILP only).
    mip_rel_gap : float
        Relative gap at which the MILP stops [-].
    """
    if whole not in (None, "reach", "piece"):
        raise ValueError(f"whole must be None, 'reach' or 'piece', got {whole!r}")
    if whole == "reach":
        return _one_size_per_reach(p, time_limit=time_limit, mip_rel_gap=mip_rel_gap)
    t0 = time.perf_counter()
    m = _build(p)
    K, J = p.allowed.shape
    nx, c = m["nx"], m["c"]
    ncons = m["A_eq"].shape[0] + (m["A_ub"].shape[0] if m["A_ub"] is not None else 0)
    if whole is None:
        res = linprog(c, A_ub=m["A_ub"], b_ub=m["b_ub"], A_eq=m["A_eq"], b_eq=m["b_eq"],
                      bounds=np.column_stack([m["lb"], m["ub"]]), method="highs")
        if res.status != 0:
            raise DesignError(f"the sizing programme has no solution ({res.message})")
        binding = set()
        marg = getattr(res.lower, "marginals", None)
        if marg is not None:
            hp = m["head_point"]
            free = m["ub"][nx:] > m["lb"][nx:]
            binding |= {int(pt) for pt, mg, f in zip(hp, marg[nx:], free) if f and abs(mg) > 1e-9}
        if m["A_ub"] is not None and getattr(res, "ineqlin", None) is not None:
            binding |= {int(i) for i, mg in zip(m["in_point"], res.ineqlin.marginals)
                        if abs(mg) > 1e-9}
        x = np.zeros((K, J))
        x[m["piece_idx"], m["opt_idx"]] = res.x[:nx]
        return SizingResult(lengths=x, cost=float(res.fun), method="split-pipe LP",
                            status="optimal", gap=0.0, lower_bound=float(res.fun),
                            binding=tuple(sorted(binding)), seconds=time.perf_counter() - t0,
                            variables=c.size, constraints=ncons)

    # whole choices: binaries y[u, g]; x[k, j] <= L_k y[u(k), g(j)]; sum_g y[u, g] = 1
    groups = np.unique(p.group)
    if whole == "reach":
        unit_of_piece = np.full(K, -1, dtype=np.int64)
        for ri, ks in enumerate(_reach_pieces(p)):
            unit_of_piece[ks] = ri
        n_units = len(p.reaches)
    else:
        in_reach = np.zeros(K, dtype=bool)
        for ks in _reach_pieces(p):
            in_reach[ks] = True
        chosen = in_reach if pieces is None else np.asarray(pieces, dtype=bool) & in_reach
        unit_of_piece = np.full(K, -1, dtype=np.int64)
        unit_of_piece[chosen] = np.arange(int(chosen.sum()))
        n_units = int(chosen.sum())
    gpos = {g: k for k, g in enumerate(groups)}
    ny = n_units * groups.size
    piece_idx, opt_idx = m["piece_idx"], m["opt_idx"]
    tied = np.flatnonzero(unit_of_piece[piece_idx] >= 0)         # x entries with a binary
    yidx = unit_of_piece[piece_idx[tied]] * groups.size + np.array(
        [gpos[g] for g in p.group[opt_idx[tied]]], dtype=np.int64)
    nvar = c.size + ny
    nt = tied.size
    link = coo_matrix((np.concatenate([np.ones(nt), -p.piece_length[piece_idx[tied]]]),
                       (np.concatenate([np.arange(nt), np.arange(nt)]),
                        np.concatenate([tied, c.size + yidx]))), shape=(nt, nvar))
    one = coo_matrix((np.ones(ny), (np.repeat(np.arange(n_units), groups.size),
                                    c.size + np.arange(ny))), shape=(n_units, nvar))
    pad = csr_matrix((m["A_eq"].shape[0], ny))
    cons = [LinearConstraint(hstack([m["A_eq"], pad]).tocsr(), m["b_eq"], m["b_eq"]),
            LinearConstraint(link.tocsr(), -np.inf, 0.0), LinearConstraint(one.tocsr(), 1.0, 1.0)]
    if m["A_ub"] is not None:
        cons.append(LinearConstraint(hstack([m["A_ub"], csr_matrix((m["A_ub"].shape[0], ny))]).tocsr(),
                                     -np.inf, m["b_ub"]))
    yub = np.ones(ny)
    for u in range(n_units):
        ks = np.flatnonzero(unit_of_piece == u)
        for g in groups:
            if not np.all(p.allowed[ks][:, p.group == g].any(axis=1)):
                yub[u * groups.size + gpos[g]] = 0.0
    res = milp(np.concatenate([c, np.zeros(ny)]), constraints=cons,
               bounds=Bounds(np.concatenate([m["lb"], np.zeros(ny)]), np.concatenate([m["ub"], yub])),
               integrality=np.concatenate([np.zeros(c.size), np.ones(ny)]),
               options=dict(time_limit=time_limit, mip_rel_gap=mip_rel_gap))
    if res.x is None:
        raise DesignError(f"no design with one pipe size per {whole} meets the limits "
                          f"({res.message}); allow size changes")
    x = np.zeros((K, J))
    x[piece_idx, opt_idx] = res.x[:nx]
    gap = float(getattr(res, "mip_gap", 0.0) or 0.0)
    bound = getattr(res, "mip_dual_bound", None)
    return SizingResult(lengths=x, cost=float(res.fun), method=f"MILP, one size per {whole}",
                        status="optimal" if res.status == 0 else "time limit (best found)",
                        gap=gap, lower_bound=float(bound if bound is not None else res.fun),
                        seconds=time.perf_counter() - t0, variables=nvar,
                        constraints=ncons + nt + n_units)


def _one_size_per_reach(p: SizingProblem, *, time_limit: float, mip_rel_gap: float) -> SizingResult:
    """One diameter per reach, as a compact MILP: a binary per reach and size only.

    With the size fixed, each piece takes that size's cheapest admissible class, so the
    head loss to every point of the reach is a known number per size; the heads are
    linear in the binaries.  Variables: the binaries and one energy head per reach end.
    """
    t0 = time.perf_counter()
    K, J = p.allowed.shape
    groups = np.unique(p.group)
    pieces_of = _reach_pieces(p)
    R, G_ = len(p.reaches), groups.size
    # the option each (piece, size) would use, or -1
    pick = np.full((K, G_), -1, dtype=np.int64)
    for gi, g in enumerate(groups):
        cols = np.flatnonzero(p.group == g)
        costs = np.where(p.allowed[:, cols], p.cost[cols][None, :], np.inf)
        best = np.argmin(costs, axis=1)
        ok = np.isfinite(costs[np.arange(K), best])
        pick[ok, gi] = cols[best[ok]]
    ny = R * G_
    nh = R                                       # energy head at each reach's end
    nvar = ny + nh
    c = np.zeros(nvar)
    yub = np.ones(ny)
    rows, cols_, vals, lo, hi = [], [], [], [], []
    row = 0
    end_of = {}
    for ri, ks in enumerate(pieces_of):
        a, b = p.reaches[ri]
        parent = p.linked(ri)
        pts_split = p.splits[ks[0]:ks[-1] + 2]
        # cumulative loss per size at every point of the reach (pieces and their inner points)
        pts = np.arange(a, b + 1)
        cum = np.zeros((pts.size, G_))
        for gi in range(G_):
            if np.any(pick[ks, gi] < 0):
                yub[ri * G_ + gi] = 0.0
                continue
            c[ri * G_ + gi] = float(np.sum(p.cost[pick[ks, gi]] * p.piece_length[ks]))
            loss_k = p.unit_loss[ks, pick[ks, gi]] * p.piece_length[ks]
            m = p.fitting_loss[p.splits[ks + 1]].copy()
            if _ends_at_tank(p, ri):
                m[-1] = 0.0
            at_split = np.concatenate([[0.0], np.cumsum(loss_k + m)])
            cum[:, gi] = np.interp(p.position[pts] - p.position[a] + 0.0,
                                   p.position[pts_split] - p.position[a], at_split)
        # h_point = h_start - sum_g y_g cum_g(point) >= need(point)
        need = p.min_energy[pts].copy()
        if _ends_at_tank(p, ri):
            need[-1] = max(need[-1], p.arrival_min_energy[ri])
        ycols = ri * G_ + np.arange(G_)
        start_var = end_of[parent] if parent >= 0 else None
        start_val = p.start_energy[ri] if parent < 0 else 0.0
        for i in range(1, pts.size):
            r_c = list(ycols)
            r_v = list(-cum[i])
            if start_var is not None:
                r_c.append(start_var)
                r_v.append(1.0)
            rows += [row] * len(r_c)
            cols_ += r_c
            vals += r_v
            lo.append(need[i] - start_val)
            cap = np.inf if p.max_energy is None else p.max_energy[pts[i]]
            hi.append(cap - start_val)
            row += 1
        # the reach's end head: h_end + sum_g y_g cum_g(end) - h_start = 0
        end_var = ny + ri
        r_c = list(ycols) + [end_var] + ([start_var] if start_var is not None else [])
        r_v = list(cum[-1]) + [1.0] + ([-1.0] if start_var is not None else [])
        rows += [row] * len(r_c)
        cols_ += r_c
        vals += r_v
        lo.append(start_val)
        hi.append(start_val)
        row += 1
        end_of[b] = end_var
        # one size
        rows += [row] * G_
        cols_ += list(ycols)
        vals += [1.0] * G_
        lo.append(1.0)
        hi.append(1.0)
        row += 1
    A = csr_matrix((vals, (rows, cols_)), shape=(row, nvar))
    res = milp(c, constraints=[LinearConstraint(A, np.array(lo), np.array(hi))],
               bounds=Bounds(np.concatenate([np.zeros(ny), np.full(nh, -np.inf)]),
                             np.concatenate([yub, np.full(nh, np.inf)])),
               integrality=np.concatenate([np.ones(ny), np.zeros(nh)]),
               options=dict(time_limit=time_limit, mip_rel_gap=mip_rel_gap))
    if res.x is None:
        raise DesignError("no design with one pipe size per reach meets the limits "
                          f"({res.message}); allow size changes")
    y = np.round(res.x[:ny]).reshape(R, G_)
    x = np.zeros((K, J))
    for ri, ks in enumerate(pieces_of):
        gi = int(np.argmax(y[ri]))
        x[ks, pick[ks, gi]] = p.piece_length[ks]
    bound = getattr(res, "mip_dual_bound", None)
    return SizingResult(lengths=x, cost=float(res.fun), method="MILP, one size per reach",
                        status="optimal" if res.status == 0 else "time limit (best found)",
                        gap=float(getattr(res, "mip_gap", 0.0) or 0.0),
                        lower_bound=float(bound if bound is not None else res.fun),
                        seconds=time.perf_counter() - t0, variables=nvar, constraints=row)


def solve_whole_pieces(p: SizingProblem, *, rounds: int = 6, time_limit: float = 10.0) -> SizingResult:
    """The split-pipe optimum, then one candidate per sub-stretch where the LP split one.

    The LP optimum is a lower bound; sub-stretches it made of several pipes get a
    binary choice (a MILP over those few only), repeated until no sub-stretch is split.
    The result's gap is measured against the LP bound.  Every stretch is then at least
    one sub-stretch long (the minimum stretch length rule).
    """
    lp = solve_sizing(p)
    res, mask = lp, np.zeros(p.allowed.shape[0], dtype=bool)
    for _ in range(rounds):
        split = (res.lengths > 1e-6 * p.piece_length[:, None]).sum(axis=1) > 1
        if not split.any():
            break
        mask |= split
        res = solve_sizing(p, whole="piece", pieces=mask, time_limit=time_limit)
    gap = (res.cost - lp.cost) / lp.cost if lp.cost > 0 else 0.0
    return SizingResult(lengths=res.lengths, cost=res.cost,
                        method="split-pipe LP, then one pipe per sub-stretch (MILP)"
                        if mask.any() else "split-pipe LP", status=res.status, gap=gap,
                        lower_bound=lp.cost, binding=lp.binding,
                        seconds=lp.seconds + (res.seconds if res is not lp else 0.0),
                        variables=res.variables, constraints=res.constraints)


def energies(p: SizingProblem, lengths: NDArray) -> list[NDArray]:
    """Energy heads at the split points of each reach, under the programme's own model."""
    out, at_end = [], {}
    for ri, ks in enumerate(_reach_pieces(p)):
        loss = np.sum(np.where(p.allowed[ks], p.unit_loss[ks], 0.0) * lengths[ks], axis=1)
        w = p.splits[ks + 1]
        m = p.fitting_loss[w].copy()
        if _ends_at_tank(p, ri):
            m[-1] = 0.0
        parent = p.linked(ri)
        start = at_end[parent] if parent >= 0 else p.start_energy[ri]
        h = start - np.concatenate([[0.0], np.cumsum(loss + m)])
        at_end[p.reaches[ri][1]] = h[-1]
        out.append(h)
    return out


def is_feasible(p: SizingProblem, lengths: NDArray, tol: float = 1e-6) -> bool:
    """Whether a design meets every limit of the programme (split and inner points)."""
    pieces_of = _reach_pieces(p)
    used = np.concatenate(pieces_of)
    if not np.allclose(lengths[used].sum(axis=1), p.piece_length[used], atol=1e-6):
        return False
    if np.any((lengths > tol) & ~p.allowed):
        return False
    for ri, (ks, h) in enumerate(zip(pieces_of, energies(p, lengths))):
        pts = p.splits[ks[0]:ks[-1] + 2]
        need = p.min_energy[pts].copy()
        if _ends_at_tank(p, ri):
            need[-1] = max(need[-1], p.arrival_min_energy[ri])
        if np.any(h[1:] < need[1:] - tol):
            return False
        if p.max_energy is not None and np.any(h > p.max_energy[pts] + tol):
            return False
        for kk, k in enumerate(ks):
            u, w = p.splits[k], p.splits[k + 1]
            inner = np.arange(u + 1, w)
            if inner.size:
                t = (p.position[inner] - p.position[u]) / (p.position[w] - p.position[u])
                if np.any((1 - t) * h[kk] + t * h[kk + 1] < p.min_energy[inner] - tol):
                    return False
    return True


def best_single_size(p: SizingProblem) -> tuple[float, int | None]:
    """Cheapest feasible design using one diameter group along the whole line.

    In each sub-stretch the group's cheapest admissible candidate is used (the class
    may change with the static head).  Returns (cost, group), or (inf, None).
    """
    best = (float("inf"), None)
    for g in np.unique(p.group):
        cols = np.flatnonzero(p.group == g)
        ok = p.allowed[:, cols]
        used = np.concatenate(_reach_pieces(p))
        if not np.all(ok[used].any(axis=1)):
            continue
        lengths = np.zeros(p.allowed.shape)
        pick = cols[np.argmin(np.where(ok, p.cost[cols][None, :], np.inf), axis=1)]
        for ks in _reach_pieces(p):
            lengths[ks, pick[ks]] = p.piece_length[ks]
        if is_feasible(p, lengths):
            cost = float(np.sum(lengths * p.cost[None, :]))
            if cost < best[0]:
                best = (cost, int(g))
    return best
