"""DEM uncertainty, surveyed pins and GPS heights, checked against closed forms.

References: the normal distribution (scipy.stats.norm) for the probabilities, since
along a line with fixed pipes the pressure error is the difference of two values of a
Gaussian process, N(0, 2 sigma^2 (1 - exp(-d / L))) for an exponential correlation; the
Copernicus GLO-30 LE90 of 2.57 m (Airbus, Copernicus DEM validation report, 2022).
"""

from __future__ import annotations

import json
from dataclasses import replace

import numpy as np
import pytest
from scipy.stats import norm

from planner.design.plan import plan_scenario
from planner.design.uncertainty import (Z90, correlated_errors, error_model,
                                        line_uncertainty)
from planner.geo.profile import elevation_source_between, pin_profile
from planner.scenario import load_scenario
from tests.conftest import E0, N0, lonlat
from tests.design.test_plan import scenario


def test_le90_to_sigma():
    # a zero-mean Gaussian holds 90 % of its mass within 1.6449 sigma
    assert Z90 == pytest.approx(norm.ppf(0.95), rel=1e-12)
    assert error_model("copernicus-glo30").sigma_m * Z90 == pytest.approx(2.57, abs=1e-9)
    assert error_model("srtm").sigma_m == 9.18                # Mukul et al. 2017, RMSE
    assert error_model("srtm", sigma_m=4.0).sigma_m == 4.0
    with pytest.raises(ValueError, match="unknown DEM product"):
        error_model("nope")


def test_correlated_errors_have_the_stated_covariance():
    ch = np.concatenate([np.arange(0, 500, 10.0), 500 + np.arange(0, 300, 3.0)])  # uneven spacing
    e = correlated_errors(ch, 2.0, 100.0, 40_000, np.random.default_rng(3))
    assert e.shape == (40_000, ch.size)
    assert np.std(e, axis=0) == pytest.approx(np.full(ch.size, 2.0), rel=0.03)
    for i, j in ((0, 5), (10, 40), (45, 80), (60, 61)):
        r = np.corrcoef(e[:, i], e[:, j])[0, 1]
        assert r == pytest.approx(np.exp(-abs(ch[j] - ch[i]) / 100.0), abs=0.02)


@pytest.fixture
def ramp_plan(ramp_site):
    return plan_scenario(load_scenario(scenario(ramp_site)))


def test_outlet_probability_matches_the_normal_closed_form(ramp_plan):
    plan = ramp_plan
    o = plan.outlets[0]
    d = o.chainage_m
    sigma, length = 20.0, 800.0
    # ask for a minimum a little below what the DEM gives, so that the chance is moderate
    plan = replace(plan, outlets=(replace(o, min_pressure_m=o.pressure_head_m - 6.0),))
    model = replace(error_model("srtm"), sigma_m=sigma, correlation_m=length)
    u = line_uncertainty(plan, model, realisations=20_000, seed=7)
    sd = sigma * np.sqrt(2 * (1 - np.exp(-d / length)))
    expected = norm.cdf(-6.0 / sd)
    p = u.outlets[0][1]
    assert p == pytest.approx(expected, abs=4 * np.sqrt(expected * (1 - expected) / 20_000))
    # the 95 % fall of the residual is the normal 95 % quantile of e(s) - e(x)
    assert u.outlets[0][2] == pytest.approx(norm.ppf(0.95) * sd, rel=0.03)
    assert u.margin_m >= u.outlets[0][2]


def test_scenario_uncertainty_in_the_plan_and_plan_json(ramp_site, tmp_path):
    from planner.report.plan_json import write_plan_json

    path = scenario(ramp_site, extra='[uncertainty]\nproduct = "copernicus-glo30"\nrealisations = 500\n')
    plan = plan_scenario(load_scenario(path))
    assert plan.uncertainty.realisations == 500 and plan.uncertainty.model.product == "copernicus-glo30"
    data = json.loads(write_plan_json(plan, tmp_path / "plan.json").read_text())
    u = data["uncertainty"]
    assert u["model"]["sigma_m"] == pytest.approx(1.562, abs=1e-3)
    assert 0 <= u["outlets"][0]["p_below_minimum"] <= 1
    assert any(f["code"] == "dem-uncertainty" for f in data["findings"])
    off = plan_scenario(load_scenario(scenario(ramp_site, extra="[uncertainty]\nenabled = false\n")))
    assert off.uncertainty is None


def test_pins_remove_the_error_where_the_levels_were_surveyed(ramp_plan):
    plan = ramp_plan
    o = plan.outlets[0]
    prof = plan.profile
    # pin the start and the outlet: no error is left at either, so the outlet is certain
    pinned = pin_profile(prof, [("source box", 0.0, float(prof.ground_m[0])),
                                ("outlet peg", o.chainage_m, float(prof.ground_m[o.index]))])
    plan_p = replace(plan, profile=pinned,
                     outlets=(replace(o, min_pressure_m=o.pressure_head_m - 0.5),))
    model = replace(error_model("srtm"), sigma_m=10.0)
    u = line_uncertainty(plan_p, model, realisations=2000, pins=[0.0, o.chainage_m])
    assert u.outlets[0][1] == 0.0 and u.outlets[0][2] == pytest.approx(0.0, abs=1e-9)


def test_pin_profile_shifts_the_ground_linearly_between_pins(ramp_plan):
    prof = ramp_plan.profile
    a, b = 500.0, 2500.0
    za = float(np.interp(a, prof.chainage_m, prof.ground_m)) + 3.0     # surveyed 3 m higher
    zb = float(np.interp(b, prof.chainage_m, prof.ground_m)) - 1.0     # and 1 m lower
    p = pin_profile(prof, [("BM1", a, za), ("BM2", b, zb)])
    assert np.interp(a, p.chainage_m, p.ground_m) == pytest.approx(za, abs=1e-9)
    assert np.interp(b, p.chainage_m, p.ground_m) == pytest.approx(zb, abs=1e-9)
    shift = p.ground_m - prof.ground_m
    expected = np.interp(prof.chainage_m, [a, b], [3.0, -1.0])      # flat beyond the pins
    assert np.allclose(shift, expected, atol=1e-9)
    assert np.allclose(p.pipe_m, p.ground_m - prof.cover_m)
    assert "BM1" in elevation_source_between(p, 1000, 2000)
    assert "BM2" in elevation_source_between(p, 1000, 2000)
    assert "shifted by surveyed 'BM2'" in elevation_source_between(p, 2600, 3000)
    assert elevation_source_between(prof, 0, 100) == "DEM"


def test_survey_points_in_a_scenario(ramp_site):
    extra = ('[[survey_points]]\nname = "tank site"\nchainage_m = 1200\nelevation_m = 1160\n')
    plan = plan_scenario(load_scenario(scenario(ramp_site, extra=extra)))
    assert plan.profile.pins[0][0] == "tank site"
    assert np.interp(1200, plan.profile.chainage_m, plan.profile.ground_m) == pytest.approx(1160, abs=1e-6)
    assert plan.uncertainty.pinned == ("tank site",)
    assert "pinned to surveyed levels" in plan.profile.elevation_source


def _gpx(path, pts, ele):
    trk = "".join(f'<trkpt lat="{la:.8f}" lon="{lo:.8f}"><ele>{z:.3f}</ele></trkpt>'
                  for (lo, la), z in zip(pts, ele))
    path.write_text('<?xml version="1.0"?><gpx version="1.1" creator="test" '
                    'xmlns="http://www.topografix.com/GPX/1/1"><trk><name>walk</name><trkseg>'
                    f"{trk}</trkseg></trk></gpx>")
    return path


@pytest.mark.parametrize("offset, datum_hint", [(7.0, False), (-35.0, True)])
def test_gps_heights_are_compared_with_the_dem(plane_dem, tmp_path, offset, datum_hint):
    from planner.geo.profile import sample_profile

    e = np.array([E0 + 200, E0 + 900, E0 + 1500, E0 + 2400])
    n = np.array([N0 + 300, N0 + 800, N0 + 1200, N0 + 1500])
    # the plane of tests/conftest.py: z = 1000 + 0.01 (E - E0) - 0.02 (N - N0)
    truth = 1000 + 0.01 * (e - E0) - 0.02 * (n - N0)
    lon, lat = lonlat(e, n)
    gpx = _gpx(tmp_path / "walk.gpx", list(zip(lon, lat)), truth + offset)
    prof = sample_profile(gpx, plane_dem, spacing_m=10)
    assert prof.gps_offset_m is not None and prof.gps_offset_m.size == 4
    assert prof.gps_offset_m == pytest.approx(np.full(4, offset), abs=0.01)
    note = next(t for t in prof.notes if t.startswith("GPS heights"))
    assert f"mean {offset:+.1f} m" in note
    assert ("vertical datums" in note) == datum_hint
    from planner.report.plan_json import elevations_to_dict
    g = elevations_to_dict(prof, [])["gps_comparison"]
    assert g["vertices"] == 4 and g["mean_offset_m"] == pytest.approx(offset, abs=0.01)
    assert g["max_abs_offset_m"] == pytest.approx(abs(offset), abs=0.01)


def test_the_map_shows_the_probabilities(ramp_site):
    from planner.report.web_map import build_map

    plan = plan_scenario(load_scenario(scenario(ramp_site)))
    html = build_map(plan).get_root().render()
    p = plan.uncertainty.outlets[0][1]
    assert f"DEM error: {p:.0%} chance of less than the minimum" in html
