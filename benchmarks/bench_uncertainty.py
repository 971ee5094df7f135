"""Benchmark: the DEM-uncertainty Monte Carlo on a 20 km line (target: 1,000 realisations < 10 s).

Uses the 20 km line of bench_live.py (its DEM, route and scenario are generated into
benchmarks/_data/live/ on the first run), plans it once (LP as the final method), then
times ``line_uncertainty`` for 100, 1,000 and 10,000 realisations, three runs each, and
reports medians and the ratio to the target.  Usage::

    python benchmarks/bench_uncertainty.py
"""

from __future__ import annotations

import statistics
import sys
import time
from dataclasses import replace
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

import bench_live  # noqa: E402

from planner import api  # noqa: E402
from planner.design.uncertainty import error_model, line_uncertainty  # noqa: E402


def main() -> None:
    sc = api.load_scenario(bench_live.make_case())
    sc = replace(sc, design=replace(sc.design, whole_pieces=False))
    plan = api.plan(sc)
    model = error_model("srtm")
    print(f"line {plan.profile.length_m / 1e3:.2f} km, {plan.profile.n} profile points, "
          f"{len(plan.tanks)} tanks, {len(plan.features)} valves")
    for r in (100, 1_000, 10_000):
        times = []
        for seed in range(3):
            t = time.perf_counter()
            u = line_uncertainty(plan, model, realisations=r, seed=seed)
            times.append(time.perf_counter() - t)
        med = statistics.median(times)
        print(f"{r:>6,} realisations: median {med:.3f} s (runs {', '.join(f'{x:.3f}' for x in times)}); "
              f"median / 10 s target = {med / 10:.4f}; P(end short) {u.outlets[0][1]:.3f}")


if __name__ == "__main__":
    main()
