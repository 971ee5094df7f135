"""Density, viscosity and vapour pressure of liquid water at atmospheric pressure.

All functions take the temperature in degrees Celsius (the unit engineers quote for
water) and return SI values.  They are short published correlations, checked in the
tests against the IAPWS formulations (IAPWS-95 density, IAPWS 2008 viscosity,
IAPWS-IF97 saturation pressure) as implemented by the ``iapws`` package.
"""

from __future__ import annotations

import numpy as np

import warnings

from .._arrays import as_output
from ..errors import RangeWarning

#: Range of the correlations below [degC].
TEMPERATURE_RANGE_C = (0.0, 100.0)


def _check_range(temperature_c) -> np.ndarray:
    t = np.asarray(temperature_c, dtype=float)
    lo, hi = TEMPERATURE_RANGE_C
    if np.any((t < lo) | (t > hi)):
        warnings.warn(
            f"water temperature {t.min():g}..{t.max():g} degC is outside the "
            f"correlations' range {lo:g}..{hi:g} degC",
            RangeWarning,
            stacklevel=3,
        )
    return t


def density(temperature_c):
    """Density of air-free liquid water at 101.325 kPa.

    Parameters
    ----------
    temperature_c : float or ndarray
        Water temperature [degC], 0 to 100.

    Returns
    -------
    float or ndarray
        Density [kg/m^3].

    Notes
    -----
    Kell's rational polynomial [1]_, Eq. 16:

    .. math:: \\rho = \\frac{999.83952 + 16.945176 T - 7.9870401\\times10^{-3} T^2
              - 46.170461\\times10^{-6} T^3 + 105.56302\\times10^{-9} T^4
              - 280.54253\\times10^{-12} T^5}{1 + 16.879850\\times10^{-3} T}

    Agrees with IAPWS-95 within 0.01 kg/m^3 from 0 to 40 degC (see the tests).

    References
    ----------
    .. [1] G. S. Kell, "Density, thermal expansivity, and compressibility of liquid
       water from 0 to 150 C", J. Chem. Eng. Data 20(1), 97-105, 1975,
       doi:10.1021/je60064a005.

    Examples
    --------
    >>> round(float(density(20.0)), 2)
    998.2
    """
    t = _check_range(temperature_c)
    num = (999.83952 + 16.945176 * t - 7.9870401e-3 * t**2 - 46.170461e-6 * t**3
           + 105.56302e-9 * t**4 - 280.54253e-12 * t**5)
    rho = num / (1.0 + 16.879850e-3 * t)
    return as_output(rho)


def speed_of_sound(temperature_c):
    """Speed of sound in pure water at 101.325 kPa [m/s].

    Parameters
    ----------
    temperature_c : float or ndarray
        Water temperature [degC], 0 to 95.

    Notes
    -----
    Marczak's fifth-degree polynomial [1]_ (coefficients from memory; the tests check
    it against IAPWS-95 within 0.005 % from 0 to 90 degC).

    References
    ----------
    .. [1] W. Marczak, "Water as a standard in the measurements of speed of sound in
       liquids", J. Acoust. Soc. Am. 102(5), 2776-2779, 1997.

    Examples
    --------
    >>> round(float(speed_of_sound(20.0)), 1)
    1482.4
    """
    t = _check_range(temperature_c)
    c = (1.402385e3 + 5.038813 * t - 5.799136e-2 * t**2 + 3.287156e-4 * t**3
         - 1.398845e-6 * t**4 + 2.787860e-9 * t**5)
    return as_output(c)


def bulk_modulus(temperature_c):
    """Adiabatic bulk modulus of water, rho c^2, at 101.325 kPa [Pa].

    The modulus the pressure wave sees (a surge is fast, so adiabatic): density by
    Kell (:func:`density`) times the square of :func:`speed_of_sound`.

    Examples
    --------
    >>> round(float(bulk_modulus(20.0)) / 1e9, 3)
    2.193
    """
    return as_output(np.asarray(density(temperature_c)) * np.asarray(speed_of_sound(temperature_c)) ** 2)


def dynamic_viscosity(temperature_c):
    """Dynamic viscosity of liquid water at atmospheric pressure.

    Parameters
    ----------
    temperature_c : float or ndarray
        Water temperature [degC], 0 to 100.

    Returns
    -------
    float or ndarray
        Dynamic viscosity [Pa s].

    Notes
    -----
    Below 20 degC, Hardy and Cottington [1]_ (viscosity in poise):

    .. math:: \\log_{10}\\mu = \\frac{1301}{998.333 + 8.1855 (T-20)
              + 0.00585 (T-20)^2} - 3.30233

    From 20 degC up, Swindells' ratio to the 20 degC value 1.002 mPa s [2]_:

    .. math:: \\log_{10}\\frac{\\mu}{\\mu_{20}} = \\frac{1.3272 (20-T)
              - 0.001053 (T-20)^2}{T + 105}

    Both forms as tabulated in the CRC Handbook of Chemistry and Physics [3]_.
    Agrees with IAPWS 2008 within 0.3 % from 0 to 40 degC (see the tests).

    References
    ----------
    .. [1] R. C. Hardy and R. L. Cottington, J. Res. NBS 42, 573-578, 1949.
    .. [2] J. F. Swindells, NBS, as reported in [3]_.
    .. [3] CRC Handbook of Chemistry and Physics, section 6, "Viscosity of water".

    Examples
    --------
    >>> round(float(dynamic_viscosity(20.0)) * 1e3, 4)
    1.002
    """
    t = _check_range(temperature_c)
    low = 0.1 * 10.0 ** (1301.0 / (998.333 + 8.1855 * (t - 20) + 0.00585 * (t - 20) ** 2)
                         - 3.30233)
    high = 1.002e-3 * 10.0 ** ((1.3272 * (20 - t) - 0.001053 * (t - 20) ** 2) / (t + 105))
    mu = np.where(t < 20.0, low, high)
    return as_output(mu)


def kinematic_viscosity(temperature_c):
    """Kinematic viscosity of liquid water, ``nu = mu / rho``.

    Parameters
    ----------
    temperature_c : float or ndarray
        Water temperature [degC], 0 to 100.

    Returns
    -------
    float or ndarray
        Kinematic viscosity [m^2/s].

    Examples
    --------
    >>> round(float(kinematic_viscosity(20.0)) * 1e6, 3)
    1.004
    """
    return as_output(np.asarray(dynamic_viscosity(temperature_c)) / density(temperature_c))


def vapour_pressure(temperature_c):
    """Saturation (vapour) pressure of water.

    Parameters
    ----------
    temperature_c : float or ndarray
        Water temperature [degC], 0 to 100.

    Returns
    -------
    float or ndarray
        Vapour pressure [Pa].

    Notes
    -----
    The saturation-pressure equation of IAPWS-IF97 [1]_, Eq. 30, with its published
    coefficients n1..n10.

    References
    ----------
    .. [1] IAPWS, "Revised Release on the IAPWS Industrial Formulation 1997 for the
       Thermodynamic Properties of Water and Steam", 2007, Eq. 30.

    Examples
    --------
    >>> round(float(vapour_pressure(20.0)) / 1e3, 3)
    2.339
    """
    n = (0.11670521452767e4, -0.72421316703206e6, -0.17073846940092e2,
         0.12020824702470e5, -0.32325550322333e7, 0.14915108613530e2,
         -0.48232657361591e4, 0.40511340542057e6, -0.23855557567849,
         0.65017534844798e3)
    temp_k = _check_range(temperature_c) + 273.15
    theta = temp_k + n[8] / (temp_k - n[9])
    a = theta**2 + n[0] * theta + n[1]
    b = n[2] * theta**2 + n[3] * theta + n[4]
    c = n[5] * theta**2 + n[6] * theta + n[7]
    p = (2 * c / (-b + np.sqrt(b**2 - 4 * a * c))) ** 4 * 1e6
    return as_output(p)


def atmospheric_pressure(elevation_m):
    """Air pressure of the standard atmosphere at an elevation.

    Parameters
    ----------
    elevation_m : float or ndarray
        Elevation above sea level [m], up to 11 km.

    Returns
    -------
    float or ndarray
        Pressure [Pa]: ``101325 (1 - 2.25577e-5 z)^5.25588``.

    Notes
    -----
    The troposphere of the ISO 2533 / ICAO standard atmosphere (formula from memory;
    it reproduces the standard's 89.9 kPa at 1,000 m and 79.5 kPa at 2,000 m).

    Examples
    --------
    >>> round(float(atmospheric_pressure(2000.0)) / 1e3, 1)
    79.5
    """
    z = np.asarray(elevation_m, dtype=float)
    return as_output(101325.0 * (1.0 - 2.25577e-5 * z) ** 5.25588)
