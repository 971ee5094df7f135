"""Water hammer: pressure wave speed, Joukowsky and slow-closure surge, closure time.

Pure functions in SI units.  These are the classical first estimates for a simple
line; they can under-predict surge at tees, diameter changes and where the column
separates (Walters & Leishear 2019), so results carry that caution.
"""

from __future__ import annotations

import numpy as np

from .._arrays import as_output
from ..units import G

#: Bulk modulus of water at 20 degC [Pa]: rho c^2 with c = 1483 m/s, or LSBU's adiabatic
#: compressibility 0.4559 1/GPa (M. Chaplin, "Water structure and science: water
#: properties", London South Bank University, online table).
WATER_BULK_MODULUS = 2.19e9


def wave_speed(diameter, wall, elastic_modulus, *, density=998.2,
               bulk_modulus=WATER_BULK_MODULUS, support_factor=1.0):
    """Pressure wave speed in a water-filled elastic pipe (Korteweg).

    Parameters
    ----------
    diameter : float or ndarray
        Mean diameter of the wall, outside diameter minus wall [m].
    wall : float or ndarray
        Wall thickness [m].
    elastic_modulus : float or ndarray
        Young's modulus of the pipe wall [Pa] (short-term for plastics).
    density : float
        Water density [kg/m^3].
    bulk_modulus : float
        Bulk modulus of water [Pa].
    support_factor : float
        psi [-]: 1 with expansion joints; 1 - nu^2 anchored throughout.

    Returns
    -------
    float or ndarray
        Wave speed a [m/s].

    Notes
    -----
    .. math:: a = \\sqrt{\\frac{K/\\rho}{1 + \\psi K D / (E e)}}

    Korteweg (1878), as given by Wylie & Streeter, "Fluid Transients in Systems",
    Prentice Hall 1993, Eq. 2.21.  Thin-wall formula (D/e > about 40); for thick PE
    walls and because PE creeps, treat the result as +-20 %.

    Examples
    --------
    >>> round(wave_speed(0.100, 0.010, 1.0e9))   # PE100 110 SDR11
    310
    """
    return as_output(np.sqrt((bulk_modulus / density)
                             / (1.0 + support_factor * bulk_modulus * np.asarray(diameter)
                                / (np.asarray(elastic_modulus) * np.asarray(wall)))))


def joukowsky_head(wave_speed_mps, velocity_change):
    """Head rise for an instantaneous velocity change, ``dH = a dV / g`` [m].

    Joukowsky (1898), as in Wylie & Streeter (1993), Eq. 1.6.

    Examples
    --------
    >>> round(joukowsky_head(310.0, 0.786), 1)
    24.8
    """
    return as_output(np.asarray(wave_speed_mps) * np.asarray(velocity_change) / G)


def critical_closure_time(length, wave_speed_mps):
    """Wave return time ``2 L / a`` [s]: a closure faster than this gives the full Joukowsky rise.

    Examples
    --------
    >>> round(critical_closure_time(2000.0, 310.0), 1)
    12.9
    """
    return as_output(2.0 * np.asarray(length) / np.asarray(wave_speed_mps))


def surge_head(length, velocity, wave_speed_mps, closure_time):
    """Head rise for closing a valve at the end of a line in ``closure_time`` seconds [m].

    Parameters
    ----------
    length : float or ndarray
        Length from the valve back to the free surface feeding it [m].
    velocity : float or ndarray
        Steady velocity stopped by the closure [m/s].
    wave_speed_mps : float or ndarray
        [m/s].
    closure_time : float
        Effective closure time [s].

    Returns
    -------
    float or ndarray
        Joukowsky ``a V / g`` when ``closure_time <= 2 L / a``; otherwise Michaud's
        estimate ``2 L V / (g t)``, which is smaller.

    Notes
    -----
    Michaud (1878), as given by Wylie & Streeter (1993), ch. 1 (from memory); a
    linear-closure estimate, not a transient analysis.
    """
    length = np.asarray(length, dtype=float)
    v = np.asarray(velocity, dtype=float)
    a = np.asarray(wave_speed_mps, dtype=float)
    full = a * v / G
    slow = 2.0 * length * v / (G * max(float(closure_time), 1e-9))
    return as_output(np.where(closure_time <= 2.0 * length / a, full, np.minimum(full, slow)))


def equivalent_pipe(lengths, wave_speeds, velocities) -> tuple[float, float]:
    """One pipe that stands for pipes in series on a wave's path: ``(a_e, V_e)``.

    .. math:: a_e = \\frac{\\sum L_i}{\\sum L_i / a_i}, \\qquad
              V_e = \\frac{\\sum L_i V_i}{\\sum L_i}

    The wave speed keeps the path's travel time; the velocity (the flow over the
    equivalent area ``sum L_i / sum (L_i / A_i)``) keeps the water column's momentum.
    The equivalent pipe of Chaudhry, "Applied Hydraulic Transients" (3rd ed., Springer
    2014), sec. 3.9 (from memory); Wylie & Streeter (1993) treat series pipes the same
    way.  Pipes without a wave speed (NaN) are left out of ``a_e``.

    Examples
    --------
    >>> a, v = equivalent_pipe([1000.0, 1000.0], [300.0, 1200.0], [1.0, 0.5])
    >>> round(a), v
    (480, 0.75)
    """
    L = np.asarray(lengths, dtype=float)
    a = np.asarray(wave_speeds, dtype=float)
    v = np.asarray(velocities, dtype=float)
    known = np.isfinite(a) & (L > 0)
    a_e = float(np.sum(L[known]) / np.sum(L[known] / a[known])) if np.any(known) else float("nan")
    return a_e, float(np.sum(L * v) / np.sum(L))


def series_surge_head(length, velocity, wave_speed_mps, closure_time, path_wave_speed,
                      path_velocity):
    """Head rise at a pipe of a series line when a valve closes in ``closure_time`` [m].

    :func:`surge_head` with the path's equivalent pipe (:func:`equivalent_pipe`):
    the closure counts as rapid when it is shorter than the wave's return time
    ``2 L / a_e``, and then the rise is the pipe's own Joukowsky ``a V / g`` (its
    velocity stopped, its wave speed); a slower closure gives at most Michaud's
    ``2 L V_e / (g t)``, the rigid-column rise of the whole path's water.  With one pipe
    (``a_e = a``, ``V_e = V``) this is :func:`surge_head`.

    >>> float(series_surge_head(2000.0, 1.0, 300.0, 20.0, 300.0, 1.0)) == float(
    ...     surge_head(2000.0, 1.0, 300.0, 20.0))
    True
    """
    length = np.asarray(length, dtype=float)
    full = np.asarray(wave_speed_mps, dtype=float) * np.asarray(velocity, dtype=float) / G
    slow = 2.0 * length * np.asarray(path_velocity, dtype=float) / (G * max(float(closure_time), 1e-9))
    rapid = closure_time <= 2.0 * length / np.asarray(path_wave_speed, dtype=float)
    return as_output(np.where(rapid, full, np.minimum(full, slow)))


def safe_closure_time(length, velocity, allowed_rise):
    """Closure time that keeps Michaud's surge below ``allowed_rise`` [s]: ``2 L V / (g dH)``."""
    return as_output(2.0 * np.asarray(length) * np.asarray(velocity)
                     / (G * np.maximum(np.asarray(allowed_rise, dtype=float), 1e-9)))
