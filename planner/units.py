"""Unit constants and the few conversions gravplan needs at its boundaries.

Inside the package everything is SI: m, s, m^3/s, Pa, kg/m^3 and pressure as metres
of water head.  Litres per second, millimetres, bar and kilometres appear only in
scenario files, command-line options and reports; they are converted here.

Constants follow the style of ``fluids.constants`` (a value per unit, multiply to get
SI).
"""

from __future__ import annotations

import numpy as np

from ._arrays import as_output

#: Standard acceleration of gravity [m/s^2] (CGPM 1901, exact).
G = 9.80665
#: One litre per second [m^3/s].
LPS = 1e-3
#: One millimetre [m].
MM = 1e-3
#: One kilometre [m].
KM = 1e3
#: One bar [Pa].
BAR = 1e5
#: One kilopascal [Pa].
KPA = 1e3
#: Standard atmosphere at sea level [Pa] (ISO 2533).
ATM = 101325.0


def pressure_from_head(head, density):
    """Gauge pressure from a water head.

    Parameters
    ----------
    head : float or ndarray
        Pressure head [m of water].
    density : float
        Water density [kg/m^3].

    Returns
    -------
    float or ndarray
        Pressure [Pa], ``p = rho * g * h``.

    Examples
    --------
    >>> round(pressure_from_head(10.0, 998.2) / BAR, 3)
    0.979
    """
    return as_output(np.multiply(head, density * G))


def head_from_pressure(pressure, density):
    """Water head from a gauge pressure.

    Parameters
    ----------
    pressure : float or ndarray
        Pressure [Pa].
    density : float
        Water density [kg/m^3].

    Returns
    -------
    float or ndarray
        Pressure head [m of water], ``h = p / (rho * g)``.

    Examples
    --------
    >>> round(head_from_pressure(BAR, 1000.0), 3)
    10.197
    """
    return as_output(np.divide(pressure, density * G))
