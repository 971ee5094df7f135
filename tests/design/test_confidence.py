"""Design at a stated confidence under the DEM's vertical error (issue 13, part 3).

The checks sample the error with their own sampler: numpy's multivariate normal with
the exponential covariance written out here, not the tool's autoregressive recursion,
and count how often each outlet falls short.  The error model (exponential correlation
of DEM error) is the one the tool states (Oksanen & Sarjakoski 2005, from memory); the
binomial standard error bounds what a finite sample can show.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest

from planner import api
from planner.design.uncertainty import ErrorModel, deviation_sd

N = 20_000                                     # samples per check


def _cov(x, sigma, length):
    x = np.asarray(x, dtype=float)
    return sigma ** 2 * np.exp(-np.abs(x[:, None] - x[None, :]) / length)


def test_deviation_sd_is_exact_against_sampling_with_pins():
    """e(x) - e(s) after pinning to two surveyed points, sampled at all points at once."""
    ch = np.linspace(0.0, 3000.0, 61)
    starts = [0, 30]                                   # the source and a tank at 1,500 m
    pins = [ch[10], ch[45]]                            # at profile points
    model = ErrorModel(sigma_m=2.0, correlation_m=400.0, product="test", source="test")
    rng = np.random.default_rng(4)
    e = rng.multivariate_normal(np.zeros(ch.size), _cov(ch, 2.0, 400.0), size=N)
    w = np.column_stack([np.interp(ch, pins, np.eye(2)[k]) for k in range(2)])
    r = e - e[:, [10, 45]] @ w.T                       # the error left after pinning
    s = np.where(np.arange(ch.size) < 30, 0, 30)
    sampled = np.std(r - r[:, s], axis=0)
    exact = deviation_sd(ch, starts, model, pins=pins)
    assert exact[[0, 30]] == pytest.approx(0.0, abs=1e-6)           # the reach starts
    assert exact == pytest.approx(sampled, rel=0.03, abs=0.02)      # 20,000 samples: ~0.5 %


@pytest.fixture(scope="module")
def demo(demo_folder):
    sc = api.load_scenario(demo_folder / "scenario.toml")
    return sc, api.plan(sc)


def test_each_outlet_holds_its_minimum_with_the_stated_confidence(demo):
    """The demo (GLO-30 named, design.confidence 0.95 by default): each outlet is short
    in at most 5 % of independent samples, within three binomial standard errors."""
    sc, plan = demo
    c = sc.design.confidence
    assert c == 0.95 and plan.uncertainty.design_confidence == 0.95
    m = plan.uncertainty.model
    ch = plan.profile.chainage_m
    tanks = [t.index for t in plan.tanks]
    rng = np.random.default_rng(7)
    se = np.sqrt(c * (1 - c) / N)
    for o in plan.outlets:
        s = max([0] + [j for j in tanks if j <= o.index])
        pts = [s, o.index]
        e = rng.multivariate_normal(np.zeros(2), _cov(ch[pts], m.sigma_m, m.correlation_m), size=N)
        true = o.pressure_head_m + e[:, 1] - e[:, 0]       # the source's levels follow the DEM
        short = float(np.mean(true < o.min_pressure_m))
        assert short <= (1 - c) + 3 * se, (o.name, short)
    # and it is not bought by pressure to spare: the binding outlet sits near its 5 %
    assert plan.uncertainty.p_any_outlet_short > 0.02


def test_a_design_on_the_dem_as_it_is_at_one_half(demo):
    """design.confidence = 0.5 asks for no margin: the design without one, which the same
    sampling finds short about half the time at its binding outlet."""
    sc, plan95 = demo
    plan50 = api.plan(replace(sc, design=replace(sc.design, confidence=0.5)))
    assert plan50.uncertainty.design_confidence is None
    assert plan50.pipe_cost < plan95.pipe_cost
    assert max(p for _, p, _ in plan50.uncertainty.outlets) > 0.3


def test_no_margins_from_a_dem_the_scenario_does_not_name(demo):
    """Without uncertainty.product or sigma_m the DEM is guessed (SRTM): the chances are
    reported, the design is not held to them, and the note says how to change that."""
    sc, plan95 = demo
    unnamed = replace(sc, uncertainty=replace(sc.uncertainty, product=None))
    plan = api.plan(unnamed)
    assert plan.uncertainty.design_confidence is None
    assert plan.uncertainty.model.product == "srtm"
    notes = " ".join(f.message for f in plan.findings if f.code == "dem-uncertainty")
    assert "uncertainty.product" in notes
