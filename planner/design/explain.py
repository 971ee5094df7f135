"""Why no design exists, in metres and chainages: never a solver's status.

Two kinds of explanation: before the programme (:func:`check_feasible`: even the
largest pipes allowed everywhere cannot deliver, or no pipe fits a segment at all), and
after it (:func:`explain_infeasible`: the least the limits would have to give, from the
elastic programme of :func:`planner.design.sizing.solve_sizing`).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

from ..errors import DesignError
from .._arrays import true_runs as runs
from .checks import _where
from .sizing import ARRIVAL, MAX, SizingInfeasible


def no_pipe_fits(chainage: NDArray, allowed: NDArray, seg_static: NDArray, rating_max: float,
                 velocity_max: float) -> list[str]:
    """Where no candidate fits a segment at all, and why (one message per run).

    ``allowed`` is (segments, candidates); ``seg_static`` the static head of each
    segment [m]; ``rating_max`` the highest derated class as head [m].
    """
    out = []
    for a, b in runs(np.asarray(~allowed.any(axis=1))):
        worst = float(seg_static[a:b + 1].max())
        if worst > rating_max:
            out.append(f"{_where(chainage, a, b + 1)} the static head reaches {worst:.0f} m, "
                       f"above the highest class available ({rating_max:.0f} m): allow a "
                       "break-pressure tank upstream or add a higher class")
        else:
            out.append(f"{_where(chainage, a, b + 1)} no pipe in the catalogues keeps the velocity "
                       f"below {velocity_max:g} m/s and the static head plus surge within its "
                       "class: add larger sizes or higher classes")
    return out


def short_with_largest(chainage: NDArray, pipe: NDArray, energy, required: NDArray,
                       largest_label: str, tanks, tank_inlet_head: float,
                       margin: NDArray | None = None, confidence: float = 0.5) -> list[str]:
    """Where even the largest pipes allowed leave too little pressure, or cannot fill a tank.

    ``energy`` is the :class:`~planner.hydraulics.line.LineEnergy` of the link built
    with the largest pipe each segment admits; ``required`` the pressure needed at each
    point [m], including ``margin`` [m], the part held for ``confidence`` (said in the
    message); ``tanks`` the link's break-pressure tanks as free surfaces.
    """
    out = []
    for a, b in runs(energy.pressure_head < required - 1e-6):
        worst = a + int(np.argmin(energy.pressure_head[a:b + 1] - required[a:b + 1]))
        above_static = float(pipe[worst] - energy.static_head[worst])
        if above_static > 0:
            out.append(f"at chainage {chainage[worst]:,.0f} m the pipe is {above_static:.1f} m "
                       "above the static head line, so no pipe delivers there: re-route, lower "
                       "the line, move or remove the break-pressure tank upstream, or pump")
        else:
            held = margin[worst] if margin is not None else 0.0
            why = (f" ({required[worst] - held:.1f} m plus {held:.1f} m held for DEM error at "
                   f"{confidence:.0%} confidence, design.confidence)" if held > 0.05 else "")
            out.append(f"{_where(chainage, a, b)} even the largest pipes ({largest_label}) leave "
                       f"{energy.pressure_head[worst]:.1f} m of pressure at chainage "
                       f"{chainage[worst]:,.0f} m where {required[worst]:.1f} m is needed{why}: "
                       "allow larger sizes, reduce the design flow, or re-route")
    for f in tanks:
        need = f.static_level + tank_inlet_head
        if energy.arrival_hgl[f.index] < need:
            out.append(f"at design flow the water cannot reach the break-pressure tank at "
                       f"chainage {chainage[f.index]:,.0f} m even with the largest pipes (HGL "
                       f"{energy.arrival_hgl[f.index]:.1f} m, needed {need:.1f} m): allow larger "
                       "sizes or move the tank")
    return out


def no_design(problems: list[str]) -> DesignError:
    """The error for a design that cannot exist, listing every reason."""
    return DesignError("no design is possible:\n  - " + "\n  - ".join(problems))

def explain_infeasible(exc: SizingInfeasible, where) -> DesignError:
    """The message for a programme with no solution: which limits, where, by how much."""
    parts = []
    for point, kind, metres in sorted(exc.violations, key=lambda v: -v[2])[:6]:
        at = where(point)
        if kind == MAX:
            parts.append(f"{at} the pressure would exceed the outlet's maximum by {metres:.2f} m")
        elif kind == ARRIVAL:
            parts.append(f"{at} the water would arrive {metres:.2f} m too low to enter the "
                         "break-pressure tank")
        else:
            parts.append(f"{at} the pressure would fall {metres:.2f} m short of its minimum")
    if not parts:
        return DesignError(f"{exc}: every limit can be met on its own, but not with the whole "
                           "choices asked for: allow size changes within a reach or sub-stretch")
    return DesignError(f"{exc}: no choice of the pipes allowed meets every limit at once; the "
                       "least the limits would have to give:\n  - " + "\n  - ".join(parts)
                       + "\n  allow larger sizes or higher classes, lower an outlet's minimum "
                       "pressure or raise its maximum, move a tank, or re-route")
