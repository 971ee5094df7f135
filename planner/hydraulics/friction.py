"""Friction losses in full pipes: Darcy-Weisbach with Colebrook-White, and Hazen-Williams.

Pure functions on floats or numpy arrays in SI units.  Colebrook-White is solved to
full double precision by Newton's method on ``x = 1/sqrt(f)``, started from the
explicit Swamee-Jain approximation; Swamee-Jain is offered on its own only as that
starting value and for comparison.  Hazen-Williams is the empirical alternative many
water codes still prescribe.
"""

from __future__ import annotations

import warnings

import numpy as np

from ..errors import ConvergenceError, InputError, RangeWarning
from ..units import G
from .._arrays import as_output

#: Reynolds number below which flow is taken as laminar [-] (common practice).
LAMINAR_LIMIT = 2300.0
#: Reynolds number from which the Colebrook-White equation is valid [-].
TURBULENT_LIMIT = 4000.0

FRICTION_METHODS = ("colebrook", "hazen-williams")


def reynolds(velocity, diameter, kinematic_viscosity):
    """Reynolds number of pipe flow.

    Parameters
    ----------
    velocity : float or ndarray
        Mean velocity [m/s].
    diameter : float or ndarray
        Inside diameter [m].
    kinematic_viscosity : float
        Kinematic viscosity of the water [m^2/s].

    Returns
    -------
    float or ndarray
        Reynolds number ``Re = V D / nu`` [-].

    Examples
    --------
    >>> round(reynolds(0.786, 0.090, 1.0034e-6))
    70500
    """
    return as_output(np.abs(velocity) * diameter / kinematic_viscosity)


def velocity(flow, diameter):
    """Mean velocity of a full circular pipe.

    Parameters
    ----------
    flow : float or ndarray
        Volumetric flow [m^3/s].
    diameter : float or ndarray
        Inside diameter [m].

    Returns
    -------
    float or ndarray
        Mean velocity ``V = 4 Q / (pi D^2)`` [m/s].

    Examples
    --------
    >>> round(velocity(0.005, 0.090), 3)
    0.786
    """
    return as_output(4.0 * np.asarray(flow, dtype=float) / (np.pi * np.asarray(diameter, dtype=float) ** 2))


def velocity_head(velocity_mps):
    """Kinetic energy per unit weight of water.

    Parameters
    ----------
    velocity_mps : float or ndarray
        Mean velocity [m/s].

    Returns
    -------
    float or ndarray
        Velocity head ``V^2 / (2 g)`` [m].

    Examples
    --------
    >>> round(velocity_head(1.0), 4)
    0.051
    """
    return as_output(np.square(velocity_mps) / (2.0 * G))


def minor_loss(k, velocity_mps):
    """Head lost in a fitting, entrance or valve.

    Parameters
    ----------
    k : float or ndarray
        Loss coefficient [-] (0.5 for a sharp-edged entrance, Crane TP-410).
    velocity_mps : float or ndarray
        Mean velocity in the pipe [m/s].

    Returns
    -------
    float or ndarray
        Head loss ``K V^2 / (2 g)`` [m].

    Examples
    --------
    >>> round(minor_loss(0.5, 1.0), 4)
    0.0255
    """
    return as_output(np.multiply(k, velocity_head(velocity_mps)))


def swamee_jain_1976(reynolds_number, relative_roughness):
    """Explicit approximation of the Colebrook-White friction factor.

    Parameters
    ----------
    reynolds_number : float or ndarray
        Reynolds number [-], published range 5e3 to 1e8.
    relative_roughness : float or ndarray
        Absolute roughness over inside diameter, ``eps / D`` [-], range 1e-6 to 5e-2.

    Returns
    -------
    float or ndarray
        Darcy friction factor [-].

    Notes
    -----
    .. math:: f = \\frac{0.25}{\\left[\\log_{10}\\left(\\frac{\\epsilon/D}{3.7}
              + \\frac{5.74}{Re^{0.9}}\\right)\\right]^2}

    About 1 % from Colebrook-White over its range (1.6 % at Re = 4000, smooth).

    References
    ----------
    .. [1] P. K. Swamee and A. K. Jain, "Explicit equations for pipe-flow problems",
       J. Hydraulics Division ASCE 102(5), 657-664, 1976.

    Examples
    --------
    >>> round(swamee_jain_1976(1e5, 1e-4), 6)
    0.018452
    """
    re = np.asarray(reynolds_number, dtype=float)
    ed = np.asarray(relative_roughness, dtype=float)
    return as_output(0.25 / np.log10(ed / 3.7 + 5.74 / re**0.9) ** 2)


def colebrook(reynolds_number, relative_roughness, *, tol=1e-14, max_iter=50):
    """Darcy friction factor from the Colebrook-White equation, solved exactly.

    Parameters
    ----------
    reynolds_number : float or ndarray
        Reynolds number [-], turbulent (> 4000 for the equation's own range).
    relative_roughness : float or ndarray
        ``eps / D`` [-], zero for a hydraulically smooth pipe.
    tol : float
        Relative step at which Newton's iteration stops [-].
    max_iter : int
        Iteration limit [-].

    Returns
    -------
    float or ndarray
        Darcy friction factor [-].

    Raises
    ------
    ConvergenceError
        If any element has not converged after ``max_iter`` steps.

    Notes
    -----
    Colebrook-White [1]_:

    .. math:: \\frac{1}{\\sqrt f} = -2\\log_{10}\\left(\\frac{\\epsilon/D}{3.7}
              + \\frac{2.51}{Re\\sqrt f}\\right)

    With ``x = 1/sqrt(f)``, ``F(x) = x + 2 log10(a + b x)`` is solved by Newton's method,
    ``a = (eps/D)/3.7`` and ``b = 2.51/Re``, starting from Swamee-Jain [2]_.  The
    iteration converges in 3 to 5 steps to machine precision, as Clamond's method [3]_
    does.

    References
    ----------
    .. [1] C. F. Colebrook, "Turbulent flow in pipes, with particular reference to
       the transition region between the smooth and rough pipe laws", J. Inst. Civil
       Eng. 11(4), 133-156, 1939.
    .. [2] P. K. Swamee and A. K. Jain, J. Hydraulics Division ASCE 102(5), 1976.
    .. [3] D. Clamond, "Efficient resolution of the Colebrook equation", Ind. Eng.
       Chem. Res. 48(7), 3665-3671, 2009, doi:10.1021/ie801626g.

    Examples
    --------
    >>> round(colebrook(1e5, 1e-4), 9)
    0.018513866
    """
    re = np.asarray(reynolds_number, dtype=float)
    ed = np.asarray(relative_roughness, dtype=float)
    re, ed = np.broadcast_arrays(re, ed)
    a = ed / 3.7
    b = 2.51 / re
    x = 1.0 / np.sqrt(swamee_jain_1976(re, ed))
    ln10 = np.log(10.0)
    for _ in range(max_iter):
        inner = a + b * x
        fx = x + 2.0 * np.log10(inner)
        dfx = 1.0 + 2.0 * b / (ln10 * inner)
        step = fx / dfx
        x = x - step
        if np.all(np.abs(step) <= tol * np.abs(x)):
            break
    else:
        worst = float(np.max(np.abs(step) / np.abs(x)))
        raise ConvergenceError(
            f"Colebrook-White did not converge in {max_iter} iterations "
            f"(largest relative step {worst:.3g})",
            iterations=max_iter, residual=worst, last=1.0 / x**2,
        )
    f = 1.0 / x**2
    return as_output(f)


def friction_factor(reynolds_number, relative_roughness):
    """Darcy friction factor over all flow regimes.

    Parameters
    ----------
    reynolds_number : float or ndarray
        Reynolds number [-]; zero gives NaN (no flow, no friction factor).
    relative_roughness : float or ndarray
        ``eps / D`` [-].

    Returns
    -------
    float or ndarray
        Darcy friction factor [-]: ``64/Re`` when laminar (Re < 2300, Hagen-Poiseuille),
        Colebrook-White otherwise.  Between 2300 and 4000 (transition) Colebrook is
        still used, which errs on the side of more friction, and a
        :class:`~planner.errors.RangeWarning` is issued.

    Examples
    --------
    >>> round(friction_factor(1000.0, 0.0), 3)
    0.064
    """
    re = np.asarray(reynolds_number, dtype=float)
    ed = np.asarray(relative_roughness, dtype=float)
    re, ed = np.broadcast_arrays(re, ed)
    f = np.full(re.shape, np.nan)
    laminar = (re > 0) & (re < LAMINAR_LIMIT)
    turbulent = re >= LAMINAR_LIMIT
    f[laminar] = 64.0 / re[laminar]
    if np.any(turbulent):
        f[turbulent] = colebrook(re[turbulent], ed[turbulent])
    transition = turbulent & (re < TURBULENT_LIMIT)
    if np.any(transition):
        warnings.warn(
            f"{int(transition.sum())} point(s) in the laminar-turbulent transition "
            f"(Re {re[transition].min():.0f}..{re[transition].max():.0f}); "
            "Colebrook-White is used there, which overestimates friction slightly",
            RangeWarning, stacklevel=2,
        )
    return as_output(f)


def darcy_weisbach_head_loss(flow, diameter, length, roughness, kinematic_viscosity):
    """Friction head loss by Darcy-Weisbach.

    Parameters
    ----------
    flow : float or ndarray
        Volumetric flow [m^3/s]; the loss takes the sign of the flow.
    diameter : float or ndarray
        Inside diameter [m].
    length : float or ndarray
        Pipe length along its axis [m].
    roughness : float or ndarray
        Absolute roughness [m].
    kinematic_viscosity : float
        Kinematic viscosity [m^2/s].

    Returns
    -------
    float or ndarray
        Head loss ``f (L/D) V^2/(2g)`` [m]; zero where the flow is zero.

    References
    ----------
    .. [1] H. Darcy, "Recherches expérimentales relatives au mouvement de l'eau dans
       les tuyaux", Paris, 1857; J. Weisbach, "Lehrbuch der Ingenieur- und
       Maschinen-Mechanik", 1845.

    Examples
    --------
    >>> round(darcy_weisbach_head_loss(0.005, 0.090, 1000.0, 1.5e-6, 1.0034e-6), 2)
    6.81
    """
    q = np.asarray(flow, dtype=float)
    v = velocity(q, diameter)
    re = reynolds(v, diameter, kinematic_viscosity)
    f = friction_factor(re, np.asarray(roughness, dtype=float) / diameter)
    h = np.where(re > 0, np.nan_to_num(f) * length / diameter * velocity_head(v), 0.0)
    h = np.sign(q) * h
    return as_output(h)


def hazen_williams_head_loss(flow, diameter, length, c_factor):
    """Friction head loss by Hazen-Williams (SI).

    Parameters
    ----------
    flow : float or ndarray
        Volumetric flow [m^3/s]; the loss takes the sign of the flow.
    diameter : float or ndarray
        Inside diameter [m].
    length : float or ndarray
        Pipe length [m].
    c_factor : float or ndarray
        Hazen-Williams coefficient C [-] (150 for new PE and PVC, common practice).

    Returns
    -------
    float or ndarray
        Head loss [m].

    Notes
    -----
    Solved exactly from Williams and Hazen's velocity form [1]_ in SI,
    ``V = 0.849 C R^0.63 S^0.54`` with hydraulic radius ``R = D/4``, which gives

    .. math:: h_f = 10.674\\, L\\, \\frac{Q^{1.852}}{C^{1.852} D^{4.8704}}

    the "10.67" form printed in most handbooks.  Empirical: valid for water near
    ordinary temperatures in turbulent flow.

    References
    ----------
    .. [1] G. S. Williams and A. Hazen, "Hydraulic Tables", 2nd ed., Wiley, 1909.

    Examples
    --------
    >>> round(hazen_williams_head_loss(0.005, 0.090, 1000.0, 150.0), 2)
    6.77
    """
    q = np.asarray(flow, dtype=float)
    d = np.asarray(diameter, dtype=float)
    c = np.asarray(c_factor, dtype=float)
    if np.any(c <= 0):
        raise InputError(f"Hazen-Williams C must be positive, got {c_factor!r}")
    area = np.pi * d**2 / 4.0
    slope = (np.abs(q) / area / (0.849 * c * (d / 4.0) ** 0.63)) ** (1.0 / 0.54)
    h = np.sign(q) * slope * length
    return as_output(h)


def head_loss(flow, diameter, length, *, method: str,
              roughness=None, c_factor=None, kinematic_viscosity=None):
    """Friction head loss by the chosen method.

    Parameters
    ----------
    flow : float or ndarray
        Volumetric flow [m^3/s].
    diameter : float or ndarray
        Inside diameter [m].
    length : float or ndarray
        Pipe length [m].
    method : {"colebrook", "hazen-williams"}
        Friction law.
    roughness : float, optional
        Absolute roughness [m]; needed for ``"colebrook"``.
    c_factor : float, optional
        Hazen-Williams C [-]; needed for ``"hazen-williams"``.
    kinematic_viscosity : float, optional
        [m^2/s]; needed for ``"colebrook"``.

    Returns
    -------
    float or ndarray
        Head loss [m].
    """
    if method == "colebrook":
        if roughness is None or kinematic_viscosity is None:
            raise InputError("the colebrook method needs a roughness and a viscosity")
        return darcy_weisbach_head_loss(flow, diameter, length, roughness, kinematic_viscosity)
    if method == "hazen-williams":
        if c_factor is None:
            raise InputError("the hazen-williams method needs a C factor")
        return hazen_williams_head_loss(flow, diameter, length, c_factor)
    raise InputError(f"unknown friction method {method!r}; choose one of {FRICTION_METHODS}")
