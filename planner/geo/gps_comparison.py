"""GPS heights of a route against the DEM: the offsets' statistics and a sentence on them.

A route file with elevations (GPX) gives a second, independent height at each vertex.
:func:`planner.geo.profile.sample_profile` compares them with the DEM ground there;
a large mean offset usually means a datum mismatch (ellipsoidal against geoid-based
heights), not a bad DEM.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

#: Offsets of GPS heights from the DEM beyond which the two disagree more than either's
#: usual error [m] (consumer GPS heights: about +-10 to 20 m; common practice, from memory).
GPS_MEAN_LIMIT_M = 10.0


def gps_offset_summary(offset: NDArray) -> dict:
    """Statistics of GPS heights minus DEM [m]: count, mean, SD, RMS, largest (signed)."""
    off = np.asarray(offset, dtype=float)
    return {"vertices": int(off.size), "mean_m": float(off.mean()), "sd_m": float(off.std()),
            "rms_m": float(np.sqrt(np.mean(off ** 2))),
            "largest_m": float(off[np.argmax(np.abs(off))])}


def gps_comparison_note(offset: NDArray) -> str:
    """One sentence on GPS heights against the DEM (offset = GPS minus DEM, [m])."""
    if np.asarray(offset).size == 0:
        return "the route's GPS heights could not be compared with the DEM"
    g = gps_offset_summary(offset)
    text = (f"GPS heights of the route's {g['vertices']} vertices minus the DEM: mean "
            f"{g['mean_m']:+.1f} m, standard deviation {g['sd_m']:.1f} m, RMS {g['rms_m']:.1f} m, "
            f"largest {g['largest_m']:+.1f} m")
    if abs(g["mean_m"]) > GPS_MEAN_LIMIT_M:
        text += ("; that mean offset is larger than either usually errs: check the vertical datums "
                 "(a receiver may log ellipsoidal heights, tens of metres from a geoid-based DEM) "
                 "and pin surveyed levels ([[survey_points]])")
    else:
        text += "; the profile uses the DEM (pin surveyed levels with [[survey_points]])"
    return text
