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
