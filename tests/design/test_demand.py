"""Demand and storage against published figures and hand-checkable cases."""

import numpy as np
import pytest

from planner.design import demand
from planner.errors import InputError


def test_fao_one_litre_per_second_per_hectare_is_8_64_mm_per_day():
    # FAO Training Manual 6 (Brouwer et al. 1992), Annex II: 1 L/s/ha = 8.64 mm/day
    q = demand.irrigation_flow(1.0, 8.64, efficiency=1.0, hours_per_day=24)
    assert q == pytest.approx(1e-3, rel=1e-12)


def test_irrigation_block_worked_example():
    # computed by hand, ETc as in FAO-56 (Allen et al. 1998): 5 ha, ETc 6 mm/day,
    # drip E = 0.9, 12 h/day -> 7.7 L/s
    assert demand.irrigation_flow(5, 6, efficiency=0.9, hours_per_day=12) * 1e3 == \
        pytest.approx(7.7, abs=0.05)


def test_domestic_flow_and_growth():
    # geometric growth P_n = P0 (1 + r)^n (common practice)
    assert demand.future_population(1000, 0.03, 20) == pytest.approx(1000 * 1.03**20)
    q = demand.domestic_flow(1000, 45, peak_factor=2.5, growth_rate=0.03, horizon_years=20)
    assert q == pytest.approx(1000 * 1.03**20 * 45e-3 * 2.5 / 86400)


def test_taps_and_institutions():
    # Sphere: 7.5 L/min per tap (from memory); 10 taps with a third open at once
    assert demand.tap_stand_flow(10, use_factor=1 / 3) == pytest.approx(10 * 7.5e-3 / 60 / 3)
    assert demand.institution_flow(300, 5.0, hours=6) == pytest.approx(300 * 5e-3 / 21600)


def test_balancing_storage_mass_curve():
    # constant demand: no storage; everything drawn in one hour of 24: 23/24 of the day's use
    assert demand.balancing_storage(np.ones(24), 240.0, 240.0 / 86400) == pytest.approx(0.0)
    one_hour = np.zeros(24)
    one_hour[7] = 1
    assert demand.balancing_storage(one_hour, 240.0, 240.0 / 86400) == pytest.approx(230.0)
    # a morning and an evening peak: by hand, the largest spread of cumulative surplus
    pattern = np.array([0] * 6 + [3] * 3 + [1] * 8 + [3] * 3 + [0] * 4, dtype=float)
    used = 480.0 * pattern / pattern.sum()
    cum = np.concatenate([[0], np.cumsum(20.0 - used)])
    assert demand.balancing_storage(pattern, 480.0, 480.0 / 86400) == pytest.approx(cum.max() - cum.min())
    with pytest.raises(InputError, match="cannot make up a daily deficit"):
        demand.balancing_storage(pattern, 480.0, 400.0 / 86400)
