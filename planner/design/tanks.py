"""Break-pressure tanks: where the static head would exceed what the pipe can take.

Rule (common practice; Akvopedia "gravity-fed systems", Nepal DWSS guidelines): walking
down the line from a free surface, the static head at the pipe is the surface's top
water level minus the pipe elevation.  Where it would exceed the allowed static head
(the highest pressure class available, derated, or a lower limit the engineer sets),
a tank is placed at the lowest point upstream of that place where the static head is
still within the limit (z_tank >= z_surface - H_allow), outside any stretch where tanks
are forbidden.  The tank's water level becomes the new static and operating level.
Placing each tank as low as it may go gives the fewest tanks.
"""

from __future__ import annotations

from dataclasses import dataclass

from collections.abc import Sequence

import numpy as np
from numpy.typing import NDArray

from ..errors import DesignError


@dataclass(frozen=True)
class TankSite:
    """A break-pressure tank on the profile.

    Attributes
    ----------
    index : int
        Profile point.
    level : float
        Water level [m].
    rule : str
        Why it is there, in words.
    fixed : bool
        True when the engineer placed it.
    """

    index: int
    level: float
    rule: str
    fixed: bool = False


def place_tanks(chainage: NDArray, ground: NDArray, pipe: NDArray, *, source_level: float,
                limit_head: float, water_depth: float, fixed: Sequence[tuple[int, float]] = (),
                forbidden: NDArray | None = None, limit_reason: str = "") -> list[TankSite]:
    """Tanks needed along a line, fixed ones included, in order of chainage.

    Parameters
    ----------
    chainage, ground, pipe : ndarray
        Profile [m].
    source_level : float
        Top water level of the source [m].
    limit_head : float
        Largest static pressure head allowed anywhere [m].
    water_depth : float
        Water level of a new tank above the ground [m].
    fixed : list of (index, level)
        Tanks the engineer placed.
    forbidden : ndarray of bool, optional
        Points where no tank may be placed.
    limit_reason : str
        What the limit is, for the rule text.

    Raises
    ------
    DesignError
        If the limit is exceeded where no tank may go.
    """
    n = ground.size
    forbidden = np.zeros(n, dtype=bool) if forbidden is None else forbidden
    fixed_at = dict(fixed)
    sites: list[TankSite] = []
    level, start = source_level, 0
    i = 1
    while i < n:
        if i in fixed_at:
            level, start = fixed_at[i], i
            sites.append(TankSite(i, level, "placed by the engineer", fixed=True))
            i += 1
            continue
        if level - pipe[i] <= limit_head:
            i += 1
            continue
        # the lowest admissible point upstream where the static head is still within the limit
        ok = np.flatnonzero((level - pipe[start + 1:i] <= limit_head) & ~forbidden[start + 1:i]
                            & (ground[start + 1:i] + water_depth < level - 0.5))
        if ok.size == 0:
            raise DesignError(
                f"static head exceeds {limit_head:.0f} m ({limit_reason}) at chainage "
                f"{chainage[i]:,.0f} m and no break-pressure tank can be placed between chainage "
                f"{chainage[start]:,.0f} and {chainage[i]:,.0f} m (tanks forbidden there, or the "
                "ground falls too steeply); allow a tank there, use a higher pressure class, or "
                "re-route")
        k = start + 1 + int(ok[-1])
        level, start = float(ground[k] + water_depth), k
        sites.append(TankSite(k, level, f"static head would exceed {limit_head:.0f} m "
                                        f"({limit_reason}) at chainage {chainage[i]:,.0f} m"))
        i = k + 1
    return sites
