"""Air valves and washouts on hand-built profiles where the right answer is known."""

import numpy as np

from planner.design.features import air_valve_size, place_features, washout_size


def profile(points, spacing=10.0):
    ch_v, z_v = np.array(points, dtype=float).T
    ch = np.arange(0, ch_v[-1] + spacing / 2, spacing)
    return ch, np.interp(ch, ch_v, z_v)


def kinds_at(features, kind):
    return [f.chainage_m for f in features if f.kind == kind]


def test_crest_low_point_and_grade_break():
    # rise to a crest at 500 m, fall to a low point at 1,000 m, then rise steeply and
    # flatten at 1,400 m (an ascending line getting flatter: air collects there)
    ch, z = profile([(0, 100), (500, 130), (1000, 90), (1400, 120), (1800, 124)])
    hgl = np.full(ch.size, 150.0)
    f = place_features(ch, z, hgl, np.full(ch.size, 90.0), [(0, ch.size - 1)])
    assert 500 in kinds_at(f, "air_valve")
    assert 1000 in kinds_at(f, "washout")
    breaks = [x.chainage_m for x in f if "break of grade" in x.rule]
    assert any(abs(b - 1400) <= 20 for b in breaks)
    crest = next(x for x in f if x.chainage_m == 500 and x.kind == "air_valve")
    assert "crest" in crest.rule and "M51" in crest.source and "HGL 20.0 m" in crest.detail


def test_noise_below_the_tolerance_places_nothing():
    ch, z = profile([(0, 100), (600, 70)])
    rng = np.random.default_rng(0)
    z = z + rng.uniform(-0.4, 0.4, z.size)              # DEM noise, well under 2 m
    f = place_features(ch, z, z + 20, np.full(ch.size, 90.0), [(0, ch.size - 1)],
                       spacing_m=10_000)
    assert not [x for x in f if "crest" in x.rule or "low point" in x.rule]


def test_long_uniform_runs_get_valves_at_intervals():
    ch, z = profile([(0, 200), (3000, 50)])             # one long uniform descent
    f = place_features(ch, z, z + 30, np.full(ch.size, 90.0), [(0, ch.size - 1)], spacing_m=800)
    vents = [0.0] + sorted(kinds_at(f, "air_valve")) + [3000.0]
    assert max(np.diff(vents)) <= 800 + 10
    assert len(kinds_at(f, "air_valve")) == 3           # 3,000 m / 800 m -> 3 valves


def test_washout_at_the_foot_of_a_long_uphill_run():
    # falls 1 m (below the 2 m prominence, so no low-point washout), then climbs 40 m
    ch, z = profile([(0, 101), (200, 100), (1000, 140)])
    f = place_features(ch, z, z + 50, np.full(ch.size, 90.0), [(0, ch.size - 1)])
    foot = [x for x in f if x.kind == "washout"]
    assert len(foot) == 1 and "long uphill" in foot[0].rule and foot[0].chainage_m == 200


def test_sizes_follow_the_vinidex_table():
    assert air_valve_size(90) == (25.0, "single orifice")
    assert air_valve_size(160) == (50.0, "double orifice")
    assert air_valve_size(315) == (80.0, "double orifice")
    assert washout_size(63) == 63.0 and washout_size(110) == 80.0 and washout_size(200) == 100.0
