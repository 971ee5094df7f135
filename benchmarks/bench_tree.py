"""Benchmark: least-cost sizing of a 500-link tree.

A random tree of 500 links (each 100-600 m, 10 segments, split points at every profile
point), one outlet at every leaf, heads falling away from the source; 45 candidates
per link (15 PE100 sizes x 3 classes, the class filtered by the static head as in a
real design).  Measured in fresh processes, three times:

- the split-pipe LP over the whole tree (HiGHS), proven optimum;
- one size per link (a binary per link and size, MILP) with a 10 s limit: the gap
  reached.

Usage::

    python benchmarks/bench_tree.py
"""

from __future__ import annotations

import json
import statistics
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent


def make_problem(seed: int = 0, links: int = 500, seg: int = 10):
    import warnings

    warnings.simplefilter("ignore")     # candidates in the laminar-turbulent transition
    sys.path.insert(0, str(ROOT))
    from planner.catalogue.pipes import load_catalogue
    from planner.design.sizing import SizingProblem
    from planner.hydraulics import friction as fr

    rng = np.random.default_rng(seed)
    opts = [o for o in load_catalogue("pe100") if o.sdr in (21, 17, 11)
            and 40e-3 <= o.outside_diameter <= 315e-3]
    parents = [-1] + [int(rng.integers(0, k)) for k in range(1, links)]
    children = [[c for c in range(links) if parents[c] == k] for k in range(links)]
    leaf_q = np.where([not c for c in children], rng.uniform(0.05e-3, 0.5e-3, links), 0.0)
    q = leaf_q.copy()
    for k in range(links - 1, 0, -1):
        q[parents[k]] += q[k]
    n = links * (seg + 1)
    position = np.zeros(n)
    pipe = np.zeros(n)
    static = np.zeros(n)
    unit_loss = np.zeros((n - 1, len(opts)))
    allowed = np.zeros((n - 1, len(opts)), dtype=bool)
    d = np.array([o.inside_diameter for o in opts])
    rating = np.array([o.rating for o in opts]) / (998.2 * 9.80665)
    reaches, parent_pt = [], []
    top = 1020.0
    for k in range(links):
        a = k * (seg + 1)
        length = rng.uniform(100, 600)
        position[a:a + seg + 1] = np.linspace(0, length, seg + 1)
        z0 = 999.0 if parents[k] < 0 else pipe[parents[k] * (seg + 1) + seg]
        pipe[a:a + seg + 1] = z0 - np.linspace(0, length * rng.uniform(0.01, 0.02), seg + 1)
        static[a:a + seg + 1] = top - pipe[a:a + seg + 1]
        loss = fr.head_loss(np.full(len(opts), q[k]), d, 1.0, method="colebrook",
                            roughness=7e-6, kinematic_viscosity=1.0e-6)
        for s in range(a, a + seg):
            unit_loss[s] = loss
            allowed[s] = (rating >= static[s + 1]) & (4 * q[k] / (np.pi * d**2) <= 3.0)
        reaches.append((a, a + seg))
        parent_pt.append(-1 if parents[k] < 0 else parents[k] * (seg + 1) + seg)
    for k in range(links - 1):                       # the piece between two links: none
        allowed[k * (seg + 1) + seg] = False
    groups = {}
    group = np.array([groups.setdefault(round(o.outside_diameter, 6), len(groups)) for o in opts])
    return SizingProblem(
        splits=np.arange(n), position=position, unit_loss=unit_loss, allowed=allowed,
        cost=np.array([o.cost_per_m for o in opts]), group=group, reaches=reaches,
        start_level=np.array([top - 0.5 if p < 0 else np.nan for p in parents]),
        min_head=pipe + np.minimum(5.0, (top - pipe) / 2), arrival_min_head=np.full(links, -np.inf),
        point_k=np.zeros(n), velocity_head=np.zeros_like(unit_loss), start_k=np.zeros(len(reaches)), parent_point=np.array(parent_pt)), len(opts), int(group.max() + 1)


def child(kind: str) -> dict:
    from planner.design.sizing import solve_sizing
    from planner.design.whole import solve_whole

    p, nopt, nsize = make_problem()
    t0 = time.perf_counter()
    res = solve_sizing(p) if kind == "lp" else solve_whole(p, "reach", time_limit=10.0,
                                                           mip_rel_gap=1e-4)
    return {"seconds": time.perf_counter() - t0, "cost": res.cost, "gap": res.gap,
            "bound": res.lower_bound, "status": res.status, "options": nopt, "sizes": nsize,
            "variables": res.variables}


def main() -> None:
    out = {}
    for kind in ("lp", "milp"):
        runs = []
        for _ in range(3):
            r = subprocess.run([sys.executable, __file__, "--child", kind], check=True,
                               capture_output=True, text=True)
            runs.append(json.loads(r.stdout.strip().splitlines()[-1]))
        out[kind] = runs
    lp, mi = out["lp"], out["milp"]
    print(f"tree: 500 links, {lp[0]['options']} candidates ({lp[0]['sizes']} sizes x 3 classes)")
    print(f"split-pipe LP: median {statistics.median(r['seconds'] for r in lp):.2f} s "
          f"(runs {[round(r['seconds'], 2) for r in lp]}), cost {lp[0]['cost']:,.0f}, "
          f"{lp[0]['variables']:,} variables, {lp[0]['status']}")
    print(f"one size per link (MILP, 10 s limit): median "
          f"{statistics.median(r['seconds'] for r in mi):.2f} s, cost {mi[0]['cost']:,.0f}, "
          f"gap {mi[0]['gap'] * 100:.3g} % ({mi[0]['status']}); "
          f"{mi[0]['cost'] / lp[0]['cost']:.4f} x the LP optimum")


if __name__ == "__main__":
    if len(sys.argv) == 3 and sys.argv[1] == "--child":
        print(json.dumps(child(sys.argv[2])))
    else:
        main()
