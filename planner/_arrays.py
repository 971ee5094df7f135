"""Tiny helpers shared by the vectorised functions."""

from __future__ import annotations

import numpy as np


def as_output(value):
    """Return a Python float for a 0-d result and the array otherwise."""
    arr = np.asarray(value)
    return float(arr) if arr.ndim == 0 else arr
