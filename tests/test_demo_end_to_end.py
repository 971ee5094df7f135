"""The demo, end to end, with its numbers rechecked independently.

The plan's ground elevations are re-sampled with scipy over the whole DEM; the
hydraulic grade line is recomputed from the plan's own points with `fluids`
(Colebrook-White) and `iapws` (IAPWS 2008 viscosity, IAPWS-95 density), not with
gravplan's functions.
"""

import json

import numpy as np
import pytest
import rasterio
from click.testing import CliRunner
from fluids.friction import Colebrook
from iapws import IAPWS95
from scipy.interpolate import RegularGridInterpolator

from planner.cli import main

G = 9.80665


@pytest.fixture(scope="module", params=["scenario.toml", "scenario_given_pipe.toml"])
def demo_plan(request, demo_run):
    out, output = demo_run(request.param)
    return json.loads((out / "plan.json").read_text()), out, output, request.param


def test_outputs_exist(demo_plan):
    _, out, output, _ = demo_plan
    for name in ("plan.json", "profile.png", "profile.csv", "map.html"):
        assert (out / name).stat().st_size > 1000
    assert (out / "profile.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert "energy balance" in output and "Planning aid only" in output


def test_ground_resampled_with_scipy(demo_plan, demo_folder):
    plan = demo_plan[0]
    pts = plan["points"]
    with rasterio.open(demo_folder / "dem.tif") as ds:
        z = ds.read(1, masked=True).astype(float).filled(np.nan)
        t = ds.transform
    xc = t.c + (np.arange(z.shape[1]) + 0.5) * t.a
    yc = t.f + (np.arange(z.shape[0]) + 0.5) * t.e
    rgi = RegularGridInterpolator((yc[::-1], xc), z[::-1], method="linear")
    ref = rgi(np.column_stack([pts["y"], pts["x"]]))
    filled, inserted = np.array(pts["ground_filled"]), np.array(pts["inserted"])
    ok = ~filled & ~inserted
    np.testing.assert_allclose(np.array(pts["ground_m"])[ok], ref[ok], atol=2e-3)
    assert np.isnan(ref[filled & ~inserted]).all() and filled.sum() > 0   # the void is a void


def test_chainage_and_slope_length(demo_plan):
    pts = demo_plan[0]["points"]
    x, y = np.array(pts["x"]), np.array(pts["y"])
    ch = np.concatenate([[0], np.cumsum(np.hypot(np.diff(x), np.diff(y)))])
    np.testing.assert_allclose(pts["chainage_m"], ch, atol=0.05)
    pipe = np.array(pts["pipe_m"])
    sl = np.concatenate([[0], np.cumsum(np.hypot(np.diff(ch), np.diff(pipe)))])
    np.testing.assert_allclose(pts["slope_length_m"], sl, atol=0.05)


def test_hgl_recomputed_with_fluids_and_iapws(demo_plan):
    plan = demo_plan[0]
    pts = plan["points"]
    water = IAPWS95(T=293.15, P=0.101325)
    nu = water.mu / water.rho
    ch = np.array(pts["chainage_m"])
    # each segment's pipe from the stretch that holds it
    mid = (ch[:-1] + ch[1:]) / 2
    d = np.empty(mid.size)
    eps = np.empty(mid.size)
    for st in plan["stretches"]:
        on = (mid >= st["from_chainage_m"] - 1e-6) & (mid <= st["to_chainage_m"] + 1e-6)
        d[on] = st["inside_diameter_mm"] / 1000
        eps[on] = st["roughness_mm"] / 1000
    s = np.array(pts["slope_length_m"])
    z = np.array(pts["pipe_m"])
    # design flows by mass balance from the outlet list
    q = np.zeros(ch.size - 1)
    for o in plan["outlets"]:
        q[: o["point_index"]] += o["flow_lps"] / 1000
    v = q / (np.pi * d**2 / 4)
    hf = np.array([Colebrook(vi * di / nu, ei / di) * li / di * vi**2 / (2 * G) if vi > 0 else 0.0
                   for vi, li, di, ei in zip(v, np.diff(s), d, eps)])
    hv = np.append(v, v[-1]) ** 2 / (2 * G)
    # free surfaces: the source, then each tank
    starts = [(0, plan["source"]["low_water_level_m"])] + [
        (t["point_index"], t["water_level_m"]) for t in plan["break_pressure_tanks"]]
    k = np.zeros(ch.size)
    k[np.argmin(np.abs(ch - 5.0))] += 0.2               # the demo's gate valve, K = 0.2
    hgl = np.empty(ch.size)
    bounds = [a for a, _ in starts] + [ch.size]
    for (a, level), b in zip(starts, bounds[1:]):
        e = level - (0.5 + k[a]) * hv[a]                  # sharp entrance, K = 0.5
        hgl[a] = e - hv[a]
        for i in range(a + 1, b):
            e -= hf[i - 1] + k[i] * hv[i]
            hgl[i] = e - hv[i]
    np.testing.assert_allclose(pts["hgl_m"], hgl, atol=0.02)
    for o in plan["outlets"]:
        i = o["point_index"]
        assert o["residual_pressure_head_m"] == pytest.approx(hgl[i] - z[i], abs=0.02)


def test_static_head_and_energy_balance(demo_plan):
    plan = demo_plan[0]
    pts = plan["points"]
    ground = np.array(pts["ground_m"])
    static = np.array(pts["static_head_m"])
    assert plan["source"]["top_water_level_m"] == pytest.approx(ground[0] + 1.2, abs=1e-3)
    assert len(plan["break_pressure_tanks"]) >= 2
    for t in plan["break_pressure_tanks"]:
        assert t["water_level_m"] == pytest.approx(ground[t["point_index"]] + 1.0, abs=1e-3)
        assert static[t["point_index"]] == pytest.approx(t["water_level_m"], abs=1e-3)
    np.testing.assert_allclose(pts["static_pressure_head_m"], static - np.array(pts["pipe_m"]),
                               atol=2e-3)
    for r in plan["energy_balance"]:
        parts = (r["friction_loss_m"] + r["minor_loss_m"] + r["velocity_head_m"]
                 + r["residual_pressure_head_m"])
        assert r["available_head_m"] == pytest.approx(parts, abs=5e-3)


def test_demo_is_a_working_design(demo_plan):
    plan = demo_plan[0]
    assert plan["summary"]["errors"] == 0
    assert all(o["ok"] for o in plan["outlets"])
    pts = plan["points"]
    assert np.all(np.array(pts["static_pressure_head_m"]) <= np.array(pts["rating_head_m"]) + 1e-3)
    assert plan["summary"]["design_flow_lps"] <= plan["source"]["yield_lps"]
    assert any("void" in f["message"] for f in plan["findings"])
    assert plan["cautions"]


def test_plan_json_is_deterministic(demo_folder, demo_plan, tmp_path):
    """Planned again through the API and serialised: the same bytes as the CLI's run."""
    from planner import api
    from planner.report.plan_json import write_plan_json

    _, out, _, name = demo_plan
    again = api.plan_any(api.load_scenario(demo_folder / name))
    write_plan_json(again, tmp_path / "plan.json")
    assert (tmp_path / "plan.json").read_bytes() == (out / "plan.json").read_bytes()
