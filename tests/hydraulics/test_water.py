"""Water properties against IAPWS (via the ``iapws`` package) and the LSBU table."""

import numpy as np
import pytest
from iapws import IAPWS95
from iapws.iapws97 import _PSat_T

from planner.hydraulics import water

TEMPS = [0.5, 5, 10, 15, 20, 25, 30, 35, 40]


@pytest.mark.parametrize("t", TEMPS)
def test_density_against_iapws95(t):
    # IAPWS-95 (Wagner & Pruss 2002) at 0.101325 MPa, via iapws.IAPWS95
    ref = IAPWS95(T=t + 273.15, P=0.101325).rho
    assert water.density(t) == pytest.approx(ref, abs=0.01)


@pytest.mark.parametrize("t", TEMPS)
def test_viscosity_against_iapws2008(t):
    # IAPWS 2008 viscosity (Huber et al., J. Phys. Chem. Ref. Data 38, 2009), whose own
    # uncertainty is below 1 % for liquid water at 0.1 MPa; the correlation agrees to 0.3 %
    ref = IAPWS95(T=t + 273.15, P=0.101325).mu
    assert water.dynamic_viscosity(t) == pytest.approx(ref, rel=3e-3)


@pytest.mark.parametrize("t", TEMPS)
def test_vapour_pressure_against_if97(t):
    # IAPWS-IF97 saturation equation (Eq. 30), as implemented by iapws.iapws97._PSat_T
    assert water.vapour_pressure(t) == pytest.approx(_PSat_T(t + 273.15) * 1e6, rel=1e-9)


@pytest.mark.parametrize("t, rho, mu_mpas", [
    # LSBU "Water properties" table (M. Chaplin), printed to 0.1 kg/m3 and 0.001 mPa s
    (10, 999.7, 1.307), (20, 998.2, 1.002), (30, 995.7, 0.797), (40, 992.2, 0.653)])
def test_against_lsbu_table(t, rho, mu_mpas):
    assert water.density(t) == pytest.approx(rho, abs=0.06)
    assert water.dynamic_viscosity(t) * 1e3 == pytest.approx(mu_mpas, abs=0.002)


def test_vectorised_and_range_warning():
    t = np.array([5.0, 20.0])
    assert water.kinematic_viscosity(t).shape == (2,)
    with pytest.warns(UserWarning, match="outside"):
        water.density(120.0)


@pytest.mark.parametrize("t", [0.0, 5.0, 10.0, 20.0, 30.0, 40.0, 60.0, 90.0])
def test_speed_of_sound_and_bulk_modulus_against_iapws95(t):
    """IAPWS-95 (Wagner & Pruss 2002) at 0.101325 MPa, via iapws.IAPWS95: the speed of
    sound w and the adiabatic bulk modulus rho w^2 the pressure wave sees."""
    from planner.hydraulics.water import bulk_modulus, speed_of_sound

    ref = IAPWS95(T=t + 273.15, P=0.101325)
    assert float(speed_of_sound(t)) == pytest.approx(ref.w, rel=5e-5)
    assert float(bulk_modulus(t)) == pytest.approx(ref.rho * ref.w ** 2, rel=2e-4)


def test_the_design_wave_speed_follows_the_water_temperature(demo_folder):
    """At 10 degC water is stiffer than at 30 degC (IAPWS-95: 2.094 against 2.268 GPa):
    the design's wave speed for the same pipe follows it, by Korteweg's formula."""
    from dataclasses import replace

    from planner import api
    from planner.hydraulics.surge import wave_speed

    sc = api.load_scenario(demo_folder / "scenario.toml")
    speeds = {}
    for t in (10.0, 30.0):
        plan = api.plan(replace(sc, criteria=replace(sc.criteria, temperature_c=t),
                                uncertainty=replace(sc.uncertainty, enabled=False)))
        st = plan.stretches[0]
        o = st.option
        ref = IAPWS95(T=t + 273.15, P=0.101325)
        wall = (o.outside_diameter - o.inside_diameter) / 2    # the mean wall of the bore
        assert wall > o.wall                                    # not the catalogue's e_min
        want = wave_speed(o.outside_diameter - wall, wall, o.elastic_modulus,
                          density=ref.rho, bulk_modulus=ref.rho * ref.w ** 2)
        assert st.wave_speed_mps == pytest.approx(float(want), rel=5e-4)
        speeds[t] = st
    assert speeds[10.0].option.label != speeds[30.0].option.label or \
        speeds[10.0].wave_speed_mps < speeds[30.0].wave_speed_mps
