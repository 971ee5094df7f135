"""Least-cost pipe sizes and classes for a gravity line or tree: the split-pipe programme.

The system is cut at candidate split points into sub-stretches ("pieces"); each piece
may be made of several candidate pipes.  The unknowns are the lengths ``x[k, j]`` of
candidate ``j`` in piece ``k`` (continuous) and the energy head ``h`` at every split
point.  The formulation is the classical one for least-cost gravity mains (Karmeli,
Gadish & Meyers, "Design of optimal water distribution networks", J. Pipeline Div.
ASCE 94(PL1), 1968; Alperovits & Shamir, "Design of optimal water distribution
systems", Water Resour. Res. 13(6), 1977), written with a head variable per split point
so that the matrix stays sparse::

    minimise     sum_k sum_j cost_j x[k, j]
    subject to   sum_j x[k, j] = L_k                                 (each piece is built)
                 h[start] = level - K_start hv(first piece)          (free surface)
                 h[w] = h[u] - sum_j S[k, j] x[k, j] - K_w hv(k')    (energy over piece u..w)
                 h[u] - hv(k) >= z[u] + p_min[u]                     (pressure at split points
                                                                      but free surfaces)
                 (1 - t) h[u] + t h[w] - hv(k) >= z[i] + p_min[i]    (inside a piece, t = s_i / L_k)
                 h[end] - hv(last) >= tank level + inlet head        (arriving at a tank)
                 x >= 0

with the velocity head of a piece written linearly in its lengths,
``hv(k) = sum_j x[k, j] hv[k, j] / L_k``.  For a piece of one pipe (every piece of the
buildable designs) that is exactly its velocity head; for a piece split between two
sizes it is their length-weighted mean, within the difference of the two velocity
heads of the exact value (the recheck of the built line catches the rest).  ``S[k, j]``
is the friction slope of candidate ``j`` at the piece's design flow and ``K_w`` a
fitting's loss coefficient at a split point, applied with the velocity of the pipe
leaving it (the arriving one at a link's end), as ``hydraulics.line`` does.  Inside a
piece the pipes are laid with the larger bore upstream, so the energy line is concave
there and lies above its chord.  It is a linear programme, solved to its optimum by
HiGHS through scipy (Huangfu & Hall, "Parallelizing the dual revised simplex method",
Math. Prog. Comp. 10, 2018).  Candidates that break a rule independent of the sizes
(class below the static head or surge, velocity above the limit) are removed before
solving, so the class is not a decision of its own.

Where a rule needs a whole choice (one diameter per reach between free surfaces, or
one candidate per piece) the same programme gets integer variables: see
:mod:`planner.design.whole`.

When the programme has no solution, :class:`SizingInfeasible` carries the limits that
cannot be met and by how many metres, from the same programme with a slack on every
limit, the sum of the slacks minimised (the classical elastic, or "phase one",
programme; e.g. Chinneck, "Feasibility and Infeasibility in Optimization", 2008, ch. 6).
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import NDArray
from scipy.optimize import linprog
from scipy.sparse import csr_matrix, hstack, identity
from scipy.sparse.linalg import spsolve

from ..errors import DesignError

#: What a row of limits is about (kept with each row for explanations).
MIN, MAX, ARRIVAL = 0, 1, 2


@dataclass(frozen=True)
class SizingProblem:
    """The data of a line's or a tree's sizing problem (SI units).

    Attributes
    ----------
    splits : ndarray of int, shape (K + 1,)
        Points where the pipe may change; includes every reach's ends.
    position : ndarray, shape (n,)
        Pipe (3-D) length from the link's start to every point [m].
    unit_loss : ndarray, shape (K, J)
        Friction slope of each candidate in each piece [m/m].
    velocity_head : ndarray, shape (K, J)
        Velocity head of each candidate in each piece [m].
    allowed : ndarray of bool, shape (K, J)
        Candidates admissible in each piece.
    cost : ndarray, shape (J,)
        Price per metre of each candidate.
    group : ndarray of int, shape (J,)
        Diameter group of each candidate (for one size per reach).
    reaches : list of (int, int)
        First and last point of each reach between free surfaces (both are splits).  For
        a tree, the points of all links are numbered one after another, each link's ends
        are splits, the piece joining two links allows nothing, and reaches are listed
        parents first.
    start_level : ndarray, shape (R,)
        Operating water level of the free surface each reach starts from [m] (ignored
        where ``parent_point`` links the reach to a junction).
    start_k : ndarray, shape (R,)
        Loss coefficient at each reach's first point [-]: entrance plus fitting at a
        free surface, the fitting alone at a junction.
    min_head : ndarray, shape (n,)
        Lowest hydraulic grade allowed at each point [m] (pipe + required pressure).
    arrival_min_head : ndarray, shape (R,)
        Lowest hydraulic grade arriving at the end of each reach that ends at a tank
        (its level plus its inlet head) [m]; -inf where the reach ends at a link's end.
    point_k : ndarray, shape (n,)
        Loss coefficient of the fittings at each split point [-].
    parent_point : ndarray of int, shape (R,), optional
        For a branch of a tree: the point (the last point of an earlier reach) whose
        energy head the reach starts from; -1 where it starts at a free surface.
    max_head : ndarray, shape (n,), optional
        Highest hydraulic grade allowed at each point [m] (an outlet's maximum pressure).
    """

    splits: NDArray[np.int64]
    position: NDArray[np.float64]
    unit_loss: NDArray[np.float64]
    velocity_head: NDArray[np.float64]
    allowed: NDArray[np.bool_]
    cost: NDArray[np.float64]
    group: NDArray[np.int64]
    reaches: list[tuple[int, int]]
    start_level: NDArray[np.float64]
    start_k: NDArray[np.float64]
    min_head: NDArray[np.float64]
    arrival_min_head: NDArray[np.float64]
    point_k: NDArray[np.float64]
    parent_point: NDArray[np.int64] | None = None
    max_head: NDArray[np.float64] | None = None

    def linked(self, ri: int) -> int:
        """The junction point a reach starts from, or -1 for a free surface."""
        return -1 if self.parent_point is None else int(self.parent_point[ri])

    @property
    def piece_length(self) -> NDArray[np.float64]:
        """Pipe length of each piece [m]."""
        return np.diff(self.position[self.splits])


@dataclass(frozen=True)
class SizingResult:
    """An optimum: lengths per piece and candidate, cost and how sure it is.

    ``gap`` and ``lower_bound`` are the solver's proof for the method's own problem
    (0 and the cost for the LP); ``split_pipe_cost`` is the LP optimum with free
    splits, the bound every buildable design is compared with.
    """

    lengths: NDArray[np.float64]          # (K, J) [m]
    cost: float
    method: str
    status: str
    gap: float                            # relative optimality gap [-]
    lower_bound: float
    split_pipe_cost: float
    binding: tuple[int, ...] = field(default=())   # points whose pressure limit binds
    seconds: float = 0.0
    variables: int = 0
    constraints: int = 0
    notes: tuple[str, ...] = field(default=())
    #: (LP only) reduced cost of each length [currency/m]: a design with length x more
    #: of a candidate than the LP costs at least ``reduced_cost * x`` more
    reduced_cost: NDArray[np.float64] | None = None
    #: candidate lengths set aside by their reduced costs before the MILP
    set_aside: int = 0


    @property
    def summary(self) -> str:
        """The method, the proof of its optimum and the split-pipe bound, in words."""
        out = (f"{self.method}: cost {self.cost:,.0f}, within {self.gap * 100:.2g} % of the "
               f"optimum of that method (bound {self.lower_bound:,.0f}, {self.status})")
        if np.isfinite(self.split_pipe_cost) and self.method != "split-pipe LP":
            above = (self.cost - self.split_pipe_cost) / self.split_pipe_cost * 100 \
                if self.split_pipe_cost > 0 else 0.0
            out += (f"; {above:.2g} % above the split-pipe optimum "
                    f"{self.split_pipe_cost:,.0f}")
        return out + "".join(f"; {n}" for n in self.notes)


class SizingInfeasible(DesignError):
    """The programme has no solution; ``violations`` say where, and by how much.

    ``violations`` holds (point, kind, metres): the least total by which the limits
    must be relaxed for a design to exist (kind ``MIN``, ``MAX`` or ``ARRIVAL``).
    """

    def __init__(self, message: str, violations: list[tuple[int, int, float]]):
        super().__init__(message)
        self.violations = violations


class _Rows:
    """Rows of a sparse matrix, collected as (row, column, value) triplets."""

    def __init__(self):
        self.r, self.c, self.v, self.b, self.point, self.kind = [], [], [], [], [], []

    def add(self, cols, vals, rhs, point=-1, kind=MIN):
        row = len(self.b)
        self.r.append(np.full(len(cols), row))
        self.c.append(np.asarray(cols, dtype=np.int64))
        self.v.append(np.asarray(vals, dtype=float))
        self.b.append(rhs)
        self.point.append(point)
        self.kind.append(kind)

    def add_block(self, cols, vals, rhs, points):
        """Several rows with the same columns: ``vals`` has one row per row added."""
        start = len(self.b)
        m = len(rhs)
        self.r.append(np.repeat(np.arange(start, start + m), len(cols)))
        self.c.append(np.tile(np.asarray(cols, dtype=np.int64), m))
        self.v.append(np.asarray(vals, dtype=float).ravel())
        self.b.extend(rhs)
        self.point.extend(points)
        self.kind.extend([MIN] * m)

    def matrix(self, nvar):
        if not self.b:
            return None
        return csr_matrix((np.concatenate(self.v), (np.concatenate(self.r), np.concatenate(self.c))),
                          shape=(len(self.b), nvar))


def _reach_pieces(p: SizingProblem) -> list[NDArray[np.int64]]:
    """For each reach: indices of its pieces (into splits)."""
    return [np.arange(int(np.searchsorted(p.splits, a)), int(np.searchsorted(p.splits, b)))
            for a, b in p.reaches]


def _build(p: SizingProblem) -> dict:
    """Sparse constraint matrices and variable maps of the programme (module docstring)."""
    K, J = p.allowed.shape
    piece_idx, opt_idx = np.nonzero(p.allowed)            # row-major: sorted by piece
    nx = piece_idx.size
    first = np.searchsorted(piece_idx, np.arange(K))
    last = np.searchsorted(piece_idx, np.arange(K), side="right")
    length = p.piece_length
    hvc = p.velocity_head[piece_idx, opt_idx] / length[piece_idx]
    loss = p.unit_loss[piece_idx, opt_idx]
    pieces_of = _reach_pieces(p)
    heads, offset = [], nx
    for ks in pieces_of:
        heads.append(offset + np.arange(ks.size + 1))
        offset += ks.size + 1
    nvar = offset
    eq, ub = _Rows(), _Rows()
    in_reach = np.zeros(K, dtype=bool)
    for ks in pieces_of:
        in_reach[ks] = True
    for k in np.flatnonzero(in_reach):                     # each piece is built
        eq.add(np.arange(first[k], last[k]), np.ones(last[k] - first[k]), length[k])

    def hv(k, coef=1.0):
        cols = np.arange(first[k], last[k])
        return list(cols), list(coef * hvc[cols])

    end_var: dict[int, int] = {}
    for ri, ks in enumerate(pieces_of):
        h, parent = heads[ri], p.linked(ri)
        tank_end = bool(np.isfinite(p.arrival_min_head[ri]))
        c, v = hv(ks[0], p.start_k[ri])
        if parent >= 0:
            if parent not in end_var:
                raise ValueError(f"reach {ri} starts from point {parent}, which ends no earlier reach")
            eq.add([h[0], end_var[parent], *c], [1.0, -1.0, *v], 0.0)
        else:
            eq.add([h[0], *c], [1.0, *v], float(p.start_level[ri]))
        for kk, k in enumerate(ks):
            u, w = int(p.splits[k]), int(p.splits[k + 1])
            cols = list(range(first[k], last[k]))
            nxt = (hv(ks[kk + 1], p.point_k[w]) if kk + 1 < ks.size else
                   ([], []) if tank_end else hv(k, p.point_k[w]))
            eq.add([h[kk + 1], h[kk], *cols, *nxt[0]], [1.0, -1.0, *loss[cols], *nxt[1]], 0.0)
            if kk > 0 or parent >= 0:           # a free surface's own point: its level
                _pressure_rows(ub, p, u, h[kk], hv(k))
            inner = np.arange(u + 1, w)
            if inner.size:
                t = (p.position[inner] - p.position[u]) / (p.position[w] - p.position[u])
                c, v = hv(k)
                vals = np.column_stack([-(1.0 - t), -t, np.tile(v, (inner.size, 1))])
                ub.add_block([h[kk], h[kk + 1], *c], vals, list(-p.min_head[inner]), list(inner))
        b = int(p.splits[ks[-1] + 1])
        if tank_end:
            c, v = hv(ks[-1])
            ub.add([h[-1], *c], [-1.0, *v], -float(p.arrival_min_head[ri]), b, ARRIVAL)
        else:
            _pressure_rows(ub, p, b, h[-1], hv(ks[-1]))
        end_var[b] = int(h[-1])
    c = np.zeros(nvar)
    c[:nx] = p.cost[opt_idx]
    return dict(A_eq=eq.matrix(nvar), b_eq=np.array(eq.b), A_ub=ub.matrix(nvar),
                b_ub=np.array(ub.b), row_point=np.array(ub.point, dtype=np.int64),
                row_kind=np.array(ub.kind, dtype=np.int64), c=c, piece_idx=piece_idx,
                opt_idx=opt_idx, nx=nx, nvar=nvar)


#: The programmes built lately, by problem (kept with the problem, so an id is never
#: reused while its entry lives): the LP, the MILP rounds and the appraisals of one
#: problem share one build.
_BUILT: dict[int, tuple[SizingProblem, dict]] = {}


def _built(p: SizingProblem) -> dict:
    """:func:`_build` of ``p``, built once for the last few problems (read-only)."""
    hit = _BUILT.get(id(p))
    if hit is not None and hit[0] is p:
        return hit[1]
    m = _build(p)
    if len(_BUILT) >= 4:
        _BUILT.pop(next(iter(_BUILT)))
    _BUILT[id(p)] = (p, m)
    return m


def _pressure_rows(ub: _Rows, p: SizingProblem, point: int, head: int, hv_terms) -> None:
    """H - hv >= min_head (and <= max_head where there is one) at a split point."""
    c, v = hv_terms
    ub.add([head, *c], [-1.0, *v], -float(p.min_head[point]), point, MIN)
    if p.max_head is not None and np.isfinite(p.max_head[point]):
        ub.add([head, *c], [1.0, *(-np.asarray(v))], float(p.max_head[point]), point, MAX)


def _bounds(m: dict) -> NDArray:
    lb = np.full(m["nvar"], -np.inf)
    lb[:m["nx"]] = 0.0
    return np.column_stack([lb, np.full(m["nvar"], np.inf)])


def _lengths(p: SizingProblem, m: dict, xv: NDArray) -> NDArray:
    x = np.zeros(p.allowed.shape)
    x[m["piece_idx"], m["opt_idx"]] = xv[:m["nx"]]
    return x


def solve_sizing(p: SizingProblem) -> SizingResult:
    """The split-pipe optimum (the LP); raise :class:`SizingInfeasible` if there is none.

    The MILPs for whole choices are in :mod:`planner.design.whole`.
    """
    t0 = time.perf_counter()
    m = _built(p)
    ncons = m["A_eq"].shape[0] + (m["A_ub"].shape[0] if m["A_ub"] is not None else 0)
    res = linprog(m["c"], A_ub=m["A_ub"], b_ub=m["b_ub"] if m["A_ub"] is not None else None,
                  A_eq=m["A_eq"], b_eq=m["b_eq"], bounds=_bounds(m), method="highs")
    if res.status != 0:
        raise _infeasible(p, m, "the sizing programme")
    binding: tuple[int, ...] = ()
    if m["A_ub"] is not None and getattr(res, "ineqlin", None) is not None:
        hit = (np.abs(res.ineqlin.marginals) > 1e-9) & (m["row_kind"] != MAX)
        binding = tuple(sorted(set(m["row_point"][hit].tolist())))
    cost = float(res.fun)
    lower = getattr(getattr(res, "lower", None), "marginals", None)
    return SizingResult(lengths=_lengths(p, m, res.x), cost=cost, method="split-pipe LP",
                        status="optimal", gap=0.0, lower_bound=cost, split_pipe_cost=cost,
                        binding=binding, seconds=time.perf_counter() - t0,
                        variables=m["nvar"], constraints=ncons,
                        reduced_cost=None if lower is None else _lengths(p, m, np.maximum(lower, 0.0)))


def _infeasible(p: SizingProblem, m: dict, what: str) -> SizingInfeasible:
    """Why no design exists: the least relaxation of the limits, from the elastic LP."""
    A = m["A_ub"]
    if A is None:
        return SizingInfeasible(f"{what} has no solution", [])
    nrow = A.shape[0]
    A_el = hstack([A, -identity(nrow, format="csr")]).tocsr()
    A_eq = hstack([m["A_eq"], csr_matrix((m["A_eq"].shape[0], nrow))]).tocsr()
    c = np.concatenate([np.zeros(m["nvar"]), np.ones(nrow)])
    bounds = np.vstack([_bounds(m), np.column_stack([np.zeros(nrow), np.full(nrow, np.inf)])])
    res = linprog(c, A_ub=A_el, b_ub=m["b_ub"], A_eq=A_eq, b_eq=m["b_eq"], bounds=bounds,
                  method="highs")
    found = []
    if res.status == 0:
        slack = res.x[m["nvar"]:]
        for i in np.flatnonzero(slack > 1e-4):
            found.append((int(m["row_point"][i]), int(m["row_kind"][i]), float(slack[i])))
    return SizingInfeasible(f"{what} has no solution", found)


def design_heads(p: SizingProblem, lengths: NDArray) -> tuple[NDArray, dict]:
    """Energy heads of a design under the programme's own model, and the programme.

    The equalities fix every head once the lengths are known; they are solved here as
    the square system they form.
    """
    m = _built(p)
    xv = lengths[m["piece_idx"], m["opt_idx"]]
    A = m["A_eq"].tocsc()
    nx = m["nx"]
    rows = np.flatnonzero(np.asarray(abs(A[:, nx:]).sum(axis=1)).ravel() > 0)
    A_h = A[rows][:, nx:]
    rhs = m["b_eq"][rows] - A[rows][:, :nx] @ xv
    h = spsolve(A_h.tocsc(), rhs)
    return np.concatenate([xv, np.atleast_1d(h)]), m


def is_feasible(p: SizingProblem, lengths: NDArray, tol: float = 1e-6) -> bool:
    """Whether a design meets every limit of the programme (split and inner points)."""
    pieces_of = _reach_pieces(p)
    used = np.concatenate(pieces_of)
    if not np.allclose(lengths[used].sum(axis=1), p.piece_length[used], atol=1e-6):
        return False
    if np.any((lengths > tol) & ~p.allowed):
        return False
    v, m = design_heads(p, lengths)
    return m["A_ub"] is None or bool(np.all(m["A_ub"] @ v <= m["b_ub"] + tol))


def best_single_size(p: SizingProblem) -> tuple[float, int | None]:
    """Cheapest feasible design using one diameter group along the whole system.

    In each piece the group's cheapest admissible candidate is used (the class may
    change with the static head).  Returns (cost, group), or (inf, None).
    """
    best: tuple[float, int | None] = (float("inf"), None)
    used = np.concatenate(_reach_pieces(p))
    for g in np.unique(p.group):
        cols = np.flatnonzero(p.group == g)
        ok = p.allowed[:, cols]
        if not np.all(ok[used].any(axis=1)):
            continue
        lengths = np.zeros(p.allowed.shape)
        pick = cols[np.argmin(np.where(ok, p.cost[cols][None, :], np.inf), axis=1)]
        lengths[used, pick[used]] = p.piece_length[used]
        if is_feasible(p, lengths):
            cost = float(np.sum(lengths * p.cost[None, :]))
            if cost < best[0]:
                best = (cost, int(g))
    return best
