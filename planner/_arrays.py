"""Tiny helpers shared by the vectorised functions."""

from __future__ import annotations

import numpy as np


def as_output(value):
    """Return a Python float for a 0-d result and the array otherwise."""
    arr = np.asarray(value)
    return float(arr) if arr.ndim == 0 else arr


def true_runs(mask) -> list[tuple[int, int]]:
    """Runs of True in a boolean array, as inclusive (first, last) index pairs.

    Examples
    --------
    >>> true_runs(np.array([False, True, True, False, True]))
    [(1, 2), (4, 4)]
    """
    m = np.asarray(mask, dtype=np.int8)
    edges = np.flatnonzero(np.diff(np.concatenate([[0], m, [0]])))
    return [(int(a), int(b) - 1) for a, b in zip(edges[::2], edges[1::2])]
