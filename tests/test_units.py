"""Unit conversions at the boundary."""

import pytest

from planner.hydraulics.water import density
from planner.units import BAR, head_from_pressure, pressure_from_head


def test_ten_metres_of_water_is_098_bar():
    # common practice: 10 m of water ~ 0.98 bar (rho = 998.2 kg/m3 at 20 C, g = 9.80665)
    assert pressure_from_head(10.0, density(20.0)) / BAR == pytest.approx(0.98, abs=0.005)


def test_one_bar_in_metres():
    # computed with IAPWS-95 (rho = 998.21 kg/m3 at 20 C): 1 bar = 10.216 m,
    # 10.197 m with rho = 1000
    assert head_from_pressure(BAR, density(20.0)) == pytest.approx(10.216, abs=0.001)
    assert head_from_pressure(BAR, 1000.0) == pytest.approx(10.197, abs=0.001)
