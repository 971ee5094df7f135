"""The split-pipe programme on a tree from published benchmark data, against an
independent linear programme written here with scipy.

Data: the two-loop network of Alperovits & Shamir, "Design of optimal water
distribution systems", Water Resour. Res. 13(6), 1977 (from memory, as reproduced in
many later papers): a reservoir at 210 m, six demand nodes, links of 1,000 m, Hazen-
Williams C = 130, 14 commercial diameters from 1 to 24 in with their unit costs, and a
minimum pressure head of 30 m at every node.  The two loop-closing links (3-5 and 5-7)
are dropped to make it a tree, so the flows follow from the demands.

Both programmes use: Hazen-Williams in the SI form h_f = 10.674 L Q^1.852 /
(C^1.852 D^4.8704) (Williams & Hazen, "Hydraulic Tables", 1909, in SI; the handbook form); velocity heads neglected (set to zero, as in the benchmark); lengths
as given (horizontal, 1,000 m).  Including the velocity heads or 3-D lengths moves the
optimum by 0.1-0.5 %, so they are left out of both sides on purpose.
"""

import numpy as np
import pytest
from scipy.optimize import linprog

from planner.design.sizing import SizingProblem, solve_sizing
from planner.hydraulics.friction import hazen_williams_head_loss

INCH = 0.0254
DIAMETERS_IN = np.array([1, 2, 3, 4, 6, 8, 10, 12, 14, 16, 18, 20, 22, 24], dtype=float)
COST = np.array([2, 5, 8, 11, 16, 23, 32, 50, 60, 90, 130, 170, 300, 550], dtype=float)
ELEV = {1: 210.0, 2: 150.0, 3: 160.0, 4: 155.0, 5: 150.0, 6: 165.0, 7: 160.0}
DEMAND_M3H = {2: 100.0, 3: 100.0, 4: 120.0, 5: 270.0, 6: 330.0, 7: 200.0}
TREE = [(1, 2), (2, 3), (2, 4), (4, 5), (4, 6), (6, 7)]        # parents before children
C_HW, L, PMIN = 130.0, 1000.0, 30.0


def flows():
    """Flow in each link [m^3/s]: the demands of every node downstream of it."""
    below = {b: DEMAND_M3H[b] for _, b in TREE}
    for a, b in reversed(TREE):
        if a in below:
            below[a] += below[b]
    return np.array([below[b] / 3600.0 for _, b in TREE])


def unit_losses(q):
    d = DIAMETERS_IN * INCH
    return 10.674 * np.outer(q ** 1.852, 1.0 / (C_HW ** 1.852 * d ** 4.8704))


def independent_lp(S):
    """Path form: for each node, the friction from the reservoir <= 210 - z - 30."""
    nl, nd = S.shape
    path = {1: []}
    for i, (a, b) in enumerate(TREE):
        path[b] = path[a] + [i]
    A_ub, b_ub = [], []
    for node, links in path.items():
        if node == 1:
            continue
        row = np.zeros(nl * nd)
        for i in links:
            row[i * nd:(i + 1) * nd] = S[i]
        A_ub.append(row)
        b_ub.append(ELEV[1] - ELEV[node] - PMIN)
    A_eq = np.kron(np.eye(nl), np.ones(nd))
    res = linprog(np.tile(COST, nl), A_ub=np.array(A_ub), b_ub=b_ub, A_eq=A_eq,
                  b_eq=np.full(nl, L), bounds=(0, None), method="highs")
    assert res.status == 0
    return res.fun, res.x.reshape(nl, nd)


def tool_problem(S):
    """The same tree as the planner numbers it: each link a reach of one piece."""
    nl, nd = S.shape
    nodes = [b for _, b in TREE]
    pos, pipe, unit, allowed, reaches, parent = [], [], [], [], [], []
    end_point = {}
    for i, (a, b) in enumerate(TREE):
        p0 = 2 * i
        pos += [0.0, L]
        pipe += [ELEV[a], ELEV[b]]
        if i > 0:                                    # the piece joining two links: none
            unit.append(np.zeros(nd))
            allowed.append(np.zeros(nd, dtype=bool))
        unit.append(S[i])
        allowed.append(np.ones(nd, dtype=bool))
        reaches.append((p0, p0 + 1))
        parent.append(end_point.get(a, -1))
        end_point[b] = p0 + 1
    n = len(pos)
    min_head = np.array(pipe) + PMIN
    min_head[0] = -np.inf                             # the reservoir's own point
    unit = np.array(unit)
    return SizingProblem(
        splits=np.arange(n), position=np.array(pos), unit_loss=unit,
        velocity_head=np.zeros_like(unit), allowed=np.array(allowed), cost=COST,
        group=np.arange(nd), reaches=reaches,
        start_level=np.array([ELEV[1] if p < 0 else np.nan for p in parent]),
        start_k=np.zeros(nl), min_head=min_head, arrival_min_head=np.full(nl, -np.inf),
        point_k=np.zeros(n), parent_point=np.array(parent)), nodes


def test_hazen_williams_form_is_the_tools():
    """The rounded handbook form used here agrees with the tool's, which solves Williams
    & Hazen's velocity form exactly (exponents 1/0.54 and 2.63/0.54): within 0.2 %."""
    q = flows()
    d = DIAMETERS_IN * INCH
    for qi in q:
        np.testing.assert_allclose(hazen_williams_head_loss(qi, d, 1.0, C_HW),
                                   unit_losses(np.array([qi]))[0], rtol=2e-3)


def test_split_pipe_optimum_equals_an_independent_lp_on_the_benchmark_tree():
    S = unit_losses(flows())
    ref_cost, ref_x = independent_lp(S)
    p, nodes = tool_problem(S)
    res = solve_sizing(p)
    assert res.cost == pytest.approx(ref_cost, rel=1e-7)
    # the critical nodes bind at exactly 30 m (no inflation of the optimum)
    x = res.lengths[[2 * i for i in range(len(TREE))]]
    head = {1: ELEV[1]}
    for i, (a, b) in enumerate(TREE):
        head[b] = head[a] - float(x[i] @ S[i])
    pressure = np.array([head[b] - ELEV[b] for b in nodes])
    assert pressure.min() == pytest.approx(PMIN, abs=1e-6)
    assert np.all(pressure >= PMIN - 1e-6)
    # Karmeli et al. (1968): at most two diameters per link, and they are neighbours
    for row in x:
        used = np.flatnonzero(row > 1e-6)
        assert used.size <= 2 and (used.size < 2 or used[1] - used[0] == 1)
