"""Benchmark: least-cost sizing of a 50 km gravity line.

A 50 km surveyed line (a point every 10 m, 5,001 points) falling 600 m with undulations,
one outlet of 20 L/s at the end, 1,000 candidate split points (every 50 m), and 20
pipe options (PE100, 10 sizes from 63 to 225 mm, SDR 17 and SDR 11).  Measured, each in
a fresh process, three times (medians):

- the split-pipe LP alone (HiGHS), solved to its proven optimum;
- the same with one pipe per sub-stretch (the LP, then a MILP over the split pieces);
- the whole plan (tanks, sizing with rechecks, features, checks), for scale;

and the cost ratio of the optimum to the best single-size design.  Usage::

    python benchmarks/bench_sizing.py
"""

from __future__ import annotations

import csv
import json
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent


def write_case(folder: Path) -> Path:
    ch = np.arange(0, 50_000.0 + 1, 10.0)
    z = 1500 - 0.012 * ch + 4 * np.sin(ch / 900) + 1 * np.sin(ch / 170)
    with (folder / "line.csv").open("w") as fh:
        fh.write("chainage_m,elevation_m\n")
        for c, e in zip(ch, z):
            fh.write(f"{c:.1f},{e:.3f}\n")
    src = ROOT / "planner" / "catalogue" / "data" / "pe100.csv"
    rows = [r for r in csv.DictReader(l for l in src.open() if not l.startswith("#"))
            if r["sdr"] in ("17", "11") and 63 <= float(r["outside_diameter_mm"]) <= 225]
    assert len(rows) == 20, len(rows)
    with (folder / "twenty.csv").open("w", newline="") as fh:
        w = csv.DictWriter(fh, fieldnames=list(rows[0]))
        w.writeheader()
        w.writerows(rows)
    (folder / "line.toml").write_text(f"""
[project]
name = "sizing benchmark"
[route]
file = "line.csv"
[source]
top_water_above_ground_m = 1.0
low_water_above_ground_m = 0.5
[design]
catalogues = ["{folder / 'twenty.csv'}"]
split_spacing_m = 50
whole_pieces = false
max_static_pressure_m = 250
[criteria]
valve_closure_s = 120
[[outlets]]
name = "end"
chainage_m = 50000
flow_lps = 20
min_pressure_m = 10
""")
    return folder / "line.toml"


def child(kind: str, scenario: str) -> dict:
    sys.path.insert(0, str(ROOT))
    import warnings

    warnings.simplefilter("ignore")
    import planner.design.plan as P
    from planner.design import sizing as S
    from planner.scenario import load_scenario

    sc = load_scenario(scenario)
    seen = {}
    original = S.solve_sizing

    def spy(problem, **kw):
        seen["problem"] = problem
        return original(problem, **kw)

    P.solve_sizing = spy
    t0 = time.perf_counter()
    plan = P.plan_scenario(sc)
    whole = time.perf_counter() - t0
    p = seen["problem"]
    t0 = time.perf_counter()
    if kind == "lp":
        res = S.solve_sizing(p)
    else:
        res = S.solve_whole_pieces(p)
    solve = time.perf_counter() - t0
    single, _ = S.best_single_size(p)
    return {"seconds": solve, "plan_seconds": whole, "cost": res.cost, "bound": res.lower_bound,
            "gap": res.gap, "status": res.status, "single": single,
            "pieces": int(p.allowed.shape[0]), "options": int(p.allowed.shape[1]),
            "points": int(p.position.size), "variables": res.variables,
            "stretches": len(plan.stretches)}


def main() -> None:
    with tempfile.TemporaryDirectory() as tmp:
        scenario = write_case(Path(tmp))
        results = {}
        for kind in ("lp", "pieces"):
            runs = []
            for _ in range(3):
                out = subprocess.run([sys.executable, __file__, "--child", kind, str(scenario)],
                                     check=True, capture_output=True, text=True)
                runs.append(json.loads(out.stdout.strip().splitlines()[-1]))
            results[kind] = runs
    for kind, label in (("lp", "split-pipe LP (proven optimum)"),
                        ("pieces", "LP + one pipe per sub-stretch (MILP)")):
        runs = results[kind]
        r = runs[0]
        t = statistics.median(x["seconds"] for x in runs)
        print(f"{label}: median {t:.2f} s (runs {[round(x['seconds'], 2) for x in runs]}); "
              f"cost {r['cost']:,.0f}, bound {r['bound']:,.0f}, gap {r['gap'] * 100:.3g} %, "
              f"{r['status']}; {r['variables']:,} variables")
    r = results["lp"][0]
    print(f"problem: {r['points']:,} points, {r['pieces']:,} sub-stretches, {r['options']} options")
    print(f"whole plan: median {statistics.median(x['plan_seconds'] for x in results['lp']):.2f} s")
    print(f"best single size: {r['single']:,.0f}; optimum / single size = {r['cost'] / r['single']:.3f}")


if __name__ == "__main__":
    if len(sys.argv) == 4 and sys.argv[1] == "--child":
        print(json.dumps(child(sys.argv[2], sys.argv[3])))
    else:
        main()
