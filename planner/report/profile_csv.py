"""profile.csv: the sampled profile as a table (one row per point)."""

from __future__ import annotations

import csv
import io
from pathlib import Path

from ..geo.profile import Profile
from .files import write_text

COLUMNS = ("chainage_m", "slope_length_m", "x", "y", "lon", "lat", "ground_m", "pipe_m", "filled")
_DIGITS = {"lon": 7, "lat": 7, "x": 2, "y": 2, "chainage_m": 2, "slope_length_m": 2}


def profile_csv_text(profile: Profile) -> str:
    """The profile as CSV text with a header row; ``filled`` is 1 across bridged voids."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(COLUMNS)
    cols = [getattr(profile, c) for c in COLUMNS]
    for row in zip(*cols):
        w.writerow([int(v) if name == "filled" else f"{v:.{_DIGITS.get(name, 3)}f}"
                    for name, v in zip(COLUMNS, row)])
    return buf.getvalue()


def write_profile_csv(profile: Profile, path: str | Path) -> Path:
    """Write profile.csv atomically."""
    return write_text(path, profile_csv_text(profile))
