"""Energy along one gravity line: static head line, hydraulic grade line, pressures.

The line is a sequence of profile points joined by straight pipe segments.  Between
free water surfaces (the source, and any break-pressure tank) the energy equation
per unit weight of water holds from point to point:

    z_a + p_a/(rho g) + V_a^2/(2g) = z_b + p_b/(rho g) + V_b^2/(2g) + h_friction + h_minor

so the energy grade line (EGL) starts at the operating water level of the reach
minus the entrance loss and falls by the friction and fitting losses; the hydraulic
grade line (HGL) lies one velocity head below it; the pressure head is the HGL minus
the pipe elevation.  A free surface (break-pressure tank) dissipates whatever head
arrives and restarts both lines at its own level.  Gravity lines have no pump; the
energy a pump would add is zero here.

Everything is in SI: lengths and heads in m, flows in m^3/s.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from ..errors import InputError
from . import friction as fr


@dataclass(frozen=True)
class PipeHydraulics:
    """What the friction law needs to know about the pipe of a line.

    Each attribute is one value for the whole line, or an array with one value per
    segment (a line of several sizes).

    Attributes
    ----------
    inside_diameter : float or ndarray
        [m].
    method : str
        ``"colebrook"`` (Darcy-Weisbach) or ``"hazen-williams"``.
    roughness : float, ndarray or None
        Absolute roughness [m], for Colebrook-White.
    c_factor : float, ndarray or None
        Hazen-Williams C [-].
    """

    inside_diameter: float | NDArray
    method: str = "colebrook"
    roughness: float | NDArray | None = None
    c_factor: float | NDArray | None = None

    def __post_init__(self):
        if not np.all(np.asarray(self.inside_diameter) > 0):
            raise InputError(f"inside diameter must be positive, got {self.inside_diameter!r} m")
        if self.method not in fr.FRICTION_METHODS:
            raise InputError(f"unknown friction method {self.method!r}; "
                             f"choose one of {', '.join(fr.FRICTION_METHODS)}")
        if self.method == "colebrook" and (self.roughness is None
                                           or np.any(np.asarray(self.roughness) < 0)):
            raise InputError("the colebrook method needs a roughness >= 0")
        if self.method == "hazen-williams" and (self.c_factor is None
                                                or np.any(np.asarray(self.c_factor) <= 0)):
            raise InputError("the hazen-williams method needs a C factor > 0")


@dataclass(frozen=True)
class FreeSurface:
    """A free water surface that feeds the line from a profile point onwards.

    Attributes
    ----------
    index : int
        Profile point where the surface stands (0 for the source).
    static_level : float
        Highest water level that can stand there (overflow) [m]; drives static head.
    operating_level : float
        Lowest operating water level [m]; drives the HGL at design flow.  For the start
        of a branch at a junction, the energy head there.
    entrance_k : float or None
        Loss coefficient where the pipe leaves this surface [-]; None takes the line's
        ``entrance_k`` (0 for a junction, which is no entrance).
    """

    index: int
    static_level: float
    operating_level: float
    entrance_k: float | None = None


@dataclass(frozen=True)
class ReachBalance:
    """Energy balance of one reach, from a free surface to the next or the line end.

    All terms in metres of water head.  ``available`` is the operating water level
    minus the pipe elevation at the reach end; it equals the sum of the other terms.
    """

    start_index: int
    end_index: int
    operating_level: float
    end_elevation: float
    available: float
    friction: float
    minor: float
    velocity_head: float
    residual_pressure: float

    @property
    def closure(self) -> float:
        """Available head minus the sum of its parts [m]; zero up to rounding."""
        return self.available - (self.friction + self.minor + self.velocity_head
                                 + self.residual_pressure)


@dataclass(frozen=True)
class LineEnergy:
    """Per-point results along a line (arrays of the profile's length, SI units).

    ``flow`` and ``velocity`` are those of the pipe leaving each point downstream
    (the last point takes its incoming pipe).  At a break-pressure tank the arrays
    hold the values just downstream of the tank; what arrives is in
    ``arrival_hgl`` (NaN elsewhere).
    """

    flow: NDArray[np.float64]
    velocity: NDArray[np.float64]
    static_head: NDArray[np.float64]
    energy: NDArray[np.float64]
    hgl: NDArray[np.float64]
    pressure_head: NDArray[np.float64]
    static_pressure_head: NDArray[np.float64]
    friction_loss: NDArray[np.float64]
    reynolds: NDArray[np.float64]
    arrival_hgl: NDArray[np.float64]
    reaches: tuple[ReachBalance, ...]


def segment_flows(chainage: NDArray, draws: list[tuple[float, float]]) -> NDArray:
    """Flow in each segment of a line from the withdrawals along it.

    Parameters
    ----------
    chainage : ndarray
        Chainage of the profile points [m], increasing.
    draws : list of (chainage, flow)
        Each withdrawal's chainage [m] and flow [m^3/s].

    Returns
    -------
    ndarray
        Flow in each of the ``n - 1`` segments [m^3/s]: the sum of all withdrawals
        at or beyond the segment's downstream end (mass balance along the line).

    Examples
    --------
    >>> segment_flows(np.array([0.0, 10.0, 20.0]), [(10.0, 0.002), (20.0, 0.001)]).tolist()
    [0.003, 0.001]
    """
    chainage = np.asarray(chainage, dtype=float)
    q = np.zeros(chainage.size - 1)
    for ch, flow in draws:
        # every segment whose downstream end lies at or before the draw carries it
        j = int(np.searchsorted(chainage, ch - 1e-9, side="left"))
        q[: max(j, 0)] += flow
    return q


def line_energy(slope_length: NDArray, elevation: NDArray, flow: NDArray, pipe: PipeHydraulics,
                *, kinematic_viscosity: float, surfaces: list[FreeSurface],
                entrance_k: float = 0.5, point_k: NDArray | None = None) -> LineEnergy:
    """Static head line, HGL and pressures along a line at a given flow.

    Parameters
    ----------
    slope_length : ndarray
        Cumulative pipe length along its axis at each point [m] (3-D, increasing).
    elevation : ndarray
        Pipe (invert) elevation at each point [m].
    flow : ndarray
        Flow in each of the ``n - 1`` segments [m^3/s], e.g. from :func:`segment_flows`.
    pipe : PipeHydraulics
        Diameter and friction law.
    kinematic_viscosity : float
        [m^2/s], e.g. from :func:`planner.hydraulics.water.kinematic_viscosity`.
    surfaces : list of FreeSurface
        The source (index 0) and any break-pressure tanks, in order of chainage.
    entrance_k : float
        Loss coefficient of the pipe entrance at each free surface [-] (0.5: sharp
        edged, Crane TP-410 and Idelchik).
    point_k : ndarray, optional
        Loss coefficient of fittings at each point [-] (valves, bends), applied with
        the velocity of the pipe leaving the point.

    Returns
    -------
    LineEnergy
        Per-point heads, pressures and the energy balance of each reach.

    Notes
    -----
    The energy equation per unit weight between successive points (see the module
    docstring), after Bernoulli with losses, e.g. White, "Fluid Mechanics", 7th ed.,
    Eq. 3.73 and ch. 6.
    """
    s = np.asarray(slope_length, dtype=float)
    z = np.asarray(elevation, dtype=float)
    q = np.asarray(flow, dtype=float)
    n = s.size
    idx = _surface_indices(n, z, q, surfaces)
    k = np.zeros(n) if point_k is None else np.asarray(point_k, dtype=float)

    v_seg, hf_seg, re_seg = _segment_hydraulics(s, q, pipe, kinematic_viscosity)
    # velocity of the pipe leaving each point (the last point keeps its incoming pipe)
    v_pt = np.append(v_seg, v_seg[-1])
    hv_pt = fr.velocity_head(v_pt)
    fitting_loss = k * hv_pt

    # head lost from point i-1 into point i, including the fitting at point i
    drop = np.zeros(n)
    drop[1:] = hf_seg + fitting_loss[1:]
    cum_drop = np.cumsum(drop)
    cum_friction = np.concatenate([[0.0], np.cumsum(hf_seg)])

    reach = np.searchsorted(idx, np.arange(n), side="right") - 1
    start = idx[reach]
    op = np.array([f.operating_level for f in surfaces])
    st = np.array([f.static_level for f in surfaces])
    k_in = np.array([entrance_k if f.entrance_k is None else f.entrance_k for f in surfaces])
    start_loss = (k_in + k[idx]) * hv_pt[idx]
    energy = op[reach] - start_loss[reach] - (cum_drop - cum_drop[start])
    hgl = energy - hv_pt
    static_head = st[reach]

    arrival, reaches = _reach_balances(idx, z, op, start_loss, v_seg, fitting_loss, cum_drop,
                                       cum_friction)
    return LineEnergy(
        flow=np.append(q, q[-1]), velocity=v_pt, static_head=static_head, energy=energy,
        hgl=hgl, pressure_head=hgl - z, static_pressure_head=static_head - z,
        friction_loss=cum_friction, reynolds=np.append(re_seg, re_seg[-1]),
        arrival_hgl=arrival, reaches=reaches,
    )


def _surface_indices(n: int, z: NDArray, q: NDArray, surfaces: list[FreeSurface]) -> NDArray:
    """The profile points of the free surfaces, after checking the line's inputs agree.

    Parameters
    ----------
    n : int
        Number of profile points (of the slope lengths).
    z : ndarray
        Pipe elevation at each point [m].
    q : ndarray
        Flow in each segment [m^3/s].
    surfaces : list of FreeSurface
        The source and any break-pressure tanks.

    Returns
    -------
    ndarray of int
        Index of each free surface, increasing, the first 0.

    Raises
    ------
    InputError
        If the sizes disagree, or the surfaces do not start at the source, increase
        and stop before the line end.
    """
    if n < 2 or z.size != n or q.size != n - 1:
        raise InputError(f"line_energy needs n >= 2 points and n - 1 flows; "
                         f"got {n} lengths, {z.size} elevations, {q.size} flows")
    if not surfaces or surfaces[0].index != 0:
        raise InputError("the first free surface must be the source at point 0")
    idx = np.array([f.index for f in surfaces])
    if np.any(np.diff(idx) <= 0) or idx[-1] >= n - 1:
        raise InputError("free surfaces must be in increasing order and before the line end")
    return idx


def _segment_hydraulics(s: NDArray, q: NDArray, pipe: PipeHydraulics,
                        kinematic_viscosity: float) -> tuple[NDArray, NDArray, NDArray]:
    """Velocity [m/s], friction loss [m] and Reynolds number [-] of each segment.

    Parameters
    ----------
    s : ndarray
        Cumulative pipe length at each point [m].
    q : ndarray
        Flow in each segment [m^3/s].
    pipe : PipeHydraulics
        Diameter and friction law.
    kinematic_viscosity : float
        [m^2/s].

    Returns
    -------
    v_seg, hf_seg, re_seg : ndarray
        One value per segment.
    """
    d = pipe.inside_diameter
    dl = np.diff(s)
    v_seg = fr.velocity(q, d)
    hf_seg = fr.head_loss(q, d, dl, method=pipe.method, roughness=pipe.roughness,
                          c_factor=pipe.c_factor, kinematic_viscosity=kinematic_viscosity)
    re_seg = fr.reynolds(v_seg, d, kinematic_viscosity)
    return v_seg, hf_seg, re_seg


def _reach_balances(idx: NDArray, z: NDArray, op: NDArray, start_loss: NDArray, v_seg: NDArray,
                    fitting_loss: NDArray, cum_drop: NDArray, cum_friction: NDArray
                    ) -> tuple[NDArray, tuple[ReachBalance, ...]]:
    """The HGL arriving at each tank [m] and the energy balance of each reach.

    Parameters
    ----------
    idx : ndarray of int
        Profile point of each free surface.
    z : ndarray
        Pipe elevation at each point [m].
    op : ndarray
        Operating water level of each free surface [m].
    start_loss : ndarray
        Entrance and fitting loss where the pipe leaves each free surface [m].
    v_seg : ndarray
        Velocity in each segment [m/s].
    fitting_loss : ndarray
        Fitting loss at each point [m].
    cum_drop : ndarray
        Head lost from point 0 to each point, friction and fittings [m].
    cum_friction : ndarray
        Friction loss from point 0 to each point [m].

    Returns
    -------
    arrival : ndarray
        HGL arriving at each tank, before its free surface restarts the lines [m];
        NaN elsewhere.
    reaches : tuple of ReachBalance
    """
    n = z.size
    # what arrives at each tank, before the free surface restarts the lines
    arrival = np.full(n, np.nan)
    reaches = []
    ends = list(idx[1:]) + [n - 1]
    for r, (a, b) in enumerate(zip(idx, ends)):
        v_in = v_seg[b - 1]
        e_in = op[r] - start_loss[r] - (cum_drop[b] - cum_drop[a])
        if b < n - 1:   # a tank: its own fitting loss is not part of this reach
            e_in += fitting_loss[b]
        hgl_in = e_in - fr.velocity_head(v_in)
        if r + 1 < len(idx):
            arrival[b] = hgl_in
        friction_r = cum_friction[b] - cum_friction[a]
        minor_r = op[r] - e_in - friction_r
        reaches.append(ReachBalance(
            start_index=int(a), end_index=int(b), operating_level=float(op[r]),
            end_elevation=float(z[b]), available=float(op[r] - z[b]),
            friction=float(friction_r), minor=float(minor_r),
            velocity_head=float(fr.velocity_head(v_in)),
            residual_pressure=float(hgl_in - z[b]),
        ))
    return arrival, tuple(reaches)
