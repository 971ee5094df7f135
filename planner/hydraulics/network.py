"""Energy along a tree of lines: flows by accumulation, heads handed on at junctions.

Each link is computed by :func:`planner.hydraulics.line.line_energy`.  A branch starts
at its junction with the energy head and the static level the parent link has there;
the energy grade line is continuous through the junction (junction losses neglected,
as usual for planning), so the branch's start is a "surface" with no entrance loss.
Pure functions on SI arrays.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from numpy.typing import NDArray

from ..errors import InputError
from .line import FreeSurface, LineEnergy, PipeHydraulics, line_energy


@dataclass(frozen=True)
class LinkData:
    """One link of a tree, in flow order.

    Attributes
    ----------
    slope_length, elevation : ndarray
        Cumulative pipe length and pipe elevation at the link's points [m].
    flow : ndarray
        Flow in each segment [m^3/s] (see :func:`accumulate_flows`).
    pipe : PipeHydraulics
        The link's pipe (scalars or per segment).
    parent : int
        Index of the upstream link, -1 for the link leaving the source.
    tanks : list of FreeSurface
        Break-pressure tanks inside the link (index > 0).
    point_k : ndarray, optional
        Fitting loss coefficients at the points [-].
    """

    slope_length: NDArray[np.float64]
    elevation: NDArray[np.float64]
    flow: NDArray[np.float64]
    pipe: PipeHydraulics
    parent: int = -1
    tanks: list[FreeSurface] = field(default_factory=list)
    point_k: NDArray[np.float64] | None = None


def accumulate_flows(parents: list[int], own: list[float]) -> NDArray[np.float64]:
    """Flow entering each link: its own draw-offs plus everything downstream of it [m^3/s].

    Parameters
    ----------
    parents : list of int
        Upstream link of each link (-1 for the first); parents come before children.
    own : list of float
        Total draw-off on each link itself [m^3/s].

    Examples
    --------
    >>> accumulate_flows([-1, 0, 0, 1], [0.0, 0.001, 0.002, 0.0005]).tolist()
    [0.0035, 0.0015, 0.002, 0.0005]
    """
    total = np.asarray(own, dtype=float).copy()
    for k in range(len(parents) - 1, -1, -1):
        if parents[k] >= k:
            raise InputError("links must be listed with each parent before its children")
        if parents[k] >= 0:
            total[parents[k]] += total[k]
    return total


def tree_energy(links: list[LinkData], source: FreeSurface, *, kinematic_viscosity: float,
                entrance_k: float = 0.5) -> list[LineEnergy]:
    """Static head, energy and hydraulic grade lines on every link of a tree.

    Parameters
    ----------
    links : list of LinkData
        Parents before children; the first link leaves the source.
    source : FreeSurface
        The source at point 0 of the first link.
    kinematic_viscosity : float
        [m^2/s].
    entrance_k : float
        Entrance loss coefficient at the source and at every tank [-].

    Returns
    -------
    list of LineEnergy, one per link.
    """
    out: list[LineEnergy] = []
    for i, link in enumerate(links):
        if link.parent < 0:
            start = source
        else:
            if link.parent >= i:
                raise InputError("links must be listed with each parent before its children")
            up = out[link.parent]
            start = FreeSurface(0, float(up.static_head[-1]), float(up.energy[-1]), entrance_k=0.0)
        out.append(line_energy(link.slope_length, link.elevation, link.flow, link.pipe,
                               kinematic_viscosity=kinematic_viscosity,
                               surfaces=[start] + list(link.tanks), entrance_k=entrance_k,
                               point_k=link.point_k))
    return out


def surge_path_lengths(slope_length: list[NDArray], parents: list[int],
                       surfaces: list[list[int]]) -> list[NDArray[np.float64]]:
    """Pipe length that a pressure wave travels from the free surface feeding each reach.

    A valve closing anywhere downstream of a free surface (the source or a tank) sends a
    wave that reflects at that surface; the Michaud rise grows with the pipe length
    between them.  For each reach this is the longest path from its feeding surface to
    a point where that water ends (the next tank, or a branch end), so every reach fed
    by one surface gets the same, conservative length.  On a single line it is the
    reach's own length.

    Parameters
    ----------
    slope_length : list of ndarray
        Cumulative pipe length at the points of each link [m]; parents before children.
    parents : list of int
        Upstream link of each link, -1 for the link leaving the source.
    surfaces : list of list of int
        Point indices of the free surfaces on each link, starting with 0 (the source,
        or the junction on a branch, which is no surface).

    Returns
    -------
    list of ndarray
        For each link, the length for each of its reaches [m].
    """
    region: dict[tuple[int, int], tuple[int, int]] = {}
    dist: dict[tuple[int, int], float] = {}
    length: dict[tuple[int, int], float] = {}
    longest: dict[tuple[int, int], float] = {}
    for k, (sl, idx) in enumerate(zip(slope_length, surfaces)):
        ends = list(idx[1:]) + [sl.size - 1]
        for r, (a, b) in enumerate(zip(idx, ends)):
            length[k, r] = float(sl[b] - sl[a])
            if r == 0 and parents[k] >= 0:
                up = (parents[k], len(surfaces[parents[k]]) - 1)
                region[k, r], dist[k, r] = region[up], dist[up] + length[up]
            else:
                region[k, r], dist[k, r] = (k, r), 0.0
            key = region[k, r]
            longest[key] = max(longest.get(key, 0.0), dist[k, r] + length[k, r])
    return [np.array([longest[region[k, r]] for r in range(len(idx))])
            for k, idx in enumerate(surfaces)]
